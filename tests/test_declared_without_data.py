"""A table the study declares, whose data file has no rows for one analyte, leaves that analyte
INCOMPLETE with a not-applicable criterion naming the table, never a silently shorter PASS.
# expected outcomes: the rule "not shown is not passed" (README, "Verdicts"); no published source
"""

import json

import pytest

from validator.cli import main

CALIBRATION = "analyte,concentration,response\n" + "".join(
    f"{a},{x},{10 * x + d + (0.05 if x == 5 else 0)}\n" for a in "AB" for x in (1, 2, 5, 10, 20) for d in (0.1, -0.1))
STUDY = ('[study]\nid = "T"\ntitle = "t"\nconcentration_unit = "ng/mL"\nresponse_unit = "a"\n'
         '[calibration]\ndata = "calibration.csv"\n')
SECTIONS = {
    "recovery": ('[recovery]\ndata = "x.csv"\n', "analyte,added,found\n" + "".join(f"A,5,{v}\n" for v in (4.9, 5.1, 5.0))),
    "stability": ('[stability]\ndata = "x.csv"\n', "analyte,condition,nominal,found\n"
                  + "".join(f"A,bench-top,3,{v}\n" for v in (2.9, 3.0, 3.1))),
    "reanalysis": ('[reanalysis]\ndata = "x.csv"\n', "analyte,sample,original,repeat\n"
                   + "".join(f"A,S{i},{10 + i},{10.2 + i}\n" for i in range(6))),
}


@pytest.mark.parametrize("name", sorted(SECTIONS))
def test_an_analyte_missing_from_a_declared_table_is_incomplete(tmp_path, outside, capsys, name):
    table, data = SECTIONS[name]
    (tmp_path / "calibration.csv").write_text(CALIBRATION)
    (tmp_path / "x.csv").write_text(data)
    (tmp_path / "study.toml").write_text(STUDY + table)
    assert main(["run", str(tmp_path / "study.toml"), "--out", str(outside / name), "--format", "json"]) == 1
    assert capsys.readouterr().out.startswith("validator: INCOMPLETE")
    results = json.loads((outside / name / "results.json").read_text())
    by_name = {a["name"]: a for a in results["analytes"]}
    assert not [c for c in by_name["A"]["criteria"] if c["id"] == f"{name}-data"]
    gap = [c for c in by_name["B"]["criteria"] if c["id"] == f"{name}-data"]
    assert len(gap) == 1 and gap[0]["pass"] is None
    assert gap[0]["note"].startswith(f'not applicable: the study declares [{name}], but its data have no rows for '
                                     'analyte "B"')
    assert by_name["B"]["verdict"] == "incomplete"


def test_precision_of_identical_results_is_not_shown(tmp_path, outside, capsys):
    """Five identical results per series give RSD 0: no spread is visible at the reported resolution,
    so the RSD and claim criteria are not applicable (not met-by-default).
    # common practice, no published source: a zero SD from rounded results shows no precision
    """
    (tmp_path / "calibration.csv").write_text(CALIBRATION)
    (tmp_path / "precision.csv").write_text("analyte,level,series,found\n" + "".join(
        f"{a},5,{s},5.00\n" for a in "AB" for s in ("d1", "d2", "d3") for _ in range(3)))
    (tmp_path / "study.toml").write_text(STUDY + '[precision]\ndata = "precision.csv"\n'
                                         "repeatability_rsd_max_pct = 2\nintermediate_rsd_max_pct = 3\n"
                                         "claimed_repeatability_rsd_pct = 1.5\n")
    assert main(["run", str(tmp_path / "study.toml"), "--out", str(outside / "p"), "--format", "json"]) == 1
    capsys.readouterr()
    results = json.loads((outside / "p" / "results.json").read_text())
    judged = [c for a in results["analytes"] for c in a["criteria"]
              if c["id"].startswith(("repeatability", "intermediate"))]
    assert {c["id"] for c in judged} == {"repeatability-rsd-5", "intermediate-rsd-5", "repeatability-claim-5"}
    assert all(c["pass"] is None and "no spread at all" in c["note"] for c in judged)
