#!/usr/bin/env python3
"""Reference values from OpenCV for mountdrift's camera and pose tests.

Writes JSON fixtures into fixtures/opencv/ (run from the repository root):

  projection.json    cv2.projectPoints (Brown-Conrady) and cv2.fisheye.projectPoints
                     (Kannala-Brandt, with skew as alpha = skew / fx) of random camera-frame points
  undistortion.json  cv2.undistortPoints / cv2.fisheye.undistortPoints with a tight termination
                     criterion, so that the reference is the exact inverse of the projection
  pnp.json           pose problems (planar, non-planar, near-collinear, close and far, with and
                     without distortion) with fixed noisy pixels; reference pose =
                     cv2.solvePnP(SOLVEPNP_SQPNP) refined by cv2.solvePnPRefineLM with tight
                     criteria, its reprojection RMS, and the covariance sigma^2 (J^T J)^-1 in
                     OpenCV's (rvec, tvec) parameters from the cv2.projectPoints Jacobian
  ippe.json          the planar two-fold ambiguity of a small square (cv2.solvePnPGeneric with
                     SOLVEPNP_IPPE: both solutions, each refined by LM) at 1 m and 10 m

Every fixture records the library versions, this script's name and the command used.
Seeds are fixed; rerunning reproduces the files.
"""

import importlib.metadata
import json
import platform
import sys

import cv2
import numpy as np

COMMAND = "python3 scripts/opencv_reference.py"
OUT_DIR = "fixtures/opencv"
SEED = 20261201
LM_CRITERIA = (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_COUNT, 1000, 1e-15)
UNDISTORT_CRITERIA = (cv2.TERM_CRITERIA_EPS + cv2.TERM_CRITERIA_COUNT, 10000, 1e-15)


def meta(description):
    return {
        "description": description,
        "script": "scripts/opencv_reference.py",
        "command": COMMAND,
        "opencv_package": "opencv-python-headless "
        + importlib.metadata.version("opencv-python-headless"),
        "opencv_version": cv2.__version__,
        "numpy": np.__version__,
        "python": platform.python_version(),
        "seed": SEED,
    }


def camera_matrix(cam):
    return np.array(
        [[cam["fx"], cam["skew"], cam["cx"]], [0.0, cam["fy"], cam["cy"]], [0.0, 0.0, 1.0]]
    )


# Cameras: pinhole Brown-Conrady coefficients (k1, k2, p1, p2, k3) in OpenCV order; fisheye
# Kannala-Brandt (k1, k2, k3, k4). OpenCV's projectPoints ignores K[0][1] for pinhole cameras
# (checked below), so pinhole cameras carry no skew.
CAMERAS = {
    "pinhole_strong": {
        "model": "pinhole", "width": 640, "height": 480, "fx": 800.0, "fy": 790.0,
        "cx": 321.5, "cy": 239.25, "skew": 0.0,
        "distortion": [-0.21, 0.06, 0.0012, -0.0007, -0.008],
    },
    "pinhole_mild": {
        "model": "pinhole", "width": 1280, "height": 960, "fx": 1100.0, "fy": 1100.0,
        "cx": 640.0, "cy": 480.0, "skew": 0.0,
        "distortion": [-0.12, 0.03, 0.0004, -0.0003, 0.0],
    },
    "pinhole_ideal": {
        "model": "pinhole", "width": 640, "height": 480, "fx": 800.0, "fy": 800.0,
        "cx": 320.0, "cy": 240.0, "skew": 0.0, "distortion": [0.0, 0.0, 0.0, 0.0, 0.0],
    },
    "pinhole_tele": {
        "model": "pinhole", "width": 1920, "height": 1080, "fx": 3000.0, "fy": 3000.0,
        "cx": 960.0, "cy": 540.0, "skew": 0.0,
        "distortion": [0.05, -0.2, 0.0002, 0.0001, 0.0],
    },
    "fisheye_skew": {
        "model": "fisheye", "width": 1280, "height": 800, "fx": 420.0, "fy": 418.0,
        "cx": 640.0, "cy": 400.0, "skew": 2.1,
        "distortion": [0.05, -0.012, 0.003, -0.0004],
    },
    "fisheye_plain": {
        "model": "fisheye", "width": 1024, "height": 1024, "fx": 330.0, "fy": 330.0,
        "cx": 511.5, "cy": 511.5, "skew": 0.0,
        "distortion": [-0.02, 0.004, -0.001, 0.0002],
    },
}


def random_camera_points(rng, n, max_angle_rad):
    """Points in front of the camera, off-axis angle up to max_angle_rad, depth 0.5 to 50 m."""
    angle = max_angle_rad * np.sqrt(rng.uniform(0.0, 1.0, n))
    azimuth = rng.uniform(-np.pi, np.pi, n)
    depth = np.exp(rng.uniform(np.log(0.5), np.log(50.0), n))
    r = np.tan(angle)
    return np.stack([r * np.cos(azimuth) * depth, r * np.sin(azimuth) * depth, depth], axis=1)


def project(cam, pts_c):
    K = camera_matrix(cam)
    d = np.array(cam["distortion"], dtype=np.float64)
    zero = np.zeros(3)
    if cam["model"] == "pinhole":
        px, _ = cv2.projectPoints(pts_c.reshape(-1, 1, 3), zero, zero, K, d)
    else:
        K0 = K.copy()
        K0[0, 1] = 0.0
        px, _ = cv2.fisheye.projectPoints(
            pts_c.reshape(-1, 1, 3), zero, zero, K0, d, alpha=cam["skew"] / cam["fx"]
        )
    return px.reshape(-1, 2)


def max_angle(cam):
    return np.deg2rad(38.0) if cam["model"] == "pinhole" else np.deg2rad(80.0)


def projection_fixture(rng):
    # OpenCV's pinhole projectPoints reads fx, fy, cx, cy only: a skew entry changes nothing.
    cam = dict(CAMERAS["pinhole_strong"], skew=5.0)
    pts = random_camera_points(rng, 10, max_angle(cam))
    skew_effect = float(np.abs(project(cam, pts) - project(CAMERAS["pinhole_strong"], pts)).max())
    cases = []
    for name, cam in CAMERAS.items():
        pts = random_camera_points(rng, 300, max_angle(cam))
        px = project(cam, pts)
        cases.append({
            "camera_name": name,
            "camera": cam,
            "points": [{"p_c": p.tolist(), "px": q.tolist()} for p, q in zip(pts, px)],
        })
    out = meta("cv2.projectPoints / cv2.fisheye.projectPoints of random camera-frame points")
    out["pinhole_skew_effect_px"] = skew_effect
    out["cases"] = cases
    return out


def undistort(cam, px):
    K = camera_matrix(cam)
    d = np.array(cam["distortion"], dtype=np.float64)
    src = px.reshape(-1, 1, 2).astype(np.float64)
    if cam["model"] == "pinhole":
        x = cv2.undistortPoints(src, K, d, criteria=UNDISTORT_CRITERIA)
    else:
        x = cv2.fisheye.undistortPoints(src, K, d, criteria=UNDISTORT_CRITERIA)
    return x.reshape(-1, 2)


def undistortion_fixture(rng):
    cases = []
    worst = 0.0
    for name, cam in CAMERAS.items():
        if cam["skew"] != 0.0:
            # OpenCV's undistortPoints ignores skew as well; skew is covered by projection.
            continue
        pts = random_camera_points(rng, 200, max_angle(cam))
        px = project(cam, pts)
        x = undistort(cam, px)
        # The reference must be the exact inverse: reproject it and record the worst error.
        back = project(cam, np.concatenate([x, np.ones((len(x), 1))], axis=1))
        worst = max(worst, float(np.abs(back - px).max()))
        cases.append({
            "camera_name": name,
            "camera": cam,
            "points": [{"px": p.tolist(), "normalized": q.tolist()} for p, q in zip(px, x)],
        })
    out = meta("cv2.undistortPoints / cv2.fisheye.undistortPoints with (COUNT+EPS, 10000, 1e-15)")
    out["max_reprojection_error_px"] = worst
    out["cases"] = cases
    return out


def reprojection(obj, img, K, d, rvec, tvec):
    px, jac = cv2.projectPoints(obj, rvec, tvec, K, d)
    res = px.reshape(-1, 2) - img
    return res, jac[:, :6]


def refine(obj, img, K, d, rvec, tvec):
    """solvePnPRefineLM with tight criteria, repeated until the pose stops moving."""
    rvec, tvec = rvec.copy(), tvec.copy()
    for _ in range(50):
        r2, t2 = cv2.solvePnPRefineLM(obj, img, K, d, rvec.copy(), tvec.copy(), LM_CRITERIA)
        change = max(np.abs(r2 - rvec).max(), np.abs(t2 - tvec).max())
        rvec, tvec = r2, t2
        if change < 1e-13:
            break
    return rvec, tvec


def pnp_problem(name, cam_name, obj, rvec_true, tvec_true, sigma_px, noise):
    cam = CAMERAS[cam_name]
    K = camera_matrix(cam)
    d = np.array(cam["distortion"], dtype=np.float64)
    rvec_true = np.array(rvec_true, dtype=np.float64).reshape(3, 1)
    tvec_true = np.array(tvec_true, dtype=np.float64).reshape(3, 1)
    clean, _ = cv2.projectPoints(obj, rvec_true, tvec_true, K, d)
    img = clean.reshape(-1, 2) + noise
    start = "sqpnp"
    try:
        ok, r0, t0 = cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_SQPNP)
    except cv2.error as err:
        # SQPnP refuses point sets whose normalised image spread is tiny (a distant target):
        # fall back to EPnP as the start and say so.
        start = "epnp (SQPnP refused: " + str(err).strip().splitlines()[-1] + ")"
        ok, r0, t0 = cv2.solvePnP(obj, img, K, d, flags=cv2.SOLVEPNP_EPNP)
    assert ok, name
    r_lm, t_lm = refine(obj, img, K, d, r0, t0)
    res, jac = reprojection(obj, img, K, d, r_lm, t_lm)
    cost = float((res ** 2).sum())
    # Other OpenCV starts, to confirm that SQPnP + LM reached the lowest minimum.
    # A minimum with the object behind the camera (negative depth) also reprojects; OpenCV
    # does not refuse it, so its smallest depth is recorded beside its cost.
    others = {}
    depths = {}
    starts = [("epnp", cv2.SOLVEPNP_EPNP, None), ("iterative", cv2.SOLVEPNP_ITERATIVE, None),
              ("truth", None, (rvec_true, tvec_true))]
    for label, flags, given in starts:
        if given is None:
            ok, r, t = cv2.solvePnP(obj, img, K, d, flags=flags)
            if not ok:
                continue
        else:
            r, t = given
        r, t = refine(obj, img, K, d, r, t)
        others[label] = float((reprojection(obj, img, K, d, r, t)[0] ** 2).sum())
        rot, _ = cv2.Rodrigues(r)
        depths[label] = float((obj @ rot.T + t.ravel())[:, 2].min())
    cov = sigma_px ** 2 * np.linalg.inv(jac.T @ jac)
    _, jac_true = reprojection(obj, img, K, d, rvec_true, tvec_true)
    crb = sigma_px ** 2 * np.linalg.inv(jac_true.T @ jac_true)
    return {
        "name": name,
        "camera_name": cam_name,
        "camera": cam,
        "object_points_m": obj.tolist(),
        "pixels": img.tolist(),
        "sigma_px": sigma_px,
        "true_rvec": rvec_true.ravel().tolist(),
        "true_tvec": tvec_true.ravel().tolist(),
        "start": start,
        "start_rvec": r0.ravel().tolist(),
        "start_tvec": t0.ravel().tolist(),
        "lm_rvec": r_lm.ravel().tolist(),
        "lm_tvec": t_lm.ravel().tolist(),
        "lm_cost_px2": cost,
        "lm_rms_px": float(np.sqrt(cost / len(obj))),
        "lm_covariance_rvec_tvec": cov.tolist(),
        "crb_covariance_rvec_tvec_at_truth": crb.tolist(),
        "lm_cost_from_other_starts_px2": others,
        "lm_min_depth_from_other_starts_m": depths,
    }


def drogue_points():
    ring = [(0.3 * np.cos(a), 0.3 * np.sin(a), 0.0)
            for a in np.arange(12) * 2.0 * np.pi / 12.0]
    inner = [(0.12 * np.cos(a), 0.12 * np.sin(a), 0.25)
             for a in np.arange(4) * np.pi / 2.0 + 0.3]
    return np.array(ring + inner)


def pnp_fixture(rng):
    anchor_obj = np.array([(-.5, -.5, 0), (.5, -.5, 0), (.5, .5, 0), (-.5, .5, 0), (0, 0, .3),
                           (.25, -.1, .15), (-.3, .2, .25), (.1, .35, -.2)], dtype=np.float64)
    anchor_noise = np.array([(.5, -.3), (-.4, .2), (.1, .6), (-.2, -.5), (.3, .3), (-.6, .1),
                             (.2, -.2), (0, .4)])
    board = np.array([(x, y, 0.0) for x in (-0.3, 0.0, 0.3) for y in (-0.3, 0.0, 0.3)])
    box = np.stack([rng.uniform(-0.6, 0.6, 12), rng.uniform(-0.4, 0.4, 12),
                    rng.uniform(-0.3, 0.3, 12)], axis=1)
    probe = np.array([(x, 0.0, 0.0) for x in (0.0, 0.3, 0.6, 0.9, 1.2, 1.5)]
                     + [(0.2, 0.06, 0.0), (0.7, 0.0, 0.05), (1.1, -0.05, -0.03)])
    drogue = drogue_points()

    def noise(n, sigma):
        return rng.normal(0.0, sigma, (n, 2))

    problems = [
        pnp_problem("anchor_check_values", "pinhole_ideal", anchor_obj,
                    [0.1, -0.2, 0.3], [0.05, -0.1, 4.0], 1.0, anchor_noise),
        pnp_problem("planar_board_3m", "pinhole_ideal", board,
                    [0.35, -0.25, 0.1], [0.1, -0.05, 3.0], 0.5, noise(9, 0.5)),
        pnp_problem("planar_board_3m_distorted", "pinhole_strong", board,
                    [0.35, -0.25, 0.1], [0.1, -0.05, 3.0], 0.5, noise(9, 0.5)),
        pnp_problem("nonplanar_box_6m", "pinhole_ideal", box,
                    [0.3, -0.5, 0.2], [0.2, -0.1, 6.0], 1.0, noise(12, 1.0)),
        pnp_problem("nonplanar_box_6m_distorted", "pinhole_mild", box,
                    [0.3, -0.5, 0.2], [0.2, -0.1, 6.0], 1.0, noise(12, 1.0)),
        pnp_problem("probe_near_collinear_4m", "pinhole_ideal", probe,
                    [0.2, 1.2, 0.1], [-0.4, 0.2, 4.0], 0.5, noise(9, 0.5)),
        pnp_problem("probe_near_collinear_4m_distorted", "pinhole_strong", probe,
                    [0.2, 1.2, 0.1], [-0.4, 0.2, 4.0], 0.5, noise(9, 0.5)),
        pnp_problem("drogue_close_2m", "pinhole_ideal", drogue,
                    [0.15, -0.2, 0.05], [0.1, 0.2, 2.0], 1.0, noise(16, 1.0)),
        pnp_problem("drogue_close_2m_distorted", "pinhole_mild", drogue,
                    [0.15, -0.2, 0.05], [0.1, 0.2, 2.0], 1.0, noise(16, 1.0)),
        pnp_problem("drogue_far_120m", "pinhole_tele", drogue,
                    [0.15, -0.2, 0.05], [0.5, -1.0, 120.0], 0.3, noise(16, 0.3)),
    ]
    out = meta("solvePnP(SOLVEPNP_SQPNP) + solvePnPRefineLM (COUNT+EPS, 1000, 1e-15, repeated "
               "until the pose moves < 1e-13); rms = sqrt(sum |r|^2 / n_points)")
    out["problems"] = problems
    return out


def ippe_fixture():
    K = camera_matrix(CAMERAS["pinhole_ideal"])
    s = 0.2
    square = np.array([(-s / 2, s / 2, 0), (s / 2, s / 2, 0), (s / 2, -s / 2, 0),
                       (-s / 2, -s / 2, 0)], dtype=np.float64)
    corner_noise = np.array([(0.12, -0.08), (-0.1, 0.15), (0.05, 0.1), (-0.14, -0.06)])
    cases = []
    for distance in (1.0, 10.0):
        rvec = np.array([0.4, 0.0, 0.0])
        tvec = np.array([0.0, 0.0, distance])
        clean, _ = cv2.projectPoints(square, rvec, tvec, K, None)
        img = clean.reshape(-1, 2) + corner_noise
        n, rvecs, tvecs, errs = cv2.solvePnPGeneric(square, img, K, None,
                                                      flags=cv2.SOLVEPNP_IPPE)
        sols = []
        for r, t, e in zip(rvecs, tvecs, errs.ravel()):
            r2, t2 = refine(square, img, K, None, r, t)
            res, _ = reprojection(square, img, K, None, r2, t2)
            sols.append({
                "ippe_rvec": r.ravel().tolist(), "ippe_tvec": t.ravel().tolist(),
                "ippe_rms_px_per_coordinate": float(e),
                "lm_rvec": r2.ravel().tolist(), "lm_tvec": t2.ravel().tolist(),
                "lm_cost_px2": float((res ** 2).sum()),
            })
        cases.append({
            "distance_m": distance, "true_rvec": rvec.tolist(), "true_tvec": tvec.tolist(),
            "object_points_m": square.tolist(), "pixels": img.tolist(), "sigma_px": 1.0,
            "solutions": sols,
        })
    out = meta("solvePnPGeneric(SOLVEPNP_IPPE) on a 0.2 m square (CHECK_VALUES section 4 "
               "setting), both solutions refined by solvePnPRefineLM")
    out["camera"] = CAMERAS["pinhole_ideal"]
    out["cases"] = cases
    return out


def write(name, data):
    with open(f"{OUT_DIR}/{name}", "w") as f:
        json.dump(data, f, indent=1)
        f.write("\n")


def main():
    rng = np.random.default_rng(SEED)
    write("projection.json", projection_fixture(rng))
    write("undistortion.json", undistortion_fixture(rng))
    write("pnp.json", pnp_fixture(rng))
    write("ippe.json", ippe_fixture())
    return 0


if __name__ == "__main__":
    sys.exit(main())
