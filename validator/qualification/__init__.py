"""Qualification kit: ``validator qualify`` runs published reference cases end to end.

Each case (``cases.toml`` beside this module, or a lab's own file given with
``--cases``) names a published data file in ``validator/reference_data/``, how
to lay it out as a study (calibration, precision or comparison data), the
values in results.json to compare and, for each, the published value, its
tolerance and its source. For every case the kit writes a study file and its
CSV data into a temporary folder, runs them through :func:`validator.cli.main`
(``validator run STUDY --out DIR --format json``: the same function the
installed ``validator`` command calls), reads results.json back and compares.

A value passes when ``|obtained - expected| <= atol + rtol * |expected|`` (the
rule of ``numpy.isclose``); a missing or null value fails. The report
(qualification.json, .html and .pdf) records the environment, a digest of the
installed package files, every comparison and a sign-off block; its folder
follows the output rules of ``validator run`` (:mod:`validator.output`).

Case file layout (TOML)::

    [[case]]
    id = "strd-norris"                     # unique; letters, digits, "-", "_", "."
    title = "..."
    kind = "calibration"                   # or "precision", "comparison"
    data = "nist-strd/Norris.dat"          # a file in validator/reference_data/
    skip_lines = 60                        # whitespace-separated numbers after this many lines
    columns = { concentration = 1, response = 0 }   # column numbers (0-based), or CSV header names
    calibration = { model = "linear" }     # keys added to the study's [calibration] table
    criteria = { alpha = 0.07 }            # optional: [criteria]; likewise precision, comparison
    source = "NIST StRD Norris, certified values"
    [[case.check]]
    path = "analytes.0.calibration.residual_sd"      # dotted path in results.json
    expected = 0.884796396144373
    rtol = 1e-9                            # and/or atol
    source = "..."                         # optional; else the case's source

A CSV file (``.csv``) is read by its header names. Precision data get one
level (1) and the first column named as ``series``; a precision or comparison
case gets the Norris straight-line data as its calibration (a study needs one).
"""

from __future__ import annotations

import contextlib
import hashlib
import io
import json
import math
import platform
import re
import sys
import tempfile
import time
import tomllib
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

from ..errors import ValidatorError

__all__ = ["qualify", "load_cases", "run_case", "Case", "Check", "CaseResult", "CASES_FILE",
           "reference_data_dir", "package_digest"]

CASES_FILE = Path(__file__).resolve().parent / "cases.toml"
_ID = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,79}")
_KEY = re.compile(r"[A-Za-z0-9_-]+")               # a bare TOML key
_KINDS = {"calibration": ("concentration", "response"), "precision": ("series", "found"),
          "comparison": ("reference", "test")}
_TABLES = ("calibration", "precision", "comparison", "criteria")
# the calibration every precision or comparison case carries (a study needs one)
_HELPER_CALIBRATION = {"data": "nist-strd/Norris.dat", "skip_lines": 60,
                       "columns": {"concentration": 1, "response": 0}}


class CaseFileError(ValidatorError, ValueError):
    """A case file that cannot be used; names the file and the case."""


@dataclass(frozen=True)
class Check:
    path: str
    expected: float
    rtol: float
    atol: float
    source: str


@dataclass(frozen=True)
class Case:
    id: str
    title: str
    kind: str
    data: str
    skip_lines: int
    columns: dict
    tables: dict
    source: str
    checks: tuple


@dataclass(frozen=True)
class CheckResult:
    check: Check
    obtained: float | None
    passed: bool
    note: str


@dataclass(frozen=True)
class CaseResult:
    case: Case
    checks: tuple
    passed: bool
    error: str
    seconds: float


def reference_data_dir() -> Path:
    """The reference data shipped inside the package (``validator/reference_data``)."""
    return Path(str(resources.files("validator").joinpath("reference_data")))


def _fail(shown: str, where: str, message: str):
    raise CaseFileError(f"{shown}, {where}: {message}")


def _number(value, shown, where) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        _fail(shown, where, f"must be a finite number, not {value!r:.60}")
    return float(value)


def load_cases(path: str | Path | None = None) -> tuple:
    """The cases of a case file (default: the shipped ``cases.toml``), checked."""
    path = CASES_FILE if path is None else Path(path)
    shown = str(path)
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise CaseFileError(f"{shown}: not found") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseFileError(f"{shown}: cannot be read ({exc})") from None
    except RecursionError:
        raise CaseFileError(f"{shown}: is nested too deeply to be a case file") from None
    except tomllib.TOMLDecodeError as exc:
        raise CaseFileError(f"{shown}: is not valid TOML ({exc})") from None
    raw = doc.get("case")
    if not isinstance(raw, list) or not raw:
        raise CaseFileError(f"{shown}: expected one or more [[case]] tables")
    cases, seen = [], set()
    for i, c in enumerate(raw):
        where = f"case[{i}]"
        if not isinstance(c, dict):
            _fail(shown, where, "must be a table ([[case]])")
        cid = c.get("id")
        if not isinstance(cid, str) or not _ID.fullmatch(cid):
            _fail(shown, where, f'"id" must be letters, digits, "-", "_" or ".", not {cid!r:.60}')
        where = f'case "{cid}"'
        if cid in seen:
            _fail(shown, where, "is defined twice")
        seen.add(cid)
        unknown = set(c) - {"id", "title", "kind", "data", "skip_lines", "columns", "source", "check", *_TABLES}
        if unknown:
            _fail(shown, where, f"unknown key(s) {', '.join(sorted(unknown))}")
        kind = c.get("kind")
        if kind not in _KINDS:
            _fail(shown, where, f'"kind" must be one of {", ".join(_KINDS)}, not {kind!r:.40}')
        data = c.get("data")
        if (not isinstance(data, str) or data.startswith("/") or ".." in data.split("/")
                or not (reference_data_dir() / data).is_file()):
            _fail(shown, where, f'"data" must name a file in validator/reference_data/, not {data!r:.80}')
        columns = c.get("columns")
        is_csv = data.endswith(".csv")
        if (not isinstance(columns, dict) or set(columns) != set(_KINDS[kind]) or not all(
                isinstance(v, str) if is_csv else (isinstance(v, int) and not isinstance(v, bool) and v >= 0)
                for v in columns.values())):
            _fail(shown, where, f'"columns" must give {" and ".join(_KINDS[kind])}, as header names '
                  "for a .csv file, else as column numbers from 0")
        skip = c.get("skip_lines", 0)
        if isinstance(skip, bool) or not isinstance(skip, int) or skip < 0:
            _fail(shown, where, f'"skip_lines" must be a whole number >= 0, not {skip!r:.40}')
        for key in ("title", "source"):
            if not isinstance(c.get(key), str) or not c[key].strip():
                _fail(shown, where, f'"{key}" must be non-empty text')
        tables = {t: c.get(t, {}) for t in _TABLES}
        for t, v in tables.items():
            if not isinstance(v, dict) or "data" in v or not all(_KEY.fullmatch(k) for k in v):
                _fail(shown, where, f'"{t}" must be a table of study keys (without "data")')
        if not isinstance(c.get("check", []), list):
            _fail(shown, where, "expected [[case.check]] tables")
        checks = []
        for j, k in enumerate(c.get("check") or []):
            cw = f"{where}, check[{j}]"
            if not isinstance(k, dict) or not isinstance(k.get("path"), str) or set(k) - {
                    "path", "expected", "rtol", "atol", "source"}:
                _fail(shown, cw, "expected path, expected, rtol and/or atol, and optionally source")
            rtol = _number(k.get("rtol", 0.0), shown, f"{cw}, rtol")
            atol = _number(k.get("atol", 0.0), shown, f"{cw}, atol")
            if rtol < 0 or atol < 0 or rtol + atol == 0:
                _fail(shown, cw, "rtol and atol must be >= 0, and not both 0")
            checks.append(Check(k["path"], _number(k.get("expected"), shown, f"{cw}, expected"), rtol, atol,
                                k.get("source", c["source"])))
        if not checks:
            _fail(shown, where, "has no [[case.check]]")
        cases.append(Case(cid, c["title"], kind, data, skip, dict(columns), tables, c["source"],
                          tuple(checks)))
    return tuple(cases)


# --- laying a case out as a study ------------------------------------------------------------

def _columns(data: str, skip: int, columns: dict) -> dict:
    """The named columns of a reference file, as the text written there (no float round trip)."""
    shown = f"validator/reference_data/{data}"
    try:
        lines = (reference_data_dir() / data).read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise CaseFileError(f"{shown}: cannot be read ({exc})") from None
    if data.endswith(".csv"):
        header = [h.strip() for h in lines[0].split(",")] if lines else []
        rows = [ln.split(",") for ln in lines[1:] if ln.strip()]
        missing = [col for col in columns.values() if col not in header]
        if missing:
            raise CaseFileError(f"{shown}: has no column {missing[0]!r}; its header is {header}")
        index = {name: header.index(col) for name, col in columns.items()}
    else:
        rows = [ln.split() for ln in lines[skip:] if ln.strip()]
        index = dict(columns)
    for n, r in enumerate(rows):
        if len(r) <= max(index.values()):
            raise CaseFileError(f"{shown}: data row {n + 1} has {len(r)} column(s), fewer than the case needs")
    if not rows:
        raise CaseFileError(f"{shown}: no data rows after line {skip}")
    return {name: [r[i].strip() for r in rows] for name, i in index.items()}


def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):          # a TOML basic string; no surrogate pairs (TOML has \UXXXXXXXX)
        return '"' + "".join(c if c.isprintable() and c not in '"\\' else
                             (f"\\u{ord(c):04X}" if ord(c) < 0x10000 else f"\\U{ord(c):08X}") for c in v) + '"'
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict) and all(isinstance(k, str) and _KEY.fullmatch(k) for k in v):
        return "{ " + ", ".join(f"{k} = {_toml_value(x)}" for k, x in v.items()) + " }"
    raise CaseFileError(f"study value {v!r:.60} cannot be written")


def write_case_study(case: Case, folder: Path) -> Path:
    """Write ``study.toml`` and its CSV files for ``case`` into ``folder``; the study file's path."""
    def csv(name, header, cols):
        n = len(next(iter(cols.values())))
        body = "".join(",".join(cols[h][r] for h in header) + "\n" for r in range(n))
        (folder / name).write_text(",".join(header) + "\n" + body, encoding="utf-8")

    cal = case if case.kind == "calibration" else None
    source = (case.data, case.skip_lines, case.columns) if cal else (
        _HELPER_CALIBRATION["data"], _HELPER_CALIBRATION["skip_lines"], _HELPER_CALIBRATION["columns"])
    csv("calibration.csv", ["concentration", "response"], _columns(*source))
    tables = {t: dict(v) for t, v in case.tables.items()}
    tables["calibration"] = {"data": "calibration.csv", **tables["calibration"]}
    if case.kind == "precision":
        cols = _columns(case.data, case.skip_lines, case.columns)
        cols["level"] = ["1"] * len(cols["found"])
        csv("precision.csv", ["level", "series", "found"], cols)
        tables["precision"] = {"data": "precision.csv", **tables["precision"]}
    elif case.kind == "comparison":
        cols = _columns(case.data, case.skip_lines, case.columns)
        cols["sample"] = [f"s{i + 1}" for i in range(len(cols["test"]))]
        csv("comparison.csv", ["sample", "reference", "test"], cols)
        tables["comparison"] = {"data": "comparison.csv", **tables["comparison"]}
    lines = ["# written by validator qualify for reference case " + case.id, "[study]",
             f"id = {_toml_value('QUAL-' + case.id)}", f"title = {_toml_value(case.title)}",
             'concentration_unit = "unit"', 'response_unit = "unit"']
    for t in _TABLES:
        if tables[t]:
            lines.append(f"[{t}]")
            lines += [f"{k} = {_toml_value(v)}" for k, v in tables[t].items()]
    study = folder / "study.toml"
    study.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return study


def _lookup(doc, path: str):
    node = doc
    for part in path.split("."):
        if isinstance(node, list) and re.fullmatch(r"[0-9]+", part) and int(part) < len(node):
            node = node[int(part)]
        elif isinstance(node, dict) and part in node:
            node = node[part]
        else:
            return None, f"results.json has no {path}"
    if isinstance(node, bool) or not isinstance(node, (int, float)):
        return None, f"{path} is {json.dumps(node)[:60]}, not a number"
    return float(node), ""


def run_case(case: Case, workdir: Path) -> CaseResult:
    """Run one case through ``validator run`` inside ``workdir`` and compare its checks."""
    from ..cli import main

    started = time.perf_counter()
    inputs, out = workdir / "input", workdir / "output"
    inputs.mkdir()
    try:
        study = write_case_study(case, inputs)
    except CaseFileError as exc:
        return CaseResult(case, (), False, f"the case cannot be laid out as a study: {exc}",
                          time.perf_counter() - started)
    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = main(["run", str(study), "--out", str(out), "--format", "json"])
    if code == 130:
        raise KeyboardInterrupt
    if code not in (0, 1):       # 0 and 1 both mean the run completed (criteria met or not)
        message = (stderr.getvalue().strip() or stdout.getvalue().strip())[:300]
        return CaseResult(case, (), False, f"validator run exited {code}: {message}",
                          time.perf_counter() - started)
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    results = []
    for k in case.checks:
        obtained, note = _lookup(doc, k.path)
        passed = obtained is not None and abs(obtained - k.expected) <= k.atol + k.rtol * abs(k.expected)
        results.append(CheckResult(k, obtained, passed, note))
    return CaseResult(case, tuple(results), all(r.passed for r in results), "",
                      time.perf_counter() - started)


# --- environment and package digest ----------------------------------------------------------

def _package_files() -> list:
    """(name shown, path) of every installed validator file: code, schema, cases, templates, reference data.

    Compiled caches (``__pycache__``) are left out: Python rebuilds them from the sources listed.
    """
    from ..report import templates_dir

    package = Path(str(resources.files("validator")))
    files = [(f"validator/{p.relative_to(package).as_posix()}", p) for p in package.rglob("*")
             if p.is_file() and "__pycache__" not in p.relative_to(package).parts]
    templates = templates_dir()
    if package not in templates.parents:             # the source tree: templates beside the package
        files += [(f"report_templates/{p.name}", p) for p in templates.iterdir() if p.is_file()]
    return sorted(files)


def package_digest() -> dict:
    """SHA-256 of each installed package file and one digest over the sorted list.

    The digest is the SHA-256 of the UTF-8 text made of one line per file,
    ``<sha256>  <name>\\n``, in sorted name order (the layout of ``sha256sum``),
    so that it can be recomputed with standard tools.
    """
    from ..inputs.integrity import sha256_file

    listing = [(name, sha256_file(path)) for name, path in _package_files()]
    text = "".join(f"{digest}  {name}\n" for name, digest in listing)
    return {"sha256": hashlib.sha256(text.encode("utf-8")).hexdigest(), "rule":
            'SHA-256 of the lines "<sha256>  <file>" (sorted by file name, one per file)',
            "files": [{"file": n, "sha256": d} for n, d in listing]}


def environment() -> dict:
    from ..results import library_versions
    from ..signing import operator_and_host
    from .. import __version__

    return {"validator": __version__, "python": sys.version.split()[0],
            "python_executable": sys.executable, "libraries": library_versions(),
            "platform": platform.platform(), "machine": platform.machine(), **operator_and_host()}


# --- the command -----------------------------------------------------------------------------

_ATTESTS = [
    {"role": "Performed by", "attests": "I ran validator qualify on the installation described above, "
     "on the date stated, and the report is the unaltered output of that run."},
    {"role": "Reviewed by", "attests": "I checked that the environment and package digest match the "
     "installation in use, that every case shows its published source, and that the overall verdict "
     "follows from the cases."},
    {"role": "Approved by (quality assurance)", "attests": "I accept this installation as qualified "
     "for use within the scope of the cases listed, until the software, the libraries or the platform "
     "change."},
]


def _report(results: list, *, generated_at: str, cases_file: str, digest: dict, env: dict,
            seconds: float) -> dict:
    failed = [r.case.id for r in results if not r.passed]
    return {
        "report": "validator installation qualification",
        "generated_at": generated_at,
        "verdict": "pass" if not failed else "fail",
        "failed_cases": failed,
        "cases_file": cases_file,
        "cases_file_sha256": hashlib.sha256(Path(cases_file).read_bytes()).hexdigest(),
        "comparison_rule": "|obtained - expected| <= atol + rtol * |expected|; a missing value fails",
        "seconds": round(seconds, 3),
        "environment": env,
        "package_digest": digest,
        "cases": [{
            "id": r.case.id, "title": r.case.title, "kind": r.case.kind,
            "data": f"validator/reference_data/{r.case.data}", "source": r.case.source,
            "pass": r.passed, "error": r.error, "seconds": round(r.seconds, 3),
            "checks": [{"path": c.check.path, "expected": c.check.expected, "obtained": c.obtained,
                        "rtol": c.check.rtol, "atol": c.check.atol,
                        "difference": None if c.obtained is None else c.obtained - c.check.expected,
                        "pass": c.passed, "note": c.note, "source": c.check.source} for c in r.checks],
        } for r in results],
        "sign_off": _ATTESTS,
    }


def render_html(report: dict) -> str:
    import jinja2

    from ..report import templates_dir

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(templates_dir())), autoescape=True,
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["full"] = lambda v: "—" if v is None else repr(v)     # every digit, as recorded
    css = (templates_dir() / "dossier.css").read_text(encoding="utf-8")
    return env.get_template("qualification.html.j2").render(r=report, css=css)


def qualify(out: str, *, cases: str | None, force: bool, generated_at: str,
            formats=("html", "pdf", "json")) -> int:
    """Run every case, write the report to ``out``; 0 if every case passes, else 1."""
    from ..output import check_existing, check_target, write_output_folder

    cases_file = str(CASES_FILE if cases is None else Path(cases))
    chosen = load_cases(cases_file)
    inputs = [cases_file] + sorted({str(reference_data_dir() / c.data) for c in chosen})
    target = check_target(out, inputs)
    check_existing(target, out, force)
    started = time.perf_counter()
    results = []
    with tempfile.TemporaryDirectory(prefix="validator-qualify-") as tmp:
        for case in chosen:
            work = Path(tmp) / case.id
            work.mkdir()
            results.append(run_case(case, work))
    report = _report(results, generated_at=generated_at, cases_file=cases_file, digest=package_digest(),
                     env=environment(), seconds=time.perf_counter() - started)

    def write(folder: Path):
        if "json" in formats:
            (folder / "qualification.json").write_text(
                json.dumps(report, indent=2, ensure_ascii=False, allow_nan=False) + "\n", encoding="utf-8")
        if "html" in formats or "pdf" in formats:
            html = render_html(report)
            if "html" in formats:
                (folder / "qualification.html").write_text(html, encoding="utf-8")
            if "pdf" in formats:
                from ..report import write_pdf
                write_pdf(html, folder / "qualification.pdf")
        from ..inputs.integrity import write_manifest
        write_manifest(folder)

    write_output_folder(target, out, force, write)
    for r in results:
        if not r.passed:
            why = r.error or "; ".join(f"{c.check.path} = {c.obtained!r}, expected {c.check.expected!r} "
                                       f"(rtol {c.check.rtol:g}, atol {c.check.atol:g})"
                                       for c in r.checks if not c.passed)
            print(f"validator: qualification case {r.case.id} FAILED: {why}")
    n_failed = len(report["failed_cases"])
    whose = "" if cases is None else f" (the cases of {cases_file} only; the shipped kit was not run)"
    print(f"validator: qualification {report['verdict'].upper()}: {len(results) - n_failed} of "
          f"{len(results)} case(s) passed{whose}; package digest {report['package_digest']['sha256']}; "
          f"report in {out}")
    return 0 if not n_failed else 1
