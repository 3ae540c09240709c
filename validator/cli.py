"""Command line: ``validator protocol``, ``run``, ``check``, ``verify``, ``keygen``, ``sign``, ``qualify``.

Errors the user can fix (:class:`~validator.errors.ValidatorError`) are caught
here and only here: one line on stderr, exit code 2, no traceback.

Exit codes: 0 every criterion met; 1 the run completed and at least one
criterion was not met; 2 bad input or usage; 3 internal error (a bug).
"""

from __future__ import annotations

import argparse
import logging
import os
import re
import sys
import warnings
from datetime import datetime, timezone
from pathlib import Path

from . import __version__
from .errors import ValidatorError, control_character, one_line, show

__all__ = ["main"]

FORMATS = ("html", "pdf", "json")


class _Parser(argparse.ArgumentParser):
    def error(self, message):          # usage errors: one line, exit 2
        raise ValidatorError(f"usage: {message} (see 'validator --help')")


def _formats(text: str) -> tuple:
    chosen = tuple(dict.fromkeys(p.strip().lower() for p in text.split(",") if p.strip()))
    bad = [p for p in chosen if p not in FORMATS]
    if bad or not chosen:
        raise ValidatorError(f'--format: unknown format "{",".join(bad)}"; choose from html, pdf, json')
    return chosen


# the largest SOURCE_DATE_EPOCH that is still a date (9999-12-31T23:59:59Z)
_LAST_EPOCH = int(datetime(9999, 12, 31, 23, 59, 59, tzinfo=timezone.utc).timestamp())


def run_timestamp() -> str:
    """UTC time of the run; SOURCE_DATE_EPOCH (reproducible builds) wins if set.

    The variable must be a whole number of seconds from 0 to the end of year 9999.
    """
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch is not None:
        if not re.fullmatch(r"[0-9]{1,20}", epoch) or int(epoch) > _LAST_EPOCH:
            raise ValidatorError(f'SOURCE_DATE_EPOCH = "{epoch[:40]}" is not a whole number of seconds '
                                 f"from 0 to {_LAST_EPOCH} (end of year 9999)")
        moment = datetime.fromtimestamp(int(epoch), tz=timezone.utc)
    else:
        moment = datetime.now(timezone.utc).replace(microsecond=0)
    return moment.isoformat().replace("+00:00", "Z")


def _write_outputs(target: Path, shown: str, force: bool, write) -> None:
    """Write into a partial folder beside ``target``, then swap it in (rules in validator.output)."""
    from .output import write_output_folder

    write_output_folder(target, shown, force, write)


def _cmd_run(args) -> int:
    formats = _formats(args.format)
    generated_at = run_timestamp()     # before numpy is imported: numpy.f2py reads the variable too

    # One BLAS thread, set before numpy is first imported (a user's own setting is kept): validator's
    # least-squares matrices have a few columns, and OpenBLAS's idle threads spin between its many
    # small calls (measured, docs/performance.md: about half the CPU of a 50-analyte JSON run on
    # 2 cores). One thread also makes the sums' order independent of the machine's core count;
    # results.json was byte-identical with and without it (demo and 300 analytes).
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    from .progress import Progress

    progress = Progress(quiet=args.quiet)
    try:
        return _run_study(args, formats, generated_at, progress)
    finally:
        progress.close()               # before the verdict line, or an error's one line, is printed


def _run_study(args, formats, generated_at, progress) -> int:
    from .engine import analyse_study
    from .inputs.loading import load_study
    from .output import check_existing, check_target
    from .results import build_results, dumps

    progress("reading the study")
    loaded = load_study(args.study)
    held = _held_to_protocol(args, loaded)
    target = check_target(args.out, [args.study] + [f.resolved for f in loaded.inputs]
                          + ([held[0]] if held else []))
    check_existing(target, args.out, args.force)          # early; repeated under the lock
    result = analyse_study(loaded, on_analyte=lambda k, n: progress("analysing", k, n))
    if held:                                              # deviations join the criteria here, and only here
        from .protocol import with_deviations
        result = with_deviations(result, held[3])
    results = build_results(result, generated_at=generated_at)
    if held:
        from .protocol import protocol_entry
        results["protocol"] = protocol_entry(*held)

    def write(folder: Path):
        if "json" in formats:
            progress("writing results.json")
            (folder / "results.json").write_text(dumps(results), encoding="utf-8")
        if "html" in formats or "pdf" in formats:
            from .report import render_dossier
            render_dossier(result, results, folder, formats=formats, paper=args.paper, progress=progress)
        from .inputs.integrity import write_manifest
        write_manifest(folder)

    _write_outputs(target, args.out, args.force, write)
    progress.close()
    judged = [c["pass"] for a in results["analytes"] for c in a["criteria"]]
    print(f"validator: {results['verdict'].upper()}: {len(results['analytes'])} analyte(s), "
          f"{judged.count(False)} criterion/criteria not met, {judged.count(None)} not applicable; "
          f"output in {args.out}")
    return 0 if results["verdict"] == "pass" else 1


def _held_to_protocol(args, loaded):
    """(path, sha256, protocol, deviations, signing key or None) of the protocol the run is held to, or None.

    ``--protocol`` or ``[protocol] file`` (relative to the study file); both given must name one file.
    """
    from .protocol import check_protocol_record, compare, design_deviations, read_protocol

    declared = loaded.config.protocol
    path = args.protocol
    if declared is not None:
        in_study = str(loaded.study.resolve(declared.file))
        if path is not None and Path(path).resolve() != Path(in_study).resolve():
            raise ValidatorError(f'--protocol "{show(path)}" and file = "{show(declared.file)}" in the '
                                 "study file's [protocol] section name different files; give one")
        path = path or in_study
    if path is None:
        return None
    protocol, sha256 = read_protocol(path)
    signed_by_key = check_protocol_record(path)
    deviations = compare(protocol, loaded.study) + design_deviations(loaded.config.design, loaded.analytes)
    return path, sha256, protocol, deviations, signed_by_key


def _cmd_protocol(args) -> int:
    generated_at = run_timestamp()
    from .protocol import write_protocol_folder
    from .inputs.study import read_study_file

    study = read_study_file(args.study)
    protocol = write_protocol_folder(study, args.out, force=args.force, generated_at=generated_at,
                                     approved_on=args.approved_on, approved_by=args.approved_by,
                                     paper=args.paper)
    approval = (f"approved on {protocol['approved_on']} by {protocol['approved_by']}"
                if protocol["approved_on"] else "not yet approved")
    print(f"validator: protocol for {protocol['study_id']} written to {args.out} ({approval}); "
          f"design and criteria digest {protocol['digest']}")
    return 0


def _cmd_check(args) -> int:
    run_timestamp()                    # a bad SOURCE_DATE_EPOCH is refused here too, before numpy reads it
    from .inputs.loading import load_study

    loaded = load_study(args.study)
    n = sum(len(a.calibration.concentration) for a in loaded.analytes)
    print(f"validator: {args.study} is valid: {len(loaded.analytes)} analyte(s), "
          f"{n} calibration point(s), {len(loaded.inputs) - 1} data file(s)")
    return 0


def _cmd_verify(args) -> int:
    from .errors import OutputError
    from .inputs.integrity import SIGNATURE, verify
    from .signing import SignatureCheck, check_signature, what_it_proves

    problems = verify(Path(args.folder), args.study)
    try:
        signature = check_signature(args.folder, args.public_key)
    except OutputError as exc:
        if Path(str(exc.path)).name != SIGNATURE:       # e.g. an unreadable --public-key file: a usage error
            raise
        # a signature.json that is not a readable validator signature: the record is broken, say so (exit 1)
        signature = SignatureCheck(True, False, None if args.public_key is None else False, None, None, None,
                                   None, (f"{SIGNATURE} is not a readable validator signature ({exc})",))
    for p in problems:
        print(f"validator: CHANGED: {p}")
    for p in signature.problems:
        print(f"validator: SIGNATURE: {p}")
    if signature.present and signature.key_fingerprint is not None:
        print(f"validator: signature by key {signature.key_fingerprint}: "
              f"{'valid' if signature.valid else 'NOT VALID'}; signed {signature.signed_at} "
              f"by {signature.operator} on {signature.host} (as recorded in the signature)")
    elif args.public_key is not None:
        print("validator: SIGNATURE: the folder is not signed, so it cannot show it was signed by the key given")
    if not problems:
        inputs = ("every output and input matches its recorded SHA-256" if args.study is not None else
                  "every output matches its recorded SHA-256 (the inputs were not checked; add "
                  "--study STUDY.toml to check them too)")
        print(f"validator: {args.folder} is intact: {inputs}")
    if signature.present or args.public_key is not None or not problems:   # else the CHANGED lines say it
        print(f"validator: what this proves: {what_it_proves(signature, not problems)}")
    return 1 if problems or signature.problems or signature.trusted is False else 0


def _cmd_keygen(args) -> int:
    from .signing import keygen

    print(f"validator: wrote private key {args.keyfile} (keep it secret) and public key "
          f"{args.keyfile}.pub; key fingerprint {keygen(args.keyfile)}")
    return 0


def _cmd_sign(args) -> int:
    signed_at = run_timestamp()
    from .signing import SIGNATURE, sign

    statement = sign(args.folder, args.key, signed_at=signed_at)
    print(f"validator: signed {args.folder} ({SIGNATURE}) with key {statement['key_fingerprint']} "
          f"at {signed_at}")
    return 0


def _cmd_qualify(args) -> int:
    generated_at = run_timestamp()
    from .qualification import qualify

    return qualify(args.out, cases=args.cases, force=args.force, generated_at=generated_at,
                   formats=_formats(args.format))


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="validator", description="Analytical method validation: statistics, "
                     "acceptance criteria and a dossier from one study file.")
    parser.add_argument("--version", action="version", version=f"validator {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    run = sub.add_parser("run", help="analyse a study and write results.json and the dossier")
    run.add_argument("study", help="the study file (TOML)")
    run.add_argument("--out", required=True, help="output folder: its parent must exist; apart from "
                     "the inputs, the current folder and system folders (see README)")
    run.add_argument("--format", default="html,pdf,json", help="any of html,pdf,json (default all)")
    run.add_argument("--paper", choices=("a4", "letter"), default="a4", help="PDF page size")
    run.add_argument("--force", action="store_true",
                     help="replace a previous validator output at --out (nothing else)")
    run.add_argument("--quiet", action="store_true",
                     help="no progress line on stderr (it is shown only on a terminal, for runs over about 2 s)")
    run.add_argument("--protocol", help="the approved protocol.json: deviations from it are listed and "
                     "each is a criterion not met")
    run.set_defaults(func=_cmd_run)
    proto = sub.add_parser("protocol", help="check the design and criteria before any data exist and write "
                           "protocol.json and the protocol document")
    proto.add_argument("study", help="the study file (TOML); its data files need not exist")
    proto.add_argument("--out", required=True, help="output folder (the same rules as for run)")
    proto.add_argument("--approved-on", help="approval date YYYY-MM-DD (with --approved-by)")
    proto.add_argument("--approved-by", help="who approved the protocol (with --approved-on)")
    proto.add_argument("--paper", choices=("a4", "letter"), default="a4", help="PDF page size")
    proto.add_argument("--force", action="store_true",
                       help="replace a previous validator output at --out (nothing else)")
    proto.set_defaults(func=_cmd_protocol)
    check = sub.add_parser("check", help="validate the study file and its data without analysing")
    check.add_argument("study")
    check.set_defaults(func=_cmd_check)
    ver = sub.add_parser("verify", help="check that an output folder still matches its data")
    ver.add_argument("folder")
    ver.add_argument("--study", help="also re-hash the inputs named by this study file")
    ver.add_argument("--public-key", help="a public key file (from keygen): the folder must be signed by it")
    ver.set_defaults(func=_cmd_verify)
    keygen = sub.add_parser("keygen", help="make an Ed25519 key pair for signing output folders")
    keygen.add_argument("keyfile", help="private key file to create (mode 0600); the public key goes "
                        "to KEYFILE.pub; existing files are never overwritten")
    keygen.set_defaults(func=_cmd_keygen)
    sign = sub.add_parser("sign", help="sign an intact output folder (adds signature.json)")
    sign.add_argument("folder")
    sign.add_argument("--key", required=True, help="the private key file (from keygen)")
    sign.set_defaults(func=_cmd_sign)
    qual = sub.add_parser("qualify", help="run the reference cases shipped with validator and write "
                          "a qualification report")
    qual.add_argument("--out", required=True, help="output folder (the same rules as for run)")
    qual.add_argument("--cases", help="a case file to use instead of the shipped one (TOML)")
    qual.add_argument("--format", default="html,pdf,json", help="any of html,pdf,json (default all)")
    qual.add_argument("--force", action="store_true",
                      help="replace a previous validator output at --out (nothing else)")
    qual.set_defaults(func=_cmd_qualify)
    return parser


_POSITIONAL = {"study": "STUDY", "folder": "FOLDER", "keyfile": "KEYFILE"}


def _check_arguments(args) -> None:
    """Refuse a control character (NUL, newline, ...) in any command-line argument."""
    for dest, value in vars(args).items():
        bad = control_character(value) if isinstance(value, str) else None
        if bad:
            name = f"--{dest.replace('_', '-')}"
            if dest in _POSITIONAL and not (args.command == "verify" and dest == "study"):
                name = _POSITIONAL[dest]
            raise ValidatorError(f'command line, argument {name}: "{show(value)}" contains a control character '
                                 f"({bad}); paths and options must not contain control characters")


def _dispatch(argv) -> int:
    args = build_parser().parse_args(argv)
    _check_arguments(args)
    return args.func(args)


def _quietly(argv) -> int:
    """Run the command with library warnings and log records kept off stderr.

    numpy, scipy, statsmodels and matplotlib can warn (through ``warnings``
    or ``logging``) on legal but degenerate data; the analysis states such
    cases in the results, so stderr keeps only validator's own one line.
    """
    root = logging.getLogger()
    silence = logging.NullHandler()      # stops logging's last-resort handler writing to stderr
    root.addHandler(silence)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return _dispatch(argv)
    finally:
        root.removeHandler(silence)


def _say(text: str) -> None:
    print(one_line(text), file=sys.stderr)


class Terminated(KeyboardInterrupt):
    """SIGTERM (a job scheduler, `kill`, a container stopping): unwound like Ctrl-C, so the partial
    output folder is removed and the lock released before the process ends."""


def _on_sigterm(signum, frame):
    raise Terminated()


def _catch_sigterm():
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():
        try:
            return signal.signal(signal.SIGTERM, _on_sigterm)
        except (ValueError, OSError):      # an embedding that does not allow it
            return None
    return None


def main(argv=None) -> int:
    previous = _catch_sigterm()
    try:
        return _quietly(argv)
    except ValidatorError as exc:
        _say(f"validator: error: {exc}")
        return exc.exit_code
    except Terminated:
        _say("validator: terminated (SIGTERM); the partial output was removed and nothing was written")
        return 143
    except KeyboardInterrupt:
        _say("validator: interrupted; nothing was written")
        return 130
    except Exception as exc:  # a bug in validator, not bad input: still one line, nothing written
        if os.environ.get("VALIDATOR_DEBUG"):
            raise
        _say(f"validator: internal error: {type(exc).__name__}: {show(str(exc), 500)} (nothing was written; "
             "please report it, with VALIDATOR_DEBUG=1 for the traceback)")
        return 3
    finally:
        if previous is not None:
            import signal

            signal.signal(signal.SIGTERM, previous)
