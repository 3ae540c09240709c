"""Findings of the first hostile black-box round (notes hostile-r1), each kept as a test.

Data are invented for the tests; each expected value says where it comes from (hand computations
beside them; the rules are the README's, common practice, no published source).
"""

from __future__ import annotations

import json
from fractions import Fraction

import pytest

from conftest import CALIBRATION, STUDY_HEAD
from validator.cli import main
from validator.engine import analyse_study
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study
from validator.inputs.study import read_study_file
from validator.results import build_results


def _results(study) -> dict:
    return json.loads(json.dumps(build_results(analyse_study(load_study(study)), generated_at="2026-01-01T00:00:00Z")))


def _criterion(entry: dict, cid: str) -> dict:
    return next(c for c in entry["criteria"] if c["id"] == cid)


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


# ---------------------------------------------------------------- finding 1: per-analyte range vs per-level range

TWO = "analyte," + CALIBRATION.splitlines()[0] + "\n" + "".join(
    f"{name},{line}\n" for name in ("lead", "zinc") for line in CALIBRATION.splitlines()[1:])
# added 2: found 1.7 -> 85 % (hand computation: 100 * 1.7 / 2); added 10: found 10 -> 100 %
RECOVERY_2_LEVELS = "analyte,added,found\n" + "".join(
    f"{name},{added},{found}\n" for name in ("lead", "zinc") for added, found in (("2", "1.7"), ("10", "10")) * 3)
PER_LEVEL = """
[calibration]
data = "calibration.csv"

[recovery]
data = "recovery.csv"
range_pct = [90, 110]
levels = [{ added = 2, range_pct = [80, 120] }]
"""
ZINC_STRICT = """
[analyte_settings.zinc.recovery]
range_pct = [95, 105]
"""


def test_a_per_analyte_range_applies_to_every_level_of_that_analyte(make_study):
    results = _results(make_study(PER_LEVEL + ZINC_STRICT,
                                  files={"calibration.csv": TWO, "recovery.csv": RECOVERY_2_LEVELS}))
    lead, zinc = results["analytes"]
    assert 100 * Fraction("1.7") / 2 == 85                     # hand computation
    # lead keeps the study-wide per-level range at added 2: 85 % in [80, 120] -> met
    assert _criterion(lead, "recovery-2")["limit"] == [80.0, 120.0]
    assert _criterion(lead, "recovery-2")["pass"] is True
    # zinc's own range is the more specific setting: every zinc level is judged on [95, 105], so 85 % fails
    assert _criterion(zinc, "recovery-2")["limit"] == [95.0, 105.0]
    assert _criterion(zinc, "recovery-2")["value"] == pytest.approx(85, rel=1e-12)
    assert _criterion(zinc, "recovery-2")["pass"] is False
    assert _criterion(zinc, "recovery-10")["limit"] == [95.0, 105.0]
    # the settings say what zinc was judged with: its range, and no per-level range left
    assert zinc["settings"] == [
        {"key": "recovery.range_pct", "value": [95.0, 105.0], "study_value": [90.0, 110.0]},
        {"key": "recovery.levels", "value": [], "study_value": [{"added": 2.0, "range_pct": [80.0, 120.0]}]}]


def test_a_per_analyte_precision_limit_replaces_only_that_key_of_the_levels(make_study):
    body = """
[calibration]
data = "calibration.csv"

[precision]
data = "precision.csv"
repeatability_rsd_max_pct = 5
intermediate_rsd_max_pct = 8
levels = [{ level = 2, repeatability_rsd_max_pct = 10, intermediate_rsd_max_pct = 12 }]

[analyte_settings.zinc.precision]
repeatability_rsd_max_pct = 3
"""
    precision = "analyte,level,series,found\n" + "".join(
        f"{a},2,{s},{f}\n" for a in ("lead", "zinc") for s, f in (("1", "2.0"), ("1", "2.1"), ("2", "1.9"),
                                                                 ("2", "2.0")))
    study = read_study_file(make_study(body, files={"calibration.csv": TWO, "precision.csv": precision}))
    zinc = study.config_for("zinc").precision
    lead = study.config_for("lead").precision
    # zinc: its own repeatability maximum at every level; the level keeps its own intermediate maximum
    assert zinc.limits_for(2.0) == (3.0, 12.0)
    assert lead.limits_for(2.0) == (10.0, 12.0)
    changes = {c.key: (c.value, c.study_value) for c in study.analyte_settings[0].changes}
    assert changes["precision.levels"] == (
        [{"level": 2.0, "intermediate_rsd_max_pct": 12.0}],
        [{"level": 2.0, "repeatability_rsd_max_pct": 10.0, "intermediate_rsd_max_pct": 12.0}])


def test_the_dossier_shows_the_per_level_limits_the_analyte_kept(make_study, outside):
    from bs4 import BeautifulSoup
    from test_dossier import assert_correctly_rounded, lookup

    study = make_study(PER_LEVEL + ZINC_STRICT, files={"calibration.csv": TWO, "recovery.csv": RECOVERY_2_LEVELS})
    assert main(["run", str(study), "--out", str(outside / "out"), "--format", "json,html"]) == 1   # zinc fails
    results = json.loads((outside / "out" / "results.json").read_text(encoding="utf-8"))
    soup = BeautifulSoup((outside / "out" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    table = soup.select_one("#analyte-1").select_one("table.analyte-settings")
    rows = [[td.get_text() for td in tr.select("td")] for tr in table.select("tbody tr")]
    assert rows[1] == ["recovery.levels", "[]", "[{added = 2, range_pct = [80, 120]}]"]
    for span in table.select("span.n[data-src]"):
        assert_correctly_rounded(span, lookup(results, span["data-src"]))


# ---------------------------------------------------------------- finding 7: guideline audit and per-analyte overrides

SANTE_HEAD = STUDY_HEAD + 'guideline = "sante-11312-2021"\n'
MATRIX = """
[calibration]
data = "calibration.csv"

[matrix_effect]
solvent_data = "solvent.csv"
"""
# the solvent calibration of both analytes: the conftest calibration's responses (invented demo data)
SOLVENT = "analyte," + CALIBRATION.splitlines()[0] + "\n" + "".join(
    f"{name},{line}\n" for name in ("lead", "zinc") for line in CALIBRATION.splitlines()[1:])


@pytest.mark.parametrize("overriding, on_study_value", [(("zinc",), 1), (("lead", "zinc"), 0)])
def test_the_guideline_audit_names_the_analytes_that_override_a_preset_value(make_study, outside, overriding,
                                                                            on_study_value):
    from bs4 import BeautifulSoup

    own = "".join(f"[analyte_settings.{a}.matrix_effect]\nlimit_pct = 80\n" for a in overriding)
    study = make_study(MATRIX + own, files={"calibration.csv": TWO, "solvent.csv": SOLVENT}, head=SANTE_HEAD)
    main(["run", str(study), "--out", str(outside / "out"), "--format", "json,html"])
    results = json.loads((outside / "out" / "results.json").read_text(encoding="utf-8"))
    (value,) = results["guideline"]["values"]
    # the README's rule: the preset fills the study-wide value (20, the SANTE preset); each analyte whose own
    # [analyte_settings] sets the key is judged with its value and listed
    assert (value["key"], value["preset_value"], value["used"]) == ("matrix_effect.limit_pct", 20.0, True)
    assert value["analyte_values"] == [{"analyte": a, "value": 80.0} for a in overriding]
    assert value["analytes_on_study_wide_value"] == on_study_value
    soup = BeautifulSoup((outside / "out" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    heading = next(h for h in soup.select("h3") if h.get_text().startswith("Guideline preset"))
    used = heading.find_next("table").select("tbody tr td")[2].get_text()
    if on_study_value:
        assert used == ("20.0 (preset-supplied) for 1 analyte(s); 80.0 for zinc "
                        "(its own [analyte_settings.zinc] overrides the preset)")
    else:
        assert used.startswith("not used for any analyte: each sets its own value; 80.0 for lead")


# ---------------------------------------------------------------- finding 10: one export named by two [[runs]]

def _reader(make_study, body: str = ""):
    from validator.inputs.loading import Reader

    study = make_study(body or None)
    return Reader(read_study_file(study)), study.parent


RUNS_COLUMNS = dict(sample="Name", type="Kind", level="Conc", response="Area")
EXPORT = "Name,Kind,Conc,Area\nc1,Cal,1,100\nc2,Cal,2,201\nc3,Cal,4,399\nq1,QC,2,200\n"


@pytest.mark.parametrize("second, how", [
    ("run-1.csv", "the same file"),
    ("./sub/../run-1.csv", "the same file"),
    ("copy.csv", "a file with the same content (SHA-256 "),
])
def test_one_export_read_by_two_runs_is_refused(make_study, second, how):
    from validator.inputs.runs import read_runs
    from validator.inputs.study import ColumnsSection, RunSource, TypesSection

    reader, folder = _reader(make_study)
    (folder / "sub").mkdir()
    for name in ("run-1.csv", "copy.csv"):
        (folder / name).write_text(EXPORT, encoding="utf-8")
    runs = [RunSource(data="run-1.csv", run="r1"), RunSource(data=second, run="r2")]
    with pytest.raises(StudyError) as caught:
        read_runs(reader, runs, ColumnsSection(**RUNS_COLUMNS), TypesSection(calibrator=["Cal"], qc=["QC"]), "T-1")
    # the README's rule (common practice): one export is one run, its rows never counted twice
    assert caught.value.key == "runs[1].data"
    assert caught.value.problem.startswith(f'[[runs]] 2 (data = "{second}") reads {how}')
    assert caught.value.problem.endswith('as [[runs]] 1 (data = "run-1.csv"): one export would count as two runs; '
                                         "give each run its own export")


def test_two_sheets_of_one_workbook_are_two_exports(make_study):
    import openpyxl

    from validator.inputs.runs import read_runs
    from validator.inputs.study import ColumnsSection, RunSource, TypesSection

    reader, folder = _reader(make_study)
    wb = openpyxl.Workbook()
    for k, title in enumerate(("Run 1", "Run 2")):
        ws = wb.active if k == 0 else wb.create_sheet()
        ws.title = title
        for line in EXPORT.splitlines():
            ws.append([float(c) if c[0].isdigit() else c for c in line.split(",")])
    wb.save(folder / "runs.xlsx")
    runs = [RunSource(data="runs.xlsx", sheet="Run 1", run="r1"), RunSource(data="runs.xlsx", sheet="Run 2", run="r2")]
    injections = read_runs(reader, runs, ColumnsSection(**RUNS_COLUMNS), TypesSection(calibrator=["Cal"], qc=["QC"]),
                           "T-1")
    assert [i.run for i in injections] == ["r1"] * 4 + ["r2"] * 4       # 4 rows written per sheet
    runs[1] = RunSource(data="runs.xlsx", sheet="Run 1", run="r2")
    with pytest.raises(StudyError, match=r'key runs\[1\]\.data: \[\[runs\]\] 2 \(data = "runs.xlsx", '
                                         r'sheet "Run 1"\) reads the same file'):
        read_runs(reader, runs, ColumnsSection(**RUNS_COLUMNS), TypesSection(calibrator=["Cal"], qc=["QC"]), "T-1")


def test_the_line_of_a_key_in_an_array_of_tables():
    from validator.inputs.study import item_line

    text = '[study]\nid = "x"\n[[runs]]\ndata = "a.csv"\n[[runs]]\nrun = "b"\ndata = "b.csv"\n[[exclusions]]\nrow = 3\n'
    # counted by hand in the text above
    assert item_line(text, "runs", 0, "data") == 4
    assert item_line(text, "runs", 1, "data") == 7
    assert item_line(text, "runs", 1) == 5
    assert item_line(text, "runs", 1, "day") == 5          # no such key: the table's header
    assert item_line(text, "runs", 2, "data") is None
    assert item_line(text, "exclusions", 0, "row") == 9


# ---------------------------------------------------------------- finding 11: labels differing only in case

def test_spelling_variant_finds_labels_differing_only_in_case_or_spacing():
    from validator.inputs.sample_ids import spelling_key, spelling_variant

    # the rule (README): letter case and runs of white space ignored; punctuation counts
    assert spelling_key("Run  1") == spelling_key("run 1") == "run 1"
    assert spelling_variant(["B1", "B1", "B2", "b1", "B2"]) == (0, 3)
    assert spelling_variant(["run 1", "Run  1"]) == (0, 1)
    assert spelling_variant(["B1", "B-1", "B2"]) is None
    assert spelling_variant([]) is None


BATCHES = ("Batch,Name,Kind,Conc,Area\n"
           "B1,c1,Cal,1,100\nB1,c2,Cal,2,201\nB1,c3,Cal,4,399\nB1,q1,QC,2,200\n"
           "B2,c1,Cal,1,101\nB2,c2,Cal,2,199\nB2,c3,Cal,4,401\n{label},q1,QC,2,202\n")


@pytest.mark.parametrize("label", ["b1"])
def test_a_run_label_in_another_case_is_refused_naming_both_rows(make_study, label):
    from validator.inputs.runs import read_runs
    from validator.inputs.study import ColumnsSection, RunSource, TypesSection

    reader, folder = _reader(make_study)
    (folder / "all.csv").write_text(BATCHES.format(label=label), encoding="utf-8")
    columns = ColumnsSection(run="Batch", **RUNS_COLUMNS)
    with pytest.raises(DataError) as caught:
        read_runs(reader, [RunSource(data="all.csv")], columns, TypesSection(calibrator=["Cal"], qc=["QC"]), "T-1")
    # the README's rule: "b1" next to "B1" would be a third run (another precision series), so it is refused
    assert (caught.value.file, caught.value.row) == ("all.csv", 9)          # the 9th line of the file
    assert caught.value.problem == (f'run "{label}" differs only in letter case or spacing from run "B1" (row 2): '
                                    "they would count as two; write one spelling")
    # the same export with "B2" there is read as two runs; a cell " B1 " is "B1" (cells are stripped)
    for same in ("B2", " B1 "):
        (folder / "all.csv").write_text(BATCHES.format(label=same), encoding="utf-8")
        injections = read_runs(reader, [RunSource(data="all.csv")], columns,
                               TypesSection(calibrator=["Cal"], qc=["QC"]), "T-1")
        assert sorted({i.run for i in injections}) == ["B1", "B2"]


def test_run_labels_of_two_exports_and_sample_ids_are_compared_too(make_study):
    from validator.inputs.runs import read_runs
    from validator.inputs.study import ColumnsSection, RunSource, TypesSection

    reader, folder = _reader(make_study)
    (folder / "r1.csv").write_text(EXPORT, encoding="utf-8")
    (folder / "r2.csv").write_text(EXPORT.replace("q1,QC,2,200", "q1,QC,2,203"), encoding="utf-8")
    types = TypesSection(calibrator=["Cal"], qc=["QC"], sample=["Unknown"])
    runs = [RunSource(data="r1.csv", run="Run-1"), RunSource(data="r2.csv", run="run-1")]
    with pytest.raises(DataError, match=r'r2.csv, row 2: run "run-1" differs only in letter case or spacing from '
                                        r'run "Run-1" \(r1.csv row 2\)'):
        read_runs(reader, runs, ColumnsSection(**RUNS_COLUMNS), types, "T-1")
    (folder / "r2.csv").write_text(EXPORT + "S-1,Unknown,,150\ns-1,Unknown,,152\n", encoding="utf-8")
    runs = [RunSource(data="r1.csv", run="run-1"), RunSource(data="r2.csv", run="run-2")]
    with pytest.raises(DataError, match=r'r2.csv, row 7: sample id "s-1" differs only in letter case or spacing '
                                        r'from sample id "S-1" \(row 6\)'):
        read_runs(reader, runs, ColumnsSection(**RUNS_COLUMNS), types, "T-1")


# ---------------------------------------------------------------- finding 12: hidden rows of a workbook

CAL_ROWS = [(float(c), float(r)) for c, r in (line.split(",") for line in CALIBRATION.strip().splitlines()[1:])]


def _calibration_book(path, hide=(), header_at: int = 3):
    """The conftest calibration in sheet "Results" (header at ``header_at``, a note above), rows ``hide`` hidden."""
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Results"
    ws["A1"] = "Batch 7 export"
    ws.cell(header_at, 1, "Concentration")
    ws.cell(header_at, 2, "Response")
    for i, (c, r) in enumerate(CAL_ROWS, start=header_at + 1):
        ws.cell(i, 1, c)
        ws.cell(i, 2, r)
    for row in hide:
        ws.row_dimensions[row].hidden = True
    wb.save(path)


BOOK_BODY = '[calibration]\ndata = "calibration.xlsx"\nheader_row = 3\n'


def test_a_hidden_data_row_is_refused_naming_it(make_study, capsys):
    study = make_study(BOOK_BODY, files={})
    _calibration_book(study.parent / "calibration.xlsx", hide=(6,))
    code, _, err = _run(capsys, "check", study)
    # the project's rule for hidden sheets, applied to rows: never read silently
    assert (code, err) == (2, 'validator: error: calibration.xlsx, sheet Results: row 6 is hidden in the workbook; '
                              "a hidden row is not read silently: unhide it to use it, or leave it out with its "
                              'reason in [[exclusions]] (file = "calibration.xlsx", sheet = "Results", row = 6)\n')
    _calibration_book(study.parent / "calibration.xlsx", hide=(6, 9, 10))
    code, _, err = _run(capsys, "check", study)
    assert "rows 6, 9, 10 are hidden in the workbook" in err


def test_a_hidden_row_above_the_header_or_excluded_is_no_problem(make_study, outside):
    study = make_study(BOOK_BODY + '[[exclusions]]\nfile = "calibration.xlsx"\nrow = 6\nreason = "hidden: vial '
                       'cracked"\n', files={})
    _calibration_book(study.parent / "calibration.xlsx", hide=(1, 2, 6))
    assert main(["run", str(study), "--out", str(outside / "a"), "--format", "json"]) == 0
    excluded = json.loads((outside / "a" / "results.json").read_text(encoding="utf-8"))
    # the same book with that row deleted instead (hand computation: the same numbers go in)
    deleted = make_study('[calibration]\ndata = "deleted.xlsx"\nheader_row = 3\n', files={})
    import openpyxl
    wb = openpyxl.load_workbook(study.parent / "calibration.xlsx")
    wb.active.delete_rows(6)
    for row in (1, 2, 6):
        wb.active.row_dimensions[row].hidden = False
    wb.save(deleted.parent / "deleted.xlsx")
    assert main(["run", str(deleted), "--out", str(outside / "b"), "--format", "json"]) == 0
    other = json.loads((outside / "b" / "results.json").read_text(encoding="utf-8"))
    assert excluded["analytes"][0]["calibration"]["n"] == other["analytes"][0]["calibration"]["n"] == 9
    assert excluded["analytes"][0]["calibration"]["coefficients"] == other["analytes"][0]["calibration"]["coefficients"]
    assert [(e["row"], e["sheet"]) for e in excluded["exclusions"]] == [(6, "Results")]


# ---------------------------------------------------------------- finding 15: exclusion messages

def test_an_injection_excluded_by_row_and_again_by_name_is_said_to_be_excluded_twice(make_study, capsys):
    body = ('[calibration]\nmodel = "linear"\n[[runs]]\ndata = "r1.csv"\nrun = "run-1"\n'
            '[columns]\nsample = "Name"\ntype = "Kind"\nlevel = "Conc"\nresponse = "Area"\n'
            '[types]\ncalibrator = ["Cal"]\nqc = ["QC"]\n[precision]\nrepeatability_rsd_max_pct = 10\n'
            '[[exclusions]]\nfile = "r1.csv"\nrow = 5\nreason = "x"\n'
            '[[exclusions]]\nrun = "run-1"\ninjection = "q1"\nreason = "y"\n')
    study = make_study(body, files={"r1.csv": EXPORT + "q2,QC,2,199\n"})
    code, _, err = _run(capsys, "check", study)
    # row 5 of r1.csv is q1 (the 4th data row below the header, counted by hand); the second [[exclusions]]
    # table starts on line 25 of the study file (STUDY_HEAD has 5 lines, counted by hand)
    assert (code, err) == (2, f'validator: error: {study}, line 25, key exclusions[1]: injection "q1" of run "run-1" '
                              "(r1.csv row 5) is already excluded by exclusions[0]; give each excluded row once\n")


def test_an_exclusion_of_a_row_outside_a_workbooks_table_names_its_header_row(make_study, capsys):
    study = make_study(BOOK_BODY + '[[exclusions]]\nfile = "calibration.xlsx"\nrow = 2\nreason = "x"\n', files={})
    _calibration_book(study.parent / "calibration.xlsx")
    code, _, err = _run(capsys, "check", study)
    # header written at sheet row 3, the 10 calibration rows at 4 to 13; [[exclusions]] on study line 9 (by hand)
    assert (code, err) == (2, f"validator: error: {study}, line 9, key exclusions[0]: calibration.xlsx has no data "
                              "row 2 read by this study, so this exclusion would leave nothing out (rows are sheet "
                              "rows: sheet Results has its header at row 3 and data rows 4 to 13)\n")


def test_a_schema_error_in_a_list_uses_the_bracket_form(make_study, capsys):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[[exclusions]]\nfile = "calibration.csv"\nrow = 4\n'
                       'reason = " "\n')
    code, _, err = _run(capsys, "check", study)
    assert code == 2 and "key exclusions[0].reason: must not be blank" in err


# ---------------------------------------------------------------- finding 16: every calibrator of an analyte excluded

def test_excluding_every_calibrator_of_an_analyte_says_so(make_study, capsys):
    samples = "analyte,sample,response\nlead,S1,5.1\nzinc,S1,5.2\n"
    # zinc's calibration rows are file rows 12 to 21 (10 lead rows after the header, counted by hand)
    excl = "".join(f'[[exclusions]]\nfile = "calibration.csv"\nrow = {r}\nreason = "standard expired"\n'
                   for r in range(12, 22))
    study = make_study('[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n' + excl,
                       files={"calibration.csv": TWO, "samples.csv": samples})
    code, _, err = _run(capsys, "check", study)
    assert (code, err) == (2, f'validator: error: {study}, line 10, key exclusions[0]: every calibration row of '
                              'analyte "zinc" in calibration.csv is excluded (10 row(s): exclusions[0], '
                              "exclusions[1], exclusions[2], exclusions[3], exclusions[4], ...), so nothing is left "
                              "of it; keep the rows it needs, or leave zinc out of the data\n")


# ---------------------------------------------------------------- finding 17: per-analyte protocol deviations

@pytest.mark.parametrize("approved, changed, key, protocol_value, run_value", [
    # a per-analyte key changed
    (ZINC_STRICT, ZINC_STRICT.replace("[95, 105]", "[50, 150]"), "analyte_settings.zinc.recovery.range_pct",
     [95, 105], [50, 150]),
    # a per-analyte table added after approval
    ("", ZINC_STRICT, "analyte_settings.zinc", None, {"recovery": {"range_pct": [95, 105]}}),
])
def test_a_deviation_in_one_analytes_own_settings_concerns_that_analyte_only(
        make_study, outside, capsys, approved, changed, key, protocol_value, run_value):
    files = {"calibration.csv": TWO, "recovery.csv": RECOVERY_2_LEVELS}
    body = PER_LEVEL.replace("levels = [{ added = 2, range_pct = [80, 120] }]\n", "")
    study = make_study(body + approved, files=files)
    code, _, err = _run(capsys, "protocol", study, "--out", outside / "p", "--approved-on", "2026-12-01",
                        "--approved-by", "A. Approver")
    assert (code, err) == (0, "")
    study = make_study(body + changed, files=files)
    _run(capsys, "run", study, "--out", outside / "r", "--protocol", outside / "p" / "protocol.json",
         "--format", "json")
    results = json.loads((outside / "r" / "results.json").read_text(encoding="utf-8"))
    (dev,) = results["protocol"]["deviations"]
    assert (dev["key"], dev["protocol"], dev["run"], dev["analyte"]) == (key, protocol_value, run_value, "zinc")
    per_analyte = {a["name"]: [c["id"] for c in a["criteria"] if c["id"] == "protocol-deviation"]
                   for a in results["analytes"]}
    # the rule of with_deviations: a deviation with an analyte joins that analyte's criteria only
    assert per_analyte == {"lead": [], "zinc": ["protocol-deviation"]}
    assert results["verdict"] == "fail"
