"""A run that writes only results.json imports no more than it uses (issue #14: its fixed cost is
mostly imports). Each run is a fresh interpreter; which modules it loaded is read from
sys.modules at its end. Not timed: the timings are in benchmarks/ and docs/performance.md.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

# scipy.stats (about 0.5 s) is replaced on the run path by validator.maths.distributions and
# numpy code; the rendering libraries belong to the HTML and PDF outputs; statsmodels and pandas
# only to the tests
NEVER = ("scipy.stats", "scipy.integrate", "matplotlib", "jinja2", "weasyprint", "pypdf", "statsmodels", "pandas")

_PROBE = """
import json, sys
from validator.cli import main
code = main(["run", sys.argv[1], "--format", "json", "--quiet", "--out", sys.argv[2], "--force"])
print(json.dumps({"code": code, "modules": sorted(sys.modules)}))
"""


def _json_run(study: Path, out: Path) -> tuple[int, set]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.run([sys.executable, "-c", _PROBE, str(study), str(out)], capture_output=True, text=True,
                          env=env, timeout=300)
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout.strip().splitlines()[-1])
    return report["code"], set(report["modules"])


def _loaded(modules: set, name: str) -> bool:
    return name in modules or any(m.startswith(name + ".") for m in modules)


@pytest.mark.parametrize("study, optimize_used", [
    ("anions-drinking-water", True),       # its unbalanced nested precision design is fitted by REML (L-BFGS-B)
    ("marbofloxacin-milk-runs", False),
    ("plasma-lcms-bioanalytical", False),
])
def test_a_json_only_run_imports_no_unused_library(study, optimize_used, outside):
    code, modules = _json_run(ROOT / "example_studies" / study / "study.toml", outside / study)
    assert code in (0, 1)
    assert (outside / study / "results.json").is_file()
    assert [name for name in NEVER if _loaded(modules, name)] == []
    # scipy.optimize (about 0.2 s) is imported only inside the functions that need it
    assert _loaded(modules, "scipy.optimize") == optimize_used
