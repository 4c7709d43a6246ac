#!/usr/bin/env python3
"""Reference breakpoints of ruptures' Pelt with the l2 cost, written as a JSON fixture.

The Rust tests (tests/stats_changepoint.rs) reproduce these breakpoints exactly with
mountdrift::stats::changepoint::pelt_ruptures and the L2 cost. The signals are stored in the
fixture, so the tests need no Python.

Usage: python3 scripts/ruptures_reference.py  (writes fixtures/ruptures/pelt_l2.json)
"""

import json
import pathlib
import platform
import sys

import numpy as np
import ruptures as rpt

OUT = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "ruptures" / "pelt_l2.json"

# (min_size, jump) pairs: exact search, ruptures' defaults, and a few uneven grids.
CONFIGS = [(1, 1), (2, 5), (3, 1), (5, 3), (4, 7)]


def steps_signal():
    """x_i = L_i + ((37 i mod 11) - 5)/10 with L = 0, 3, 1 on [0,20), [20,37), [37,60)."""
    i = np.arange(60)
    level = np.where(i < 20, 0.0, np.where(i < 37, 3.0, 1.0))
    return level + ((37 * i) % 11 - 5) / 10.0


def steps_signal_2d():
    """The steps signal plus y_i = 2 [i >= 45] + ((53 i mod 7) - 3)/10 as a second column."""
    i = np.arange(60)
    y = 2.0 * (i >= 45) + ((53 * i) % 7 - 3) / 10.0
    return np.column_stack([steps_signal(), y])


def random_signal(seed, n, dim, n_changes, noise):
    """Piecewise-constant means with Gaussian noise, rounded to 6 decimals (stored as used)."""
    rng = np.random.default_rng(seed)
    cuts = np.sort(rng.choice(np.arange(5, n - 5), size=n_changes, replace=False))
    bounds = np.concatenate([[0], cuts, [n]])
    signal = np.empty((n, dim))
    for lo, hi in zip(bounds[:-1], bounds[1:]):
        signal[lo:hi] = rng.normal(0.0, 2.0, size=dim) + noise * rng.standard_normal((hi - lo, dim))
    return np.round(signal, 6), [int(c) for c in cuts]


def run_pelt(signal, pen, min_size, jump):
    algo = rpt.Pelt(model="l2", min_size=min_size, jump=jump).fit(signal)
    return [int(b) for b in algo.predict(pen=pen)]


def case(name, signal, penalties, configs, true_cuts=None):
    arr = signal if signal.ndim == 2 else signal.reshape(-1, 1)
    runs = []
    for min_size, jump in configs:
        for pen in penalties:
            runs.append(
                {
                    "min_size": min_size,
                    "jump": jump,
                    "pen": pen,
                    "breakpoints": run_pelt(signal, pen, min_size, jump),
                }
            )
    return {
        "name": name,
        "n_samples": int(arr.shape[0]),
        "dim": int(arr.shape[1]),
        "signal": [float(v) for v in arr.ravel()],
        "true_change_points": true_cuts,
        "runs": runs,
    }


def segment_costs(signal):
    cost = rpt.costs.CostL2().fit(signal)
    spans = [(0, 20), (20, 37), (37, 60), (0, 60), (5, 6), (13, 41)]
    return [{"start": a, "end": b, "cost": float(cost.error(a, b))} for a, b in spans]


def main():
    step_pens = [0.05, 0.1, 0.2, 0.3, 0.5, 0.8, 1.0, 3.0, 10.0, 30.0, 40.0, 50.0]
    cases = [
        case("steps_1d", steps_signal(), step_pens, CONFIGS, [20, 37]),
        case("steps_2d", steps_signal_2d(), [0.5, 3.0, 10.0, 40.0], CONFIGS, [20, 37, 45]),
    ]
    random_specs = [
        ("random_1d", 11, 150, 1, 3, 1.0),
        ("random_2d", 12, 237, 2, 4, 1.0),
        ("random_3d", 13, 200, 3, 2, 0.5),
        ("random_6d", 14, 120, 6, 3, 1.5),
        ("random_5d_noisy", 15, 161, 5, 5, 3.0),
    ]
    for name, seed, n, dim, k, noise in random_specs:
        signal, cuts = random_signal(seed, n, dim, k, noise)
        scale = noise * noise * dim
        pens = [round(scale * f, 6) for f in (0.2, 1.0, 3.0, 8.0, 20.0, 60.0)]
        cases.append(case(name, signal, pens, CONFIGS, cuts))
    fixture = {
        "source": "ruptures Pelt(model='l2', min_size, jump).fit(signal).predict(pen)",
        "script": "scripts/ruptures_reference.py",
        "command": "python3 scripts/ruptures_reference.py",
        "versions": {
            "ruptures": rpt.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
        },
        "steps_1d_costs": segment_costs(steps_signal()),
        "cases": cases,
    }
    OUT.parent.mkdir(parents=True, exist_ok=True)
    OUT.write_text(json.dumps(fixture, indent=1) + "\n")
    print(f"wrote {OUT} ({sum(len(c['runs']) for c in cases)} runs)", file=sys.stderr)


if __name__ == "__main__":
    main()
