"""Holm-adjusted p-values from statsmodels for crate/core/tests/stats_verdicts.rs.

statsmodels.stats.multitest.multipletests(p, method="holm") on several
p-value vectors (ties, a single test, p near 1, tiny p). NaN entries are not
passed to statsmodels: they are dropped first (the family is the finite p),
then put back as NaN, which is the contract of critbox's stats::holm.
Prints Rust array literals to paste into the test.
"""
import math

import numpy as np
import statsmodels
from statsmodels.stats.multitest import multipletests

VECTORS = [
    [0.01, 0.04, 0.03, 0.005],
    [0.50, 0.01, 0.001, 0.69, 0.02, 0.05, 0.0025],
    [0.2],
    [0.03, 0.03, 0.03, 0.6, 1.0],
    [1e-12, 3e-9, 0.049, 0.051, 0.8, 0.33, 0.0125, 0.0124],
    [0.9, 0.95, 0.97, 0.99],
    [float("nan"), 0.012, 0.3, float("nan"), 0.004, 0.021],
    [0.0793941401873583, 0.0021, 0.6402, 0.0168, 0.0401, 0.00043],
]

print(f"// statsmodels {statsmodels.__version__}, numpy {np.__version__}")
for p in VECTORS:
    finite = [x for x in p if math.isfinite(x)]
    adj = iter(multipletests(finite, method="holm")[1])
    out = [next(adj) if math.isfinite(x) else float("nan") for x in p]
    fmt = lambda v: "f64::NAN" if math.isnan(v) else repr(float(v))
    print(f"(&[{', '.join(fmt(x) for x in p)}], &[{', '.join(fmt(x) for x in out)}]),")
