"""Tolerance intervals and the accuracy profile.

Three kinds of interval, which are easily confused:

* a *beta-content, gamma-confidence* interval (:func:`normal_tolerance_interval`)
  contains at least a proportion ``content`` of the population with confidence
  ``confidence``;
* a *beta-expectation* interval (:func:`beta_expectation_interval`) contains on
  average a proportion ``beta`` of the population (it is a prediction interval
  for one future result); for runs x replicates it follows the one-way
  random-effects model (Mee 1984; Hubert et al. 2007);
* mean +/- t * SD is neither: it is a confidence interval for the mean scaled
  by sqrt(n), and it covers far less than its nominal proportion.

:func:`accuracy_profile` puts beta-expectation intervals per concentration
level in % of the nominal value and reads off the validated range.

Nothing here reads files or formats text. Degenerate but legal data give a
result whose values are ``None`` and whose ``reason`` says why; invalid
parameters raise :class:`ValueError` quoting the value and the allowed range.

References
----------
.. [Howe] Howe, W. G. (1969). Two-sided tolerance limits for normal
   populations - some improvements. J. Am. Stat. Assoc. 64, 610-620.
.. [Odeh-Owen] Odeh, R. E. and Owen, D. B. (1980). Tables for Normal
   Tolerance Limits, Sampling Plans and Screening. Marcel Dekker.
.. [ISO16269-6] ISO 16269-6:2014, Statistical interpretation of data - Part 6:
   Determination of statistical tolerance intervals (annex F, two-sided
   factors for the normal distribution, unknown mean and variance).
.. [MHE] Meeker, W. Q., Hahn, G. J. and Escobar, L. A. (2017). Statistical
   Intervals, 2nd ed., Wiley (table J.5b).
.. [Natrella] Natrella, M. G. (1963). Experimental Statistics, NBS Handbook 91
   (approximate one-sided factor).
.. [NIST-7.2.6.3] NIST/SEMATECH e-Handbook of Statistical Methods,
   section 7.2.6.3, Tolerance intervals for a normal distribution.
.. [Mee] Mee, R. W. (1984). beta-expectation and beta-content tolerance
   limits for balanced one-way ANOVA random model. Technometrics 26, 251-254.
.. [Hubert] Hubert, Ph., Nguyen-Huu, J.-J., Boulanger, B. et al. (2004).
   Harmonization of strategies for the validation of quantitative analytical
   procedures: a SFSTP proposal - part I. J. Pharm. Biomed. Anal. 36, 579-586;
   part II (2007) 45, 70-81; part III (2007) 45, 82-96.
.. [Satterthwaite] Satterthwaite, F. E. (1946). Biometrics Bulletin 2, 110-114.
.. [Graybill-Wang] Graybill, F. A. and Wang, C.-M. (1980). J. Am. Stat. Assoc. 75,
   869-873 (modified large-sample bounds on sums of variance components).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from .._common import between, open_unit, positive, quiet_numpy
from .distributions import chi2_ppf, chi2_sf, nct_ppf, ncx2_ppf, norm_pdf, norm_ppf

__all__ = ["ToleranceInterval", "BetaExpectationInterval", "ProfileLevel", "AccuracyProfile",
           "normal_tolerance_factor", "normal_tolerance_interval", "beta_expectation_interval",
           "accuracy_profile", "RunsContentInterval", "runs_content_interval", "SIDES", "TWO_SIDED_METHODS", "ONE_SIDED_METHODS"]

SIDES = ("two", "lower", "upper")
TWO_SIDED_METHODS = ("exact", "howe")
ONE_SIDED_METHODS = ("exact", "natrella")


# ---------------------------------------------------------------- parameter checks

def _choice(name: str, value, allowed: tuple) -> str:
    if value not in allowed:
        raise ValueError(f"{name} must be one of {', '.join(repr(a) for a in allowed)}, got {value!r}")
    return value


def _count(name: str, value, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return int(value)


def _finite_array(name: str, values) -> np.ndarray:
    try:
        x = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a sequence of numbers, got {values!r}") from None
    if not np.all(np.isfinite(x)):
        bad = x[~np.isfinite(x)][0]
        raise ValueError(f"{name} must hold finite numbers only, got {bad!r}")
    return x


# ---------------------------------------------------------------- beta-content factors

def _two_sided_coverage(k: float, n: int, df: float, content: float) -> float:
    """P(the interval mean +/- k s contains at least ``content``), by the integral of [Odeh-Owen].

    gamma(k) = 2 * int_0^inf phi(z) P(chi2_df > df r(z/sqrt n)^2 / k^2) dz, where
    r(x) solves Phi(x + r) - Phi(x - r) = content, i.e. r^2 is the ``content``
    quantile of the noncentral chi-square with 1 df and noncentrality x^2.
    """
    def integrand(z):
        r2 = ncx2_ppf(content, 1, z * z / n) if z > 0 else chi2_ppf(content, 1)
        return 2.0 * norm_pdf(z) * chi2_sf(df * r2 / (k * k), df)

    from scipy import integrate           # imported here: about 0.25 s, and only this path needs it

    value, _ = integrate.quad(integrand, 0.0, 12.0, epsabs=1e-13, epsrel=1e-11, limit=200)
    return value


def normal_tolerance_factor(n: int, content: float, confidence: float, *, sides: str = "two",
                            method: str = "exact", df: float | None = None) -> float:
    """Factor k of the normal beta-content tolerance interval mean +/- k s.

    Parameters
    ----------
    n : int
        Number of results the mean is taken over (n >= 2).
    content : float
        Proportion of the population to be covered, in (0, 1).
    confidence : float
        Confidence level, in (0, 1).
    sides : {"two", "lower", "upper"}
        Two-sided interval, or a one-sided bound ("lower" and "upper" have the
        same factor).
    method : str
        Two-sided: ``"exact"`` (the integral of [Odeh-Owen], as tabulated in
        [ISO16269-6] annex F and [MHE] J.5b) or ``"howe"`` ([Howe]). One-sided:
        ``"exact"`` (noncentral t) or ``"natrella"`` (the approximation of
        [Natrella] printed in [NIST-7.2.6.3]).
    df : float, optional
        Degrees of freedom of s (default n - 1; a pooled s has more).

    Notes
    -----
    Exact two-sided: k solves 2 int_0^inf phi(z) P(chi2_df > df r^2(z/sqrt n) / k^2) dz
    = confidence, with Phi(x + r) - Phi(x - r) = content. Howe:
    k = z_{(1+content)/2} sqrt(df (1 + 1/n) / chi2_{1-confidence; df}) where
    chi2_{q; df} is the q quantile. Exact one-sided:
    k = t'_{confidence; df, delta} / sqrt(n), the noncentral t quantile with
    noncentrality delta = z_content sqrt(n). Natrella:
    a = 1 - z_g^2 / (2 (n-1)), b = z_p^2 - z_g^2 / n, k = (z_p + sqrt(z_p^2 - a b)) / a
    (with n - 1, not ``df``).
    """
    n = _count("n", n, 2)
    content = open_unit("content", content)
    confidence = open_unit("confidence", confidence)
    _choice("sides", sides, SIDES)
    if df is None:
        df = n - 1
    else:
        df = positive("df", df)
    if sides == "two":
        _choice("method", method, TWO_SIDED_METHODS)
        z = norm_ppf((1.0 + content) / 2.0)
        howe = z * math.sqrt(df * (1.0 + 1.0 / n) / chi2_ppf(1.0 - confidence, df))
        if method == "howe":
            return float(howe)
        with quiet_numpy():
            f = lambda k: _two_sided_coverage(k, n, df, content) - confidence  # noqa: E731
            lo, hi = 0.5 * howe, 1.5 * howe
            while f(lo) > 0:
                lo *= 0.5
            while f(hi) < 0:
                hi *= 2.0
            from scipy import optimize    # imported here: about 0.2 s, and only this path needs it

            return float(optimize.brentq(f, lo, hi, xtol=1e-12, rtol=1e-12))
    _choice("method", method, ONE_SIDED_METHODS)
    zp = norm_ppf(content)
    if method == "natrella":
        zg = norm_ppf(confidence)
        a = 1.0 - zg * zg / (2.0 * (n - 1))
        b = zp * zp - zg * zg / n
        if a <= 0 or zp * zp - a * b < 0:
            raise ValueError(f"the Natrella approximation is undefined for n = {n} at confidence "
                             f"{confidence!r}; use method='exact'")
        return float((zp + math.sqrt(zp * zp - a * b)) / a)
    with quiet_numpy():
        return float(nct_ppf(confidence, df, zp * math.sqrt(n)) / math.sqrt(n))


@dataclass(frozen=True)
class ToleranceInterval:
    """A beta-content, gamma-confidence normal tolerance interval.

    ``low``/``high`` is ``None`` on the side a one-sided bound leaves open, and
    both are ``None`` (with ``reason``) when the data allow no interval.
    """

    low: float | None
    high: float | None
    k: float | None
    mean: float | None
    sd: float | None
    n: int
    df: float | None
    content: float
    confidence: float
    sides: str
    method: str
    reason: str = ""


def normal_tolerance_interval(values, content: float, confidence: float, *, sides: str = "two",
                              method: str = "exact") -> ToleranceInterval:
    """Beta-content, gamma-confidence tolerance interval mean +/- k s for a normal sample.

    See :func:`normal_tolerance_factor` for the factor (Notes) and the
    references. Fewer than 2 results, or results that are all equal, give no
    interval (``reason`` says why).
    """
    x = _finite_array("values", values)
    content = open_unit("content", content)
    confidence = open_unit("confidence", confidence)
    _choice("sides", sides, SIDES)
    _choice("method", method, TWO_SIDED_METHODS if sides == "two" else ONE_SIDED_METHODS)
    n = x.size

    def na(reason, mean=None, sd=None):
        return ToleranceInterval(None, None, None, mean, sd, n, None, content, confidence, sides, method, reason)

    if n < 2:
        return na(f"a tolerance interval needs at least 2 results, got {n}")
    mean = float(np.mean(x))
    sd = float(np.std(x - mean, ddof=1))
    if sd == 0.0:
        return na("all results are equal: the standard deviation is 0", mean, sd)
    k = normal_tolerance_factor(n, content, confidence, sides=sides, method=method)
    low = mean - k * sd if sides in ("two", "lower") else None
    high = mean + k * sd if sides in ("two", "upper") else None
    return ToleranceInterval(low, high, k, mean, sd, n, float(n - 1), content, confidence, sides, method)


# ---------------------------------------------------------------- beta-expectation, one-way random model

@dataclass(frozen=True)
class BetaExpectationInterval:
    """Beta-expectation tolerance interval for runs x replicates (one-way random model).

    ``sd_repeatability``, ``sd_between_runs`` and ``sd_intermediate`` are the
    ANOVA estimates (the between-run variance set to 0 when its estimate is
    negative, with ``between_runs_set_to_zero``); ``k`` multiplies
    ``sd_intermediate``; ``df`` is the Satterthwaite df of the t quantile.
    """

    low: float | None
    high: float | None
    mean: float | None
    k: float | None
    df: float | None
    sd_repeatability: float | None
    sd_between_runs: float | None
    sd_intermediate: float | None
    between_runs_set_to_zero: bool
    runs: int
    results: int
    balanced: bool
    beta: float
    reason: str = ""
    centre_variance: float | None = None     # v_m, the estimated variance of the centre


def _groups_of(groups) -> list:
    try:
        arrays = [np.asarray(g, dtype=float).ravel() for g in groups]
    except (TypeError, ValueError):
        raise ValueError(f"runs must be a sequence of sequences of numbers, got {groups!r}") from None
    for i, g in enumerate(arrays):
        if not np.all(np.isfinite(g)):
            raise ValueError(f"run {i + 1} holds a value that is not a finite number: {g[~np.isfinite(g)][0]!r}")
    return arrays


def beta_expectation_interval(runs, beta: float) -> BetaExpectationInterval:
    """Beta-expectation tolerance interval for results grouped by run ([Mee], [Hubert]).

    Parameters
    ----------
    runs : sequence of sequences of float
        The results of each run (series, day); runs with no result are ignored.
    beta : float
        Expected proportion of future results inside the interval, in (0, 1).

    Notes
    -----
    With p runs of n_i results, the one-way ANOVA gives MS_B (p - 1 df) and
    MS_W (N - p df); n0 = (N - sum n_i^2 / N) / (p - 1) (n0 = n when balanced).
    s_W^2 = MS_W, s_B^2 = max(0, (MS_B - MS_W) / n0), s_IP^2 = s_W^2 + s_B^2.
    The centre is the mean of the run means, m = sum ybar_i / p, whose
    estimated variance is v_m = (s_B^2 + s_W^2 h) / p with h the mean of 1/n_i
    (h = 1/n when balanced). The interval is the prediction interval for one
    future result::

        m +/- t_{(1+beta)/2; nu} * sqrt(s_IP^2 + v_m)

    so k = t sqrt(1 + v_m / s_IP^2). In the balanced case, with
    R = s_B^2 / s_W^2 and B^2 = (R + 1) / (n R + 1), v_m / s_IP^2 = 1 / (p n B^2),
    which is the factor sqrt(1 + 1/(p n B^2)) of [Hubert] part III and [Mee].
    nu is the Satterthwaite df of s_IP^2 = a1 MS_B + a2 MS_W,
    a1 = 1/n0, a2 = 1 - 1/n0 ([Satterthwaite]; with R: nu = (R+1)^2 /
    ((R + 1/n)^2/(p-1) + (1 - 1/n)/(p n)) as printed in [Hubert]). When the
    between-run estimate is negative, s_B^2 = 0 and the same expression with
    R = 0 is used: nu = 1 / (1/(n^2 (p-1)) + (1 - 1/n)/(p n)).

    Unbalanced runs use n0 and h as above; the t distribution is then a further
    approximation (mean squares are no longer scaled chi-squares).
    """
    beta = open_unit("beta", beta)
    groups = [g for g in _groups_of(runs) if g.size > 0]
    p = len(groups)
    sizes = np.array([g.size for g in groups], dtype=float)
    total = int(sizes.sum()) if p else 0
    balanced = bool(p and np.all(sizes == sizes[0]))

    def na(reason, **known):
        fields = dict(low=None, high=None, mean=None, k=None, df=None, sd_repeatability=None,
                      sd_between_runs=None, sd_intermediate=None, between_runs_set_to_zero=False,
                      runs=p, results=total, balanced=balanced, beta=beta, reason=reason)
        fields.update(known)
        return BetaExpectationInterval(**fields)

    if p < 2:
        return na(f"the between-run variance needs at least 2 runs, got {p}")
    if total - p < 1:
        return na("the repeatability needs at least one run with 2 or more results")
    means = np.array([g.mean() for g in groups])
    centre = float(means.mean())
    grand = float(np.concatenate(groups).mean())
    ss_w = float(sum(np.sum((g - m) ** 2) for g, m in zip(groups, means)))
    ss_b = float(np.sum(sizes * (means - grand) ** 2))
    df_w, df_b = total - p, p - 1
    ms_w, ms_b = ss_w / df_w, ss_b / df_b
    n0 = (total - float(np.sum(sizes ** 2)) / total) / df_b
    raw_between = (ms_b - ms_w) / n0
    set_to_zero = raw_between < 0
    var_b = max(raw_between, 0.0)
    var_w = ms_w
    var_ip = var_w + var_b
    if var_ip <= 0.0:
        return na("all results are equal: no variance to build an interval from", mean=centre,
                  sd_repeatability=0.0, sd_between_runs=0.0, sd_intermediate=0.0)
    h = float(np.mean(1.0 / sizes))
    var_mean = (var_b + var_w * h) / p
    # Satterthwaite df of var_ip written as (var_b + var_w/n0) + (1 - 1/n0) var_w, the first term
    # estimated by MS_B / n0 on p - 1 df, the second by MS_W on N - p df
    first = var_b + var_w / n0
    nu = var_ip ** 2 / (first ** 2 / df_b + ((1.0 - 1.0 / n0) * var_w) ** 2 / df_w)
    t = float(special.stdtrit(nu, (1.0 + beta) / 2.0))     # the t quantile (scipy.stats.t.ppf, without its overhead)
    k = t * math.sqrt(1.0 + var_mean / var_ip)
    half = k * math.sqrt(var_ip)
    return BetaExpectationInterval(centre - half, centre + half, centre, k, float(nu), math.sqrt(var_w),
                                   math.sqrt(var_b), math.sqrt(var_ip), bool(set_to_zero), p, total,
                                   balanced, beta, "", var_mean)


@dataclass(frozen=True)
class RunsContentInterval:
    """Beta-content, gamma-confidence interval for runs x replicates (one-way random model).

    ``effective_n`` is s_IP^2 / v_m (the number of results the centre is worth),
    ``sd_upper`` the square root of the one-sided MLS upper confidence bound on
    s_IP^2, ``k`` the factor on ``sd_intermediate`` that gives the half-width:
    k = z_{(1+content)/2} sqrt(1 + 1/n_e) ``sd_upper`` / ``sd_intermediate``, the limits
    ``mean`` +/- k ``sd_intermediate`` (like the factor of :class:`BetaExpectationInterval`).
    """

    low: float | None
    high: float | None
    mean: float | None
    k: float | None
    effective_n: float | None
    sd_intermediate: float | None
    sd_upper: float | None
    content: float
    confidence: float
    reason: str = ""


def runs_content_interval(runs, content: float, confidence: float) -> RunsContentInterval:
    """Beta-content, gamma-confidence interval for results grouped by run (an approximation).

    Parameters
    ----------
    runs : sequence of sequences of float
        The results of each run, as for :func:`beta_expectation_interval`.
    content, confidence : float
        Proportion of the population to cover and the confidence, in (0, 1).

    Notes
    -----
    From the quantities of :func:`beta_expectation_interval` (centre m, s_IP^2 =
    MS_B / n0 + (1 - 1/n0) MS_W, the variance v_m of the centre) and the one-sided
    upper ``confidence`` bound U on sigma_IP^2 by the modified large-sample method
    ([Graybill-Wang]; :func:`validator.maths.variance_components.sum_of_mean_squares_interval`
    at two-sided level 2 confidence - 1)::

        m +/- z_{(1+content)/2} sqrt(1 + 1/n_e) sqrt(U),   n_e = s_IP^2 / v_m

    For a simple sample (no between-run variance, U = df s^2 / chi2_{1-confidence; df})
    this is Howe's interval ([Howe]). The confidence is approximate; the tests
    measure it by seeded simulation: above the stated confidence for most designs,
    about 0.945 at a stated 0.95 for 4 runs x 4 with between-run SD twice the
    repeatability (the least favourable case measured).
    """
    from .variance_components import sum_of_mean_squares_interval

    content = open_unit("content", content)
    confidence = open_unit("confidence", confidence)
    base = beta_expectation_interval(runs, 0.5)
    if base.low is None:
        return RunsContentInterval(None, None, base.mean, None, None, base.sd_intermediate, None, content,
                                   confidence, base.reason)
    groups = [g for g in _groups_of(runs) if g.size > 0]
    p = len(groups)
    sizes = np.array([g.size for g in groups], dtype=float)
    total = float(sizes.sum())
    means = np.array([g.mean() for g in groups])
    grand = float(np.concatenate(groups).mean())
    ms_w = float(sum(np.sum((g - m) ** 2) for g, m in zip(groups, means))) / (total - p)
    ms_b = float(np.sum(sizes * (means - grand) ** 2)) / (p - 1)
    n0 = (total - float(np.sum(sizes ** 2)) / total) / (p - 1)
    coefficients, mean_squares, dfs = [1.0 / n0], [ms_b], [p - 1]
    if n0 > 1.0:
        coefficients.append(1.0 - 1.0 / n0)
        mean_squares.append(ms_w)
        dfs.append(total - p)
    with quiet_numpy():
        _, _, _, mls = sum_of_mean_squares_interval(coefficients, mean_squares, dfs, 2.0 * confidence - 1.0)
    var_ip = base.sd_intermediate ** 2
    n_e = var_ip / base.centre_variance
    sd_upper = math.sqrt(max(mls[1], var_ip))
    z = float(norm_ppf((1.0 + content) / 2.0))
    half = z * math.sqrt(1.0 + 1.0 / n_e) * sd_upper
    return RunsContentInterval(base.mean - half, base.mean + half, base.mean, half / base.sd_intermediate, n_e,
                               base.sd_intermediate, sd_upper, content, confidence)


# ---------------------------------------------------------------- accuracy profile

@dataclass(frozen=True)
class ProfileLevel:
    """One concentration level of an accuracy profile, all relative values in % of ``nominal``."""

    nominal: float
    mean_found: float | None
    relative_bias_percent: float | None
    recovery_percent: float | None
    low_percent: float | None          # lower beta-expectation limit, relative error in %
    high_percent: float | None         # upper limit, relative error in %
    inside: bool | None                # None when the interval could not be built
    interval: BetaExpectationInterval
    acceptance_percent: float | None = None    # lambda at this level (None: the profile's single value)


@dataclass(frozen=True)
class AccuracyProfile:
    """Accuracy profile: per-level intervals and the validated range(s).

    ``validated_ranges`` is a tuple of (low, high) concentration pairs where
    both interval limits lie within +/- ``acceptance_percent``, found by linear
    interpolation of each limit between adjacent levels (``basis`` says so).
    It is ``None`` with a ``reason`` when a level has no interval.
    """

    levels: tuple[ProfileLevel, ...]
    beta: float
    acceptance_percent: float | None           # None when given per level (see each level)
    validated_ranges: tuple[tuple[float, float], ...] | None
    basis: str
    reason: str = ""


_PROFILE_BASIS = ("each tolerance limit (relative error, %) joined linearly between adjacent levels; "
                  "the range is where both limits lie within the acceptance limits, ends included; "
                  "no extrapolation beyond the lowest and highest level")


def _basis(per_level: bool) -> str:
    return _PROFILE_BASIS + ("; the acceptance limits, given per level, joined linearly the same way"
                             if per_level else "")


def _inside_segment(x0, x1, u0, u1, l0, l1, lam0, lam1=None):
    """Sub-interval of [x0, x1] where the linear upper limit <= the linear lambda and the linear lower
    limit >= -lambda (lambda = lam0 at x0 and lam1 at x1; lam1 defaults to lam0)."""
    if lam1 is None:
        lam1 = lam0
    lo, hi = 0.0, 1.0
    for a, b in ((u0 - lam0, u1 - lam1), (-lam0 - l0, -lam1 - l1)):   # need a + (b - a) s <= 0
        slope = b - a
        if slope == 0.0:
            if a > 0:
                return None
            continue
        root = -a / slope
        if slope > 0:
            hi = min(hi, root)
        else:
            lo = max(lo, root)
    if lo > hi:
        return None
    return x0 + lo * (x1 - x0), x0 + hi * (x1 - x0)


def accuracy_profile(levels, *, beta: float, acceptance_percent) -> AccuracyProfile:
    """Accuracy profile in relative terms ([Hubert] parts I-III).

    Parameters
    ----------
    levels : sequence of (nominal, runs)
        ``nominal`` the reference concentration (> 0), ``runs`` the back-
        calculated (found) concentrations grouped by run, as for
        :func:`beta_expectation_interval`. Nominal values must be distinct.
    beta : float
        Expected proportion of future results within the interval, in (0, 1).
    acceptance_percent : float or callable
        Acceptance limit lambda: +/- lambda % of the nominal value, > 0; or a
        function nominal -> lambda for limits that differ by level (each
        level's lambda is then stored in its ``acceptance_percent``).

    Notes
    -----
    Per level with nominal c: relative bias = (m - c) / c * 100 %, recovery =
    m / c * 100 %, and the beta-expectation limits L, U of
    :func:`beta_expectation_interval` as relative errors (L - c) / c * 100 % and
    (U - c) / c * 100 %. A level is inside when -lambda <= both <= lambda.
    Between adjacent levels c_j < c_{j+1} each limit is joined linearly in c;
    the validated range is the set of c where the joined upper limit is at
    most lambda and the joined lower limit at least -lambda (solved exactly on
    each segment), merged across segments; it may be several pieces. With
    limits per level, lambda is joined linearly between adjacent levels too.
    """
    beta = open_unit("beta", beta)
    per_level = callable(acceptance_percent)
    lam = None if per_level else positive("acceptance_percent", acceptance_percent)
    rows = []
    for i, item in enumerate(levels):
        try:
            nominal, runs = item
            nominal = float(nominal)
        except (TypeError, ValueError):
            raise ValueError(f"level {i + 1} must be a pair (nominal, runs), got {item!r}") from None
        if not (math.isfinite(nominal) and nominal > 0):
            raise ValueError(f"level {i + 1}: nominal must be a finite number > 0, got {nominal!r}")
        rows.append((nominal, beta_expectation_interval(runs, beta)))
    if not rows:
        raise ValueError("levels must hold at least one (nominal, runs) pair, got none")
    rows.sort(key=lambda r: r[0])
    nominals = [r[0] for r in rows]
    if len(set(nominals)) != len(nominals):
        raise ValueError(f"nominal values must be distinct, got {nominals!r}")
    out = []
    for c, iv in rows:
        lam_c = positive("acceptance_percent", acceptance_percent(c)) if per_level else lam
        own = lam_c if per_level else None
        if iv.low is None:
            mean = iv.mean
            out.append(ProfileLevel(c, mean, None if mean is None else (mean - c) / c * 100.0,
                                    None if mean is None else mean / c * 100.0, None, None, None, iv, own))
            continue
        lo, hi = (iv.low - c) / c * 100.0, (iv.high - c) / c * 100.0
        out.append(ProfileLevel(c, iv.mean, (iv.mean - c) / c * 100.0, iv.mean / c * 100.0, lo, hi,
                                between(lo, -lam_c, lam_c) and between(hi, -lam_c, lam_c), iv, own))
    missing = [lv.nominal for lv in out if lv.inside is None]
    if missing:
        return AccuracyProfile(tuple(out), beta, lam, None, _basis(per_level),
                               f"no tolerance interval at nominal {missing}: "
                               + "; ".join(lv.interval.reason for lv in out if lv.inside is None))
    pieces = []
    if len(out) == 1:
        if out[0].inside:
            pieces.append((out[0].nominal, out[0].nominal))
    for a, b in zip(out, out[1:]):
        seg = _inside_segment(a.nominal, b.nominal, a.high_percent, b.high_percent,
                              a.low_percent, b.low_percent, a.acceptance_percent or lam,
                              b.acceptance_percent or lam)
        if seg is None:
            continue
        if pieces and pieces[-1][1] == seg[0]:
            pieces[-1] = (pieces[-1][0], seg[1])
        else:
            pieces.append(seg)
    return AccuracyProfile(tuple(out), beta, lam, tuple(pieces), _basis(per_level))
