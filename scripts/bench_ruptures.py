#!/usr/bin/env python3
"""Times ruptures' Pelt(model="l2") on a 2000 x 6 signal, side by side with benches/changepoint.rs.

Two configurations: ruptures' defaults (min_size=2, jump=5) and the exact search (min_size=1,
jump=1), both at pen=50.

The signal is defined by integer formulas so that this script and the Rust benchmark build the
identical array without sharing a file:
    level(i) = 0 for i < 600, 3 for 600 <= i < 1300, 1 otherwise
    x[i, j] = level(i) * (1 + j) / 3 + ((37 i + 13 j) mod 11 - 5) / 5 + ((53 i + 7 j) mod 7 - 3) / 10
Writes fixtures/ruptures/bench_2000x6.json (timing, breakpoints, versions); the breakpoints are
also checked by tests/stats_changepoint.rs.

Usage: python3 scripts/bench_ruptures.py [--repeats N]   (the exact configuration takes about a
minute per run)
"""

import argparse
import json
import pathlib
import platform
import time

import numpy as np
import ruptures as rpt

OUT = pathlib.Path(__file__).resolve().parent.parent / "fixtures" / "ruptures" / "bench_2000x6.json"
N, DIM, PEN = 2000, 6, 50.0


def signal():
    i = np.arange(N)[:, None]
    j = np.arange(DIM)[None, :]
    level = np.where(i < 600, 0.0, np.where(i < 1300, 3.0, 1.0))
    return level * (1 + j) / 3.0 + ((37 * i + 13 * j) % 11 - 5) / 5.0 + ((53 * i + 7 * j) % 7 - 3) / 10.0


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--repeats", type=int, default=1)
    args = parser.parse_args()
    x = signal()
    runs = []
    for min_size, jump in [(2, 5), (1, 1)]:
        seconds = []
        for _ in range(args.repeats):
            start = time.perf_counter()
            bkps = rpt.Pelt(model="l2", min_size=min_size, jump=jump).fit(x).predict(pen=PEN)
            seconds.append(time.perf_counter() - start)
        runs.append(
            {
                "min_size": min_size,
                "jump": jump,
                "breakpoints": [int(b) for b in bkps],
                "seconds": seconds,
            }
        )
        print(f"ruptures Pelt l2 {N}x{DIM} min_size={min_size} jump={jump}: "
              f"{min(seconds):.2f} s, breakpoints {bkps}")
    result = {
        "source": "ruptures Pelt(model='l2', min_size, jump).fit(x).predict(pen=50)",
        "script": "scripts/bench_ruptures.py",
        "command": f"python3 scripts/bench_ruptures.py --repeats {args.repeats}",
        "versions": {
            "ruptures": rpt.__version__,
            "numpy": np.__version__,
            "python": platform.python_version(),
        },
        "machine": platform.machine(),
        "n_samples": N,
        "dim": DIM,
        "pen": PEN,
        "runs": runs,
        "checksum": float(x.sum()),
    }
    OUT.write_text(json.dumps(result, indent=1) + "\n")


if __name__ == "__main__":
    main()
