"""Benchmark: the synthetic multi-residue study (issue #14, items 8-9) at N analytes.

Run with ``python benchmarks/bench_scale.py 50 100 300`` (``--repeat N``, default 3, the median is
printed; ``--formats json json,html json,html,pdf`` chooses the outputs). The study is written by
``example_studies/make_multiresidue.py`` into a temporary folder (invented data, fixed seed).
Each run is the real command line ``validator run --quiet`` in a fresh interpreter, so the figures
include interpreter start and imports, as a user sees them. Peak memory is the largest maximum
resident set size of the run's process and of its figure workers (``resource.getrusage``), not
their sum. For a PDF, the number of PDF outline entries naming an analyte is counted (pypdf).
The machine's 1-minute load average is printed beside each line: timings on a shared machine drift.
"""

from __future__ import annotations

import argparse
import importlib.util
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

CHILD = """\
import resource, sys
from validator.cli import main
try:
    code = main(sys.argv[1:])
except SystemExit as e:
    code = e.code
own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
workers = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
print(max(own, workers), file=sys.stderr)
sys.exit(code)
"""


def generator():
    spec = importlib.util.spec_from_file_location("make_multiresidue", ROOT / "example_studies" / "make_multiresidue.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def run_once(study: Path, out: Path, formats: str) -> tuple:
    """(wall seconds, peak RSS in MiB, CPU seconds) of one run in a child process; the CPU time is
    user + system of the run and of every worker it waited for."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", CHILD, "run", str(study), "--out", str(out), "--format", formats,
                           "--force", "--quiet"], capture_output=True, text=True, env=env)
    elapsed = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if proc.returncode not in (0, 1):
        raise SystemExit(proc.stderr)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return elapsed, int(proc.stderr.strip().splitlines()[-1]) / 1024, cpu


def outline_entries(pdf: Path, names: list) -> int:
    from pypdf import PdfReader

    def titles(items):
        for item in items:
            if isinstance(item, list):
                yield from titles(item)
            else:
                yield item.title
    shown = list(titles(PdfReader(str(pdf)).outline))
    return sum(any(t.startswith(f"{n}: ") for t in shown) for n in names)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("analytes", type=int, nargs="+")
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--formats", nargs="+", default=["json", "json,html", "json,html,pdf"])
    args = parser.parse_args(argv)
    gen = generator()
    print("| analytes | formats | median wall (s) | s per analyte | median CPU (s) | peak RSS (MiB) | PDF pages | outline entries "
          "naming an analyte | load average (1 min) |")
    print("|---:|---|---:|---:|---:|---:|---:|---:|---:|")
    for n in args.analytes:
        with tempfile.TemporaryDirectory() as tmp:
            study = gen.write(Path(tmp) / "study", n)
            for formats in args.formats:
                runs = [run_once(study, Path(tmp) / f"out{i}", formats) for i in range(args.repeat)]
                wall = statistics.median(r[0] for r in runs)
                peak = max(r[1] for r in runs)
                cpu = statistics.median(r[2] for r in runs)
                pages = entries = ""
                if "pdf" in formats:
                    from pypdf import PdfReader

                    pdf = Path(tmp) / "out0" / "dossier.pdf"
                    pages = len(PdfReader(str(pdf)).pages)
                    entries = outline_entries(pdf, gen.names(n))
                print(f"| {n} | {formats} | {wall:.1f} | {wall / n:.3f} | {cpu:.1f} | {peak:.0f} | {pages} | {entries} | "
                      f"{os.getloadavg()[0]:.1f} |", flush=True)


if __name__ == "__main__":
    main()
