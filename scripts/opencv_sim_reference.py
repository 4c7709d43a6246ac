#!/usr/bin/env python3
"""Reference projections for the simulator, computed with OpenCV.

For each committed reference session under fixtures/sim/<case>/session (written by the simulator
with poses.csv), projects every probe and drogue model point with the true poses of each frame
using cv2.projectPoints (pinhole, Brown-Conrady) or cv2.fisheye.projectPoints (Kannala-Brandt),
and writes the pixels, with the library versions and the command used, to
fixtures/sim/opencv_sim_reference.json. The Rust test tests/sim_opencv.rs compares the
simulator's noise-free keypoints with these values.

Run from the repository root:  python3 scripts/opencv_sim_reference.py
"""

import csv
import json
import os
import sys

import cv2
import numpy as np
import yaml

CASES = ["opencv_pinhole", "opencv_fisheye"]
ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..")
FIXTURES = os.path.join(ROOT, "fixtures", "sim")
OUTPUT = os.path.join(FIXTURES, "opencv_sim_reference.json")


def load_yaml(path):
    with open(path, encoding="utf-8") as f:
        return yaml.safe_load(f)


def model_points(model):
    return np.array([p["xyz"] for p in model["points"]], dtype=np.float64).reshape(-1, 1, 3)


def read_poses(path):
    """Rows of poses.csv: frame, time, then rvec and tvec of T_CB (probe) and T_CD (drogue)."""
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    poses = []
    for row in rows:
        entry = {"frame": int(row["frame"])}
        for obj in ("probe", "drogue"):
            rvec = [float(row[f"{obj}_r{a}_rad"]) for a in "xyz"]
            tvec = [float(row[f"{obj}_t{a}_m"]) for a in "xyz"]
            entry[obj] = (np.array(rvec, dtype=np.float64), np.array(tvec, dtype=np.float64))
        poses.append(entry)
    return poses


def project(camera, points, rvec, tvec):
    d = camera.get("distortion", {})
    fx, fy = float(camera["fx"]), float(camera["fy"])
    cx, cy = float(camera["cx"]), float(camera["cy"])
    skew = float(camera.get("skew", 0.0))
    if camera["model"] == "pinhole":
        if skew != 0.0:
            sys.exit("cv2.projectPoints ignores skew: use skew 0 in the pinhole reference camera")
        k = np.array([[fx, 0.0, cx], [0.0, fy, cy], [0.0, 0.0, 1.0]])
        dist = np.array([d.get(n, 0.0) for n in ("k1", "k2", "p1", "p2", "k3")], dtype=np.float64)
        px, _ = cv2.projectPoints(points, rvec, tvec, k, dist)
    else:
        k = np.array([[fx, skew, cx], [0.0, fy, cy], [0.0, 0.0, 1.0]])
        dist = np.array([d.get(n, 0.0) for n in ("k1", "k2", "k3", "k4")], dtype=np.float64)
        px, _ = cv2.fisheye.projectPoints(points, rvec.reshape(1, 1, 3), tvec.reshape(1, 1, 3),
                                          k, dist, alpha=skew / fx)
    return px.reshape(-1, 2).tolist()


def reference_case(case):
    session = os.path.join(FIXTURES, case, "session")
    camera = load_yaml(os.path.join(session, "camera.yaml"))
    models = {obj: model_points(load_yaml(os.path.join(session, f"{obj}.yaml")))
              for obj in ("probe", "drogue")}
    frames = []
    for pose in read_poses(os.path.join(session, "poses.csv")):
        entry = {"frame": pose["frame"]}
        for obj in ("probe", "drogue"):
            rvec, tvec = pose[obj]
            entry[obj] = project(camera, models[obj], rvec, tvec)
        frames.append(entry)
    return {"camera_model": camera["model"], "session": f"fixtures/sim/{case}/session",
            "frames": frames}


def main():
    result = {
        "script": "scripts/opencv_sim_reference.py",
        "command": "python3 scripts/opencv_sim_reference.py",
        "opencv_version": cv2.__version__,
        "opencv_package": "opencv-python-headless 5.0.0.93",
        "numpy_version": np.__version__,
        "pyyaml_version": yaml.__version__,
        "python_version": sys.version.split()[0],
        "note": "pixels [u, v] of every model point in model order; each pose is T_CB (probe) or"
                " T_CD (drogue) from poses.csv as OpenCV rvec/tvec",
        "cases": {case: reference_case(case) for case in CASES},
    }
    with open(OUTPUT, "w", encoding="utf-8") as f:
        json.dump(result, f, indent=1)
        f.write("\n")
    print(f"wrote {OUTPUT}")


if __name__ == "__main__":
    main()
