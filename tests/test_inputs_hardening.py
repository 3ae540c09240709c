"""Hostile inputs: each one is refused with exit 2 and one exact line on stderr.

Every case here once ended in exit 3 (an internal error), a hang, a message
over several lines, or silent acceptance of a value that makes no sense
(infinite tolerances, a NaN level, an alpha whose complement rounds to 1).
The expected messages are this project's own wording (common practice, no
published source); the numeric limits are those stated in README.md, "Limits".
"""

from __future__ import annotations

import io
import logging
import sys
import warnings

import numpy as np
import pytest

from conftest import STUDY_HEAD
from validator import cli
from validator.cli import main
from validator.inputs.tables import read_limited
from validator.errors import StudyError, one_line, show

CAL = "concentration,response\n1,2.01\n1,1.98\n2,4.02\n2,3.99\n4,8.02\n4,7.99\n8,15.99\n8,16.02\n"
CALIB = '[calibration]\ndata = "calibration.csv"\n'
LONG = "x" * 100_000

# (id, study body, files (None: the good calibration), extra [study] lines, expected message;
#  {dir} is the study folder)
CASES = [
    # finite numbers only, in CSV and TOML alike
    ("csv-1e999", CALIB, {"calibration.csv": CAL + "9,1e999\n"}, "",
     'calibration.csv, row 10, column "response": "1e999" is too large for a number '
     "(the largest magnitude is about 1.8e308)"),
    ("csv-minus-1e999", CALIB, {"calibration.csv": CAL + "-1e999,3\n"}, "",
     'calibration.csv, row 10, column "concentration": "-1e999" is too large for a number '
     "(the largest magnitude is about 1.8e308)"),
    # IEEE 754 double: the smallest subnormal is about 4.9e-324; below it a non-zero text reads as 0
    ("csv-1e-400", CALIB, {"calibration.csv": CAL + "9,1e-400\n"}, "",
     'calibration.csv, row 10, column "response": "1e-400" is too small for a number and would be read '
     "as 0 (the smallest magnitude is about 2.2e-308)"),
    ("toml-1e999", CALIB + "[criteria]\nback_calculation_tolerance_pct = 1e999\n", None, "",
     "{dir}/study.toml, line 9, key criteria.back_calculation_tolerance_pct: must be a finite number "
     "with 0 < back_calculation_tolerance_pct <= 100; got inf"),
    ("max-data-file-mb-inf", CALIB, None, "max_data_file_mb = inf\n",
     "{dir}/study.toml, line 6, key study.max_data_file_mb: must be a finite number with "
     "0.001 <= max_data_file_mb <= 2048; got inf"),
    ("max-data-file-mb-1e6", CALIB, None, "max_data_file_mb = 1e6\n",
     "{dir}/study.toml, line 6, key study.max_data_file_mb: must be 0.001 <= max_data_file_mb <= 2048; "
     "got 1000000.0"),
    ("crm-uncertainty-inf", CALIB + '[reference_material]\ndata = "crm.csv"\ncertified_value = 12.5\n'
     "standard_uncertainty = inf\n", None, "",
     "{dir}/study.toml, line 11, key reference_material.standard_uncertainty: must be a finite number "
     "with 0 <= standard_uncertainty; got inf"),
    ("lowest-level-tolerance-inf", CALIB + "[criteria]\nlowest_level_tolerance_pct = inf\n", None, "",
     "{dir}/study.toml, line 9, key criteria.lowest_level_tolerance_pct: must be a finite number "
     "with 0 < lowest_level_tolerance_pct <= 100; got inf"),
    ("precision-level-nan", CALIB + '[precision]\ndata = "p.csv"\n'
     "levels = [{ level = nan, repeatability_rsd_max_pct = 5 }]\n", None, "",
     "{dir}/study.toml, line 10, key precision.levels[0].level: must be a finite number with 0 <= level; "
     "got nan"),
    ("error-ratio-inf", CALIB + '[comparison]\ndata = "m.csv"\nerror_ratio = inf\n', None, "",
     "{dir}/study.toml, line 10, key comparison.error_ratio: must be a finite number with "
     "1e-06 <= error_ratio <= 1e+06; got inf"),
    ("recovery-range-inf", CALIB + '[recovery]\ndata = "r.csv"\nrange_pct = [90, inf]\n', None, "",
     "{dir}/study.toml, line 10, key recovery.range_pct[1]: must be a finite number; got inf"),
    ("huge-integer-as-float", CALIB + "[criteria]\nalpha = " + "9" * 400 + "\n", None, "",
     "{dir}/study.toml, line 9, key criteria.alpha: is too large for a number "
     "(the largest magnitude is about 1.8e308); got " + "9" * 80 + "... (400 characters)"),
    ("integer-over-digit-limit", CALIB + "[detection]\nreadings_per_sample = " + "9" * 5000 + "\n", None, "",
     "{dir}/study.toml: TOML value error: an integer has more than 4300 digits; no key takes such a number"),
    # probabilities whose complement rounds away
    ("alpha-1e-17", CALIB + "[criteria]\nalpha = 1e-17\n", None, "",
     "{dir}/study.toml, line 9, key criteria.alpha: must be 1e-06 <= alpha < 0.5; got 1e-17"),
    ("beta-1e-17", CALIB + "[detection]\nbeta = 1e-17\n", None, "",
     "{dir}/study.toml, line 9, key detection.beta: must be 1e-06 <= beta < 0.5; got 1e-17"),
    ("alpha-one-minus-1e-17", CALIB + "[criteria]\nalpha = 0.99999999999999999\n", None, "",
     "{dir}/study.toml, line 9, key criteria.alpha: must be 1e-06 <= alpha < 0.5; got 1.0"),
    ("readings-per-sample-huge", CALIB + "[detection]\nreadings_per_sample = 1000000000000\n", None, "",
     "{dir}/study.toml, line 9, key detection.readings_per_sample: must be 1 <= readings_per_sample <= 1000; "
     "got 1000000000000"),
    # length limits
    ("title-1-mb", CALIB, None, None,
     "{dir}/study.toml, line 3, key study.title: is too long (at most 300 characters); got '"
     + "x" * 80 + "... (1000000 characters)'"),
    ("id-101", CALIB, None, None,
     "{dir}/study.toml, line 2, key study.id: is too long (at most 100 characters); got '"
     + "i" * 80 + "... (101 characters)'"),
    ("analyte-name-long", CALIB, {"calibration.csv": "analyte,concentration,response\n" + "a" * 101 + ",1,1\n"}, "",
     'calibration.csv, row 2, column "analyte": "' + "a" * 80 + '... (101 characters)" is 101 characters long; '
     "at most 100 are allowed in this column"),
    # control characters in paths
    ("nul-in-data-path", '[calibration]\ndata = "cal\\u0000.csv"\n', None, "",
     '{dir}/study.toml, line 7, key calibration.data: the path "cal\\x00.csv" contains a control character '
     "(\\x00 at position 3); paths must not contain control characters"),
    ("newline-in-data-path", '[calibration]\ndata = "cal\\nibration.csv"\n', None, "",
     '{dir}/study.toml, line 7, key calibration.data: the path "cal\\nibration.csv" contains a control '
     "character (\\n at position 3); paths must not contain control characters"),
    ("nul-in-previous-path", CALIB + '[revalidation]\nprevious = "old\\u0000.json"\n', None, "",
     '{dir}/study.toml, line 9, key revalidation.previous: the path "old\\x00.json" contains a control '
     "character (\\x00 at position 3); paths must not contain control characters"),
    # control characters in text shown in the dossier
    ("escape-sequence-in-title", CALIB, None, None,
     '{dir}/study.toml, line 3, key study.title: "red \\x1b[31malert" contains a control character '
     "(\\x1b at position 4); text may hold tabs and line breaks but no other control characters"),
    ("control-in-analyte-name", CALIB, {"calibration.csv": 'analyte,concentration,response\n"le\x07ad",1,1\n'}, "",
     'calibration.csv, row 2, column "analyte": "le\\x07ad" contains a control character (\\x07 at position 2); '
     "names must not contain control characters"),
    # nesting
    ("nested-arrays-5000", CALIB + "[recovery]\nrange_pct = " + "[" * 5000 + "]" * 5000 + "\n", None, "",
     "{dir}/study.toml: is nested more than 32 levels deep (tables, arrays or dotted keys); refused"),
    ("nested-arrays-40", CALIB + "[recovery]\nrange_pct = " + "[" * 40 + "]" * 40 + "\n", None, "",
     "{dir}/study.toml: is nested more than 32 levels deep (tables, arrays or dotted keys); refused"),
    ("nested-dotted-keys", CALIB + "[study2]\n" + ".".join(["k"] * 3000) + " = 1\n", None, "",
     "{dir}/study.toml: is nested more than 32 levels deep (tables, arrays or dotted keys); refused"),
    # one line, short
    ("quoted-newline-in-cell", CALIB, {"calibration.csv": CAL + '9,"1\nforged"\n'}, "",
     'calibration.csv, row 10, column "response": "1\\nforged" has text after the number ("forged"); '
     "give units in the study file, not in data cells"),
    ("long-bad-cell", CALIB, {"calibration.csv": CAL + "9," + LONG + "\n"}, "",
     'calibration.csv, row 10, column "response": "' + "x" * 80 + '... (100000 characters)" is not a number'),
    ("newline-in-unknown-key", CALIB + '"mo\\ndel" = "linear"\n', None, "",
     '{dir}/study.toml, key calibration.mo\\ndel: unknown key; did you mean "model"?'),
]

HEADS = {"title-1-mb": STUDY_HEAD.replace('title = "Test study"', 'title = "' + "x" * 1_000_000 + '"'),
         "id-101": STUDY_HEAD.replace('id = "T-1"', 'id = "' + "i" * 101 + '"'),
         "escape-sequence-in-title": STUDY_HEAD.replace('title = "Test study"', 'title = "red \\u001b[31malert"')}


@pytest.mark.parametrize("case_id, body, files, head, expected", CASES, ids=[c[0] for c in CASES])
def test_hostile_input_is_one_line_exit_2(make_study, tmp_path, outside, capsys, case_id, body, files, head, expected):
    files = {"calibration.csv": CAL} if files is None else files
    study = make_study(body, files, head=HEADS[case_id] if head is None else STUDY_HEAD + head)
    code = main(["check", str(study)])
    out, err = capsys.readouterr()
    assert (code, err) == (2, f"validator: error: {expected.format(dir=tmp_path)}\n")
    assert out == "" and err.count("\n") == 1
    # `run` refuses the same way and writes nothing
    code = main(["run", str(study), "--out", str(outside / "out"), "--format", "json"])
    assert code == 2 and not (outside / "out").exists()
    assert capsys.readouterr().err.count("\n") == 1


def test_study_file_over_1_mib_is_refused(tmp_path, capsys):
    study = tmp_path / "study.toml"
    study.write_text(STUDY_HEAD + CALIB + "# " + "x" * (1024 * 1024) + "\n")
    size = study.stat().st_size
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == (f"validator: error: {study}: is {size} bytes, over the limit of "
                                       "1048576 bytes for a study file\n")


def test_study_file_that_is_a_fifo_is_refused_without_hanging(tmp_path, capsys):
    import os
    fifo = tmp_path / "study.toml"
    os.mkfifo(fifo)
    assert main(["check", str(fifo)]) == 2
    assert capsys.readouterr().err == f"validator: error: {fifo}: is not a regular file\n"


@pytest.mark.parametrize("argv, expected", [
    (["check", "st\x00udy.toml"],
     'command line, argument STUDY: "st\\x00udy.toml" contains a control character (\\x00 at position 2); '
     "paths and options must not contain control characters"),
    (["check", "study\n.toml"],
     'command line, argument STUDY: "study\\n.toml" contains a control character (\\n at position 5); '
     "paths and options must not contain control characters"),
    (["run", "study.toml", "--out", "o\x1but"],
     'command line, argument --out: "o\\x1but" contains a control character (\\x1b at position 1); '
     "paths and options must not contain control characters"),
    (["verify", "fol\x00der", "--study", "s.toml"],
     'command line, argument FOLDER: "fol\\x00der" contains a control character (\\x00 at position 3); '
     "paths and options must not contain control characters"),
    (["verify", "folder", "--study", "s\x00.toml"],
     'command line, argument --study: "s\\x00.toml" contains a control character (\\x00 at position 1); '
     "paths and options must not contain control characters"),
])
def test_control_character_in_a_command_line_path(capsys, argv, expected):
    assert main(argv) == 2
    assert capsys.readouterr().err == f"validator: error: {expected}\n"


def test_control_character_in_study_path_from_python(tmp_path):
    from validator.inputs.loading import load_study
    with pytest.raises(StudyError) as info:
        load_study(f"{tmp_path}/st\x00udy.toml")
    assert str(info.value) == (f"{tmp_path}/st\\x00udy.toml: the study file path contains a control "
                               "character (\\x00 at position 0); paths must not contain control characters"
                               .replace("position 0", f"position {len(str(tmp_path)) + 3}"))


def test_internal_error_is_one_line(monkeypatch, capsys, tmp_path):
    def broken(args):
        raise RuntimeError("first line\nsecond line\x00" + "y" * 1000)
    monkeypatch.setattr(cli, "_cmd_check", broken)
    monkeypatch.delenv("VALIDATOR_DEBUG", raising=False)
    assert main(["check", str(tmp_path / "study.toml")]) == 3
    err = capsys.readouterr().err
    assert err == ("validator: internal error: RuntimeError: first line\\nsecond line\\x00" + "y" * 477
                   + "... (1023 characters) (nothing was written; please report it, with VALIDATOR_DEBUG=1 "
                   "for the traceback)\n")


def test_library_warnings_and_log_records_never_reach_stderr(monkeypatch, capsys, tmp_path):
    """numpy floating-point warnings, warnings.warn and library log records stay off stderr."""
    def noisy(args):
        np.log(np.zeros(1))                                  # RuntimeWarning: divide by zero
        np.float64(0) / np.float64(0)                        # RuntimeWarning: invalid value
        warnings.warn("deprecated thing", DeprecationWarning)
        warnings.warn("user thing", UserWarning)
        logging.getLogger("matplotlib.font_manager").warning("findfont: Font family not found")
        print("validator: checked")
        return 0
    monkeypatch.setattr(cli, "_cmd_check", noisy)
    handlers = list(logging.getLogger().handlers)
    with warnings.catch_warnings():
        warnings.simplefilter("default")            # as a user's Python would show them
        assert main(["check", str(tmp_path / "study.toml")]) == 0
    out, err = capsys.readouterr()
    assert (out, err) == ("validator: checked\n", "")
    assert logging.getLogger().handlers == handlers   # the silencing handler is removed again


def test_warnings_stay_off_stderr_in_a_real_process(tmp_path, outside):
    """The whole command in a subprocess: stderr is empty on success (real stderr, no capture)."""
    import os
    import subprocess
    from conftest import REPO
    (tmp_path / "calibration.csv").write_text("concentration,response\n1,2\n1,2\n2,4\n2,4\n3,6\n3,6\n")
    (tmp_path / "b.csv").write_text("response\n0\n0\n0\n")
    (tmp_path / "study.toml").write_text(STUDY_HEAD + CALIB + '[blanks]\ndata = "b.csv"\n'
                                         '[detection]\nreporting_basis = "blank-sd"\n')
    env = dict(os.environ, PYTHONPATH=str(REPO), PYTHONWARNINGS="always")
    r = subprocess.run([sys.executable, "-m", "validator", "run", str(tmp_path / "study.toml"), "--out",
                        str(outside / "out"), "--format", "json"], capture_output=True, text=True, env=env)
    assert r.returncode in (0, 1) and r.stderr == ""


@pytest.mark.slow
def test_mathtext_in_unit_and_analyte_name_is_drawn_literally(make_study, outside, capsys):
    """``$\\frac{$`` once crashed matplotlib's mathtext parser (exit 3); it is now plain text."""
    head = STUDY_HEAD.replace('concentration_unit = "mg/L"', 'concentration_unit = "$\\\\frac{$"')
    cal = "analyte,concentration,response\n" + "".join(f"$\\frac{{$,{line}\n" for line in CAL.splitlines()[1:])
    study = make_study(CALIB, {"calibration.csv": cal}, head=head)
    out = outside / "out"
    code = main(["run", str(study), "--out", str(out), "--format", "html,pdf,json"])
    captured = capsys.readouterr()
    assert code in (0, 1) and captured.err == ""
    html = (out / "dossier.html").read_text(encoding="utf-8")
    svg_texts = html[html.index("<svg"):]
    assert "concentration ($\\frac{$)" in svg_texts       # the axis label, as typed
    assert (out / "dossier.pdf").stat().st_size > 0


def test_show_escapes_and_shortens():
    assert show("a\nb\tc\x00d\x7f\x85\u2028") == "a\\nb\\tc\\x00d\\x7f\\x85\\u2028"
    assert show("z" * 81) == "z" * 80 + "... (81 characters)"
    assert show("z" * 80) == "z" * 80
    assert show(10 ** 5000) == "<an integer of about 5001 digits>"   # 10**5000 has 5001 digits
    assert show([1.0, float("inf")]) == "[1.0, inf]"
    assert one_line("x\ny") == "x\\ny"


def test_located_message_escapes_path_and_key():
    exc = StudyError("bad", file="dir\n/study.toml", key="a\rb", value="v")
    assert str(exc) == "dir\\n/study.toml, key a\\rb: bad"


def test_read_limited_never_asks_for_more_than_a_chunk():
    """A limit of 2 GiB on a small file reads in 1 MiB requests, never the limit + 1 at once."""
    class Recorder(io.BytesIO):
        sizes = []

        def read(self, size=-1):
            self.sizes.append(size)
            return super().read(size)

    fh = Recorder(b"x" * 10)
    assert read_limited(fh, 2048 * 1024 * 1024) == b"x" * 10
    assert max(fh.sizes) == 1024 * 1024
    assert read_limited(io.BytesIO(b"x" * 11), 10) is None
    assert read_limited(io.BytesIO(b"x" * 10), 10) == b"x" * 10


def test_largest_data_file_limit_is_accepted(make_study, capsys):
    study = make_study(CALIB, {"calibration.csv": CAL}, head=STUDY_HEAD + "max_data_file_mb = 2048\n")
    assert main(["check", str(study)]) == 0
    assert capsys.readouterr().err == ""
