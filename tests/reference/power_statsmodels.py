"""Equal-spread power and sample sizes from statsmodels for crate/core/tests/stats_verdicts.rs.

statsmodels.stats.power.TTestIndPower, two-sided, alpha 0.05, ratio 1:
solve_power(effect_size=es, nobs1=None, alpha=0.05, power=0.8) for effect
sizes es = d/s chosen so that the required n per group runs from 2 to 200
(the required whole number of seeds is ceil(nobs1), at least 2), and
.power(es, nobs1=n, alpha=0.05) at that n and at n - 1.
Prints Rust tuples (es, nobs1 from solve_power, power(n), power(n - 1)) with
n = max(2, ceil(nobs1)); nobs1 is NaN where 2 seeds already exceed the power
(solve_power then finds no root and warns).
"""
import math

import numpy as np
import statsmodels
import warnings
from statsmodels.stats.power import TTestIndPower

ES = [7.0, 5.0, 4.0, 3.2, 2.6, 2.2, 1.9, 1.6, 1.4, 1.25, 1.1, 1.0, 0.9, 0.8, 0.72, 0.65, 0.58, 0.52,
      0.47, 0.43, 0.4, 0.37, 0.34, 0.31, 0.29, 0.281]
warnings.simplefilter("ignore")
pw = TTestIndPower()
print(f"// statsmodels {statsmodels.__version__}, NumPy {np.__version__}: (es, nobs1, power(n), power(n - 1))")
for es in ES:
    nobs = float(pw.solve_power(effect_size=es, nobs1=None, alpha=0.05, power=0.8, ratio=1.0,
                                alternative="two-sided"))
    if math.isnan(nobs):
        # No root above nobs1 = 2: statsmodels' solver fails (ConvergenceWarning)
        # when 2 seeds already give more than the power; check that and use 2.
        assert pw.power(es, nobs1=2, alpha=0.05, ratio=1.0, alternative="two-sided") >= 0.8
    n = 2 if math.isnan(nobs) else max(2, math.ceil(nobs))
    p_n = float(pw.power(es, nobs1=n, alpha=0.05, ratio=1.0, alternative="two-sided"))
    p_m = float(pw.power(es, nobs1=n - 1, alpha=0.05, ratio=1.0, alternative="two-sided")) if n > 2 else float("nan")
    fmt = lambda v: "f64::NAN" if math.isnan(v) else repr(v)
    print(f"({es!r}, {fmt(nobs)}, {fmt(p_n)}, {fmt(p_m)}),")
