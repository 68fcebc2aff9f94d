"""Newcombe (2006) Method 5 intervals for crate/core/tests/stats_verdicts.rs.

No stored copy of Newcombe's paper (Statistics in Medicine 25, 559-573) was
found, so these are derived values: an independent implementation of the
interval's definition, the theta with
  (theta_hat - theta)^2 = z^2 theta (1 - theta) / (m n) * [1 + N* ((1 - theta)/(2 - theta) + theta/(1 + theta))],
N* = (m + n)/2 - 1, solved with scipy.optimize.brentq on the rational form
(not the quartic the Rust code bisects). It also scans each side of
theta_hat on a fine grid to check that the equation has exactly one root
there, for every theta_hat = U/(mn) with m, n up to 12 (so bisection finds
the interval). The formula matches the one documented in the SingleCaseES R
package (Pustejovsky et al., NAP, "Method 5").
Prints Rust tuples (x, y, level, lower, upper).
"""
import numpy as np
import scipy
from scipy import optimize, stats


def theta_hat(x, y):
    x, y = np.asarray(x, float), np.asarray(y, float)
    gt = (x[:, None] > y[None, :]).sum()
    eq = (x[:, None] == y[None, :]).sum()
    return (gt + 0.5 * eq) / (len(x) * len(y))


def g(t, th, m, n, z):
    h = (m + n) / 2 - 1
    v = t * (1 - t) / (m * n) * (1 + h * ((1 - t) / (2 - t) + t / (1 + t)))
    return (th - t) ** 2 - z * z * v


def interval(th, m, n, level):
    z = stats.norm.ppf((1 + level) / 2)
    lo = 0.0 if th == 0 else optimize.brentq(g, 0.0, th * (1 - 1e-15) if th == 1 else th, args=(th, m, n, z), xtol=1e-16, rtol=8.9e-16)
    hi = 1.0 if th == 1 else optimize.brentq(g, th if th > 0 else 1e-300, 1.0, args=(th, m, n, z), xtol=1e-16, rtol=8.9e-16)
    return lo, hi


# Uniqueness scan.
grid = np.linspace(0, 1, 20001)
for m in range(1, 13):
    for n in range(1, 13):
        for u2 in range(0, 2 * m * n + 1):
            th = u2 / (2 * m * n)
            z = stats.norm.ppf(0.975)
            vals = g(grid, th, m, n, z)
            left = vals[grid < th]
            right = vals[grid > th]
            for side in (left, right):
                s = np.sign(side[np.abs(side) > 1e-15])
                changes = int(np.sum(s[1:] != s[:-1]))
                assert changes <= 1, (m, n, th, changes)

CASES = [
    ([20, 20, 26, 25, 22, 23], [28, 25, 24, 27, 30, 30, 29], 0.95),  # SingleCaseES NAP example data, B > A
    ([28, 25, 24, 27, 30, 30, 29], [20, 20, 26, 25, 22, 23], 0.95),
    ([5, 9, 7, 9, 7, 5, 9, 11, 11, 10, 9], [4, 3, 4, 3, 4, 7, 5, 2, 3, 2], 0.95),  # Parker & Vannest (2009) data
    ([4.0, 5.0, 6.0], [1.0, 2.0, 3.0], 0.95),  # complete separation, n = 3
    ([1.0, 2.0, 3.0], [4.0, 5.0, 6.0], 0.95),
    ([0.1, 1.5, 0.7, 2.2, 0.4], [0.3, 1.1, 0.9, 1.8, 0.2], 0.95),
    ([3.0], [1.0], 0.95),
    ([1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0], [0.5, 1.5, 2.5, 3.5, 4.5, 5.5, 6.5, 7.5, 8.5, 9.5], 0.9),
    ([1.0, 2.0, 2.0, 3.0], [2.0, 2.0, 4.0], 0.99),
]
print(f"// SciPy {scipy.__version__}, NumPy {np.__version__}: (x, y, level, lower, upper), derived from the definition")
for x, y, level in CASES:
    th = theta_hat(x, y)
    lo, hi = interval(th, len(x), len(y), level)
    fx = ", ".join(repr(float(v)) for v in x)
    fy = ", ".join(repr(float(v)) for v in y)
    print(f"(&[{fx}], &[{fy}], {level!r}, {lo!r}, {hi!r}),  // theta_hat = {th!r}")
