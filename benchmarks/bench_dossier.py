"""Benchmark: seconds for results only, HTML, and HTML+PDF for N synthetic analytes.

Run with `make benchmark` (or `python benchmarks/bench_dossier.py 1 10 50`).
Each configuration runs the real command line in a fresh interpreter, so
the figures include interpreter start and imports, as a user sees them.
Synthetic data are invented (fixed seed), for timing only.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def make_study(folder: Path, analytes: int) -> Path:
    rng = np.random.default_rng(analytes)
    rows = ["analyte,concentration,response"]
    samples = ["sample,analyte,response"]
    for k in range(analytes):
        slope = rng.uniform(0.5, 5)
        for x in (0.5, 1, 2, 5, 10, 20, 50):
            for _ in range(3):
                rows.append(f"A{k:03d},{x},{0.01 + slope * x * (1 + rng.normal(0, 0.01)):.6g}")
        for s in range(3):
            samples.append(f"S{s},A{k:03d},{slope * rng.uniform(1, 40):.6g}")
    (folder / "calibration.csv").write_text("\n".join(rows) + "\n")
    (folder / "samples.csv").write_text("\n".join(samples) + "\n")
    study = folder / "study.toml"
    study.write_text(f'[study]\nid = "BENCH-{analytes}"\ntitle = "Benchmark with {analytes} analytes"\n'
                     'concentration_unit = "mg/L"\nresponse_unit = "area"\n'
                     '[calibration]\ndata = "calibration.csv"\nweighting = "1/x"\n'
                     '[samples]\ndata = "samples.csv"\n')
    return study


def timed(study: Path, formats: str, out: Path) -> float:
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "validator", "run", str(study), "--out", str(out),
                           "--format", formats, "--force"], capture_output=True, text=True)
    elapsed = time.perf_counter() - start
    if proc.returncode not in (0, 1):
        raise SystemExit(proc.stderr)
    return elapsed


def main(sizes):
    print("| analytes | results only (s) | + HTML (s) | + HTML + PDF (s) | full, s per analyte |")
    print("|---:|---:|---:|---:|---:|")
    for n in sizes:
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            study = make_study(folder, n)
            t_json = timed(study, "json", folder / "o1")
            t_html = timed(study, "json,html", folder / "o2")
            t_pdf = timed(study, "json,html,pdf", folder / "o3")
        print(f"| {n} | {t_json:.2f} | {t_html:.2f} | {t_pdf:.2f} | {t_pdf / n:.2f} |", flush=True)


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [1, 10, 50])
