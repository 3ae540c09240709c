"""A study given as run exports gives the numbers of the same study given as per-characteristic files.

The run exports are written by the test from invented numbers (demo data, not references). The
per-characteristic files hold the same calibrators, blanks and responses, and found values
computed here independently: each run's straight line fitted by statsmodels OLS, then
x0 = (y0 - a) / b (ISO 8466-1 sec. 6), written with repr. Where the two designs coincide every
number of results.json must agree to 1e-12 (relative).
"""

from __future__ import annotations

import json
import math

import numpy as np
import openpyxl
import pytest
import statsmodels.api as sm

from validator.cli import main

HEAD = """[study]
id = "R-1"
title = "Runs against files"
concentration_unit = "ug/L"
response_unit = "area ratio"
"""
LEVELS = (1.0, 2.0, 5.0, 10.0, 20.0)
CRITERIA = """[recovery]
range_pct = [80, 120]
[precision]
repeatability_rsd_max_pct = 20
[reference_material]
certified_value = 7.5
standard_uncertainty = 0.2
"""


def injections():
    """Per run: (sample, type, level, area, IS area), invented around y = a + b x."""
    rng = np.random.default_rng(7)
    out = {}
    for run, (a, b) in {"r1": (0.01, 0.101), "r2": (0.02, 0.097), "r3": (0.005, 0.104)}.items():
        rows = []
        def add(name, kind, level, x):
            istd = 10000 * (1 + rng.normal(0, 0.03))
            ratio = (a + b * x) * (1 + rng.normal(0, 0.02))
            rows.append((name, kind, level, round(ratio * istd, 1), round(istd, 1)))
        for x in LEVELS:
            add(f"C{x:g}", "Cal", x, x)
        add("B1", "Blk", None, 0.0)
        add("B2", "Blk", None, 0.0)
        for x in (2.0, 15.0):
            add(f"Q{x:g}a", "QC", x, x)
            add(f"Q{x:g}b", "QC", x, x)
        add("M", "Unspiked", None, 1.2)
        add("M", "Spiked", 5.0, 6.2)
        add("CRM", "Ref", None, 7.5)
        add("S1", "Unknown", None, 3.3)
        add("S1", "Unknown", None, 3.3)
        out[run] = rows
    return out


def write_exports(folder, data):
    header = ["Name", "Kind", "Nominal", "Area", "IS Area", "Extra"]
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Quant"
    ws.append(header)
    for r in data["r1"]:
        ws.append(list(r) + ["x"])
    wb.save(folder / "r1.xlsx")
    for run, sep in (("r2", ","), ("r3", ";")):
        dec = "," if sep == ";" else "."
        text = sep.join(header) + "\n" + "".join(
            sep.join("" if v is None else (repr(v).replace(".", dec) if isinstance(v, float) else str(v))
                     for v in list(r) + ["y"]) + "\n" for r in data[run])
        (folder / f"{run}.csv").write_text(text, encoding="utf-8")


RUNS_STUDY = HEAD + """[calibration]
model = "linear"
{quantify}
[[runs]]
data = "r1.xlsx"
run = "r1"
[[runs]]
data = "r2.csv"
run = "r2"
[[runs]]
data = "r3.csv"
run = "r3"
[columns]
sample = "Name"
type = "Kind"
level = "Nominal"
response = "Area"
internal_standard = "IS Area"
[types]
calibrator = ["Cal"]
zero = ["Blk"]                 # blank matrix with the internal standard: zero samples (a blank has no IS)
qc = ["QC"]
unspiked = ["Unspiked"]
spiked = ["Spiked"]
reference = ["Ref"]
sample = ["Unknown"]
[samples]
[blanks]
""" + CRITERIA


def write_files(folder, data, pooled: bool):
    """The same study as per-characteristic files, found values computed here (statsmodels OLS)."""
    ratio = {run: [(n, k, lv, area / istd) for n, k, lv, area, istd in rows] for run, rows in data.items()}
    cal = [(lv, y, run) for run, rows in ratio.items() for n, k, lv, y in rows if k == "Cal"]
    lines = {"calibration.csv": ["concentration,response,series"] + [f"{x!r},{y!r},{run}" for x, y, run in cal],
             "blanks.csv": ["response"] + [repr(y) for rows in ratio.values() for n, k, lv, y in rows if k == "Blk"],
             "recovery.csv": ["added,found,native,series"], "precision.csv": ["level,series,found"],
             "crm.csv": ["found"], "samples.csv": ["sample,response"]}
    line_of = {}
    for run, rows in ratio.items():
        own = [(x, y) for x, y, r in cal if pooled or r == run]
        a, b = map(float, sm.OLS([y for _, y in own], sm.add_constant([x for x, _ in own])).fit().params)  # cross-check: statsmodels OLS
        found = lambda y: (y - a) / b        # noqa: E731 (hand computation, ISO 8466-1 inverse prediction)
        native = float(np.mean([found(y) for n, k, lv, y in rows if k == "Unspiked"]))
        for n, k, lv, y in rows:
            if k == "Spiked":
                lines["recovery.csv"].append(f"{lv!r},{found(y)!r},{native!r},{run}")
            elif k == "QC":
                lines["precision.csv"].append(f"{lv!r},{run},{found(y)!r}")
            elif k == "Ref":
                lines["crm.csv"].append(repr(found(y)))
            elif k == "Unknown":
                line_of.setdefault(run, []).append(f"S1 ({run}),{y!r}")
    lines["samples.csv"] += [l for run in ratio for l in line_of[run]]
    for name, content in lines.items():
        (folder / name).write_text("\n".join(content) + "\n", encoding="utf-8")
    return HEAD + """[calibration]
data = "calibration.csv"
model = "linear"
[samples]
data = "samples.csv"
[blanks]
data = "blanks.csv"
""" + CRITERIA.replace("[recovery]", '[recovery]\ndata = "recovery.csv"').replace(
        "[precision]", '[precision]\ndata = "precision.csv"').replace(
        "[reference_material]", '[reference_material]\ndata = "crm.csv"')


def close(a, b, path="", rel=1e-12):
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            close(a[k], b[k], f"{path}.{k}", rel)
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            close(x, y, f"{path}.{i}", rel)
    elif isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, rel_tol=rel, abs_tol=1e-300), (path, a, b)
    else:
        assert a == b, (path, a, b)


def run(folder, study_text, out):
    (folder / "study.toml").write_text(study_text, encoding="utf-8")
    assert main(["run", str(folder / "study.toml"), "--out", str(out), "--format", "json"]) == 0
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize("pooled", [False, True], ids=["each-run", "pooled"])
def test_runs_give_the_numbers_of_the_same_study_as_files(tmp_path, tmp_path_factory, pooled):
    data = injections()
    (tmp_path / "runs").mkdir()
    (tmp_path / "files").mkdir()
    write_exports(tmp_path / "runs", data)
    files_study = write_files(tmp_path / "files", data, pooled)
    out = tmp_path_factory.mktemp("out")
    quantify = 'quantify_with = "pooled"' if pooled else ""
    from_runs = run(tmp_path / "runs", RUNS_STUDY.format(quantify=quantify), out / "runs")
    from_files = run(tmp_path / "files", files_study, out / "files")
    a, b = from_runs["analytes"][0], from_files["analytes"][0]
    assert a["runs"]["quantified_with"] == ("pooled" if pooled else "run") and b.get("runs") is None
    for key in ("calibration", "detection", "recovery", "precision", "reference_material", "working_range"):
        close(a[key], b[key], key)
    if pooled:      # samples through the pooled calibration = the study's calibration, as from a samples file
        close(a["samples"], b["samples"], "samples")
        close(a["criteria"], b["criteria"], "criteria")
    else:           # each run's samples through its own calibration
        assert [s["id"] for s in a["samples"]] == ["S1 (r1)", "S1 (r2)", "S1 (r3)"]
