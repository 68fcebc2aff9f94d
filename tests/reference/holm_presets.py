"""Holm-adjusted p values of three presets' comparisons, from statsmodels.

Reads the summaries `critbox run` prints for the presets named below (run
from the repository root after `cargo build --release -p critbox-cli`), takes
each comparison's raw Welch p (`welch.p`), and prints statsmodels'
multipletests(method="holm") adjustment of the family, as Rust literals for
`holm_on_the_presets_matches_statsmodels` in crate/core/tests/learners.rs.
"""
import json
import subprocess

import statsmodels
from statsmodels.stats.multitest import multipletests

PRESETS = ["corridor-baselines", "rover-a2c-vs-qac", "offpolicy-random-behaviour"]

print(f"// statsmodels {statsmodels.__version__}")
for name in PRESETS:
    out = subprocess.run(
        ["target/release/critbox", "run", f"web/presets/{name}.json"], capture_output=True, check=True, text=True
    ).stdout
    p = [c["welch"]["p"] for c in json.loads(out)["comparisons"]]
    adj = multipletests(p, method="holm")[1]
    print(f'("{name}", &[{", ".join(repr(x) for x in p)}], &[{", ".join(repr(float(x)) for x in adj)}]),')
