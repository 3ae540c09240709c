"""Generate the invented data of the bioanalytical example study (demo only, never reference values).

Scenario: the bioanalytical laboratory of a (fictional) contract research organisation validates an
LC-MS/MS method for the (fictional) drug candidate "tavorelin" in human EDTA plasma, 1 to 500 ng/mL,
with a stable-isotope-labelled internal standard, before a bioequivalence study. The data are three
analytical runs as the instrument exports them (run-N.csv, areas and IS areas; validator fits each
run's calibration and quantifies every QC through it). Besides the calibration it shows the ICH M10
set: matrix effect (solvent against matrix-matched slopes; QCs in six individual plasma lots at low
and high level, read from the runs; the IS-normalised matrix factor), carry-over (the double blank
or zero sample after each run's highest calibrator), selectivity (matrix blanks of eight lots),
stability (stored QCs), dilution integrity (diluted QCs) and incurred-sample reanalysis, with the
study naming the ICH M10 preset. Every number is drawn from a fixed-seed random generator around
values we chose; run this script to recreate the CSVs.
"""

from pathlib import Path

import numpy as np

HERE = Path(__file__).parent / "plasma-lcms-bioanalytical"
rng = np.random.default_rng(20261202)

SLOPE, INTERCEPT = 0.0152, 0.0004        # area ratio per ng/mL in plasma
SOLVENT_SLOPE = 0.0171                   # about 11 % ion suppression in plasma
IS_AREA = 250000.0


def write(name, header, rows):
    with open(HERE / name, "w", encoding="utf-8") as fh:
        fh.write(",".join(header) + "\n")
        for r in rows:
            fh.write(",".join(str(v) for v in r) + "\n")


def noisy(mu, rel, absolute=0.0):
    return mu * (1 + rng.normal(0, rel)) + rng.normal(0, absolute)


EXPORT = ("Sample", "Type", "Level", "Area", "IS Area", "Lot", "Condition", "Dilution")
LEVELS = (1, 2, 5, 20, 50, 100, 250, 500)
LOTS = [f"donor-{k:02d}" for k in range(1, 7)]
CONDITIONS = (("bench-top 24 h at room temperature", -0.03), ("freeze-thaw 4 cycles", -0.05),
              ("long-term 6 months at -70 °C", -0.02), ("processed 48 h in autosampler", 0.01))


def spiked(name, kind, level, x, lot="", condition="", dilution=""):
    """An injection of a plasma sample holding x ng/mL (analyte area = ratio x IS area)."""
    istd = noisy(IS_AREA, 0.03)
    ratio = noisy(INTERCEPT + SLOPE * x, 0.04 if kind == "QC" else 0.03)
    return (name, kind, level, f"{ratio * istd:.0f}", f"{istd:.0f}", lot, condition, dilution)


def run_rows(run, lot_bias):
    """One analytical run: the calibrators, then (ICH M10 words) a double blank (neither analyte nor IS: no IS
    peak, IS area 0) right after the highest calibrator, except in run 3 where a zero sample (blank plasma
    with IS) follows it; matrix blanks of individual lots; QCs in individual lots, stored and diluted."""
    lloq_area = 1 * SLOPE * IS_AREA
    rows = [spiked(f"Cal {k}", "Cal", x, x) for k, x in enumerate(LEVELS, start=1)]
    blank = ("Double blank", "Double Blank", "", f"{abs(noisy(0.06 * lloq_area, 0.3)):.0f}", "0", "", "", "")
    zero = ("Zero", "Blank+IS", "", f"{abs(noisy(0.08 * lloq_area, 0.3)):.0f}", f"{noisy(IS_AREA, 0.03):.0f}",
            "", "", "")
    rows += [zero, blank] if run == 3 else [blank, zero]
    # eight blank plasma lots over the runs, one lipaemic and one haemolysed (selectivity)
    for k in range(1, 9):
        if (k - 1) % 3 + 1 == run:
            name = {7: "lipaemic-01", 8: "haemolysed-01"}.get(k, f"donor-{k + 10:02d}")
            rows.append((f"Blank {name}", "Blank Lot", "", f"{abs(noisy(0.05 * lloq_area, 0.5)):.0f}",
                         f"{abs(noisy(0.002 * IS_AREA, 0.5)):.0f}", name, "", ""))
    # QCs low 3 and high 400 ng/mL in the six individual lots (matrix effect), two lots per run
    for lot in LOTS[2 * (run - 1):2 * run]:
        for qc in (3, 400):
            rows += [spiked(f"QC {qc} {lot}", "QC", qc, qc * (1 + lot_bias[lot]), lot=lot) for _ in range(3)]
    # stored QCs (stability): the conditions spread over the runs
    for k, (condition, drift) in enumerate(CONDITIONS):
        if k % 3 + 1 == run:
            for qc in (3, 400):
                rows += [spiked(f"SQC {qc}", "QC", qc, qc * (1 + drift), condition=condition) for _ in range(3)]
    if run == 2:        # over-range QCs of 2000 ng/mL diluted 10 and 50 times (dilution integrity)
        rows += [spiked(f"DQC 2000 x{f}", "QC", 2000, 2000 / f, dilution=f) for f in (10, 50) for _ in range(5)]
    return rows


def main():
    HERE.mkdir(exist_ok=True)
    lot_bias = dict(zip(LOTS, rng.normal(0, 0.025, len(LOTS))))
    for run in (1, 2, 3):
        write(f"run-{run}.csv", EXPORT, run_rows(run, lot_bias))
    write("solvent-calibration.csv", ("concentration", "response"),
          [(x, f"{noisy(SOLVENT_SLOPE * x, 0.025):.6f}") for x in LEVELS for _ in range(2)])
    factor = [("neat", f"{noisy(152000, 0.02):.0f}", f"{noisy(IS_AREA, 0.02):.0f}") for _ in range(3)]
    for lot in LOTS:
        suppression = 0.89 + rng.normal(0, 0.03)
        for _ in range(2):
            factor.append((lot, f"{noisy(152000 * suppression, 0.02):.0f}",
                           f"{noisy(IS_AREA * suppression * (1 + rng.normal(0, 0.01)), 0.02):.0f}"))
    write("matrix-factor.csv", ("lot", "analyte_response", "internal_standard_response"), factor)
    isr = []
    for i in range(1, 41):
        true = float(np.exp(rng.uniform(np.log(2), np.log(400))))
        first, repeat = noisy(true, 0.07), noisy(true, 0.07)
        if i == 17:                      # one sample with a gross difference (for example a mix-up)
            repeat *= 1.45
        isr.append((f"TV-{i:03d}", f"{first:.3f}", f"{repeat:.3f}"))
    write("isr.csv", ("sample", "original", "repeat"), isr)


if __name__ == "__main__":
    main()
