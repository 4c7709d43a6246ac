#!/usr/bin/env python3
"""Reference binomial proportion intervals from SciPy, written as a JSON fixture.

scipy.stats.binomtest(k, n).proportion_ci(confidence_level, method) with method "exact"
(Clopper-Pearson) and "wilson" (the Wilson score interval without continuity correction).
The Rust tests (tests/sensitivity_intervals.rs) compare
mountdrift::commands::sensitivity::{clopper_pearson, wilson} with these values, so the tests
need no Python.

Usage: python3 scripts/binomial_reference.py  (writes fixtures/binomial/proportion_ci.json)
"""

import json
import pathlib
import platform

import numpy as np
import scipy
from scipy.stats import binomtest

OUT = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "binomial" / "proportion_ci.json"

# (successes, trials): the extremes, small and large counts, and the four examples of
# Newcombe (1998, Statistics in Medicine 17:857-872, section 3): 81/263, 15/148, 0/20, 1/29.
CASES = [
    (0, 1), (1, 1), (0, 5), (5, 5), (1, 10), (3, 10), (0, 20), (1, 29), (15, 148), (81, 263),
    (0, 100), (1, 100), (50, 100), (99, 100), (100, 100), (7, 1000), (993, 1000), (12, 3100),
]
LEVELS = [0.95, 0.99, 0.90]


def main():
    rows = []
    for k, n in CASES:
        for level in LEVELS:
            test = binomtest(k, n)
            exact = test.proportion_ci(confidence_level=level, method="exact")
            wilson = test.proportion_ci(confidence_level=level, method="wilson")
            rows.append({
                "successes": k,
                "trials": n,
                "level": level,
                "clopper_pearson": [float(exact.low), float(exact.high)],
                "wilson": [float(wilson.low), float(wilson.high)],
            })
    doc = {
        "source": "scipy.stats.binomtest(k, n).proportion_ci(confidence_level, method='exact' | 'wilson')",
        "script": "scripts/binomial_reference.py",
        "command": "python3 scripts/binomial_reference.py",
        "versions": {
            "scipy": scipy.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
        },
        "cases": rows,
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(doc, indent=1) + "\n")


if __name__ == "__main__":
    main()
