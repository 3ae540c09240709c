"""Generate the invented data of the bioanalytical example study (demo only, never reference values).

Scenario: the bioanalytical laboratory of a (fictional) contract research organisation validates an
LC-MS/MS method for the (fictional) drug candidate "tavorelin" in human EDTA plasma, 1 to 500 ng/mL,
with a stable-isotope-labelled internal standard, before a bioequivalence study. Besides the
calibration it shows the ICH M10 set: matrix effect (solvent against matrix-matched slopes, six
individual plasma lots at low and high QC, the IS-normalised matrix factor), carry-over,
selectivity, stability, dilution integrity and incurred-sample reanalysis, with the study naming
the ICH M10 preset. Every number is drawn from a fixed-seed random generator around values we
chose; run this script to recreate the CSVs.
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


def main():
    HERE.mkdir(exist_ok=True)
    levels = (1, 2, 5, 20, 50, 100, 250, 500)
    write("calibration.csv", ("concentration", "response", "series"),
          [(x, f"{noisy(INTERCEPT + SLOPE * x, 0.03):.6f}", f"run-{r}") for r in (1, 2, 3) for x in levels])
    write("solvent-calibration.csv", ("concentration", "response"),
          [(x, f"{noisy(SOLVENT_SLOPE * x, 0.025):.6f}") for x in levels for _ in range(2)])
    # six individual plasma lots; QC low 3 ng/mL and high 400 ng/mL, three replicates each
    lots = [f"donor-{k:02d}" for k in range(1, 7)]
    lot_bias = dict(zip(lots, rng.normal(0, 0.025, len(lots))))
    write("matrix-lots.csv", ("lot", "nominal", "found"),
          [(lot, qc, f"{noisy(qc * (1 + lot_bias[lot]), 0.04):.4f}") for qc in (3, 400) for lot in lots for _ in range(3)])
    factor = [("neat", f"{noisy(152000, 0.02):.0f}", f"{noisy(IS_AREA, 0.02):.0f}") for _ in range(3)]
    for lot in lots:
        suppression = 0.89 + rng.normal(0, 0.03)
        for _ in range(2):
            factor.append((lot, f"{noisy(152000 * suppression, 0.02):.0f}",
                           f"{noisy(IS_AREA * suppression * (1 + rng.normal(0, 0.01)), 0.02):.0f}"))
    write("matrix-factor.csv", ("lot", "analyte_response", "internal_standard_response"), factor)
    lloq_area = 1 * SLOPE * IS_AREA
    carry = [("lloq", f"{noisy(lloq_area, 0.06):.0f}", f"{noisy(IS_AREA, 0.03):.0f}") for _ in range(5)]
    carry += [("blank", f"{abs(noisy(0.06 * lloq_area, 0.3)):.0f}", f"{abs(noisy(0.004 * IS_AREA, 0.3)):.0f}")
              for _ in range(3)]
    write("carry-over.csv", ("kind", "response", "internal_standard_response"), carry)
    selectivity = [("", "lloq", f"{noisy(lloq_area, 0.06):.0f}", f"{noisy(IS_AREA, 0.03):.0f}") for _ in range(5)]
    for k in range(1, 9):                # eight blank plasma lots, one lipaemic, one haemolysed
        name = {7: "lipaemic-01", 8: "haemolysed-01"}.get(k, f"donor-{k + 10:02d}")
        selectivity.append((name, "blank", f"{abs(noisy(0.05 * lloq_area, 0.5)):.0f}",
                            f"{abs(noisy(0.002 * IS_AREA, 0.5)):.0f}"))
    write("selectivity.csv", ("lot", "kind", "response", "internal_standard_response"), selectivity)
    stability = []
    for condition, drift in (("bench-top 24 h at room temperature", -0.03), ("freeze-thaw 4 cycles", -0.05),
                             ("long-term 6 months at -70 °C", -0.02), ("processed 48 h in autosampler", 0.01)):
        for qc in (3, 400):
            stability += [(condition, qc, f"{noisy(qc * (1 + drift), 0.04):.4f}") for _ in range(3)]
    write("stability.csv", ("condition", "nominal", "found"), stability)
    write("dilution.csv", ("factor", "nominal", "found"),
          [(f, 2000, f"{noisy(2000 / f, 0.04):.3f}") for f in (10, 50) for _ in range(5)])
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
