"""Pixel values of the hand-written minimal session (fixtures/sessions/minimal).

The camera, models and mount are the YAML files of that folder, written by hand; this script only
projects the model points with OpenCV's cv2.projectPoints (opencv-python-headless) so that the
detections are consistent with them, and writes detections.csv and truth.csv. Conventions follow
DESIGN section 2: R_BS = Rz(yaw) Ry(pitch) Rx(roll), R_BC = R_BS * Mperm, x_B = R_BC x_C + p_BC.

Usage: python3 scripts/minimal_session.py
"""

import os

import cv2
import numpy as np

HERE = os.path.join(os.path.dirname(__file__), "..", "fixtures", "sessions", "minimal")

# camera.yaml
K = np.array([[520.0, 0.0, 319.5], [0.0, 520.0, 239.5], [0.0, 0.0, 1.0]])
DIST = np.array([-0.08, 0.02, 0.0005, -0.0003, 0.0])  # k1, k2, p1, p2, k3
# mount.yaml
MOUNT_P = np.array([2.10, 0.45, -0.55])
MOUNT_YPR_DEG = (5.0, -2.0, 0.5)
# probe.yaml (body frame B)
PROBE = {
    "tip": [4.60, 0.90, -0.40],
    "collar": [4.20, 0.90, -0.40],
    "marker_top": [3.80, 0.90, -0.52],
    "mast_top": [3.30, 0.90, -0.48],
    "fairing_left": [3.00, 0.78, -0.30],
    "fairing_right": [3.00, 1.02, -0.30],
}
# drogue.yaml (drogue frame D): coupler at the origin, canopy rim 0.45 m aft, radius 0.30 m.
DROGUE = {"coupler": [0.0, 0.0, 0.0]}
for k in range(8):
    a = np.radians(45.0 * k)
    DROGUE[f"rim_{k}"] = [-0.45, 0.30 * np.cos(a), 0.30 * np.sin(a)]

# Invented approach: frame number, time (s), drogue coupler in B (m), drogue yaw/pitch (deg).
FRAMES = [
    (100, 3.3333, [12.00, 1.05, -0.46], 2.0, 1.0),
    (110, 3.6667, [11.50, 1.02, -0.44], 1.5, 1.2),
    (120, 4.0000, [11.00, 0.99, -0.43], 1.0, 0.8),
    (130, 4.3333, [10.50, 0.97, -0.42], 0.5, 0.6),
]
OCCLUDED = {(120, "rim_5")}
PROBE_SIGMA_PX = 0.5


def rot_zyx(yaw_deg, pitch_deg, roll_deg):
    y, p, r = np.radians([yaw_deg, pitch_deg, roll_deg])
    rz = np.array([[np.cos(y), -np.sin(y), 0], [np.sin(y), np.cos(y), 0], [0, 0, 1]])
    ry = np.array([[np.cos(p), 0, np.sin(p)], [0, 1, 0], [-np.sin(p), 0, np.cos(p)]])
    rx = np.array([[1, 0, 0], [0, np.cos(r), -np.sin(r)], [0, np.sin(r), np.cos(r)]])
    return rz @ ry @ rx


M_PERM = np.array([[0, 0, 1], [1, 0, 0], [0, 1, 0]], dtype=float)
R_BC = rot_zyx(*MOUNT_YPR_DEG) @ M_PERM


def project(points_b):
    x_c = (np.asarray(points_b) - MOUNT_P) @ R_BC  # rows: R_BC^T (x_B - p_BC)
    assert np.all(x_c[:, 2] > 0.5)
    px, _ = cv2.projectPoints(x_c.reshape(-1, 1, 3), np.zeros(3), np.zeros(3), K, DIST)
    px = px.reshape(-1, 2)
    assert np.all((px > 0) & (px < [640, 480])), px
    return px


def main():
    det = ["frame,time_s,object,point,u,v,sigma_px"]
    truth = [
        "frame,time_s,cam_x_m,cam_y_m,cam_z_m,cam_yaw_deg,cam_pitch_deg,cam_roll_deg,"
        "vec_x_m,vec_y_m,vec_z_m"
    ]
    probe_px = project(list(PROBE.values()))
    for frame, t, coupler_b, yaw, pitch in FRAMES:
        for name, (u, v) in zip(PROBE, probe_px):
            det.append(f"{frame},{t},probe,{name},{u:.2f},{v:.2f},{PROBE_SIGMA_PX}")
        r_bd = rot_zyx(yaw, pitch, 0.0)
        drogue_b = [r_bd @ np.array(p) + coupler_b for p in DROGUE.values()]
        for name, (u, v) in zip(DROGUE, project(drogue_b)):
            if (frame, name) not in OCCLUDED:
                det.append(f"{frame},{t},drogue,{name},{u:.2f},{v:.2f},")
        vec = np.array(coupler_b) - np.array(PROBE["tip"])
        cam = ",".join(f"{c:.2f}" for c in MOUNT_P)
        ypr = ",".join(f"{a:.1f}" for a in MOUNT_YPR_DEG)
        truth.append(f"{frame},{t},{cam},{ypr},{vec[0]:.4f},{vec[1]:.4f},{vec[2]:.4f}")
    for name, lines in (("detections.csv", det), ("truth.csv", truth)):
        with open(os.path.join(HERE, name), "w") as f:
            f.write("\n".join(lines) + "\n")
    print(f"opencv {cv2.__version__}, numpy {np.__version__}")


if __name__ == "__main__":
    main()
