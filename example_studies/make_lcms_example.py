"""Generate the invented instrument exports of the LC-MS/MS example (demo only, never reference values).

Scenario: the residue laboratory of a (fictional) dairy cooperative validates a method for the
veterinary drug marbofloxacin in raw milk by LC-MS/MS with an isotope-labelled internal
standard. Three analytical runs on three days; each run has a calibration (seven levels in
the measured extract), two blanks with the internal standard (zero samples; the study's [types]
maps the export's word "Blank" to zero), QCs at three levels in duplicate, an unspiked and a spiked
milk, a reference milk and two milk samples. Run 1 comes as the instrument software's .xlsx
workbook, runs 2 and 3 as its CSV export (run 3 written on a computer with a decimal comma).
Every number is drawn from a fixed-seed random generator around responses we chose; run this
script to recreate the files.
"""

from pathlib import Path

import numpy as np
import openpyxl

HERE = Path(__file__).parent / "marbofloxacin-milk-runs"
rng = np.random.default_rng(20261202)

HEADER = ["Sample Name", "Sample Type", "Compound", "Level", "Area", "ISTD Area", "RT"]
LEVELS = (0.5, 1, 2, 5, 10, 20, 50)          # µg/L in the extract
QC_LEVELS = (1.5, 8, 40)
RUNS = {  # label: (intercept, slope of the area ratio, internal-standard area)
    "run-1": (0.0021, 0.0412, 51200),
    "run-2": (0.0015, 0.0398, 48700),
    "run-3": (0.0028, 0.0425, 53900),
}
NATIVE = 3.1          # µg/L found in the unspiked milk extract
SPIKE = 10.0          # µg/L added
REFERENCE = 12.4      # µg/L in the reference milk extract
SAMPLES = {"MK-2611": 6.2, "MK-2612": 0.9}


def injection(name, kind, level, x, run):
    a, b, istd_mean = RUNS[run]
    istd = istd_mean * (1 + rng.normal(0, 0.04))
    ratio = (a + b * x) * (1 + rng.normal(0, 0.025)) if x > 0 else abs(rng.normal(0, 0.0004))
    return [name, kind, "marbofloxacin", level, round(ratio * istd, 0), round(istd, 0),
            round(4.62 + rng.normal(0, 0.01), 2)]


def rows(run):
    out = []
    for i, x in enumerate(LEVELS, start=1):
        out.append(injection(f"Cal {i}", "Cal Std", x, x, run))
    out.append(injection("Solvent blank", "Blank", None, 0.0, run))
    for level in QC_LEVELS:
        for rep in (1, 2):
            out.append(injection(f"QC {level:g}-{rep}", "QC", level, level, run))
    out.append(injection("Milk A", "Matrix", None, NATIVE, run))
    out.append(injection("Milk A", "Spiked", SPIKE, NATIVE + SPIKE, run))
    out.append(injection("RM milk", "CRM", None, REFERENCE, run))
    for sid, x in SAMPLES.items():
        out.append(injection(sid, "Unknown", None, x, run))
    out.append(injection("Matrix blank", "Blank", None, 0.0, run))
    return out


def cell(v, decimal="."):
    if v is None:
        return ""
    text = f"{v:g}" if isinstance(v, float) else str(v)
    return text.replace(".", decimal) if decimal != "." and isinstance(v, float) else text


def main():
    HERE.mkdir(exist_ok=True)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Results"
    ws.append(["Batch run-1 quantitation report (instrument export)"])
    ws.append([])
    ws.append(HEADER)
    for r in rows("run-1"):
        ws.append(r)
    wb.save(HERE / "run-1.xlsx")
    for run, sep, decimal in (("run-2", ",", "."), ("run-3", ";", ",")):
        with open(HERE / f"{run}.csv", "w", encoding="utf-8") as fh:
            fh.write(sep.join(HEADER) + "\n")
            for r in rows(run):
                fh.write(sep.join(cell(v, decimal) for v in r) + "\n")


if __name__ == "__main__":
    main()
