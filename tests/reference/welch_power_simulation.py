"""Simulated power of Welch's t-test with unequal spreads, for crate/core/tests/stats_verdicts.rs.

Two groups of n seeds, sd 1 and sd 3 (sigma ratio 3), true difference d,
two-sided Welch test (scipy.stats.ttest_ind(equal_var=False)) at alpha 0.05;
the power is the fraction of 100 000 simulated experiments that reject.
For each n the difference d is the one at which the noncentral-t
approximation (critbox's stats::welch_power, recomputed here with
scipy.stats.nct) gives power 0.5 and 0.8, so the check runs where seed
advice matters. Seeded: numpy.random.default_rng(SEED).
Prints Rust tuples (n, d, approximate power, simulated power).
"""
import mpmath as mp
import numpy as np
import scipy
from scipy import optimize, stats

SEED = 20240612
DRAWS = 100_000
SA, SB = 1.0, 3.0
NS = [2, 3, 4, 5, 7, 10, 15, 20, 30, 50, 100, 200]


def nct_cdf(t, df, nc):
    """scipy.stats.nct.cdf, or a 30-digit mpmath quadrature where SciPy
    returns NaN (it does, e.g., for nct.cdf(-9, 1.2195, 10))."""
    v = stats.nct.cdf(t, df, nc)
    if np.isfinite(v):
        return float(v)
    mp.mp.dps = 30
    k = mp.mpf(df) / 2
    dens = lambda u: mp.exp((k - 1) * mp.log(u) - u / 2 - k * mp.log(2) - mp.loggamma(k))
    f = lambda u: mp.ncdf(t * mp.sqrt(u / df) - nc) * dens(u)
    return float(mp.quad(f, [0, df / 4, df, 2 * df, 4 * df + 40, mp.inf]))


def approx_power(d, n, alpha=0.05):
    va, vb = SA * SA, SB * SB
    nc = d / np.sqrt((va + vb) / n)
    df = (n - 1) * (va + vb) ** 2 / (va * va + vb * vb)
    tc = stats.t.ppf(1 - alpha / 2, df)
    return float(stats.nct.sf(tc, df, nc)) + nct_cdf(-tc, df, nc)


rng = np.random.default_rng(SEED)
print(f"// SciPy {scipy.__version__}, NumPy {np.__version__}, seed {SEED}, {DRAWS} draws per row:")
print("// (n, d, noncentral-t power, simulated Welch power)")
for target in (0.5, 0.8):
    for n in NS:
        d = optimize.brentq(lambda d: approx_power(d, n) - target, 1e-6, 1e4, xtol=1e-14)
        hits = 0
        for chunk in range(10):
            a = rng.normal(0.0, SA, size=(DRAWS // 10, n))
            b = rng.normal(d, SB, size=(DRAWS // 10, n))
            p = stats.ttest_ind(b, a, axis=1, equal_var=False).pvalue
            hits += int(np.sum(p < 0.05))
        print(f"({n}, {d!r}, {float(approx_power(d, n))!r}, {hits / DRAWS!r}),")
