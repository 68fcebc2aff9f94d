"""Two-sided normal tolerance factors for crate/core/tests/stats_verdicts.rs.

Howe's (1969) approximation, k = sqrt((n-1)(1+1/n) z^2_{(1+P)/2} / chi2_{alpha; n-1})
with chi2 the lower alpha quantile (scipy.stats.chi2.ppf), and the exact
factor (Odeh & Owen 1980) found numerically: k solves
  sqrt(2n/pi) * int_0^inf P(chi2_{n-1} > (n-1) r(z)^2 / k^2) exp(-n z^2 / 2) dz = 1 - alpha,
where r(z) solves Phi(z + r) - Phi(z - r) = P, i.e. r^2 = ncx2.ppf(P, 1, z^2)
(the integral uses the symmetry in z). Prints Rust tuples
(n, coverage, confidence, Howe k, exact k).
"""
import numpy as np
import scipy
from scipy import integrate, optimize, stats

CASES = [(5, 0.90, 0.95), (10, 0.90, 0.95), (30, 0.90, 0.95), (43, 0.90, 0.99), (3, 0.90, 0.95),
         (2, 0.90, 0.95), (100, 0.95, 0.95), (20, 0.99, 0.90)]


def howe(n, P, conf):
    df = n - 1
    z = stats.norm.ppf((1 + P) / 2)
    return z * np.sqrt(df * (1 + 1 / n) / stats.chi2.ppf(1 - conf, df))


def confidence_of(k, n, P):
    df = n - 1

    def integrand(z):
        r2 = stats.ncx2.ppf(P, 1, z * z)
        return stats.chi2.sf(df * r2 / (k * k), df) * np.exp(-n * z * z / 2)

    val, _ = integrate.quad(integrand, 0, np.inf, epsabs=1e-13, epsrel=1e-12, limit=200)
    return 2 * np.sqrt(n / (2 * np.pi)) * val


def exact(n, P, conf):
    return optimize.brentq(lambda k: confidence_of(k, n, P) - conf, 0.5, 200, xtol=1e-13)


print(f"// SciPy {scipy.__version__}, NumPy {np.__version__}: (n, coverage, confidence, Howe k, exact k)")
for n, P, conf in CASES:
    print(f"({n}, {P!r}, {conf!r}, {float(howe(n, P, conf))!r}, {float(exact(n, P, conf))!r}),")
