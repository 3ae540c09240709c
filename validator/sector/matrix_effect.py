"""Matrix effect: the SANTE slope ratio and the ICH M10 lot-by-lot assessment.

References
----------
.. [SANTE] SANTE/11312/2021, Analytical quality control and method validation
   procedures for pesticide residues analysis in food and feed (2021):
   matrix effect from the slopes of matrix-matched and solvent calibrations
   (from memory: sec. D, around D4-D5, and Appendix A glossary "matrix effect").
.. [M10] ICH M10, Bioanalytical method validation and study sample analysis
   (2022), sec. 3.2.3 Matrix effect (from memory: at least 6 lots, low and high
   QC, accuracy within +/-15 % of nominal and precision <= 15 % in each lot).
.. [EMA] EMA Guideline on bioanalytical method validation,
   EMEA/CHMP/EWP/192217/2009 Rev. 1 (2011), sec. 4.1.8 (from memory: the
   IS-normalised matrix factor, CV <= 15 % across at least 6 lots).
.. [Fieller] Fieller, E. C. (1954). J. R. Stat. Soc. B 16, 175-185.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .._common import ConfidenceInterval, no_relative_sd, not_above, quiet_numpy
from ._shared import (MeanSummary, check_count, labels, NO_SPREAD_CV, OUT_OF_RANGE, as_float_array, check_level, check_positive, fieller_ratio_interval, mean_sd_cv,
                      t_quantile_two_sided)

__all__ = ["SlopeRatioMatrixEffect", "slope_ratio_matrix_effect", "LotAccuracy", "LotAccuracyAssessment",
           "lot_accuracy", "MatrixFactorLot", "NormalisedMatrixFactor", "normalised_matrix_factor",
           "VARIANCE_MODELS"]

VARIANCE_MODELS = ("pooled", "separate")


@dataclass(frozen=True)
class SlopeRatioMatrixEffect:
    """ME % = (b_matrix / b_solvent - 1) x 100 with two confidence intervals.

    ``interval`` is the reported one: Fieller's (``fieller_interval``), which,
    unlike the delta-method interval (``delta_interval``), is exact for the
    ratio of normal estimates under the pooled model (approximate, with
    Welch-Satterthwaite df, under the separate-variance model) and need not be
    symmetric.
    All three intervals are on the ME % scale. Fields are ``None`` exactly
    when ``reason`` says why.
    """

    statistic: float | None              # ME %
    slope_ratio: float | None
    slope_solvent: float | None
    slope_matrix: float | None
    se_slope_solvent: float | None
    se_slope_matrix: float | None
    se_ratio_delta: float | None         # delta-method SE of the slope ratio
    df: float | None
    variance: str
    weighting: str                       # the weighting both lines were fitted with ("none": unweighted)
    interval: ConfidenceInterval | None = field(metadata={"interval": "null"})
    fieller_interval: ConfidenceInterval | None = field(metadata={"interval": "null"})
    delta_interval: ConfidenceInterval | None = field(metadata={"interval": "null"})
    limit_percent: float = 20.0
    beyond_limit: bool | None = None     # |ME %| > limit_percent: matrix-matched calibration indicated
    reason: str = ""


def _line_fit(x: np.ndarray, y: np.ndarray, w: np.ndarray):
    """Slope, Sxx and the residual sum of squares of a (weighted) least-squares straight line.

    With weights w: x_w = sum w x / sum w (y_w likewise), Sxx = sum w (x - x_w)^2,
    b = sum w (x - x_w)(y - y_w) / Sxx, SSE = sum w (y - a - b x)^2; var(b) = SSE / (n - 2) / Sxx.
    """
    with quiet_numpy():
        sw = float(np.sum(w))
        xc = x - float(np.sum(w * x)) / sw
        yw = float(np.sum(w * y)) / sw
        sxx = float(np.sum(w * xc * xc))
        if not (math.isfinite(sxx) and sxx > 0):
            return float("nan"), sxx, float("nan")
        slope = float(np.sum(w * xc * (y - yw))) / sxx
        intercept = yw - slope * (float(np.sum(w * x)) / sw)
        sse = float(np.sum(w * (y - intercept - slope * x) ** 2))
    return slope, sxx, sse


def _weights(values, n: int, name: str) -> np.ndarray:
    if values is None:
        return np.ones(n)
    w = as_float_array(values, name)
    if w.size != n or np.any(w <= 0):
        raise ValueError(f"{name}: expected {n} positive weights (one per point), got {w.size} values"
                         + (f" with minimum {float(w.min())!r}" if w.size else ""))
    return w


def slope_ratio_matrix_effect(x_solvent, y_solvent, x_matrix, y_matrix, *, level: float = 0.95,
                              variance: str = "separate", limit_percent: float = 20.0,
                              weighting: str = "none", weights_solvent=None,
                              weights_matrix=None) -> SlopeRatioMatrixEffect:
    """Matrix effect as the ratio of a matrix-matched to a solvent calibration slope (SANTE/11312/2021).

    Parameters
    ----------
    x_solvent, y_solvent : sequence of float
        Concentrations and responses of the calibration in solvent.
    x_matrix, y_matrix : sequence of float
        The same for the matrix-matched calibration.
    level : float
        Two-sided confidence level of the intervals.
    variance : {"separate", "pooled"}
        "separate" (the default): each line its own residual variance; the t
        quantile uses Welch-Satterthwaite df for b_m - R b_s at the estimated R
        (approximate, and valid whether or not the two variances differ).
        "pooled": one residual variance for both lines (the joint model
        y = a + b x + c M + d M x with M the matrix indicator, weighted by the
        raw weights), df = n_s + n_m - 4; Fieller's interval is then exact under
        normal errors with equal (weighted) variances.
    weighting : str
        The name of the weighting the weights come from, recorded in the result.
    weights_solvent, weights_matrix : sequence of float, optional
        Positive weights of the points (all 1 if omitted), on one common scale
        (raw weights such as 1/x^2, not renormalised per line: the pooled model
        assumes one variance of the weighted residuals).
    limit_percent : float
        |ME %| above it is flagged ``beyond_limit`` (from memory: SANTE/11312/2021
        treats matrix effects beyond +/-20 % as calling for matrix-matched
        calibration). The flag uses the estimate; the interval is shown beside it.

    Notes
    -----
    ME % = (R - 1) x 100 with R = b_m / b_s, each b from a weighted
    least-squares straight line (see :func:`_line_fit`). Each slope's variance
    is s^2 / Sxx (weighted Sxx). The two fits are independent, so the delta-method SE is
    SE(R) = |R| sqrt(var(b_m)/b_m^2 + var(b_s)/b_s^2), interval R +/- t SE(R).
    Fieller's interval is the set of R with
    (b_m - R b_s)^2 <= t^2 (var(b_m) + R^2 var(b_s)); it is unbounded (value
    ``None`` with a reason) when b_s is not significantly non-zero.
    """
    lv = check_level(level)
    lim = check_positive(limit_percent, "limit_percent")
    if variance not in VARIANCE_MODELS:
        raise ValueError(f"variance must be one of {VARIANCE_MODELS!r}, got {variance!r}")
    xs, ys = as_float_array(x_solvent, "x_solvent"), as_float_array(y_solvent, "y_solvent")
    xm, ym = as_float_array(x_matrix, "x_matrix"), as_float_array(y_matrix, "y_matrix")
    if xs.size != ys.size or xm.size != ym.size:
        raise ValueError(f"x and y must have equal lengths, got solvent {xs.size}/{ys.size}, "
                         f"matrix {xm.size}/{ym.size}")

    ws = _weights(weights_solvent, xs.size, "weights_solvent")
    wm = _weights(weights_matrix, xm.size, "weights_matrix")

    def none(reason: str) -> SlopeRatioMatrixEffect:
        return SlopeRatioMatrixEffect(None, None, None, None, None, None, None, None, variance, str(weighting),
                                      None, None, None, lim, None, reason)

    need = 3
    for name, x in (("solvent", xs), ("matrix", xm)):
        if x.size < need:
            return none(f"the {name} calibration has {x.size} points; at least {need} are needed")
        if np.ptp(x) == 0:
            return none(f"the {name} calibration has a single concentration; no slope")
    b_s, sxx_s, sse_s = _line_fit(xs, ys, ws)
    b_m, sxx_m, sse_m = _line_fit(xm, ym, wm)
    out_of_range = "the data lie outside the floating-point range this computation can handle"
    for name, sxx in (("solvent", sxx_s), ("matrix", sxx_m)):
        if math.isfinite(sxx) and sxx <= 0:
            return none(f"the {name} concentrations have no spread in floating point; no slope")
    if not all(math.isfinite(v) for v in (b_s, sxx_s, sse_s, b_m, sxx_m, sse_m)):
        return none(out_of_range)
    if b_s == 0:
        return none("the solvent slope is zero; the ratio is undefined")
    df_s, df_m = xs.size - 2, xm.size - 2
    r = b_m / b_s
    if variance == "pooled":
        s2 = (sse_s + sse_m) / (df_s + df_m)
        v_s, v_m = s2 / sxx_s, s2 / sxx_m
        df = float(df_s + df_m)
    else:
        v_s, v_m = (sse_s / df_s) / sxx_s, (sse_m / df_m) / sxx_m
        with quiet_numpy():
            num = np.square(v_m + r * r * v_s)
            den = np.square(v_m) / df_m + np.square(r * r * v_s) / df_s
            df = float(num / den) if den > 0 else float(df_s + df_m)
    if not all(math.isfinite(v) for v in (r, v_s, v_m, df)):
        return none(out_of_range)
    t = t_quantile_two_sided(lv, df)
    with quiet_numpy():
        se_r = float(abs(r) * np.sqrt(v_m / np.square(b_m) + v_s / np.square(b_s)) if b_m != 0
                     else np.sqrt(v_m) / abs(b_s))
    if not math.isfinite(se_r):
        return none(out_of_range)
    delta = ConfidenceInterval(100 * (r - t * se_r - 1), 100 * (r + t * se_r - 1), lv)
    fieller, why = fieller_ratio_interval(b_m, b_s, v_m, v_s, 0.0, t, lv)
    fieller_pct = None if fieller is None else ConfidenceInterval(100 * (fieller.low - 1),
                                                                  100 * (fieller.high - 1), lv)
    me = 100 * (r - 1)
    return SlopeRatioMatrixEffect(me, r, b_s, b_m, math.sqrt(v_s), math.sqrt(v_m), se_r, df,
                                  variance, str(weighting), fieller_pct, fieller_pct, delta, lim, not not_above(abs(me), lim), why)


@dataclass(frozen=True)
class LotAccuracy:
    """One matrix lot at one QC level: accuracy (% of nominal) and CV."""

    lot: str
    n: int
    mean: float | None
    accuracy_percent: float | None       # 100 mean / nominal
    bias_percent: float | None           # accuracy - 100
    cv_percent: float | None = field(metadata={"null_reason": "cv_reason"})
    passed: bool | None = None
    reason: str = ""

    @property
    def cv_reason(self) -> str:
        if self.cv_percent is not None or self.mean is None:
            return ""
        return ("CV undefined: fewer than two results" if self.n < 2 else
                f"CV undefined: {no_relative_sd(self.mean) or OUT_OF_RANGE}")


@dataclass(frozen=True)
class LotAccuracyAssessment:
    """Every lot at one QC level; ``passed`` is ``None`` with a reason when it cannot be judged."""

    nominal: float
    lots: tuple[LotAccuracy, ...]
    n_lots: int
    n_lots_passed: int
    max_bias_percent: float
    max_cv_percent: float
    min_lots: int
    passed: bool | None
    reason: str = ""


def lot_accuracy(measured, lot, nominal: float, *, max_bias_percent: float = 15.0,
                 max_cv_percent: float = 15.0, min_lots: int = 6, min_replicates: int = 3) -> LotAccuracyAssessment:
    """ICH M10 matrix effect at one QC level: accuracy and precision in each matrix lot.

    Parameters
    ----------
    measured : sequence of float
        Back-calculated concentrations of QCs prepared in individual matrix lots.
    lot : sequence of labels
        The matrix lot (source) of each result.
    nominal : float
        The QC's nominal concentration (call once for low and once for high QC).
    max_bias_percent, max_cv_percent : float
        Acceptance: |accuracy - 100| <= max_bias_percent and CV <= max_cv_percent in every lot
        (ICH M10 sec. 3.2.3, from memory: 15 and 15).
    min_lots, min_replicates : int
        Design minimums (ICH M10 sec. 3.2.3, from memory: 6 lots, 3 replicates).

    Notes
    -----
    Per lot: accuracy = 100 mean / nominal, CV = 100 SD / mean. The level
    passes when every lot passes and there are at least ``min_lots`` lots. A
    lot with fewer than ``min_replicates`` results is not judged (``passed`` is
    ``None``), and neither is the level; a lot whose accuracy is outside the
    limit fails (and the level with it) even when its CV is undefined (zero
    mean) or not shown (identical results, SD 0), which otherwise leave the lot
    not judged.
    """
    nom = check_positive(nominal, "nominal")
    check_positive(max_bias_percent, "max_bias_percent")
    check_positive(max_cv_percent, "max_cv_percent")
    min_lots = check_count(min_lots, "min_lots")
    min_rep = check_count(min_replicates, "min_replicates", 2)
    values = as_float_array(measured, "measured")
    lots = labels(lot, values.size, "lot")
    out = []
    for name in dict.fromkeys(lots):
        m = mean_sd_cv(values[lots == name])
        acc = None if m.mean is None else 100.0 * m.mean / nom
        if acc is None or not math.isfinite(acc):
            out.append(LotAccuracy(str(name), m.n, m.mean, None, None, None, None, OUT_OF_RANGE))
            continue
        if m.n < min_rep:
            out.append(LotAccuracy(str(name), m.n, m.mean, acc, acc - 100.0, m.cv_percent, None,
                                   f"{m.n} results, at least {min_rep} needed"))
            continue
        if not not_above(abs(acc - 100.0), max_bias_percent):
            # a clear failure whose value exists: it fails whether or not the CV can be judged
            out.append(LotAccuracy(str(name), m.n, m.mean, acc, acc - 100.0, m.cv_percent, False))
            continue
        if m.cv_percent is None or m.sd == 0:
            out.append(LotAccuracy(str(name), m.n, m.mean, acc, acc - 100.0, m.cv_percent, None,
                                   f"CV undefined: {no_relative_sd(m.mean) or OUT_OF_RANGE}" if m.cv_percent is None
                                   else NO_SPREAD_CV))
            continue
        ok = bool(not_above(m.cv_percent, max_cv_percent))
        out.append(LotAccuracy(str(name), m.n, m.mean, acc, acc - 100.0, m.cv_percent, ok))
    n_pass = sum(1 for o in out if o.passed)
    if any(o.passed is False for o in out):
        passed, reason = False, ""
    elif any(o.passed is None for o in out):
        first = next(o for o in out if o.passed is None)
        passed, reason = None, f"lot {first.lot} not judged: {first.reason}"
    elif len(out) < min_lots:
        passed, reason = None, f"{len(out)} matrix lots, at least {min_lots} needed"
    else:
        passed, reason = True, ""
    return LotAccuracyAssessment(nom, tuple(out), len(out), n_pass, float(max_bias_percent),
                                 float(max_cv_percent), min_lots, passed, reason)


@dataclass(frozen=True)
class MatrixFactorLot:
    lot: str
    analyte_factor: float | None         # mean analyte response in matrix / mean in neat solution
    internal_standard_factor: float | None
    normalised_factor: float | None      # analyte factor / IS factor


@dataclass(frozen=True)
class NormalisedMatrixFactor:
    """IS-normalised matrix factor per lot and its CV across lots."""

    lots: tuple[MatrixFactorLot, ...]
    mean: float | None
    cv_percent: float | None
    max_cv_percent: float
    min_lots: int
    passed: bool | None
    reason: str = ""


def normalised_matrix_factor(analyte_in_matrix, internal_standard_in_matrix, lot, analyte_neat,
                             internal_standard_neat, *, max_cv_percent: float = 15.0,
                             min_lots: int = 6) -> NormalisedMatrixFactor:
    """IS-normalised matrix factor across matrix lots.

    Parameters
    ----------
    analyte_in_matrix, internal_standard_in_matrix : sequence of float
        Peak responses of analyte and IS spiked after extraction into each lot
        (paired, one pair per injection).
    lot : sequence of labels
    analyte_neat, internal_standard_neat : sequence of float
        Responses of the same amounts in neat solution (no matrix).
    max_cv_percent, min_lots : acceptance, EMA 2011 sec. 4.1.8 (from memory: 15 %, 6 lots).

    Notes
    -----
    Per lot: MF_analyte = mean(analyte in matrix) / mean(analyte neat),
    MF_IS likewise, IS-normalised MF = MF_analyte / MF_IS. The CV is
    100 SD / mean of the lots' normalised factors (n - 1 SD), computed on the
    factors divided by the largest (the CV does not depend on the scale), so
    that factors whose squares overflow still give it.
    """
    check_positive(max_cv_percent, "max_cv_percent")
    min_lots = check_count(min_lots, "min_lots", 2)
    a = as_float_array(analyte_in_matrix, "analyte_in_matrix")
    s = as_float_array(internal_standard_in_matrix, "internal_standard_in_matrix")
    if a.size != s.size:
        raise ValueError(f"analyte_in_matrix and internal_standard_in_matrix must pair up, got {a.size} "
                         f"and {s.size} values")
    lots = labels(lot, a.size, "lot")
    a0 = mean_sd_cv(as_float_array(analyte_neat, "analyte_neat")).mean
    s0 = mean_sd_cv(as_float_array(internal_standard_neat, "internal_standard_neat")).mean

    def none(reason, rows=()):
        return NormalisedMatrixFactor(tuple(rows), None, None, float(max_cv_percent), min_lots, None, reason)

    if a0 is None or s0 is None or a0 == 0 or s0 == 0:
        return none("the neat-solution responses are missing or average zero")
    rows = []
    for name in dict.fromkeys(lots):
        mask = lots == name
        with quiet_numpy():
            mfa = float(a[mask].mean()) / a0
            mfs = float(s[mask].mean()) / s0
            norm = mfa / mfs if mfs != 0 else float("nan")
        rows.append(MatrixFactorLot(str(name), mfa, mfs, norm if math.isfinite(norm) else None))
    if any(r.normalised_factor is None for r in rows):
        bad = next(r for r in rows if r.normalised_factor is None)
        return none(f"lot {bad.lot}: " + ("the IS matrix factor is zero" if bad.internal_standard_factor == 0
                                          else f"its factors: {OUT_OF_RANGE}"), rows)
    factors = np.array([r.normalised_factor for r in rows])
    # the CV does not depend on the scale: computed on factors divided by the largest, so that factors of
    # any magnitude (their squares may overflow) give it; the mean is that of the unscaled factors
    scale = float(np.max(np.abs(factors)))
    summary = mean_sd_cv(factors / scale) if scale > 0 else mean_sd_cv(factors)
    mean = None if summary.mean is None else summary.mean * scale
    if len(rows) < 2:
        return NormalisedMatrixFactor(tuple(rows), mean, None, float(max_cv_percent), min_lots, None,
                                      f"{len(rows)} lot: the CV across lots needs at least two")
    if summary.cv_percent is None:
        why = no_relative_sd(summary.mean, "the mean of the normalised factors") or OUT_OF_RANGE
        return NormalisedMatrixFactor(tuple(rows), mean, None, float(max_cv_percent), min_lots, None, why)
    summary = MeanSummary(summary.n, mean, summary.sd, summary.cv_percent)
    if len(rows) < min_lots:
        return NormalisedMatrixFactor(tuple(rows), summary.mean, summary.cv_percent, float(max_cv_percent),
                                      min_lots, None, f"{len(rows)} matrix lots, at least {min_lots} needed")
    if summary.sd == 0:
        # identical factors in every lot show no lot-to-lot variation at all, below the resolution of the
        # responses (or copied values): not shown is not passed, as for precision and dilution integrity
        return NormalisedMatrixFactor(tuple(rows), summary.mean, summary.cv_percent, float(max_cv_percent),
                                      min_lots, None,
                                      f"the IS-normalised matrix factors of all {len(rows)} lots are identical (SD "
                                      "exactly 0): no lot-to-lot variation is shown within the resolution of the "
                                      "responses (check for copied values), so the CV of 0 % is not judged, as an "
                                      "RSD of identical results is not for precision")
    return NormalisedMatrixFactor(tuple(rows), summary.mean, summary.cv_percent, float(max_cv_percent),
                                  min_lots, bool(not_above(summary.cv_percent, max_cv_percent)))
