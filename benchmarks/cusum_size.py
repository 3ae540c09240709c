"""Size of the Passing-Bablok cusum linearity test by seeded simulation.

Under H0 (a straight-line relation): true values uniform on [1, 100], both methods measure
them with normal error SD 2, results rounded to 3 decimals as a laboratory would report them.
For each n, ``DRAWS`` data sets; the rejection rate at nominal 5 % is printed with its binomial
standard error sqrt(p (1 - p) / draws) for

- the p-value validator reports (Kolmogorov limit applied to H), and
- for the record, the exact permutation distribution of the two-sample Kolmogorov-Smirnov D
  of the positions above against those below (scipy.stats.ks_2samp, method="exact"), which
  treats the residual signs as exchangeable. Here the signs come from the float slope and
  intercept, with residuals below 1e-9 of the data scale counted as on the line. Where
  scipy cannot finish the exact computation it falls back to the asymptotic distribution
  (its warning is silenced here).

The numbers are quoted in the docstring of validator.maths.method_comparison.passing_bablok.
Run: PYTHONPATH=. python benchmarks/cusum_size.py [draws]
"""

import sys
import warnings
from fractions import Fraction

import numpy as np
from scipy import stats

from validator.maths.method_comparison import cusum_signs, passing_bablok

DRAWS = int(sys.argv[1]) if len(sys.argv) > 1 else 2000
SEED = 20261202


def permutation_p(x, y, res):
    scale = float(np.max(np.abs(y)))
    a, b = Fraction(res.intercept), Fraction(res.slope)
    xf, yf = [Fraction(float(v)) for v in x], [Fraction(float(v)) for v in y]
    tol = Fraction(scale) * Fraction(1, 10**9)
    # move points within tol of the line onto it, then take the signs in line order
    yf = [a + b * xi if abs(yi - a - b * xi) <= tol else yi for xi, yi in zip(xf, yf)]
    seq = [v for v in cusum_signs(xf, yf, a, b) if v]
    up = [k for k, v in enumerate(seq) if v > 0]
    down = [k for k, v in enumerate(seq) if v < 0]
    return stats.ks_2samp(up, down, method="exact").pvalue


def main():
    warnings.filterwarnings("ignore", "ks_2samp: Exact calculation unsuccessful")
    rng = np.random.default_rng(SEED)
    print(f"seed {SEED}, {DRAWS} data sets per n, nominal size 0.05")
    print("n     Kolmogorov limit: size (SE)   permutation D: size (SE)   not applicable")
    for n in (10, 30, 100, 200):
        limit = perm = skipped = 0
        for _ in range(DRAWS):
            truth = rng.uniform(1, 100, n)
            x = np.round(truth + rng.normal(0, 2, n), 3)
            y = np.round(truth + rng.normal(0, 2, n), 3)
            res = passing_bablok(x, y)
            if res.cusum_pvalue is None:
                skipped += 1
                continue
            limit += res.cusum_pvalue < 0.05
            perm += permutation_p(x, y, res) < 0.05
        m = DRAWS - skipped
        pl, pp = limit / m, perm / m
        print(f"{n:<5} {pl:.4f} ({np.sqrt(pl * (1 - pl) / m):.4f})              "
              f"{pp:.4f} ({np.sqrt(pp * (1 - pp) / m):.4f})            {skipped}")


if __name__ == "__main__":
    main()
