//! Property tests: camera Jacobians against central finite differences, undistortion inverting
//! projection, and project → solve_pose round trips for random poses with exact keypoints
//! (derivatives property-tested as in the argmin-testfunctions habit; STYLE.md item 12).

mod pnp_common;

use mountdrift::camera::{Camera, Distortion};
use mountdrift::pnp::{solve_pose, PnpOptions, PoseStatus};
use nalgebra::{Isometry3, Translation3, UnitQuaternion, Vector2, Vector3};
use pnp_common::{model_from_points, observations, project_all, tangent};
use proptest::prelude::*;

fn brown_conrady() -> impl Strategy<Value = Distortion> {
    (
        -0.3..0.1f64,
        -0.05..0.08f64,
        -0.002..0.002f64,
        -0.002..0.002f64,
        -0.01..0.01f64,
    )
        .prop_map(|(k1, k2, p1, p2, k3)| Distortion::BrownConrady { k1, k2, p1, p2, k3 })
}

fn kannala_brandt() -> impl Strategy<Value = Distortion> {
    (
        -0.05..0.1f64,
        -0.02..0.02f64,
        -0.005..0.005f64,
        -0.001..0.001f64,
    )
        .prop_map(|(k1, k2, k3, k4)| Distortion::KannalaBrandt { k1, k2, k3, k4 })
}

fn camera(distortion: impl Strategy<Value = Distortion>) -> impl Strategy<Value = Camera> {
    (300.0..2000.0f64, 0.9..1.1f64, -3.0..3.0f64, distortion).prop_map(|(f, aspect, skew, d)| {
        Camera::new(1280, 960, f, f * aspect, 640.3, 479.6, skew, d, 1.0).expect("valid camera")
    })
}

fn any_camera() -> impl Strategy<Value = Camera> {
    prop_oneof![camera(brown_conrady()), camera(kannala_brandt())]
}

/// A camera-frame point within `max_angle` of the optical axis, 0.5 to 50 m deep.
fn point_in_view(max_angle: f64) -> impl Strategy<Value = Vector3<f64>> {
    (0.0..max_angle, -3.2..3.2f64, 0.5..50.0f64).prop_map(|(angle, azimuth, depth)| {
        let r = angle.tan() * depth;
        Vector3::new(r * azimuth.cos(), r * azimuth.sin(), depth)
    })
}

/// Central differences of a map R^n → R^2, step scaled to the argument.
fn central_difference<const N: usize>(
    f: impl Fn(&nalgebra::SVector<f64, N>) -> Vector2<f64>,
    x: &nalgebra::SVector<f64, N>,
) -> nalgebra::SMatrix<f64, 2, N> {
    let mut j = nalgebra::SMatrix::<f64, 2, N>::zeros();
    for k in 0..N {
        let h = 1e-6 * (1.0 + x[k].abs());
        let mut plus = *x;
        let mut minus = *x;
        plus[k] += h;
        minus[k] -= h;
        j.set_column(k, &((f(&plus) - f(&minus)) / (2.0 * h)));
    }
    j
}

fn max_angle(cam: &Camera) -> f64 {
    match cam.distortion {
        Distortion::BrownConrady { .. } => 0.55,
        Distortion::KannalaBrandt { .. } => 1.3,
    }
}

proptest! {
    #[test]
    fn projection_jacobian_matches_finite_differences(
        (cam, p) in any_camera().prop_flat_map(|c| {
            let a = max_angle(&c);
            (Just(c), point_in_view(a))
        })
    ) {
        let (_, jac) = cam.project_with_jacobian(&p).unwrap();
        let fd = central_difference(|x| cam.project(x).unwrap(), &p);
        let scale = jac.amax().max(1.0);
        prop_assert!((jac - fd).amax() < 1e-6 * scale, "analytic {jac} vs fd {fd}");
    }

    #[test]
    fn normalized_to_pixel_jacobian_matches_finite_differences(
        (cam, p) in any_camera().prop_flat_map(|c| {
            let a = max_angle(&c);
            (Just(c), point_in_view(a))
        })
    ) {
        let x = Vector2::new(p.x / p.z, p.y / p.z);
        let (_, jac) = cam.normalized_to_pixel(&x);
        let fd = central_difference(|y| cam.normalized_to_pixel(y).0, &x);
        let scale = jac.amax().max(1.0);
        prop_assert!((jac - fd).amax() < 1e-6 * scale, "analytic {jac} vs fd {fd}");
    }

    #[test]
    fn undistortion_inverts_projection(
        (cam, p) in any_camera().prop_flat_map(|c| {
            let a = max_angle(&c);
            (Just(c), point_in_view(a))
        })
    ) {
        let px = cam.project(&p).unwrap();
        let x = cam.undistort(&px).unwrap();
        let want = Vector2::new(p.x / p.z, p.y / p.z);
        prop_assert!((x - want).norm() < 1e-9 * (1.0 + want.norm()), "{x} vs {want}");
    }
}

/// A random rigid target: 5 to 12 points in a box of random proportions, or on a plane.
fn target() -> impl Strategy<Value = Vec<Vector3<f64>>> {
    (
        5usize..13,
        0.2..1.5f64,
        0.2..1.0f64,
        prop_oneof![Just(0.0), 0.05..0.8f64],
        any::<u64>(),
    )
        .prop_map(|(n, a, b, c, seed)| {
            use rand::{RngExt, SeedableRng};
            let mut rng = rand_pcg::Pcg64Mcg::seed_from_u64(seed);
            (0..n)
                .map(|_| {
                    Vector3::new(
                        rng.random_range(-a..a),
                        rng.random_range(-b..b),
                        if c > 0.0 {
                            rng.random_range(-c..c)
                        } else {
                            0.0
                        },
                    )
                })
                .collect()
        })
}

/// A random pose putting the target 2 to 40 m in front, within 15 degrees of the axis.
fn pose() -> impl Strategy<Value = Isometry3<f64>> {
    (
        prop::array::uniform3(-1.0..1.0f64),
        0.0..3.1f64,
        0.0..0.26f64,
        -3.2..3.2f64,
        2.0..40.0f64,
    )
        .prop_filter_map("rotation axis", |(axis, angle, off, az, dist)| {
            let axis = Vector3::from(axis);
            (axis.norm() > 0.1).then(|| {
                let r = UnitQuaternion::from_scaled_axis(axis.normalize() * angle);
                let dir = Vector3::new(off.tan() * az.cos(), off.tan() * az.sin(), 1.0);
                Isometry3::from_parts(Translation3::from(dir * dist), r)
            })
        })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(200))]

    #[test]
    fn exact_keypoints_give_back_the_pose(
        cam in any_camera(),
        points in target(),
        truth in pose(),
    ) {
        let pixels = project_all(&cam, &points, &truth);
        let model = model_from_points(&points);
        let obs = observations(&pixels, 1.0);
        let est = match solve_pose(&cam, &model, &obs, None, &PnpOptions::default()) {
            PoseStatus::Solved(e) => e,
            PoseStatus::Rejected(r) => return Err(TestCaseError::fail(r.message)),
        };
        let d = tangent(&est.pose, &truth);
        let sigmas = d.dot(&(est.information * d)).sqrt();
        prop_assert!(sigmas < 1e-3, "{sigmas} sigma off (d = {d})");
        prop_assert!(est.chi2 < 1e-6, "chi2 {}", est.chi2);
    }
}
