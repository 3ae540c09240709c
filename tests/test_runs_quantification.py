"""Quantifying QC and other injections through their own run's calibration.

Cross-check: statsmodels WLS fitted per run, then x0 = (y0 - a) / b computed here (an
independent computation of the same inverse prediction, ISO 8466-1 sec. 6). The data are
invented for the test; only the agreement of the two computations is checked.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest
import statsmodels.api as sm

from validator.characteristics.runs.analysis import quantify_runs


@dataclass(frozen=True)
class Inj:
    run: str
    type: str
    level: float | None
    response: float
    sample: str = "x"
    day: str = "d"
    analyte_response: float = 0.0
    internal_standard_response: float | None = None
    file: str = "f.csv"
    sheet: str | None = None
    row: int = 0


def design():
    rng = np.random.default_rng(20261202)
    out = []
    for run, (a, b) in {"R1": (0.02, 1.10), "R2": (-0.01, 0.95), "R3": (0.05, 1.22)}.items():
        for level in (0.5, 1, 2, 5, 10, 20):
            for _ in range(2):
                out.append(Inj(run, "calibrator", level, a + b * level * (1 + rng.normal(0, 0.02))))
        for level in (1.5, 8, 16):
            out.append(Inj(run, "qc", level, a + b * level * (1 + rng.normal(0, 0.03)), sample=f"QC{level}"))
        out.append(Inj(run, "sample", None, a + b * 3.3, sample="S1"))
    return out


@pytest.mark.parametrize("weighting", ["none", "1/x"])
def test_each_qc_is_read_back_through_its_own_run(weighting):
    injections = design()
    result = quantify_runs(injections, model="linear", weighting=weighting, alpha=0.05)
    assert [c.run for c in result.calibrations] == ["R1", "R2", "R3"]
    for q in result.injections:
        cal = [i for i in injections if i.run == q.run and i.type == "calibrator"]
        x = np.array([i.level for i in cal])
        y = np.array([i.response for i in cal])
        w = np.ones_like(x) if weighting == "none" else 1 / x
        a, b = sm.WLS(y, sm.add_constant(x), weights=w).fit().params      # cross-check: statsmodels WLS
        assert q.calibration == q.run
        assert q.found == pytest.approx((q.response - a) / b, rel=1e-12)
    assert len(result.of_type("qc")) == 9 and len(result.of_type("sample")) == 3


def test_pooled_uses_one_calibration_over_all_runs():
    injections = design()
    result = quantify_runs(injections, model="linear", weighting="none", alpha=0.05, pooled=True)
    cal = [i for i in injections if i.type == "calibrator"]
    a, b = sm.OLS([i.response for i in cal], sm.add_constant([i.level for i in cal])).fit().params  # statsmodels OLS
    assert [c.run for c in result.calibrations] == ["pooled"]
    for q in result.injections:
        assert q.calibration == "pooled" and q.found == pytest.approx((q.response - a) / b, rel=1e-12)
