"""The matrix effect's matrix factor and slope ratio read from the injections of [[runs]] (issue #15).

post_extraction injections (analyte and IS spiked after extraction into a blank matrix of one lot) and
neat injections (the same amounts in neat solution) give the ICH M10 matrix factor; solvent_calibrator
injections give the SANTE slope ratio's solvent calibration beside the runs' (matrix-matched)
calibrators. The same data given as the characteristic's own files give the same numbers (to 1e-12).
The exports are invented for the tests; expected values are hand computations from the formulas named
beside them.
"""

from __future__ import annotations

import pytest
from _builders import analyte, close, run_json, runs_head, write_own_files
from _builders import write_runs as _write_runs

from validator.cli import main
from validator.errors import DataError
from validator.inputs.loading import load_study

HEAD = runs_head("MF-1", "Matrix factor and slope ratio from runs", types="""\
calibrator = ["Cal"]
post_extraction = ["PES"]
neat = ["Neat"]
solvent_calibrator = ["Solvent Cal"]
""")

HEADER = "Sample,Type,Level,Area,IS Area,Lot\n"
LOTS = ("L1", "L2", "L3", "L4", "L5", "L6")


def run_text(k: int, *, factor: bool = True, solvent: bool = True) -> str:
    """An invented run: 5 calibrators in matrix, 5 in solvent (about 10 % more response), post-extraction
    spikes of 6 lots at 3 ng/mL (2 each) and 3 neat solutions at 3 ng/mL."""
    rows = [f"Cal {lv},Cal,{lv},{100 * lv + 2 * k + (lv % 3)},{1000 + 5 * k}," for lv in (1, 2, 5, 10, 20)]
    if solvent:
        rows += [f"SC {lv},Solvent Cal,{lv},{110 * lv + 3 * k - (lv % 4)},{1010 - 3 * k}," for lv in (1, 2, 5, 10, 20)]
    if factor:
        for j, lot in enumerate(LOTS):
            for rep in range(2):
                rows.append(f"PES {lot}-{rep},PES,3,{270 + 7 * j - 3 * rep + k},{930 + 11 * j + 4 * rep - k},{lot}")
        rows += [f"Neat-{rep},Neat,3,{300 + 2 * rep + k},{1000 - 3 * rep + 2 * k}," for rep in range(3)]
    return HEADER + "".join(r + "\n" for r in rows)


def write_runs(folder, runs: dict, *, sectors: str = "\n[matrix_effect]\n", head: str = HEAD):
    return _write_runs(folder, runs, head=head, sectors=sectors)


def _rows(text: str) -> list[list[str]]:
    return [line.split(",") for line in text.splitlines()[1:]]


def test_matrix_factor_and_slope_ratio_from_runs_equal_the_own_files(tmp_path, outside):
    runs_dir, file_dir = tmp_path / "runs", tmp_path / "file"
    runs_dir.mkdir(), file_dir.mkdir()
    texts = {"run-1.csv": run_text(0), "run-2.csv": run_text(1)}
    a = analyte(run_json(write_runs(runs_dir, texts), outside, "a"))
    me = a["matrix_effect"]
    assert (me["factor_data_from"], me["slope_ratio_data_from"], me["data_from"]) == ("runs", "runs", "file")
    assert "matrix_effect" in a["runs"]["feeds"] and me["lots"] == []
    # the same data as the characteristic's own files: factor_data with the raw areas (lot "neat" for the
    # neat solution), solvent_data with the solvent calibrators' ratios, [calibration] with the calibrators'
    rows = [r for text in texts.values() for r in _rows(text)]
    tables = '[matrix_effect]\nsolvent_data = "solvent.csv"\nfactor_data = "factor.csv"\n'
    own = write_own_files(file_dir, "MF-2", tables, {
        "factor.csv": "lot,analyte_response,internal_standard_response\n" + "".join(
            f"{r[5] or 'neat'},{r[3]},{r[4]}\n" for r in rows if r[1] in ("PES", "Neat")),
        "solvent.csv": "concentration,response\n" + "".join(
            f"{r[2]},{float(r[3]) / float(r[4])!r}\n" for r in rows if r[1] == "Solvent Cal")},
        calibration="concentration,response\n" + "".join(
            f"{r[2]},{float(r[3]) / float(r[4])!r}\n" for r in rows if r[1] == "Cal"),
        response_unit="area ratio", calibration_keys='model = "linear"\nweighting = "none"\n')
    b = analyte(run_json(own, outside, "b"))["matrix_effect"]
    assert (b["factor_data_from"], b["slope_ratio_data_from"]) == ("file", "file")
    assert me["normalised_factor"] is not None and me["slope_ratio"] is not None
    assert close(me["normalised_factor"], b["normalised_factor"])
    assert close(me["slope_ratio"], b["slope_ratio"])
    # hand computation, ICH M10 matrix factor: lot L1 (2 injections per run, 2 runs) against the 6 neat ones
    pes = [(float(r[3]), float(r[4])) for r in rows if r[1] == "PES" and r[5] == "L1"]
    neat = [(float(r[3]), float(r[4])) for r in rows if r[1] == "Neat"]
    mean = lambda v: sum(v) / len(v)                                              # noqa: E731
    mf_a = mean([p[0] for p in pes]) / mean([n[0] for n in neat])
    mf_is = mean([p[1] for p in pes]) / mean([n[1] for n in neat])
    l1 = next(lot for lot in me["normalised_factor"]["lots"] if lot["lot"] == "L1")
    assert l1["analyte_factor"] == pytest.approx(mf_a, rel=1e-12)
    assert l1["internal_standard_factor"] == pytest.approx(mf_is, rel=1e-12)
    assert l1["normalised_factor"] == pytest.approx(mf_a / mf_is, rel=1e-12)
    assert len(me["normalised_factor"]["lots"]) == 6
    ids = {c["id"] for c in a["criteria"]}
    assert "matrix-factor-cv" in ids
    # the injections stay in the chain with their raw areas
    types = {i["type"] for i in a["runs"]["injections"]}
    assert {"post_extraction", "neat", "solvent_calibrator"} <= types


def test_slope_ratio_from_runs_beside_a_factor_file(tmp_path, outside):
    """Each part reads its own source: the factor file stays, the solvent calibration comes from the runs."""
    (tmp_path / "factor.csv").write_text("lot,analyte_response,internal_standard_response\n"
                                         "A,90,1000\nB,95,990\nneat,100,1000\n", encoding="utf-8")
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": run_text(0, factor=False)},
                                    sectors='\n[matrix_effect]\nfactor_data = "factor.csv"\nmin_lots = 2\n'), outside))
    me = r["matrix_effect"]
    assert (me["factor_data_from"], me["slope_ratio_data_from"]) == ("file", "runs")
    # hand computation: lot A 0.9 / 1.0, lot B 0.95 / 0.99
    assert [lot["normalised_factor"] for lot in me["normalised_factor"]["lots"]] == pytest.approx(
        [0.9, 0.95 / 0.99], rel=1e-12)


@pytest.mark.parametrize("edit, sectors, expected", [
    (lambda t: t.replace(",L3\n", ",\n", 1), None,
     'run-1.csv, row 16, column "lot": a post_extraction injection needs its lot'),
    (lambda t: t.replace("Neat-0,Neat,3,", "Neat-0,Neat,4,").replace("Neat-1,Neat,3,", "Neat-1,Neat,4,")
     .replace("Neat-2,Neat,3,", "Neat-2,Neat,4,"), None,
     'run-1.csv, row 12, column "Level": post_extraction injection "PES L1-0" at level 3 has no neat injection at '
     "the same level"),
    (lambda t: t.replace("PES L6-1,PES,3,", "PES L6-1,PES,5,"), None,
     'run-1.csv, row 23, column "Level": post_extraction injection at level 5, but run-1.csv row 12 is at level 3'),
    (lambda t: t.replace("Neat-1,Neat,3,302,997,", "Neat-1,Neat,3,302,997,L1"), None,
     'run-1.csv, row 25, column "lot": a neat injection is the neat solution (no matrix): it has no lot'),
    (lambda t: t, '\n[matrix_effect]\nfactor_data = "f.csv"\n',
     'run-1.csv, row 12: the runs have post_extraction injections (first: "PES L1-0") but [matrix_effect] names '
     "its own factor_data: no table reads them"),
    (lambda t: "".join(line + "\n" for line in t.splitlines() if "PES" not in line and "Neat" not in line), "\n",
     'run-1.csv, row 7: the runs have solvent_calibrator injections (first: "SC 1") but the study has no '
     "[matrix_effect] table: no table reads them"),
    (lambda t: "".join(line + "\n" for line in t.splitlines() if "PES" not in line), None,
     'run-1.csv, row 12: neat injection "Neat-0" has no post_extraction injection of analyte "MF-1"'),
])
def test_matrix_factor_errors_name_file_row_column_and_value(tmp_path, edit, sectors, expected):
    (tmp_path / "f.csv").write_text("lot,analyte_response,internal_standard_response\nA,1,1\nneat,1,1\n",
                                    encoding="utf-8")
    study = write_runs(tmp_path, {"run-1.csv": edit(run_text(0))}, **({} if sectors is None else {"sectors": sectors}))
    with pytest.raises(DataError) as err:
        load_study(study)
    assert str(err.value).startswith(expected), str(err.value)


def test_the_matrix_factor_needs_the_internal_standard_column(tmp_path):
    head = HEAD.replace('internal_standard = "IS Area"\n', "")
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": run_text(0, solvent=False)}, head=head))
    assert str(err.value).startswith('run-1.csv, row 7: post_extraction injection "PES L1-0": the '
                                     "IS-normalised matrix factor needs the internal-standard area")


def test_a_solvent_calibrator_needs_its_level(tmp_path):
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": run_text(0).replace("SC 5,Solvent Cal,5,", "SC 5,Solvent Cal,,")}))
    assert str(err.value).startswith('run-1.csv, row 9, column "level": a solvent_calibrator injection needs a level')


def test_the_dossier_says_the_factor_and_solvent_line_came_from_the_runs(tmp_path, outside):
    from bs4 import BeautifulSoup

    out = outside / "html"
    assert main(["run", str(write_runs(tmp_path, {"run-1.csv": run_text(0)})), "--out", str(out),
                 "--format", "html"]) in (0, 1)
    text = BeautifulSoup(next(out.glob("*.html")).read_text(encoding="utf-8"), "html.parser").get_text(" ")
    assert "The solvent calibration is the runs' solvent_calibrator injections" in text
    assert "raw analyte and internal-standard areas of the runs' post_extraction injections" in text
