"""Far tails of Student's t for crate/core/tests/stats_verdicts.rs.

Beyond |t| = 1.3e154, t*t overflows in double precision. SciPy 1.17.1's own
scipy.stats.t.cdf/pdf overflow there too (t.cdf(-1e155, 1) returns 0.0; the
true value is 3.18e-156), so the reference values come from mpmath at 50
significant digits: for t < 0, P(T <= t) = I_x(df/2, 1/2)/2 with
x = df/(df + t^2), and the density from its closed form. SciPy is printed
beside them where it still works (|t| <= 1e154). Prints Rust tuples (t, df, cdf, pdf) and (p, df, ppf).
"""
import mpmath as mp
import numpy as np
import scipy
from scipy.stats import t as tdist

mp.mp.dps = 50
ROWS = [(-1e155, 1.0), (-1e200, 1.0), (-1e300, 1.0), (-1e160, 0.5), (-1e300, 0.5), (-3e154, 1.5),
        (-1e200, 0.3), (-2e154, 2.0), (-1e154, 1.0), (-1.3e154, 1.2), (-1e308, 0.05)]
PPF = [(1e-200, 1.0), (1e-300, 1.0), (1e-100, 0.5), (1e-160, 1.0), (1e-250, 1.2)]


def cdf(t, df):
    t, df = mp.mpf(t), mp.mpf(df)
    x = df / (df + t * t)
    return mp.betainc(df / 2, mp.mpf(1) / 2, 0, x, regularized=True) / 2


def pdf(t, df):
    t, df = mp.mpf(t), mp.mpf(df)
    return (1 + t * t / df) ** (-(df + 1) / 2) / (mp.sqrt(df) * mp.beta(df / 2, mp.mpf(1) / 2))


print(f"// mpmath {mp.__version__} at 50 digits: (t, df, P(T <= t), density)")
for t, df in ROWS:
    print(f"({t!r}, {df!r}, {float(cdf(t, df))!r}, {float(pdf(t, df))!r}),")
print(f"// SciPy {scipy.__version__}: t.cdf where it does not overflow")
for t, df in [(-1e154, 1.0)]:
    print(f"// t.cdf({t!r}, {df!r}) = {float(tdist.cdf(t, df))!r}")
# SciPy's t.ppf is right for df = 1 here but stops near -7e153 for the others
# (t.ppf(1e-100, 0.5) = -4.74e153, whose tail is 4.7e22 times too big), so the
# quantiles also come from mpmath: solve ln P(T <= -e^u) = ln p for u.
print(f"// mpmath: (p, df, quantile); SciPy {scipy.__version__} t.ppf beside")
for p, df in PPF:
    u = mp.findroot(lambda u: mp.log(cdf(-mp.exp(u), df)) - mp.log(p), mp.log(mp.mpf(10) ** 150))
    q = -mp.exp(u)
    print(f"({p!r}, {df!r}, {float(q)!r}),  // SciPy t.ppf: {float(tdist.ppf(p, df))!r}")
