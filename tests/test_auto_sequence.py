"""The automatic model and weighting choice: a fixed, recorded sequence; Mandel's F is reported
with the weighting it was computed under.

Mandel's F is cross-checked against statsmodels WLS fits (F from their residual variances).
"""

import json

import jsonschema
import numpy as np
import pytest
import statsmodels.api as sm

from conftest import CALIBRATION
from validator.characteristics.calibration import analyse_calibration, choose_weighting, mandel_test
from validator.cli import main
from validator.report.numbers import weighting_label
from validator.maths.regression import WEIGHTINGS, raw_weights
from validator.results import load_schema


# our own data: 1 to 10 in duplicate, slight curvature, SD proportional to x (seeded)
X = np.repeat(np.arange(1.0, 11), 2)
Y = np.round(0.05 + 1.0 * X - 0.012 * X**2 + np.random.default_rng(5).normal(0, 0.03 * X), 4)


def statsmodels_mandel(x, y, weighting):
    """F = ((n-2) s1^2 - (n-3) s2^2) / s2^2 from statsmodels WLS residual variances (scale)."""
    w = raw_weights(weighting, x, y)
    line = sm.WLS(y, sm.add_constant(x), weights=w).fit()
    quad = sm.WLS(y, np.column_stack([np.ones_like(x), x, x**2]), weights=w).fit()
    n = x.size
    # scale = sum w e^2 / (n - p); F is unchanged by any common factor in the weights
    return ((n - 2) * line.scale - (n - 3) * quad.scale) / quad.scale


@pytest.mark.parametrize("weighting", WEIGHTINGS)
def test_mandel_under_each_weighting_matches_statsmodels(weighting):
    res = mandel_test(X, Y, weighting)
    F = statsmodels_mandel(X, Y, weighting)                     # cross-check: statsmodels WLS
    assert res.statistic == pytest.approx(F, rel=1e-9)
    assert res.df == (1, X.size - 3)


def test_auto_sequence_reports_f_with_its_own_weighting():
    # the audit's situation: the quadratic wins and the weighting is re-chosen afterwards
    res = analyse_calibration(X, Y, model="auto", weighting="auto")
    line_wt, _ = choose_weighting(X, Y, "linear")
    quad_wt, _ = choose_weighting(X, Y, "quadratic")
    assert line_wt != quad_wt                                   # the data were chosen for this
    assert res.model == "quadratic" and res.weighting == quad_wt
    assert res.mandel_weighting == line_wt
    assert res.mandel.statistic == pytest.approx(statsmodels_mandel(X, Y, line_wt), rel=1e-9)  # statsmodels WLS
    # under the final weighting F differs: it must not be reported beside it
    assert abs(statsmodels_mandel(X, Y, quad_wt) - res.mandel.statistic) > 1
    steps = [(s.step, s.model, s.weighting) for s in res.choice_steps]
    assert steps == [("weighting", "linear", line_wt), ("mandel", "linear", line_wt),
                     ("model", "quadratic", line_wt), ("weighting", "quadratic", quad_wt)]


def test_auto_sequence_is_reproducible_and_order_free():
    a = analyse_calibration(X, Y, model="auto", weighting="auto")
    perm = np.random.default_rng(1).permutation(X.size)
    b = analyse_calibration(X[perm], Y[perm], model="auto", weighting="auto")
    assert a.choice_steps == analyse_calibration(X, Y, model="auto", weighting="auto").choice_steps
    assert [(s.step, s.model, s.weighting) for s in a.choice_steps] == \
        [(s.step, s.model, s.weighting) for s in b.choice_steps]
    assert b.mandel.statistic == pytest.approx(a.mandel.statistic, rel=1e-9)


@pytest.mark.parametrize("model, weighting", [("auto", "1/x"), ("linear", "auto"), ("quadratic", "auto"),
                                              ("linear", "none")])
def test_reported_f_is_computed_under_the_reported_weighting(model, weighting):
    res = analyse_calibration(X, Y, model=model, weighting=weighting)
    F = statsmodels_mandel(X, Y, res.mandel_weighting)           # cross-check: statsmodels WLS
    assert res.mandel.statistic == pytest.approx(F, rel=1e-9)
    if model != "auto":
        assert res.mandel_weighting == res.weighting             # declared model: the fit's weighting
    if weighting == "auto" and model != "auto":
        assert res.weighting == choose_weighting(X, Y, model)[0]  # chosen for the declared model


def test_through_origin_auto_model_is_a_straight_line():
    res = analyse_calibration(X, Y, model="auto", weighting="auto", through_origin=True)
    assert res.model == "linear" and not res.mandel.applicable and res.mandel_weighting is None
    assert [s.step for s in res.choice_steps] == ["weighting"]


def test_results_json_records_the_sequence(make_study, outside):
    cal = "concentration,response\n" + "".join(f"{float(x)!r},{float(y)!r}\n" for x, y in zip(X, Y))
    study = make_study('[calibration]\ndata = "calibration.csv"\nmodel = "auto"\nweighting = "auto"\n',
                       {"calibration.csv": cal})
    out = outside / "o"
    main(["run", str(study), "--out", str(out), "--format", "json,html"])
    results = json.loads((out / "results.json").read_text())
    jsonschema.validate(results, load_schema())
    c = results["analytes"][0]["calibration"]
    assert c["model"] == "quadratic"
    assert c["mandel"]["weighting"] != c["weighting"]
    F = statsmodels_mandel(X, Y, c["mandel"]["weighting"])      # cross-check: statsmodels WLS
    assert c["mandel"]["statistic"] == pytest.approx(F, rel=1e-9)
    assert [s["step"] for s in c["choice_steps"]] == ["weighting", "mandel", "model", "weighting"]
    html = (out / "dossier.html").read_text()
    # the dossier writes the weighting with a real exponent (1/x²)
    assert f"Linear vs quadratic (Mandel, weighting {weighting_label(c['mandel']['weighting'])})" in html


def test_plain_study_has_a_single_mandel_step(make_study, outside):
    study = make_study(files={"calibration.csv": CALIBRATION})
    out = outside / "o"
    main(["run", str(study), "--out", str(out), "--format", "json"])
    c = json.loads((out / "results.json").read_text())["analytes"][0]["calibration"]
    assert c["mandel"]["weighting"] == "none" == c["weighting"]
    assert [s["step"] for s in c["choice_steps"]] == ["mandel"]
