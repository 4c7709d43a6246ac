#!/usr/bin/env python3
"""Times the per-frame work of a mountdrift audit done in Python with OpenCV, for the side-by-side
figure in docs/benchmarks.md ("Audit speed and memory").

Reads a session written by `mountdrift simulate` (session.yaml's camera.yaml, probe.yaml,
drogue.yaml and detections.csv), and for every frame solves both objects with cv2.solvePnP
(SOLVEPNP_SQPNP, with the camera's Brown-Conrady distortion) refined by cv2.solvePnPRefineLM,
then computes the camera-to-probe vector (the probe reference point in the camera frame) and the
dual-object probe-to-drogue vector in body axes (the drogue reference point mapped with the
observed mount T_CB^-1, minus the probe reference point). No outlier handling, covariance, fit
test or statistics: a lower bound on what a Python audit would spend per frame.

The session of the benchmark (100,000 frames of the demo scenario) is made with

    mountdrift simulate --preset demo --duration 3333.3334 --out /tmp/s100k

and timed, from the repository root, with

    python3 scripts/bench_audit_opencv.py /tmp/s100k

It prints and writes fixtures/opencv/bench_audit.json: library versions, the command, frames
read and solved, and the wall and CPU times of reading the detections and of solving (one
thread). Keypoint ids are mapped through the model files; a frame's object needs at least four
keypoints.
"""

import csv
import importlib.metadata
import json
import os
import platform
import sys
import time

import cv2
import numpy as np

OUT = "fixtures/opencv/bench_audit.json"


def read_yaml_points(path):
    """The keypoint model: {id: xyz} and the reference point id (the simple layout that
    mountdrift writes: `reference:` then `points:` with `- id:` and a three-line `xyz:` list)."""
    points, reference, current, coords = {}, None, None, []
    with open(path) as f:
        for raw in f:
            line = raw.strip()
            if line.startswith("reference:"):
                reference = line.split(":", 1)[1].strip()
            elif line.startswith("- id:"):
                current, coords = line.split(":", 1)[1].strip(), []
            elif line.startswith("- ") and current is not None:
                coords.append(float(line[2:]))
                if len(coords) == 3:
                    points[current] = np.array(coords)
    return points, reference


def read_camera(path):
    values = {}
    with open(path) as f:
        for raw in f:
            key, _, value = raw.strip().partition(":")
            value = value.strip()
            if value:
                try:
                    values[key] = float(value)
                except ValueError:
                    values[key] = value
    if values.get("model") != "pinhole":
        sys.exit("only the pinhole (Brown-Conrady) camera model is handled here")
    K = np.array([[values["fx"], values.get("skew", 0.0), values["cx"]],
                  [0.0, values["fy"], values["cy"]], [0.0, 0.0, 1.0]])
    d = np.array([values.get(k, 0.0) for k in ("k1", "k2", "p1", "p2", "k3")])
    return K, d


def read_frames(path):
    """All frames as (frame, {object: (ids, pixels)}), in file order."""
    frames, current, objects = [], None, {}
    with open(path, newline="") as f:
        rows = csv.reader(f)
        next(rows)
        for frame, _time, obj, point, u, v, _sigma in rows:
            if frame != current:
                if current is not None:
                    frames.append((int(current), objects))
                current, objects = frame, {}
            ids, px = objects.setdefault(obj, ([], []))
            ids.append(point)
            px.append((float(u), float(v)))
    if current is not None:
        frames.append((int(current), objects))
    return frames


def solve(model, observed, K, d):
    """Pose (R, t) of a model from its observed keypoints, or None."""
    ids, px = observed
    if len(ids) < 4:
        return None
    obj = np.array([model[i] for i in ids], dtype=np.float64)
    img = np.array(px, dtype=np.float64)
    ok, rvec, tvec = cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_SQPNP)
    if not ok:
        return None
    rvec, tvec = cv2.solvePnPRefineLM(obj, img, K, d, rvec, tvec)
    R, _ = cv2.Rodrigues(rvec)
    return R, tvec.reshape(3)


def main():
    if len(sys.argv) != 2:
        sys.exit("usage: python3 scripts/bench_audit_opencv.py SESSION_DIR")
    session = sys.argv[1]
    K, d = read_camera(os.path.join(session, "camera.yaml"))
    probe, probe_ref = read_yaml_points(os.path.join(session, "probe.yaml"))
    drogue, drogue_ref = read_yaml_points(os.path.join(session, "drogue.yaml"))
    cv2.setNumThreads(1)

    wall0, cpu0 = time.perf_counter(), time.process_time()
    frames = read_frames(os.path.join(session, "detections.csv"))
    wall1, cpu1 = time.perf_counter(), time.process_time()
    solved_both, vectors = 0, []
    for _frame, objects in frames:
        p = solve(probe, objects.get("probe", ([], [])), K, d)
        q = solve(drogue, objects.get("drogue", ([], [])), K, d)
        if p is None or q is None:
            continue
        (R_cb, t_cb), (R_cd, t_cd) = p, q
        camera_to_probe = R_cb @ probe[probe_ref] + t_cb
        drogue_c = R_cd @ drogue[drogue_ref] + t_cd
        probe_to_drogue = R_cb.T @ (drogue_c - t_cb) - probe[probe_ref]
        vectors.append((camera_to_probe, probe_to_drogue))
        solved_both += 1
    wall2, cpu2 = time.perf_counter(), time.process_time()

    n = len(frames)
    result = {
        "script": "scripts/bench_audit_opencv.py",
        "command": f"python3 scripts/bench_audit_opencv.py {session}",
        "versions": {
            "python": platform.python_version(),
            "numpy": np.__version__,
            "opencv-python-headless": importlib.metadata.version("opencv-python-headless"),
            "opencv": cv2.__version__,
        },
        "solver": "cv2.solvePnP SOLVEPNP_SQPNP + cv2.solvePnPRefineLM, Brown-Conrady distortion",
        "frames": n,
        "frames_with_both_solved": solved_both,
        "read_wall_s": wall1 - wall0,
        "read_cpu_s": cpu1 - cpu0,
        "solve_wall_s": wall2 - wall1,
        "solve_cpu_s": cpu2 - cpu1,
        "frames_per_s_solve": n / (wall2 - wall1),
        "frames_per_s_total": n / (wall2 - wall0),
        "load_average": os.getloadavg()[0],
        "mean_probe_to_drogue_m": np.mean([v[1] for v in vectors], axis=0).tolist(),
    }
    print(json.dumps(result, indent=2))
    with open(OUT, "w") as f:
        json.dump(result, f, indent=2)
        f.write("\n")


if __name__ == "__main__":
    main()
