#!/usr/bin/env python3
"""Reference values for the binomial distribution function and Wilks' one-sided nonparametric
tolerance bounds, from SciPy, written as a JSON fixture.

For R simulated null values, the order statistic with j values above it has a true exceedance
rate above `rate` with probability P(Binomial(R, rate) <= j) (Wilks 1941, Ann. Math. Statist.
12:91-96). The bound for confidence g keeps the largest j with that probability <= 1 - g.
The Rust test tests/stats_tolerance_bound.rs compares mountdrift::stats::penalty::tolerance_bound
and mountdrift::stats::distributions::binomial_cdf with these values, so it needs no Python.

Usage: python3 scripts/tolerance_reference.py  (writes fixtures/binomial/tolerance_bounds.json)
"""

import json
import pathlib
import platform

import numpy as np
import scipy
from scipy.stats import binom

OUT = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "binomial" / "tolerance_bounds.json"

CDF_CASES = [(0, 1000, 0.01), (4, 1000, 0.01), (9, 1000, 0.0096), (10, 1000, 0.01),
             (84, 1000, 0.1), (0, 59, 0.05), (1, 93, 0.05), (3, 153, 0.05), (250, 300, 0.9)]
BOUND_CASES = [(1000, 0.01, 0.95), (1000, 0.0096, 0.95), (1000, 0.05, 0.95), (1000, 0.1, 0.95),
               (1000, 0.2, 0.95), (59, 0.05, 0.95), (58, 0.05, 0.95), (93, 0.05, 0.95),
               (124, 0.05, 0.95), (153, 0.05, 0.95), (100, 0.01, 0.95), (2000, 0.001, 0.9)]


def bound(runs, rate, confidence):
    j = 0
    for k in range(1, runs):
        if binom.cdf(k, runs, rate) > 1.0 - confidence:
            break
        j = k
    return {"runs": runs, "rate": rate, "confidence": confidence, "exceeding_runs": j,
            "confidence_reached": float(1.0 - binom.cdf(j, runs, rate))}


def wilks_sizes(order, rate=0.05, confidence=0.95):
    """Smallest R whose bound has `order - 1` values above it (R = 59, 93, 124, 153 for orders
    1-4 at 95%/95%, the sample sizes tabulated for Wilks' method)."""
    runs = order
    while binom.cdf(order - 1, runs, 1.0 - (1.0 - rate)) > 1.0 - confidence:
        runs += 1
    return runs


def main():
    doc = {
        "source": "scipy.stats.binom.cdf; Wilks (1941) one-sided tolerance bound",
        "script": "scripts/tolerance_reference.py",
        "command": "python3 scripts/tolerance_reference.py",
        "versions": {
            "scipy": scipy.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
        },
        "cdf": [{"k": k, "n": n, "p": p, "cdf": float(binom.cdf(k, n, p))} for k, n, p in CDF_CASES],
        "bounds": [bound(*c) for c in BOUND_CASES],
        "wilks_95_95_sizes": [{"order": o, "runs": wilks_sizes(o)} for o in (1, 2, 3, 4)],
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(doc, indent=1) + "\n")


if __name__ == "__main__":
    main()
