#!/usr/bin/env python3
"""Reference values of distributions and tests from scipy, written as a JSON fixture.

The Rust tests (tests/stats_distributions.rs, tests/stats_multivariate.rs,
tests/stats_consistency.rs) compare against these values, so they need no Python.

Usage: python3 scripts/stats_reference.py  (writes fixtures/stats/scipy_reference.json)
"""

import json
import pathlib
import platform

import numpy as np
import scipy
from scipy import stats

OUT = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "stats" / "scipy_reference.json"

PROBS = [0.001, 0.01, 0.025, 0.05, 0.1, 0.5, 0.9, 0.95, 0.975, 0.99, 0.999]


def chi2_values():
    ppf = [
        {"dof": dof, "p": p, "x": float(stats.chi2.ppf(p, dof))}
        for dof in [1, 2, 3, 6, 12, 60, 100, 300, 0.5, 7.5]
        for p in PROBS
    ]
    isf = [
        {"dof": dof, "q": q, "x": float(stats.chi2.isf(q, dof))}
        for dof in [1, 6, 12, 60]
        for q in [1e-4, 1e-6, 1e-9, 1e-12]
    ]
    sf = [
        {"dof": dof, "x": x, "sf": float(stats.chi2.sf(x, dof))}
        for dof in [1, 6, 12]
        for x in [0.1, 1.0, 5.0, 20.0, 60.0, 120.0]
    ]
    return ppf, isf, sf


def f_values():
    pairs = [(6, 50), (6, 100), (6, 53), (2, 2), (1, 10), (3, 7), (6, 14), (6, 45)]
    ppf = [
        {"d1": d1, "d2": d2, "p": p, "x": float(stats.f.ppf(p, d1, d2))}
        for d1, d2 in pairs
        for p in [0.9, 0.95, 0.99]
    ]
    sf = [
        {"d1": d1, "d2": d2, "x": x, "sf": float(stats.f.sf(x, d1, d2))}
        for d1, d2 in pairs
        for x in [0.5, 2.0, 6.0]
    ]
    return ppf, sf


def normal_t_values():
    norm = [
        {"p": p, "z": float(stats.norm.ppf(p))}
        for p in PROBS + [1.0 - 0.05 / 12.0, 1e-10]
    ]
    t = [
        {"dof": df, "p": p, "t": float(stats.t.ppf(p, df))}
        for df in [2, 10, 20, 30, 58, 98, 198]
        for p in [0.9, 0.95, 0.975, 0.99]
    ]
    return norm, t


def nees_values():
    cases = [(2, 50), (6, 50), (6, 100), (6, 1), (3, 50), (1, 50), (6, 200)]
    return [
        {
            "n_x": nx,
            "runs": n,
            "lower": float(stats.chi2.ppf(0.025, nx * n) / n),
            "upper": float(stats.chi2.ppf(0.975, nx * n) / n),
        }
        for nx, n in cases
    ]


def hotelling_values():
    """Johnson & Wichern Exercise 5.1 and critical values at alpha = 0.05."""
    x = np.array([[2.0, 12.0], [8.0, 9.0], [6.0, 9.0], [8.0, 10.0]])
    mu0 = np.array([7.0, 11.0])
    n, p = x.shape
    xbar = x.mean(axis=0)
    s = np.cov(x, rowvar=False)
    d = xbar - mu0
    t2 = float(n * d @ np.linalg.solve(s, d))
    f = t2 * (n - p) / ((n - 1) * p)
    one = {
        "data": x.tolist(),
        "mu0": mu0.tolist(),
        "t2": t2,
        "p_value": float(stats.f.sf(f, p, n - p)),
        "critical_t2": float((n - 1) * p / (n - p) * stats.f.ppf(0.95, p, n - p)),
    }
    one_critical = [
        {"n": n, "p": 6, "critical_t2": float((n - 1) * 6 / (n - 6) * stats.f.ppf(0.95, 6, n - 6))}
        for n in [20, 51, 101]
    ]
    two_critical = [
        {
            "n1": n,
            "n2": n,
            "p": 6,
            "critical_t2": float(6 * (2 * n - 2) / (2 * n - 7) * stats.f.ppf(0.95, 6, 2 * n - 7)),
        }
        for n in [20, 30, 50, 100]
    ]
    rng = np.random.default_rng(21)
    a = np.round(rng.normal([0, 0, 0], 1.0, size=(12, 3)), 4)
    b = np.round(rng.normal([0.8, 0, -0.5], 1.0, size=(15, 3)), 4)
    n1, n2 = len(a), len(b)
    sp = ((n1 - 1) * np.cov(a, rowvar=False) + (n2 - 1) * np.cov(b, rowvar=False)) / (n1 + n2 - 2)
    d = a.mean(axis=0) - b.mean(axis=0)
    t2b = float(n1 * n2 / (n1 + n2) * d @ np.linalg.solve(sp, d))
    fb = t2b * (n1 + n2 - 3 - 1) / (3 * (n1 + n2 - 2))
    two = {
        "first": a.tolist(),
        "second": b.tolist(),
        "t2": t2b,
        "f": float(fb),
        "p_value": float(stats.f.sf(fb, 3, n1 + n2 - 4)),
    }
    return one, one_critical, two_critical, two


def main():
    chi2_ppf, chi2_isf, chi2_sf = chi2_values()
    f_ppf, f_sf = f_values()
    norm_ppf, t_ppf = normal_t_values()
    one, one_crit, two_crit, two = hotelling_values()
    fixture = {
        "source": "scipy.stats (chi2, f, norm, t) and numpy linear algebra",
        "script": "scripts/stats_reference.py",
        "command": "python3 scripts/stats_reference.py",
        "versions": {
            "scipy": scipy.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
        },
        "chi2_ppf": chi2_ppf,
        "chi2_isf": chi2_isf,
        "chi2_sf": chi2_sf,
        "f_ppf": f_ppf,
        "f_sf": f_sf,
        "norm_ppf": norm_ppf,
        "t_ppf": t_ppf,
        "nees_95": nees_values(),
        "hotelling_one_sample": one,
        "hotelling_one_sample_critical": one_crit,
        "hotelling_two_sample_critical": two_crit,
        "hotelling_two_sample": two,
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(fixture, indent=1) + "\n")
    print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
