"""Benchmark: wall time, peak memory and results.json size against calibration rows.

Run with ``python benchmarks/bench_rows.py 10000 100000 1000000`` (repeats with
``--repeat N``, default 3; the median is printed). Each run is the real command
line ``validator run --format json`` in a fresh interpreter (interpreter start
and imports included, as a user sees them); peak memory is the child's maximum
resident set size from ``resource.getrusage``. One analyte, 10 levels, straight
line, no weighting, 3 samples (``--worst``: every concentration distinct,
model and weighting "auto", so five weightings and two models are fitted). Synthetic data are invented (fixed seed), for
timing only. The machine's load (``os.getloadavg``) is printed beside each line
because timings on a shared machine drift.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def make_study(folder: Path, rows: int, worst: bool = False) -> Path:
    """One analyte; ``worst``: every concentration distinct, model and weighting "auto"."""
    rng = np.random.default_rng(rows)
    levels = np.array([0.5, 1, 2, 5, 10, 20, 50, 100, 200, 500])
    x = rng.uniform(0.5, 500, rows).round(6) if worst else np.resize(levels, rows)
    y = 0.02 + 1.7 * x + rng.normal(0, 0.05, rows)
    with open(folder / "calibration.csv", "w") as fh:
        fh.write("analyte,concentration,response\n")
        fh.writelines(f"A,{a:g},{b:.6f}\n" for a, b in zip(x, y))
    (folder / "samples.csv").write_text("sample,analyte,response\nS1,A,5.1\nS2,A,170.3\nS3,A,601.9\n")
    study = folder / "study.toml"
    study.write_text(f'[study]\nid = "ROWS-{rows}"\ntitle = "Benchmark with {rows} calibration rows"\n'
                     'concentration_unit = "mg/L"\nresponse_unit = "area"\n'
                     '[calibration]\ndata = "calibration.csv"\n'
                     + ('model = "auto"\nweighting = "auto"\n' if worst else "")
                     + '[samples]\ndata = "samples.csv"\n')
    return study


def run_once(study: Path, out: Path) -> tuple:
    """(wall seconds, peak RSS in MiB, results.json MiB) of one run in a child process."""
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c",
                           "import resource, sys\n"
                           "from validator.cli import main\n"
                           "try:\n    code = main(sys.argv[1:])\nexcept SystemExit as e:\n    code = e.code\n"
                           "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, file=sys.stderr)\n"
                           "sys.exit(code)",
                           "run", str(study), "--out", str(out), "--format", "json", "--force"],
                          capture_output=True, text=True)
    elapsed = time.perf_counter() - start
    if proc.returncode not in (0, 1):
        raise SystemExit(proc.stderr)
    peak_kib = int(proc.stderr.strip().splitlines()[-1])
    size = (out / "results.json").stat().st_size
    return elapsed, peak_kib / 1024, size / 2**20


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("rows", type=int, nargs="+")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--worst", action="store_true",
                        help='every concentration distinct, model and weighting "auto"')
    args = parser.parse_args(argv)
    print("| rows | median wall (s) | peak RSS (MiB) | results.json (MiB) | load average (1 min) |")
    print("|---:|---:|---:|---:|---:|")
    for rows in args.rows:
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            study = make_study(folder, rows, args.worst)
            runs = [run_once(study, folder / f"out{i}") for i in range(args.repeat)]
            wall = statistics.median(r[0] for r in runs)
            peak = max(r[1] for r in runs)
            print(f"| {rows:,} | {wall:.2f} | {peak:.0f} | {runs[0][2]:.1f} | {os.getloadavg()[0]:.2f} |",
                  flush=True)


if __name__ == "__main__":
    main()
