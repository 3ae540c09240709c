"""Distribution functions (cdf, sf, quantiles) built on ``scipy.special``, and the two-sided F test.

Every function here calls the same ``scipy.special`` function that ``scipy.stats`` calls for the
same quantity (``scipy.stats.t.ppf`` is ``special.stdtrit``, ``chi2.sf`` is ``special.chdtrc``,
...), with the same handling of the ends of the support and of invalid parameters, so the numbers
are identical to ``scipy.stats``' (``tests/test_distributions.py`` compares each with
``scipy.stats`` on grids of arguments). Importing ``scipy.stats`` costs about 0.5 s, more than a
whole JSON run of a small study otherwise needs; ``scipy.special`` is imported anyway.

Each function takes floats or arrays (broadcast together) and returns a numpy float for scalar
arguments, an array otherwise. Invalid parameters (a degree of freedom <= 0, a probability
outside [0, 1], NaN) give NaN, as in ``scipy.stats``.

References
----------
.. [Snedecor-Cochran] Snedecor, G. W. and Cochran, W. G. (1989). Statistical Methods,
   8th ed., sec. 6.12 (the F test of two variances, two-sided).
"""

from __future__ import annotations

import numpy as np
from scipy import special

try:
    from scipy.special._ufuncs import _binom_ppf
except ImportError:                       # pragma: no cover (older scipy)
    _binom_ppf = None

__all__ = ["f_test_two_sided", "t_cdf", "t_sf", "t_ppf", "t_isf", "chi2_sf", "chi2_ppf", "chi2_isf",
           "f_cdf", "f_sf", "f_ppf", "f_isf", "norm_cdf", "norm_sf", "norm_pdf", "norm_ppf", "norm_isf",
           "nct_cdf", "nct_ppf", "ncx2_ppf", "binom_ppf", "kstwobign_sf"]

_INF = np.inf
_NORM_PDF_C = np.sqrt(2 * np.pi)


def _arrays(x, params):
    arrays = np.broadcast_arrays(np.asarray(x, dtype=float), *(np.asarray(p, dtype=float) for p in params))
    return arrays[0], arrays[1:]


def _scalar_or_array(out: np.ndarray):
    return out[()] if out.ndim == 0 else out


def _positive(*params):
    ok = np.ones(np.shape(params[0]) if params else (), dtype=bool)
    for p in params:
        ok = ok & (p > 0)
    return ok


def _cdf_or_sf(function, x, params, valid, low, high, upper: bool):
    """cdf (``upper`` False) or sf of a continuous distribution on (low, high), as scipy.stats'
    ``rv_continuous.cdf``/``sf``: 0 or 1 outside the support, NaN for invalid parameters or x."""
    x, params = _arrays(x, params)
    ok = valid(*params)
    inside = ok & (x > low) & (x < high)
    out = np.zeros(x.shape)
    out[~ok | np.isnan(x)] = np.nan
    out[ok & ((x <= low) if upper else (x >= high))] = 1.0
    if inside.any():
        out[inside] = function(x[inside], *(p[inside] for p in params))
    return _scalar_or_array(out)


def _quantile(function, q, params, valid, low, high, upper: bool):
    """ppf (``upper`` False) or isf of a continuous distribution on (low, high), as scipy.stats'
    ``rv_continuous.ppf``/``isf``: the ends of the support at q = 0 and 1, NaN outside [0, 1]."""
    q, params = _arrays(q, params)
    ok = valid(*params)
    inside = ok & (q > 0) & (q < 1)
    out = np.full(q.shape, np.nan)
    out[ok & (q == 0)] = high if upper else low
    out[ok & (q == 1)] = low if upper else high
    if inside.any():
        out[inside] = function(q[inside], *(p[inside] for p in params))
    return _scalar_or_array(out)


# Student's t (df > 0): special.stdtr and its inverse stdtrit.
def t_cdf(x, df):
    return _cdf_or_sf(lambda x, df: special.stdtr(df, x), x, (df,), _positive, -_INF, _INF, False)


def t_sf(x, df):
    return _cdf_or_sf(lambda x, df: special.stdtr(df, -x), x, (df,), _positive, -_INF, _INF, True)


def t_ppf(q, df):
    return _quantile(lambda q, df: special.stdtrit(df, q), q, (df,), _positive, -_INF, _INF, False)


def t_isf(q, df):
    return _quantile(lambda q, df: -special.stdtrit(df, q), q, (df,), _positive, -_INF, _INF, True)


# Chi-square (df > 0) on (0, inf).
def chi2_sf(x, df):
    return _cdf_or_sf(lambda x, df: special.chdtrc(df, x), x, (df,), _positive, 0.0, _INF, True)


def chi2_ppf(q, df):
    return _quantile(lambda q, df: 2 * special.gammaincinv(df / 2, q), q, (df,), _positive, 0.0, _INF, False)


def chi2_isf(q, df):
    return _quantile(lambda q, df: special.chdtri(df, q), q, (df,), _positive, 0.0, _INF, True)


# F (dfn, dfd > 0) on (0, inf); its isf is the ppf of 1 - q, as in scipy.stats.
def f_cdf(x, dfn, dfd):
    return _cdf_or_sf(lambda x, a, b: special.fdtr(a, b, x), x, (dfn, dfd), _positive, 0.0, _INF, False)


def f_sf(x, dfn, dfd):
    return _cdf_or_sf(lambda x, a, b: special.fdtrc(a, b, x), x, (dfn, dfd), _positive, 0.0, _INF, True)


def f_ppf(q, dfn, dfd):
    return _quantile(lambda q, a, b: special.fdtri(a, b, q), q, (dfn, dfd), _positive, 0.0, _INF, False)


def f_isf(q, dfn, dfd):
    return _quantile(lambda q, a, b: special.fdtri(a, b, 1.0 - q), q, (dfn, dfd), _positive, 0.0, _INF, True)


# Standard normal.
def norm_cdf(x):
    return _cdf_or_sf(special.ndtr, x, (), _positive, -_INF, _INF, False)


def norm_sf(x):
    return _cdf_or_sf(lambda x: special.ndtr(-x), x, (), _positive, -_INF, _INF, True)


def norm_pdf(x):
    x = np.asarray(x, dtype=float)
    out = np.zeros(x.shape)
    out[np.isnan(x)] = np.nan
    inside = np.isfinite(x)
    out[inside] = np.exp(-x[inside] ** 2 / 2.0) / _NORM_PDF_C
    return _scalar_or_array(out)


def norm_ppf(q):
    return _quantile(special.ndtri, q, (), _positive, -_INF, _INF, False)


def norm_isf(q):
    return _quantile(lambda q: -special.ndtri(q), q, (), _positive, -_INF, _INF, True)


# Non-central t (df > 0, any finite non-centrality) and non-central chi-square (df finite > 0, nc >= 0).
def _nct_valid(df, nc):
    return (df > 0) & (nc == nc)


def nct_cdf(x, df, nc):
    return _cdf_or_sf(lambda x, df, nc: special.nctdtr(df, nc, x), x, (df, nc), _nct_valid, -_INF, _INF, False)


def nct_ppf(q, df, nc):
    return _quantile(lambda q, df, nc: special.nctdtrit(df, nc, q), q, (df, nc), _nct_valid, -_INF, _INF, False)


def _ncx2_quantile(q, df, nc):
    with np.errstate(over="ignore"):
        central = nc == 0
        out = np.empty(q.shape)
        out[~central] = special.chndtrix(q[~central], df[~central], nc[~central])
        out[central] = 2 * special.gammaincinv(df[central] / 2, q[central])
    return out


def ncx2_ppf(q, df, nc):
    return _quantile(_ncx2_quantile, q, (df, nc),
                     lambda df, nc: (df > 0) & np.isfinite(df) & (nc >= 0), 0.0, _INF, False)


def binom_ppf(q, n, p):
    """The smallest k with P(X <= k) >= q, X binomial(n, p) (``scipy.stats.binom.ppf``).

    Through the ufunc ``scipy.stats.binom.ppf`` itself calls (Boost's quantile, a private name of
    ``scipy.special``; the tests check it against ``scipy.stats``); where a scipy lacks it, k is
    found from the continuous inverse ``special.bdtrik`` and checked one step below with the cdf
    ``special.bdtr`` (the two can differ where P(X <= k) equals q exactly)."""
    q, (n, p) = _arrays(q, (n, p))
    ok = (n >= 0) & (n == np.floor(n)) & (p >= 0) & (p <= 1)
    inside = ok & (q > 0) & (q < 1)
    out = np.full(q.shape, np.nan)
    out[ok & (q == 0)] = -1.0
    out[ok & (q == 1)] = n[ok & (q == 1)]
    if inside.any():
        qi, ni, pi = q[inside], n[inside], p[inside]
        if _binom_ppf is not None:
            out[inside] = _binom_ppf(qi, ni, pi)
        else:
            k = np.ceil(special.bdtrik(qi, ni, pi))
            below = np.maximum(k - 1, 0)
            k = np.where(special.bdtr(below, ni.astype(int), pi) >= qi, below, k)
            out[inside] = np.where(ni == 0, 0.0, np.minimum(k, ni))
    return _scalar_or_array(out)


# The limit distribution of sqrt(n) D_n (Kolmogorov), on (0, inf).
def kstwobign_sf(x):
    return _cdf_or_sf(special.kolmogorov, x, (), _positive, 0.0, _INF, True)


def f_test_two_sided(f: float, df_numerator: float, df_denominator: float) -> float:
    """Two-sided p-value of a variance ratio ``f`` on F(df_numerator, df_denominator).

    Notes
    -----
    p = min(1, 2 min(P(F >= f), P(F <= f))): twice the smaller tail [Snedecor-Cochran].
    """
    tail = min(f_sf(f, df_numerator, df_denominator), f_cdf(f, df_numerator, df_denominator))
    return float(min(1.0, 2 * tail))

