"""Extreme magnitudes: the right answer after scaling, or exit 2 naming file, row and column.

Every study is run through the command line in-process and its results.json validated
against the shipped JSON Schema.
"""

import json

import jsonschema
import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

from validator.cli import main
from validator.results import load_schema

X = np.repeat([1.0, 2, 3, 4, 5, 6], 3)
# invented data (not a reference value): a curved response, so a straight line shows a real
# lack of fit
Y = 1 + 0.5 * X + 0.08 * X**2 + np.random.default_rng(7).normal(0, 0.01, X.size)


def _run(tmp_path, capsys, x, y, model="linear", blanks=None):
    out = tmp_path / "out"                  # outputs apart from the inputs (validator refuses --out inside them)
    tmp_path = tmp_path / "inputs"
    tmp_path.mkdir(exist_ok=True)
    (tmp_path / "cal.csv").write_text("concentration,response\n"
                                      + "".join(f"{a!r},{b!r}\n" for a, b in zip(map(float, x), map(float, y))))
    extra = ""
    if blanks is not None:
        (tmp_path / "blanks.csv").write_text("response\n" + "".join(f"{float(b)!r}\n" for b in blanks))
        extra = '[blanks]\ndata = "blanks.csv"\n'
    (tmp_path / "study.toml").write_text(
        '[study]\nid = "X"\ntitle = "extremes"\nconcentration_unit = "u"\nresponse_unit = "a"\n'
        f'[calibration]\ndata = "cal.csv"\nmodel = "{model}"\n' + extra)
    code = main(["run", str(tmp_path / "study.toml"), "--out", str(out), "--format", "json"])
    _, err = capsys.readouterr()
    if code in (0, 1):
        results = json.loads((out / "results.json").read_text())
        jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
        return code, err, results["analytes"][0]
    return code, err, None


def _lack_of_fit_reference(x, y):
    """F and p of lack of fit: straight line against one mean per level (statsmodels anova_lm)."""
    df = pd.DataFrame({"x": x, "y": y})
    line = smf.ols("y ~ x", df).fit()
    means = smf.ols("y ~ C(x)", df).fit()
    table = anova_lm(line, means)
    return float(table["F"].iloc[1]), float(table["Pr(>F)"].iloc[1])


@pytest.mark.parametrize("x_scale, y_scale", [(1.0, 1.0), (1.0, 1e45), (1.0, 1e-45), (1e-45, 1e45),
                                              (1e40, 1e-40), (1e-45, 1e-45)])
def test_scaled_data_give_the_same_statistics(tmp_path, capsys, x_scale, y_scale):
    code, err, a = _run(tmp_path, capsys, X * x_scale, Y * y_scale, blanks=Y[:3] * 0.01 * y_scale)
    assert code == 1, err                  # the lack of fit is real and fails its criterion
    F, p = _lack_of_fit_reference(X, Y)    # cross-check: statsmodels anova_lm on the unscaled data
    lof = a["calibration"]["lack_of_fit"]
    assert lof is not None
    assert lof["statistic"] == pytest.approx(F, rel=1e-9)
    assert lof["p_value"] == pytest.approx(p, rel=1e-6)
    ref = smf.ols("y ~ x", pd.DataFrame({"x": X, "y": Y})).fit()
    cal = a["calibration"]
    # cross-check: statsmodels OLS; the coefficients scale back exactly (slope by y/x, intercept by y)
    assert cal["coefficients"]["slope"]["estimate"] == pytest.approx(ref.params["x"] * y_scale / x_scale, rel=1e-9)
    assert cal["coefficients"]["intercept"]["estimate"] == pytest.approx(ref.params["Intercept"] * y_scale, rel=1e-9)
    assert cal["residual_sd"] == pytest.approx(np.sqrt(ref.scale) * y_scale, rel=1e-9)
    lods = {e["method"]: e["lod"] for e in a["detection"]["estimates"]}
    # hand computation, see detection.py: LOD = 3.3 s/b, in concentration units (scales with x)
    assert lods["ich-residual-sd"] == pytest.approx(3.3 * np.sqrt(ref.scale) / ref.params["x"] * x_scale, rel=1e-9)
    assert lods["blank-sd"] is not None


@pytest.mark.parametrize("scale", [1e45, 1e-45])
def test_quadratic_at_extreme_scales(tmp_path, capsys, scale):
    code, err, a = _run(tmp_path, capsys, X, Y * scale, model="quadratic")
    assert code in (0, 1), err
    df = pd.DataFrame({"x": X, "y": Y})
    ref = smf.ols("y ~ x + I(x**2)", df).fit()        # cross-check: statsmodels OLS
    coef = a["calibration"]["coefficients"]
    assert coef["quadratic"]["estimate"] == pytest.approx(ref.params["I(x ** 2)"] * scale, rel=1e-8)
    assert coef["quadratic"]["std_error"] == pytest.approx(ref.bse["I(x ** 2)"] * scale, rel=1e-8)
    assert a["calibration"]["residual_sd"] == pytest.approx(np.sqrt(ref.scale) * scale, rel=1e-9)


@pytest.mark.parametrize("column, x_scale, y_scale, shown", [
    ("response", 1.0, 1e200, "1.58"), ("response", 1.0, 1e-300, "1.58"),
    ("concentration", 1e300, 1.0, "1e+300"), ("concentration", 1e-320, 1.0, "1e-320")])
def test_beyond_float64_squares_exit_2_with_file_row_column(tmp_path, capsys, column, x_scale, y_scale, shown):
    code, err, _ = _run(tmp_path, capsys, X * x_scale, Y * y_scale)
    assert code == 2
    assert err.startswith(f'validator: error: cal.csv, row 2, column "{column}": {column} {shown}')
    assert "rescale the unit" in err and err.count("\n") == 1
    assert not (tmp_path / "out").exists()


def test_offset_responses_keep_their_residual_statistics(tmp_path, capsys):
    # the scenario: y about 1 000 012 + 12.3456 x, noise about 4e-4 (six points)
    x = np.arange(1.0, 7.0)
    y = 1_000_012 + 12.3456 * x + np.array([3e-4, -5e-4, 2e-4, 4e-4, -6e-4, 1e-4])
    code, err, a = _run(tmp_path, capsys, x, y)
    assert code in (0, 1), err
    assert a["calibration"]["normality"] is not None and a["calibration"]["intercept_test"] is not None
    assert not any("exact" in d for d in a["diagnostics"])
    assert all(e["lod"] is not None for e in a["detection"]["estimates"] if e["method"] != "blank-sd")
    ref = smf.ols("y ~ x", pd.DataFrame({"x": x, "y": y})).fit()   # cross-check: statsmodels OLS
    assert a["calibration"]["residual_sd"] == pytest.approx(np.sqrt(ref.scale), rel=1e-6)
