#!/usr/bin/env python3
"""Times OpenCV's pose solvers on the problems of mountdrift's PnP benchmark (benches/pnp.rs).

Generates the benchmark problems (16-point targets, fixed seed) and writes them, with OpenCV's
timings, to fixtures/opencv/bench_pnp.json; the criterion benchmark reads the same problems, so
both sides solve identical data. Run from the repository root:

    python3 scripts/bench_opencv_pnp.py

Timed per problem (median over repeats of the per-call time, one thread): cv2.solvePnP with
SOLVEPNP_SQPNP, with SOLVEPNP_EPNP, and SOLVEPNP_EPNP followed by cv2.solvePnPRefineLM (default
criteria). These are Python calls: each includes the binding's argument conversion (about a
microsecond), which a C++ caller would not pay.
"""

import importlib.metadata
import json
import platform
import sys
import timeit

import cv2
import numpy as np

COMMAND = "python3 scripts/bench_opencv_pnp.py"
OUT = "fixtures/opencv/bench_pnp.json"
SEED = 20261202

CAMERA = {
    "model": "pinhole", "width": 1280, "height": 960, "fx": 1100.0, "fy": 1100.0,
    "cx": 640.0, "cy": 480.0, "skew": 0.0, "distortion": [-0.12, 0.03, 0.0004, -0.0003, 0.0],
}


def drogue_points():
    ring = [(0.3 * np.cos(a), 0.3 * np.sin(a), 0.0) for a in np.arange(12) * 2 * np.pi / 12]
    inner = [(0.12 * np.cos(a), 0.12 * np.sin(a), 0.25) for a in np.arange(4) * np.pi / 2 + 0.3]
    return np.array(ring + inner)


def problem(name, obj, rvec, tvec, rng, K, d):
    rvec = np.array(rvec, dtype=np.float64)
    tvec = np.array(tvec, dtype=np.float64)
    px, _ = cv2.projectPoints(obj, rvec, tvec, K, d)
    img = px.reshape(-1, 2) + rng.normal(0.0, 1.0, (len(obj), 2))
    # The previous frame's pose for the warm start: the truth moved by a few mm and mrad.
    prev_r = (rvec + np.array([0.004, -0.003, 0.002])).tolist()
    prev_t = (tvec + np.array([0.01, -0.02, 0.03])).tolist()
    return {
        "name": name, "object_points_m": obj.tolist(), "pixels": img.tolist(), "sigma_px": 1.0,
        "true_rvec": rvec.tolist(), "true_tvec": tvec.tolist(),
        "previous_rvec": prev_r, "previous_tvec": prev_t,
    }


def median_time_us(fn, number=2000, repeat=15):
    times = timeit.repeat(fn, number=number, repeat=repeat)
    return float(np.median(times) / number * 1e6)


def time_problem(p, K, d):
    obj = np.ascontiguousarray(np.array(p["object_points_m"]))
    img = np.ascontiguousarray(np.array(p["pixels"]))

    def sqpnp():
        return cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_SQPNP)

    def epnp():
        return cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_EPNP)

    def epnp_lm():
        _, r, t = cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_EPNP)
        return cv2.solvePnPRefineLM(obj, img, K, d, r, t)

    return {"sqpnp_us": median_time_us(sqpnp), "epnp_us": median_time_us(epnp),
            "epnp_lm_us": median_time_us(epnp_lm)}


def main():
    cv2.setNumThreads(1)
    rng = np.random.default_rng(SEED)
    K = np.array([[CAMERA["fx"], 0.0, CAMERA["cx"]], [0.0, CAMERA["fy"], CAMERA["cy"]],
                  [0.0, 0.0, 1.0]])
    d = np.array(CAMERA["distortion"])
    box = np.stack([rng.uniform(-0.6, 0.6, 16), rng.uniform(-0.4, 0.4, 16),
                    rng.uniform(-0.3, 0.3, 16)], axis=1)
    problems = [
        problem("nonplanar16", box, [0.3, -0.5, 0.2], [0.2, -0.1, 6.0], rng, K, d),
        problem("drogue16_15m", drogue_points(), [2.9, 0.2, -0.1], [0.3, 0.4, 15.0], rng, K, d),
    ]
    for p in problems:
        p["opencv_timing"] = time_problem(p, K, d)
    out = {
        "description": "PnP benchmark problems and OpenCV (Python) timings per call, median",
        "script": "scripts/bench_opencv_pnp.py",
        "command": COMMAND,
        "opencv_package": "opencv-python-headless "
        + importlib.metadata.version("opencv-python-headless"),
        "opencv_version": cv2.__version__,
        "numpy": np.__version__,
        "python": platform.python_version(),
        "machine": platform.machine() + ", " + platform.processor(),
        "seed": SEED,
        "camera": CAMERA,
        "problems": problems,
    }
    with open(OUT, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    for p in problems:
        print(p["name"], {k: round(v, 2) for k, v in p["opencv_timing"].items()})
    return 0


if __name__ == "__main__":
    sys.exit(main())
