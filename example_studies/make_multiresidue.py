"""Generate a synthetic multi-residue study (invented data, demo and timing only, never reference values).

Scenario: the residue laboratory of a (fictional) grain cooperative validates one multi-residue
method for N pesticide-like compounds in wheat flour (extract, clean-up, one chromatographic run).
The compounds are not real substances: they are named ``residue-001`` ... ``residue-N``. For each
compound: a calibration of six levels (0.005 to 0.2 mg/kg) in two independent series, three
samples, a recovery at two spike levels (0.01 and 0.1 mg/kg) in triplicate on two days, and
precision at 0.05 mg/kg over three days with three replicates. Every number is drawn from a
random generator with a fixed seed around responses we chose, so one N always gives the same files.

Usage: ``python example_studies/make_multiresidue.py [FOLDER] [--analytes N]``
(default: ``example_studies/multiresidue-300`` and 300 compounds). The folder must not exist or
be empty, unless it holds only files this script writes (they are then rewritten). The files
(about 0.8 MB for 300 compounds) are not committed: the tests and the benchmark generate them
into a temporary folder.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np

FILES = ("study.toml", "calibration.csv", "samples.csv", "recovery.csv", "precision.csv")
LEVELS = (0.005, 0.01, 0.02, 0.05, 0.1, 0.2)          # mg/kg
SPIKES = (0.01, 0.1)                                   # mg/kg added
PRECISION_LEVEL = 0.05                                 # mg/kg

STUDY = """\
# Synthetic multi-residue study (invented data, made by example_studies/make_multiresidue.py).
# The acceptance criteria are examples for the demo, not regulatory limits.

[study]
id = "MR-GRAIN-{n}"
title = "{n} residues in wheat flour by one multi-residue method (synthetic)"
purpose = "initial"
method = "SOP-MR-001 rev. 1, extraction, dispersive clean-up, one chromatographic run"
concentration_unit = "mg/kg"
response_unit = "area"
scope = "{n} invented residues from 0.005 to 0.2 mg/kg in wheat flour"
intended_use = "Demonstration of a large study; not for any decision"
document_number = "VR-MR-{n}"
document_version = "0.1"

[calibration]
data = "calibration.csv"
weighting = "1/x"

[samples]
data = "samples.csv"

[criteria]
back_calculation_tolerance_pct = 20
lowest_level_tolerance_pct = 30
r_squared_min = 0.99

[recovery]
data = "recovery.csv"
range_pct = [70, 120]

[precision]
data = "precision.csv"
repeatability_rsd_max_pct = 20
intermediate_rsd_max_pct = 20
"""


def names(n: int) -> list[str]:
    return [f"residue-{k:03d}" for k in range(1, n + 1)]


def tables(n: int, seed: int = 20261202) -> dict[str, str]:
    """The text of each file for ``n`` compounds (fixed seed: the same ``n`` gives the same text)."""
    rng = np.random.default_rng(seed)
    cal = ["analyte,concentration,response,series"]
    smp = ["sample,analyte,response"]
    rec = ["analyte,added,found,series"]
    prec = ["analyte,level,series,found"]
    for name in names(n):
        slope = rng.uniform(2e4, 8e5)                  # area per mg/kg
        intercept = slope * rng.uniform(0, 4e-4)
        cv = rng.uniform(0.02, 0.06)                   # relative SD of a response
        for series in ("series-1", "series-2"):
            for x in LEVELS:
                y = (intercept + slope * x) * (1 + rng.normal(0, cv))
                cal.append(f"{name},{x:g},{y:.6g},{series}")
        for s in range(1, 4):
            x = rng.uniform(0.008, 0.15)
            smp.append(f"FL-{s:03d},{name},{(intercept + slope * x) * (1 + rng.normal(0, cv)):.6g}")
        bias = rng.normal(0.95, 0.06)                  # the compound's mean recovery
        for day in ("day-1", "day-2"):
            for added in SPIKES:
                for _ in range(3):
                    rec.append(f"{name},{added:g},{added * bias * (1 + rng.normal(0, cv)):.5g},{day}")
        day_sd = cv * rng.uniform(0.3, 0.8)
        for day in ("day-1", "day-2", "day-3"):
            shift = rng.normal(0, day_sd)
            for _ in range(3):
                found = PRECISION_LEVEL * bias * (1 + shift + rng.normal(0, cv))
                prec.append(f"{name},{PRECISION_LEVEL:g},{day},{found:.5g}")
    return {"study.toml": STUDY.format(n=n), "calibration.csv": "\n".join(cal) + "\n",
            "samples.csv": "\n".join(smp) + "\n", "recovery.csv": "\n".join(rec) + "\n",
            "precision.csv": "\n".join(prec) + "\n"}


def write(folder: Path, n: int) -> Path:
    """Write the study into ``folder`` (created if missing); returns the study file's path.

    Refuses a folder that holds anything but this script's files, so nothing else is overwritten.
    """
    folder = Path(folder)
    if n < 1 or n > 9999:
        raise ValueError(f"the number of compounds must be from 1 to 9999, not {n}")
    if folder.exists():
        others = sorted(p.name for p in folder.iterdir() if p.name not in FILES)
        if others:
            raise FileExistsError(f"{folder} holds other files ({', '.join(others[:5])}); "
                                  "give an empty or new folder")
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in tables(n).items():
        (folder / name).write_text(text, encoding="utf-8")
    return folder / "study.toml"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("folder", nargs="?", default=str(Path(__file__).parent / "multiresidue-300"))
    parser.add_argument("--analytes", type=int, default=300)
    args = parser.parse_args(argv)
    try:
        study = write(Path(args.folder), args.analytes)
    except (ValueError, FileExistsError) as exc:
        print(f"make_multiresidue: {exc}", file=sys.stderr)
        return 2
    print(f"wrote {study} ({args.analytes} compounds)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
