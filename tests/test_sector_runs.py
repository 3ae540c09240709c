"""The sector characteristics read from the injections of [[runs]] (issue #15).

Carry-over from each run's sequence, selectivity from matrix-blank injections with a lot, the
EP17 limits and the MDL from the found values of blank and low-level injections. Where the
designs coincide, the same data given as the characteristic's own file give the same numbers
(to 1e-12). The exports are invented for the tests; expected values are hand computations from
the formulas named beside them.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

import pytest
from _builders import IS_AND_LOT, analyte, close, run_json, runs_head, write_own_files
from _builders import write_runs as _write_runs
from bs4 import BeautifulSoup
from test_dossier import assert_correctly_rounded, lookup

from validator.characteristics.carry_over.analysis import carry_over_from_runs, carry_over_criteria
from validator.characteristics.selectivity.analysis import selectivity_from_runs
from validator.cli import main
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study

HEAD = runs_head("SR-1", "Sector characteristics from runs", columns=IS_AND_LOT + "{order}", types="""\
calibrator = ["Cal"]
blank = ["Blank"]
zero = ["Zero"]
matrix_blank = ["Blank Lot"]
low_level = ["Low"]
""")

HEADER = "Sample,Type,Level,Area,IS Area,Lot\n"
# run 1: the blank right after the highest calibrator (Cal 4, row 6) is DB-1 (row 7)
RUN_1 = HEADER + """\
ZB-1,Zero,,3,1000,
Cal 1,Cal,1,100,1000,
Cal 2,Cal,2,210,1020,
Cal 3,Cal,5,490,980,
Cal 4,Cal,10,1010,1000,
DB-1,Blank,,12,30,
ZB-2,Zero,,2,995,
Cal 1b,Cal,1,104,990,
MB-1,Blank Lot,,5,20,L1
MB-2,Blank Lot,,8,10,L2
MB-3,Blank Lot,,3,5,L3
MB-4,Blank Lot,,15,40,L4
MB-5,Blank Lot,,22,60,L5
MB-6,Blank Lot,,6,12,L6
MB-4b,Blank Lot,,9,45,L4
LL-A,Low,0.5,52,1000,L1
LL-A,Low,0.5,49,1000,L1
LL-A,Low,0.5,55,1000,L1
LL-A,Low,0.5,47,1000,L1
LL-B,Low,0.5,50,1000,L2
LL-B,Low,0.5,53,1000,L2
LL-B,Low,0.5,46,1000,L2
LL-B,Low,0.5,51,1000,L2
"""
# run 2: the highest level twice in a row; the blank follows the second (Cal 4b, row 6)
RUN_2 = HEADER + """\
Cal 1,Cal,1,98,1005,
Cal 2,Cal,2,200,995,
Cal 3,Cal,5,505,1000,
Cal 4,Cal,10,995,1000,
Cal 4b,Cal,10,1000,1000,
DB-2,Blank,,18,25,
ZB-3,Zero,,4,1002,
LL-A,Low,0.5,48,1000,L1
LL-B,Low,0.5,54,1000,L2
"""

SECTORS = "\n[carry_over]\n\n[selectivity]\nmin_lots = 6\n\n[limit_of_blank]\n\n[method_detection_limit]\n"


def write_runs(folder, runs: dict, *, order: str = "", sectors: str = SECTORS):
    """The exports and their study (``order``: [columns] lines added after the lot's)."""
    return _write_runs(folder, runs, head=HEAD.format(order=order), sectors=sectors)


def criterion(entry: dict, cid: str) -> dict:
    return next(c for c in entry["criteria"] if c["id"] == cid)


# --- carry-over ------------------------------------------------------------------------------------

def test_carry_over_picks_the_blank_right_after_the_highest_calibrator(tmp_path, outside):
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": RUN_1, "run-2.csv": RUN_2}), outside))
    co = r["carry_over"]
    assert co["data_from"] == "runs"
    b1, b2 = co["run_blanks"]
    assert (b1["run"], b1["blank"], b1["row"], b1["after"], b1["after_row"]) == ("run-1", "DB-1", 7, "Cal 4", 6)
    # hand computation, ICH M10 carry-over ratio: 100 x blank area / mean area of the run's lowest calibrators
    # run 1: LLOQ = (100 + 104)/2 = 102; 100 x 12/102
    assert b1["lloq_response"] == pytest.approx(102.0, rel=1e-15)
    assert b1["analyte_percent"] == pytest.approx(100 * 12 / 102, rel=1e-12)
    # IS: 100 x blank IS / mean IS of the run's calibrators (1000+1020+980+1000+990)/5 = 998
    assert b1["internal_standard_reference"] == pytest.approx(998.0, rel=1e-15)
    assert b1["internal_standard_percent"] == pytest.approx(100 * 30 / 998, rel=1e-12)
    # run 2: the blank after the second top calibrator (Cal 4b); LLOQ = 98, IS mean = 5000/5 = 1000
    assert (b2["run"], b2["blank"], b2["after"], b2["after_row"]) == ("run-2", "DB-2", "Cal 4b", 6)
    assert b2["analyte_percent"] == pytest.approx(100 * 18 / 98, rel=1e-12)              # hand computation
    assert b2["internal_standard_percent"] == pytest.approx(100 * 25 / 1000, rel=1e-12)  # hand computation
    assert co["max_analyte_percent"] == pytest.approx(100 * 18 / 98, rel=1e-12)
    assert co["passed"] is True and criterion(r, "carry-over")["pass"] is True
    assert "carry_over" in r["runs"]["feeds"]


def test_carry_over_follows_the_mapped_order_column(tmp_path, outside):
    # the order column puts ZB-2 (row 8) right after Cal 4 and DB-1 at the end
    lines = RUN_1.splitlines()
    header, rows = lines[0] + ",Inj\n", lines[1:]
    order = {i: i + 1 for i in range(len(rows))}
    order[5], order[6] = len(rows) + 1, 6          # DB-1 last, ZB-2 sixth (right after Cal 4, fifth)
    text = header + "".join(f"{row},{order[i]}\n" for i, row in enumerate(rows))
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": text}, order='order = "Inj"\n'), outside))
    (b,) = r["carry_over"]["run_blanks"]
    assert (b["blank"], b["row"], b["after"]) == ("ZB-2", 8, "Cal 4")
    assert b["analyte_percent"] == pytest.approx(100 * 2 / 102, rel=1e-12)          # hand computation


def test_no_blank_after_the_highest_calibrator_is_not_applicable(tmp_path, outside):
    text = RUN_1.replace("DB-1,Blank,,12,30,\n", "").replace("ZB-2,Zero,,2,995,\n", "")   # Cal 4, then Cal 1b
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": text}), outside))
    co = r["carry_over"]
    assert co["passed"] is None and co["max_analyte_percent"] is None
    assert "Cal 4" in co["reason"] and "not a blank" in co["reason"]
    c = criterion(r, "carry-over")
    assert c["pass"] is None and c["note"].startswith("not applicable")
    assert any(n["item"].startswith("carry_over") for n in r["not_applicable"])


@pytest.mark.parametrize("is_area", ["", "0"])
def test_a_blank_without_internal_standard_serves_the_raw_area_checks_only(tmp_path, outside, is_area):
    text = RUN_1.replace("DB-1,Blank,,12,30,", f"DB-1,Blank,,12,{is_area},")
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": text}), outside))
    db = next(i for i in r["runs"]["injections"] if i["sample"] == "DB-1")
    # the ratio analyte/IS is undefined: no found value, the chain says why
    assert db["response"] is None and db["found"] is None and "ratio analyte/IS is undefined" in db["reason"]
    k = r["runs"]["injections"].index(db)
    assert any(n["item"] == f"runs.injections.{k}" and "undefined" in n["reason"] for n in r["not_applicable"])
    (b,) = r["carry_over"]["run_blanks"]
    assert (b["blank"], b["type"]) == ("DB-1", "blank")
    assert b["analyte_percent"] == pytest.approx(100 * 12 / 102, rel=1e-12)    # hand computation, as above
    c = criterion(r, "carry-over-internal-standard")
    if is_area == "0":
        # hand computation: 100 x 0/998 = 0 %, judged
        assert b["internal_standard_percent"] == 0.0 and c["pass"] is True
    else:
        # not given: not shown, not passed
        assert b["internal_standard_percent"] is None and "row 7" in b["internal_standard_note"]
        assert c["pass"] is None and c["note"].startswith("not applicable: no IS area is given for")
        assert r["carry_over"]["internal_standard_note"] == b["internal_standard_note"]
    # the LoB blanks are the analyte-free injections with a found value: DB-1 is not among them
    assert "DB-1" not in {i["sample"] for i in r["runs"]["injections"] if i["found"] is not None}


def test_a_zero_sample_after_the_highest_calibrator_is_judged_on_its_analyte_part(tmp_path, outside):
    text = RUN_1.replace("DB-1,Blank,,12,30,", "DB-1,Zero,,12,990,")
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": text, "run-2.csv": RUN_2}), outside))
    co = r["carry_over"]
    b1, b2 = co["run_blanks"]
    assert (b1["blank"], b1["type"], b2["type"]) == ("DB-1", "zero", "blank")
    # the zero sample's IS area is the internal standard added, not carry-over: analyte part only
    assert b1["analyte_percent"] == pytest.approx(100 * 12 / 102, rel=1e-12)     # hand computation
    assert b1["internal_standard_percent"] is None and "zero sample" in b1["internal_standard_note"]
    assert b1["blank_internal_standard"] == 990
    # the IS part on the blank of run 2 only: 100 x 25/1000 (hand computation)
    assert co["internal_standard_percent"] == pytest.approx([2.5], rel=1e-12)
    assert criterion(r, "carry-over-internal-standard")["pass"] is True
    # a zero sample has a ratio and a found value (it feeds the limits of blank as a blank with IS)
    zero = next(i for i in r["runs"]["injections"] if i["sample"] == "DB-1")
    assert zero["response"] == pytest.approx(12 / 990, rel=1e-15) and zero["found"] is not None
    # only zero samples: the IS part is not applicable, with the reason
    alone = analyte(run_json(write_runs(tmp_path, {"run-1.csv": text}), outside, "alone"))
    c = criterion(alone, "carry-over-internal-standard")
    assert c["pass"] is None and "only zero samples" in c["note"]
    assert criterion(alone, "carry-over")["pass"] is True


def test_a_calibrator_without_internal_standard_is_an_error(tmp_path):
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": RUN_1.replace("Cal 3,Cal,5,490,980,", "Cal 3,Cal,5,490,,")}))
    assert str(err.value).startswith('run-1.csv, row 5, column "is area": the internal-standard area is missing; '
                                     "a calibrator injection needs one")


def test_a_matrix_blank_without_internal_standard_area_is_an_error_for_selectivity(tmp_path):
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": RUN_1.replace("MB-3,Blank Lot,,3,5,L3", "MB-3,Blank Lot,,3,,L3")}))
    assert str(err.value).startswith('run-1.csv, row 12, column "is area": matrix blank "MB-3" has no '
                                     "internal-standard area")


def test_carry_over_pure_function_with_qcs_in_the_is_reference():
    @dataclass(frozen=True)
    class Inj:
        run: str
        type: str
        level: float | None
        analyte_response: float
        internal_standard_response: float | None
        sample: str
        row: int
        file: str = "r.csv"
        sheet: str | None = None

        @property
        def position(self):
            return self.row

    seq = [Inj("A", "calibrator", 1, 50, 900, "C1", 2), Inj("A", "calibrator", 8, 400, 1100, "C8", 3),
           Inj("A", "blank", None, 4, 11, "B", 4), Inj("A", "qc", 3, 150, 1000, "Q", 5)]
    result = carry_over_from_runs(seq, analyte_limit_pct=20, internal_standard_limit_pct=5)
    # hand computation: 100 x 4/50 = 8 %; IS reference (900 + 1100 + 1000)/3 = 1000, 100 x 11/1000 = 1.1 %
    assert result.analyte_percent == pytest.approx((8.0,), rel=1e-15)
    assert result.internal_standard_percent == pytest.approx((1.1,), rel=1e-14)
    # the last injection of a run being the top calibrator: not applicable, never a pass
    alone = carry_over_from_runs(seq[:2], analyte_limit_pct=20, internal_standard_limit_pct=5)
    assert alone.passed is None and "last injection" in alone.reason
    assert carry_over_criteria(alone)[0].passed is None


def test_carry_over_from_runs_equals_the_own_file(tmp_path, outside):
    runs_dir, file_dir = tmp_path / "runs", tmp_path / "file"
    runs_dir.mkdir(), file_dir.mkdir()
    only = "".join(line + "\n" for line in RUN_1.splitlines() if not line.startswith(("MB-", "LL-")))
    a = analyte(run_json(write_runs(runs_dir, {"run-1.csv": only}, sectors="\n[carry_over]\n"), outside, "a"))
    # the same design as a [carry_over] file: the blank, and the LLOQ rows whose IS mean is the run's (998)
    own = write_own_files(file_dir, "SR-2", '[carry_over]\ndata = "carry-over.csv"\n', {"carry-over.csv":
                          "kind,response,internal_standard_response\nblank,12,30\nlloq,100,998\nlloq,104,998\n"})
    b = analyte(run_json(own, outside, "b"))
    assert b["carry_over"]["data_from"] == "file" and b["carry_over"]["run_blanks"] == []
    for key in ("analyte_percent", "internal_standard_percent"):
        assert a["carry_over"][key] == pytest.approx(b["carry_over"][key], rel=1e-12, abs=0)
    assert a["carry_over"]["passed"] == b["carry_over"]["passed"]


# --- selectivity -----------------------------------------------------------------------------------

def test_selectivity_from_runs_equals_the_own_file(tmp_path, outside):
    runs_dir, file_dir = tmp_path / "runs", tmp_path / "file"
    runs_dir.mkdir(), file_dir.mkdir()
    a = analyte(run_json(write_runs(runs_dir, {"run-1.csv": RUN_1},
                                    sectors="\n[selectivity]\n[limit_of_blank]\n"), outside, "a"))
    rows = "".join(f"{lot},blank,{area},{ist}\n" for lot, area, ist in
                   [("L1", 5, 20), ("L2", 8, 10), ("L3", 3, 5), ("L4", 15, 40), ("L5", 22, 60), ("L6", 6, 12),
                    ("L4", 9, 45)])
    own = write_own_files(file_dir, "SR-2", '[selectivity]\ndata = "selectivity.csv"\n', {"selectivity.csv":
                          "lot,kind,response,internal_standard_response\n" + rows + ",lloq,100,1000\n,lloq,104,990\n"})
    b = analyte(run_json(own, outside, "b"))
    sa, sb = a["selectivity"], b["selectivity"]
    assert (sa["data_from"], sb["data_from"]) == ("runs", "file")
    assert [lot["lot"] for lot in sa["lots"]] == [lot["lot"] for lot in sb["lots"]]
    for la, lb in zip(sa["lots"], sb["lots"]):
        assert la["analyte_percent"] == pytest.approx(lb["analyte_percent"], rel=1e-12, abs=0)
        assert la["internal_standard_percent"] == pytest.approx(lb["internal_standard_percent"], rel=1e-12, abs=0)
        assert la["passed"] == lb["passed"]
    assert (sa["fraction_passed"], sa["passed"]) == (sb["fraction_passed"], sb["passed"])
    # hand computation: lot L5, 100 x 22/102 and 100 x 60/995 (IS mean of the lowest calibrators)
    l5 = next(lot for lot in sa["lots"] if lot["lot"] == "L5")
    assert l5["analyte_percent"] == pytest.approx(100 * 22 / 102, rel=1e-12)
    assert l5["internal_standard_percent"] == pytest.approx(100 * 60 / 995, rel=1e-12)
    assert len(sa["injections"]) == 7 and sa["injections"][0]["row"] == 10


def test_selectivity_compares_each_matrix_blank_with_its_own_run():
    @dataclass(frozen=True)
    class Inj:
        run: str
        type: str
        level: float | None
        analyte_response: float
        internal_standard_response: float | None = None
        lot: str = ""
        sample: str = "x"
        file: str = "r.csv"
        sheet: str | None = None
        row: int = 2

    seq = [Inj("A", "calibrator", 1, 100), Inj("A", "calibrator", 5, 500), Inj("A", "matrix_blank", None, 10, lot="L1"),
           Inj("B", "calibrator", 1, 50), Inj("B", "calibrator", 5, 250), Inj("B", "matrix_blank", None, 10, lot="L1"),
           Inj("B", "matrix_blank", None, 4, lot="L2")]
    result = selectivity_from_runs(seq, analyte_limit_pct=20, internal_standard_limit_pct=5, min_lots=2,
                                   min_fraction=1.0)
    # hand computation: L1 in run A 100 x 10/100 = 10 %, in run B 100 x 10/50 = 20 %: the largest, 20 %
    assert [(lot.lot, lot.analyte_percent) for lot in result.lots] == [("L1", 20.0), ("L2", 8.0)]
    assert result.lots[0].internal_standard_percent is None and result.passed is True


# --- EP17 limits and MDL ---------------------------------------------------------------------------

def test_limits_from_runs_equal_the_own_files(tmp_path, outside):
    runs_dir, file_dir = tmp_path / "runs", tmp_path / "file"
    runs_dir.mkdir(), file_dir.mkdir()
    sectors = '\n[limit_of_blank]\nmethod = "parametric"\n[method_detection_limit]\n'
    def zero_blanks(text):      # the blanks with the internal standard only (not the carry-over or matrix blanks)
        return ("".join(line + "\n" for line in text.splitlines() if not line.startswith(("MB-", "DB-")))
                + "ZB-1,Zero,,5,1001,\nZB-2,Zero,,3,997,\nZB-1,Zero,,2,1000,\n")

    ra = run_json(write_runs(runs_dir, {"run-1.csv": zero_blanks(RUN_1), "run-2.csv": zero_blanks(RUN_2)},
                             sectors=sectors), outside, "a")
    a = analyte(ra)
    injections = a["runs"]["injections"]
    blanks = [i for i in injections if i["type"] == "zero"]
    low = [i for i in injections if i["type"] == "low_level"]
    assert len(low) == 10 and all(i["found"] is not None for i in blanks + low)
    # the chain response -> run calibration -> found, for one low-level injection (hand computation,
    # the inverse of the run's straight line, ISO 8466-1 sec. 6)
    cal = {c["run"]: c for c in a["runs"]["calibrations"]}
    i = low[-1]
    assert i["response"] == pytest.approx(54 / 1000, rel=1e-15)
    assert i["found"] == pytest.approx((i["response"] - cal[i["calibration"]]["intercept"])
                                       / cal[i["calibration"]]["slope"], rel=1e-12)
    # the same found values as the characteristics' own files (lot "1" where none is given, batch = run)
    tables = ('[limit_of_blank]\nmethod = "parametric"\nblanks = "blanks.csv"\nlow_samples = "low.csv"\n'
              '[method_detection_limit]\nspiked = "mdl-spiked.csv"\nblanks = "mdl-blanks.csv"\n')
    own = write_own_files(file_dir, "SR-3", tables, {
        "blanks.csv": "sample,lot,found\n" + "".join(
            f"{i['sample']},{i.get('lot', '1')},{i['found']!r}\n" for i in blanks),
        "low.csv": "sample,lot,nominal,found\n" + "".join(
            f"{i['sample']},{i['lot']},{i['level']!r},{i['found']!r}\n" for i in low),
        "mdl-spiked.csv": "batch,spike_level,found\n" + "".join(
            f"{i['run']},{i['level']!r},{i['found']!r}\n" for i in low),
        "mdl-blanks.csv": "batch,found\n" + "".join(f"{i['run']},{i['found']!r}\n" for i in blanks)})
    b = analyte(run_json(own, outside, "b"))
    for name in ("limit_of_blank", "method_detection_limit"):
        assert (a[name]["data_from"], b[name]["data_from"]) == ("runs", "file")
        assert close(_without(a[name]), _without(b[name]))
    assert a["limit_of_blank"]["lod"] is not None and a["method_detection_limit"]["value"] is not None
    assert {"limit_of_blank", "method_detection_limit"} <= set(a["runs"]["feeds"])


def _without(entry: dict) -> dict:
    return {k: v for k, v in entry.items() if k != "data_from"}


# --- errors ----------------------------------------------------------------------------------------

def test_a_matrix_blank_without_its_lot_is_an_error(tmp_path):
    study = write_runs(tmp_path, {"run-1.csv": RUN_1.replace("MB-3,Blank Lot,,3,5,L3", "MB-3,Blank Lot,,3,5,")})
    with pytest.raises(DataError) as err:
        load_study(study)
    assert str(err.value).startswith('run-1.csv, row 12, column "lot": a matrix_blank injection needs its lot')


def test_two_injections_at_one_position_are_an_error(tmp_path):
    lines = RUN_1.splitlines()
    text = lines[0] + ",Inj\n" + "".join(f"{row},{min(i + 1, 5)}\n" for i, row in enumerate(lines[1:]))
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": text}, order='order = "Inj"\n'))
    assert str(err.value).startswith('run-1.csv, row 7, column "inj": position 5 is also that of row 6')


def test_injection_types_no_table_reads_are_an_error(tmp_path):
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": RUN_1}, sectors="\n[carry_over]\n"))
    assert "matrix_blank" in str(err.value) and "[selectivity]" in str(err.value) and "row 10" in str(err.value)


def test_a_sector_table_without_files_needs_runs(make_study):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[carry_over]\n')
    with pytest.raises(StudyError) as err:
        load_study(study)
    assert "carry_over.data" in str(err.value)


def test_half_of_the_files_is_an_error(tmp_path):
    with pytest.raises(StudyError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": RUN_1.replace("Blank Lot", "Blank")},
                              sectors='\n[method_detection_limit]\nspiked = "x.csv"\n'))
    assert "method_detection_limit.blanks" in str(err.value)


def test_the_dossier_says_where_the_numbers_came_from(tmp_path, outside):
    out = outside / "html"
    assert main(["run", str(write_runs(tmp_path, {"run-1.csv": RUN_1, "run-2.csv": RUN_2})), "--out", str(out),
                 "--format", "html,json"]) in (0, 1)
    html = next(out.glob("*.html")).read_text(encoding="utf-8")
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    text = BeautifulSoup(html, "html.parser").get_text(" ")
    assert "Read from the run sequences" in text and "matrix-blank injection(s) of the runs" in text
    assert "found values of the runs' blank, zero and low_level injections" in text
    assert "Carry-over (the run sequences)".lower() in text.lower()
    shown = 0
    for span in BeautifulSoup(html, "html.parser").select("span.n[data-src]"):
        if ".carry_over." in span["data-src"] or ".selectivity." in span["data-src"]:   # shown as in results.json
            assert_correctly_rounded(span, lookup(results, span["data-src"]))
            shown += 1
    assert shown > 20


# --- matrix lots, stability and dilution integrity from QC injections ------------------------------

QC_HEADER = "Sample,Type,Level,Area,IS Area,Lot,Condition,Dil\n"
QC_COLUMNS = 'condition = "Condition"\ndilution = "Dil"\n'
QC_SECTORS = "\n[matrix_effect]\nmin_lots = 6\n\n[stability]\nmin_replicates = 3\n\n[dilution_integrity]\n"


def qc_run(k: int) -> str:
    """An invented run: 4 calibrators (area ratio ~ 0.1 x level), then QCs of 6 lots at 3 and 80, stored QCs
    (fresh and after 3 freeze-thaw cycles) at 3 and 80, and QCs of 500 diluted 10-fold."""
    rows = [f"Cal {lv},Cal,{lv},{100 * lv + 3 * k},1000,,," for lv in (1, 2, 5, 10, 50, 100)]
    for j, lot in enumerate(("L1", "L2", "L3", "L4", "L5", "L6")):
        for lv in (3, 80):
            for rep in range(2):
                area = 100 * lv * (1 + 0.01 * ((j + rep + k) % 5) - 0.02)
                rows.append(f"M{lot}-{lv}-{rep},qc,{lv},{area:.3f},{1000 + 7 * rep},{lot},,")
    for cond, shift in (("fresh", 0.0), ("freeze-thaw x3", -0.04)):
        for lv in (3, 80):
            for rep in range(2):
                area = 100 * lv * (1 + shift + 0.01 * ((rep + k) % 3))
                rows.append(f"S-{cond}-{lv}-{rep},qc,{lv},{area:.3f},1000,,{cond},")
    for rep in range(3):
        rows.append(f"D-{rep},qc,500,{100 * 50 * (1 + 0.01 * (rep - 1 + k)):.3f},1000,,,10")
    return QC_HEADER + "".join(r + "\n" for r in rows)


def test_matrix_lots_stability_and_dilution_from_runs_equal_the_own_files(tmp_path, outside):
    runs_dir, file_dir = tmp_path / "runs", tmp_path / "file"
    runs_dir.mkdir(), file_dir.mkdir()
    a = analyte(run_json(write_runs(runs_dir, {"run-1.csv": qc_run(0), "run-2.csv": qc_run(1)}, order=QC_COLUMNS,
                                    sectors=QC_SECTORS), outside, "a"))
    injections = a["runs"]["injections"]
    lots = [i for i in injections if "lot" in i]
    stored = [i for i in injections if "condition" in i]
    diluted = [i for i in injections if "dilution" in i]
    assert (len(lots), len(stored), len(diluted)) == (48, 16, 6)
    assert {"matrix_effect", "stability", "dilution_integrity"} <= set(a["runs"]["feeds"])
    assert "precision" not in a["runs"]["feeds"]         # such QCs serve their sector table only
    # the chain for one QC (hand computation: the inverse of its run's straight line, ISO 8466-1 sec. 6)
    cal = {c["run"]: c for c in a["runs"]["calibrations"]}
    q = diluted[-1]
    assert q["found"] == pytest.approx((q["response"] - cal[q["run"]]["intercept"]) / cal[q["run"]]["slope"],
                                       rel=1e-12)
    tables = ('[matrix_effect]\nmin_lots = 6\nlots_data = "lots.csv"\n[stability]\nmin_replicates = 3\n'
              'data = "stability.csv"\n[dilution_integrity]\ndata = "dilution.csv"\n')
    own = write_own_files(file_dir, "SR-4", tables, {
        "lots.csv": "lot,nominal,found\n" + "".join(f"{i['lot']},{i['level']!r},{i['found']!r}\n" for i in lots),
        "stability.csv": "condition,nominal,found\n" + "".join(
            f"{i['condition']},{i['level']!r},{i['found']!r}\n" for i in stored),
        "dilution.csv": "factor,nominal,found\n" + "".join(
            f"{i['dilution']!r},{i['level']!r},{i['found']!r}\n" for i in diluted)})
    b = analyte(run_json(own, outside, "b"))
    for name in ("matrix_effect", "stability", "dilution_integrity"):
        assert (a[name]["data_from"], b[name]["data_from"]) == ("runs", "file")
        assert close(_without(a[name]), _without(b[name]))
    # hand computation, ICH M10 lot accuracy: 100 x mean found / nominal, lot L1 at 3
    l1 = [i["found"] for i in lots if i["lot"] == "L1" and i["level"] == 3]
    lv = next(x for x in a["matrix_effect"]["lots"] if x["nominal"] == 3)
    first = next(x for x in lv["lots"] if x["lot"] == "L1")
    assert first["accuracy_percent"] == pytest.approx(100 * sum(l1) / len(l1) / 3, rel=1e-12)
    # dilution: back-calculated = found x 10 (hand computation)
    assert a["dilution_integrity"]["levels"][0]["back_calculated"] == pytest.approx(
        [10 * i["found"] for i in diluted], rel=1e-15)
    ids = {c["id"] for c in a["criteria"]}
    assert {"matrix-lots-3", "matrix-lots-80", "stability-freeze-thaw-x3-3", "dilution-accuracy-10x-500"} <= ids


@pytest.mark.parametrize("edit, expected", [
    (lambda t: t.replace(",,freeze-thaw x3,", ",L1,freeze-thaw x3,", 1),
     "a QC injection serves one of matrix lots (lot), stability (condition) and dilution integrity (dilution)"),
    (lambda t: t.replace("Cal 1,Cal,1,100,1000,,,", "Cal 1,Cal,1,100,1000,,,2"),
     "a dilution factor other than 1 is read for QC injections only"),
    (lambda t: t.replace(",,,10\n", ",,,0.5\n", 1), "the dilution factor 0.5 is below 1"),
    (lambda t: t.replace("Cal 2,Cal,2,200,1000,,,", "Cal 2,Cal,2,200,1000,,bench,"),
     "a storage condition is read for QC injections only"),
])
def test_qc_roles_errors_name_the_row(tmp_path, edit, expected):
    study = write_runs(tmp_path, {"run-1.csv": edit(qc_run(0))}, order=QC_COLUMNS, sectors=QC_SECTORS)
    with pytest.raises(DataError) as err:
        load_study(study)
    assert str(err.value).startswith("run-1.csv, row ") and expected in str(err.value)


def test_qcs_with_a_lot_need_a_matrix_effect_table_reading_the_runs(tmp_path):
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": qc_run(0)}, order=QC_COLUMNS,
                              sectors="\n[stability]\n[dilution_integrity]\n"))
    assert "QC injections with a lot" in str(err.value) and "[matrix_effect]" in str(err.value)
    assert str(err.value).startswith("run-1.csv, row 8")


def test_fresh_reference_needs_fresh_qcs_at_each_level(tmp_path):
    text = qc_run(0).replace(",fresh,", ",bench 4 h,")
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": text}, order=QC_COLUMNS,
                              sectors=QC_SECTORS.replace("[stability]\n", '[stability]\nreference = "fresh"\n')))
    assert 'reference = "fresh" but nominal 3 has no QC of condition "fresh"' in str(err.value)


def test_the_dossier_says_the_qc_studies_came_from_the_runs(tmp_path, outside):
    out = outside / "html"
    study = write_runs(tmp_path, {"run-1.csv": qc_run(0), "run-2.csv": qc_run(1)}, order=QC_COLUMNS, sectors=QC_SECTORS)
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) in (0, 1)
    text = BeautifulSoup(next(out.glob("*.html")).read_text(encoding="utf-8"), "html.parser").get_text(" ")
    for what in ("have a lot", "have a storage condition", "have a dilution factor"):
        assert f"the runs' QC injections that {what}" in text
    assert "the matrix effect (QCs of each lot)" in text and "dilution integrity (diluted QCs)" in text


# --- a blank with an internal standard mapped ------------------------------------------------------

def test_a_blank_showing_an_is_area_has_no_ratio_and_feeds_no_limit(tmp_path, outside):
    """A blank has neither analyte nor IS (ICH M10): the small IS area a blank shows (carry-over of the IS)
    gives no ratio, so it is not quantified and is not a blank result of the LoB or MDL; the zero samples
    (blank matrix with the IS) are."""
    r = analyte(run_json(write_runs(tmp_path, {"run-1.csv": RUN_1, "run-2.csv": RUN_2}), outside))
    db = next(i for i in r["runs"]["injections"] if i["sample"] == "DB-1")
    assert (db["type"], db["internal_standard_response"]) == ("blank", 30)
    assert db["response"] is None and db["found"] is None and "ratio analyte/IS is undefined" in db["reason"]
    zeros = [i for i in r["runs"]["injections"] if i["type"] == "zero"]
    assert [i["sample"] for i in zeros] == ["ZB-1", "ZB-2", "ZB-3"]
    # the LoB's blank results are the zero samples' found values, not the blanks' (DB-1, DB-2)
    assert r["limit_of_blank"]["blank_results"] == pytest.approx([i["found"] for i in zeros], rel=1e-15)
    assert r["method_detection_limit"]["n_blanks"] == 3
    # still read on raw areas: the carry-over of run 1 is DB-1's (hand computation, 100 x 12/102)
    assert r["carry_over"]["run_blanks"][0]["analyte_percent"] == pytest.approx(100 * 12 / 102, rel=1e-12)


def test_blanks_without_zero_samples_cannot_give_the_limit_of_blank(tmp_path):
    text = RUN_1.replace("ZB-1,Zero,,3,1000,\n", "").replace("ZB-2,Zero,,2,995,\n", "")
    with pytest.raises(DataError) as err:
        load_study(write_runs(tmp_path, {"run-1.csv": text}))
    assert str(err.value).startswith('run-1.csv, row 6: [limit_of_blank] reads the runs\' blank results, but '
                                     'analyte "SR-1" has blank injections (first: "DB-1") and no zero injection')
    assert "type blank matrix with the internal standard as zero" in str(err.value)


# ---------------------------------------------------------------- carry-over and [[exclusions]] of the sequence
PLASMA_EXAMPLE = Path(__file__).resolve().parents[1] / "example_studies" / "plasma-lcms-bioanalytical"


@pytest.mark.parametrize("exclusion, refused", [
    ('run = "run-1"\ninjection = "Cal 8"', True),          # the run's highest calibrator (level 500)
    ('file = "run-1.csv"\nrow = 10', True),                 # the double blank right after it (file row 10)
    ('run = "run-1"\ninjection = "Cal 1"', False),         # a lower calibrator: the sequence after the top is whole
])
def test_carry_over_refuses_exclusions_that_change_the_sequence_after_the_top(tmp_path, outside, capsys,
                                                                             exclusion, refused):
    # found by a black-box tester: excluding the highest calibrator made the carry-over use the blank after
    # the next-highest one (2.6 %) instead of the 78 % blank injected right after the excluded top calibrator
    import shutil
    folder = tmp_path / "p"
    shutil.copytree(PLASMA_EXAMPLE, folder)
    study = folder / "study.toml"
    study.write_text(study.read_text(encoding="utf-8") + f'\n[[exclusions]]\n{exclusion}\nreason = "test"\n',
                     encoding="utf-8")
    code = main(["run", str(study), "--out", str(outside / "o"), "--format", "json"])
    err = capsys.readouterr().err
    if refused:
        assert code == 2 and "run-1.csv, row " in err and "[carry_over] reads the injection sequence" in err
    else:
        assert code in (0, 1), err
