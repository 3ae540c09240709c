"""Weighted polynomial least squares for calibration lines and curves.

Notes
-----
The model is y = sum_k beta_k x^k over the powers {1} (straight line through
the origin), {0, 1} (straight line) or {0, 1, 2} (quadratic). With weights
w_i (normalised so that sum w_i = n, which leaves coefficients and their
standard errors unchanged and keeps s(y/x) in response units) the estimate
minimises sum w_i (y_i - yhat_i)^2.

For numerical stability the problem is solved in a centred and scaled
variable u = (x - c)/s (c = weighted mean of x, or 0 through the origin;
s = weighted SD of x, or the largest |x| through the origin) by a QR
decomposition of the weighted design matrix, never by forming X'WX. The
responses are centred and scaled the same way, v = (y - m)/d (m = weighted
mean of y, or 0 through the origin; d = sqrt(SS_tot/n), the spread of the
responses about m), so that neither a large offset nor a magnitude near the
ends of the float64 range enters the solve: the fit is invariant to these
affine maps, the coefficients in v are multiplied back by d and m is added
to the constant term. The coefficients and their covariance are transformed
back to powers of x exactly by the binomial expansion of ((x - c)/s)^k. This reproduces the NIST
StRD certified values for Norris, Pontius, NoInt1 and NoInt2 to 9 or more
significant digits (see tests/test_regression_nist.py).

Residual variance s^2 = sum w_i e_i^2 / (n - p); the residual standard
deviation s(y/x) = sqrt(s^2). Cov(beta) = s^2 (X'WX)^-1. R^2 = 1 - SS_res/SS_tot
with SS_tot centred on the weighted mean, or uncentred (sum w y^2) through the
origin, as statsmodels reports it.

The fit is called exact (passes through every point to rounding error) when
s(y/x) <= 1e-9 d: judged against the spread of the responses, never against
their magnitude, so that adding a constant to every response changes nothing.

References
----------
.. [1] ISO 8466-1:2021, Water quality - Calibration and evaluation of
       analytical methods - Part 1: Linear calibration function.
.. [2] ISO 8466-2:2001, Part 2: Calibration strategy for non-linear
       second-order calibration functions.
.. [3] Draper, N. R. and Smith, H. (1998). Applied Regression Analysis,
       3rd ed., Wiley, ch. 9 (weighted least squares).
.. [4] Golub, G. H. and Van Loan, C. F. (2013). Matrix Computations, 4th ed.,
       sec. 5.3 (least squares by QR).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from math import comb

import numpy as np
from scipy import linalg

from .._common import ConfidenceInterval, quiet_numpy
from .distributions import t_ppf, t_sf

__all__ = ["PolynomialFit", "fit_polynomial", "raw_weights", "Coefficient", "MODELS", "WEIGHTINGS", "WEIGHTED_BY",
           "EXACT_RTOL", "MAGNITUDE_LIMIT", "first_out_of_range"]

MODELS = {"linear": (0, 1), "quadratic": (0, 1, 2), "origin": (1,)}
# the weighting schemes, each (but "none") 1/v^k of the variable its weights come from
WEIGHTINGS = ("none", "1/x", "1/x^2", "1/y", "1/y^2")
WEIGHTED_BY = {"1/x": "concentration", "1/x^2": "concentration", "1/y": "response", "1/y^2": "response"}
_NAMES = {0: "intercept", 1: "slope", 2: "quadratic"}
EXACT_RTOL = 1e-9           # exact fit: s(y/x) <= EXACT_RTOL * spread of the responses
MAGNITUDE_LIMIT = 1e50      # non-zero data must lie in [1/MAGNITUDE_LIMIT, MAGNITUDE_LIMIT] in magnitude


def first_out_of_range(values) -> int | None:
    """Index of the first value whose non-zero magnitude is outside [1e-50, 1e50], or None.

    Notes
    -----
    The statistics square data and combine them in products such as the
    variance of a quadratic coefficient, of order (y / x^2)^2. With every
    non-zero |x| and |y| in [1e-50, 1e50] such terms stay within 1e-300 to
    1e300, inside float64's normal range (about 2.2e-308 to 1.8e308); outside
    it they would overflow to infinity or underflow to zero and give wrong
    verdicts (a real lack of fit called "zero pure error"). Zero is allowed.
    """
    a = np.abs(np.asarray(values, float))
    bad = np.flatnonzero(~np.isfinite(a) | (a > MAGNITUDE_LIMIT) | ((a > 0) & (a < 1 / MAGNITUDE_LIMIT)))
    return int(bad[0]) if bad.size else None


@dataclass(frozen=True)
class Coefficient:
    """One regression coefficient with its standard error, CI and t test (H0: 0)."""

    estimate: float
    std_error: float
    ci: ConfidenceInterval
    statistic: float | None
    pvalue: float | None


def raw_weights(weighting: str, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Un-normalised weights for a weighting scheme.

    Raises ``ValueError`` when the scheme cannot be computed (a zero or
    negative concentration with 1/x, a non-positive response with 1/y).
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    if weighting == "none":
        return np.ones_like(x)
    what = WEIGHTED_BY[weighting]
    base = x if what == "concentration" else y
    if np.any(base <= 0):
        raise ValueError(f"weighting {weighting} needs every {what} > 0")
    power = 2 if weighting.endswith("^2") else 1
    return 1.0 / base**power


@dataclass(frozen=True)
class PolynomialFit:
    """A fitted calibration function; arrays are the data it was fitted to."""

    model: str
    powers: tuple[int, ...]
    weighting: str
    x: np.ndarray = field(repr=False, compare=False)
    y: np.ndarray = field(repr=False, compare=False)
    weights: np.ndarray = field(repr=False, compare=False)   # normalised, sum = n
    weight_factor: float            # normalised = weight_factor * raw
    centre: float
    scale: float
    response_centre: float          # m: weighted mean of y (0 through the origin)
    response_spread: float          # d = sqrt(SS_tot / n) about m
    beta_u: np.ndarray = field(repr=False, compare=False)     # coefficients in u
    cov_u: np.ndarray = field(repr=False, compare=False)      # (U'WU)^-1, unscaled
    leverage: np.ndarray = field(repr=False, compare=False)
    residual_variance: float
    df_resid: int
    r_squared: float
    coefficients: dict[str, Coefficient]     # "intercept"/"slope"/"quadratic" -> Coefficient
    alpha: float

    @property
    def n(self) -> int:
        return int(self.x.size)

    @property
    def n_params(self) -> int:
        return len(self.powers)

    @property
    def exact(self) -> bool:
        """True when the fit passes through every point (to rounding error).

        Judged against the spread of the responses about their weighted mean
        (``response_spread``), so that an offset added to every response does
        not change the verdict. Tests that need residual scatter are then not
        applicable.
        """
        return bool(self.residual_sd <= EXACT_RTOL * self.response_spread)

    @property
    def residual_sd(self) -> float:
        return float(np.sqrt(self.residual_variance))

    @property
    def residuals(self) -> np.ndarray:
        return self.y - self.predict(self.x)

    @property
    def weighted_residuals(self) -> np.ndarray:
        return np.sqrt(self.weights) * self.residuals

    @property
    def ssr(self) -> float:
        return float(np.sum(self.weighted_residuals**2))

    @property
    def t_quantile(self) -> float:
        """t(1 - alpha/2, n - p) used for every two-sided interval of this fit."""
        return float(t_ppf(1 - self.alpha / 2, self.df_resid))

    def _u(self, x):
        return (np.asarray(x, float) - self.centre) / self.scale

    def _design(self, x):
        u = self._u(x)
        return np.column_stack([u**k for k in self.powers]) if u.ndim else np.array([u**k for k in self.powers])

    def predict(self, x):
        return self._design(x) @ self.beta_u

    def slope_at(self, x):
        """dy/dx of the fitted function at x."""
        u = self._u(x)
        d = sum(k * self.beta_u[i] * u ** (k - 1) for i, k in enumerate(self.powers) if k > 0)
        return d / self.scale

    def mean_response_variance(self, x):
        """Var(yhat(x)) = s^2 g(x)' (X'WX)^-1 g(x)."""
        g = self._design(x)
        quad = np.einsum("...i,ij,...j->...", g, self.cov_u, g)
        return self.residual_variance * quad

    def weight_at(self, x0: float, y0: float) -> float:
        """Normalised weight of a new reading at (x0, y0), on the fit's scale."""
        try:
            with quiet_numpy():
                return float(self.weight_factor * raw_weights(self.weighting, np.array([x0]), np.array([y0]))[0])
        except ValueError:          # 1/x or 1/y at a value <= 0: no weight exists there
            return float("nan")

    def inverse(self, y0: float) -> tuple:
        """Concentration x0 with fitted response y0.

        Returns ``(x0, inside)``: for a quadratic, the real root inside the
        calibrated range if there is one, else the root nearest to it;
        ``x0`` is NaN when no real root exists. See :meth:`inverse_many`.
        """
        x0, inside = self.inverse_many(np.array([float(y0)]))
        return float(x0[0]), bool(inside[0])

    def inverse_many(self, y0) -> tuple:
        """:meth:`inverse` for an array of responses, in O(n) work.

        Returns ``(x0, inside)``, two arrays shaped like ``y0``. The
        calibrated range [min x, max x] is found once for the whole array.

        Notes
        -----
        Straight line: u0 = (y0 - b0)/b1 (u0 = y0/b1 through the origin).
        Quadratic b0 + b1 u + b2 u^2 = y0: with c0 = b0 - y0, q = -(b1 +
        sign(b1) sqrt(b1^2 - 4 b2 c0))/2 the roots are q/b2 and c0/q, the
        cancellation-free form (Press et al., Numerical Recipes, 3rd ed.,
        sec. 5.6); no real root when b1^2 - 4 b2 c0 < 0. x0 = c + s u0.
        """
        y0 = np.asarray(y0, float)
        b = self.beta_u
        lo, hi = float(self.x.min()), float(self.x.max())
        with quiet_numpy():
            if self.powers == (1,):
                roots = [y0 / b[0]]
            elif self.powers == (0, 1):
                roots = [(y0 - b[0]) / b[1]]
            elif b[2] == 0:
                roots = [-(b[0] - y0) / b[1]]
            else:
                c0, c1, c2 = b[0] - y0, b[1], b[2]
                disc = c1 * c1 - 4 * c2 * c0
                root = np.sqrt(np.where(disc >= 0, disc, np.nan))       # NaN: no real root
                q = -0.5 * (c1 + np.copysign(root, c1))                 # stable roots
                roots = [np.where(q != 0, q / c2, 0.0), np.where(q != 0, c0 / q, np.nan)]
            xs = [self.centre + self.scale * u for u in roots]
            inside = [(lo <= x) & (x <= hi) for x in xs]
            if len(xs) == 1:
                return xs[0], inside[0]
            d1, d2 = (np.minimum(np.abs(x - lo), np.abs(x - hi)) for x in xs)
            nearest = np.where(d2 < d1, xs[1], xs[0])       # a tie keeps the first root
            x0 = np.where(inside[0], xs[0], np.where(inside[1], xs[1], nearest))
        return x0, inside[0] | inside[1]


def _rms(d: np.ndarray, w: np.ndarray) -> float:
    """sqrt(sum w d^2 / sum w), computed on d / max|d| so that no square over- or underflows."""
    big = float(np.max(np.abs(d)))
    if not big > 0:
        return 0.0
    return big * float(np.sqrt(np.sum(w * (d / big) ** 2) / np.sum(w)))


def _to_x_basis(powers: tuple, centre: float, scale: float) -> np.ndarray:
    """Matrix T with beta_x = T beta_u for u = (x - centre)/scale."""
    T = np.zeros((len(powers), len(powers)))
    for i, j in enumerate(powers):          # power of x
        for m, k in enumerate(powers):      # power of u
            if j <= k:
                T[i, m] = comb(k, j) * (-centre) ** (k - j) / scale**k
    return T


def fit_polynomial(x, y, *, model: str = "linear", weighting: str = "none",
                   alpha: float = 0.05) -> PolynomialFit:
    """Fit a calibration function by (weighted) least squares.

    Parameters
    ----------
    x, y : array_like
        Concentrations and responses.
    model : {"linear", "quadratic", "origin"}
        Straight line, second-order polynomial, or straight line through 0.
    weighting : {"none", "1/x", "1/x^2", "1/y", "1/y^2"}
    alpha : float
        Coefficient CIs have level 1 - alpha (t with n - p df).
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    powers = MODELS[model]
    p = len(powers)
    n = x.size
    if n <= p:
        raise ValueError(f"{model} fit needs more than {p} points, got {n}")
    raw = raw_weights(weighting, x, y)
    factor = n / raw.sum()
    w = raw * factor
    if 0 in powers:
        centre = float(np.sum(w * x) / n)
        scale = _rms(x - centre, w)
    else:
        centre, scale = 0.0, float(np.max(np.abs(x)))
    if not scale > 0:
        raise ValueError("all concentrations are identical")
    u = (x - centre) / scale
    U = np.column_stack([u**k for k in powers])
    # centre and scale the responses too (see the module Notes); m is added back exactly below
    y_centre = float(np.sum(w * y) / n) if 0 in powers else 0.0
    spread = _rms(y - y_centre, w)
    v = (y - y_centre) / spread if spread > 0 else y - y_centre
    unit = spread if spread > 0 else 1.0
    sw = np.sqrt(w)
    Q, R = np.linalg.qr(sw[:, None] * U)
    if np.min(np.abs(np.diag(R))) <= 1e-12 * np.max(np.abs(np.diag(R))):
        raise ValueError(f"{model} fit is singular: too few distinct concentrations")
    beta_v = linalg.solve_triangular(R, Q.T @ (sw * v))
    beta_u = beta_v * unit
    if 0 in powers:
        beta_u[powers.index(0)] += y_centre
    Rinv = linalg.solve_triangular(R, np.eye(p))
    cov_u = Rinv @ Rinv.T
    leverage = np.sum(Q**2, axis=1)
    resid_v = v - U @ beta_v
    df = n - p
    ssr_v = float(np.sum(w * resid_v**2))          # in units of d^2
    sst_v = float(np.sum(w * v**2))
    s2 = ssr_v / df * unit**2
    with quiet_numpy():
        r2 = 1.0 - ssr_v / sst_v if sst_v > 0 else float("nan")
    T = _to_x_basis(powers, centre, scale)
    beta_x = T @ beta_u
    cov_x = s2 * (T @ cov_u @ T.T)
    tq = float(t_ppf(1 - alpha / 2, df))
    coefficients = {}
    for i, k in enumerate(powers):
        est = float(beta_x[i])
        se = float(np.sqrt(max(cov_x[i, i], 0.0)))
        with quiet_numpy():
            t = est / se if se > 0 else None
        pval = float(2 * t_sf(abs(t), df)) if t is not None else None
        coefficients[_NAMES[k]] = Coefficient(
            estimate=est, std_error=se,
            ci=ConfidenceInterval(est - tq * se, est + tq * se, 1 - alpha),
            statistic=t, pvalue=pval)
    return PolynomialFit(model=model, powers=powers, weighting=weighting, x=x, y=y, weights=w,
                         weight_factor=float(factor), centre=centre, scale=scale,
                         response_centre=y_centre, response_spread=spread, beta_u=beta_u,
                         cov_u=cov_u, leverage=leverage, residual_variance=s2, df_resid=df,
                         r_squared=float(r2), coefficients=coefficients, alpha=alpha)
