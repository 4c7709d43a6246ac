//! Per-frame mount deviation and probe-to-drogue vectors, dual-object and fixed-offset, with
//! first-order covariance propagation from the pose solutions (DESIGN section 2).
//!
//! Pose covariances come from `pnp` in the camera-frame left-perturbation tangent space
//! (`R = exp([δθ]x) R̂`, `t = t̂ + δt`). Deviations are reported in body-axis millimetres and Z-Y-X
//! degrees; their covariance is propagated through the exact Jacobian of that map. Nothing here
//! tests or decides; it only converts.

use nalgebra::{Isometry3, Matrix3, Matrix6, Vector3, Vector6};

use crate::geometry::{optical_in_boresight, skew, Mount, MountDeviation};
use crate::pnp::PoseEstimate;
use crate::stats::packed::PackedSym6;

pub mod frames;

/// Millimetres per metre, degrees per radian: the report units of a deviation 6-vector.
const MM_PER_M: f64 = 1000.0;

/// One frame's mount deviation from a reference mount, in report units: translation mm (body
/// x, y, z), rotation deg (yaw, pitch, roll), with covariance and information (pseudo-inverse,
/// same rank as the probe solution).
#[derive(Debug, Clone, PartialEq)]
pub struct DeviationSample {
    pub value: Vector6<f64>,
    pub covariance: Matrix6<f64>,
    pub information: Matrix6<f64>,
    pub rank: usize,
}

/// The observed mount implied by a probe solution: `T_BC = T_CB⁻¹`.
pub fn observed_mount(probe_pose: &Isometry3<f64>) -> Mount {
    Mount::from_body_from_camera(&probe_pose.inverse())
}

/// Jacobian of the report-unit deviation (mm, deg) of the observed mount with respect to the
/// probe pose's left perturbation (δθ, δt), evaluated at `probe_pose`.
///
/// With `T_CB = (R, t)`: `p_BC = −Rᵀt`, so `∂p/∂δθ = −Rᵀ[t]x` and `∂p/∂δt = −Rᵀ`. The
/// boresight rotation `R_BS = Rᵀ Mpermᵀ` takes the right perturbation `ω = −Mperm δθ`, and the
/// Z-Y-X angles of `ΔR = R_BS,refᵀ R_BS` move by `E(ypr) ω` with `E` the Euler-rate matrix.
pub fn deviation_jacobian(probe_pose: &Isometry3<f64>, reference: &Mount) -> Matrix6<f64> {
    let observed = observed_mount(probe_pose);
    let ypr = MountDeviation::between(reference, &observed).rotation;
    jacobian_at(probe_pose, &ypr)
}

/// [`deviation_jacobian`] given the Z-Y-X angles of the rotation deviation already computed.
fn jacobian_at(probe_pose: &Isometry3<f64>, ypr: &crate::geometry::YawPitchRoll) -> Matrix6<f64> {
    let r_t = probe_pose
        .rotation
        .to_rotation_matrix()
        .matrix()
        .transpose();
    let t = probe_pose.translation.vector;
    let d_angles = -ypr.rate_jacobian() * optical_in_boresight().matrix();
    let mut jac = Matrix6::zeros();
    jac.fixed_view_mut::<3, 3>(0, 0)
        .copy_from(&(-r_t * skew(&t) * MM_PER_M));
    jac.fixed_view_mut::<3, 3>(0, 3)
        .copy_from(&(-r_t * MM_PER_M));
    jac.fixed_view_mut::<3, 3>(3, 0)
        .copy_from(&(d_angles * 1f64.to_degrees()));
    jac
}

/// The mount deviation of one probe solution from `reference`, with propagated uncertainty.
/// The information is mapped as `J⁻ᵀ F J⁻¹` so an unobservable direction of the probe solution
/// stays unobservable (zero information) instead of being inverted.
pub fn mount_deviation(probe: &PoseEstimate, reference: &Mount) -> DeviationSample {
    let (_, value, jac) = deviation_and_jacobian(probe, reference);
    let covariance = jac * probe.covariance * jac.transpose();
    let information = jac
        .try_inverse()
        .map(|inv| inv.transpose() * probe.information * inv)
        .unwrap_or_else(Matrix6::zeros);
    DeviationSample {
        value,
        covariance: symmetrize(&covariance),
        information: symmetrize(&information),
        rank: probe.rank,
    }
}

/// What a frame record keeps of a probe solution: the observed mount, the deviation from
/// `reference` in report units and its covariance (packed; the same values as
/// [`mount_deviation`] gives, without the information the records do not keep).
pub fn mount_deviation_packed(
    probe: &PoseEstimate,
    reference: &Mount,
) -> (Mount, Vector6<f64>, PackedSym6) {
    let (observed, value, jac) = deviation_and_jacobian(probe, reference);
    (
        observed,
        value,
        deviation_covariance_packed(&jac, &probe.covariance),
    )
}

/// The observed mount of a probe solution and its deviation from `reference` in report units,
/// without uncertainty (for a caller that takes the covariance from elsewhere).
pub fn observed_deviation(probe: &PoseEstimate, reference: &Mount) -> (Mount, Vector6<f64>) {
    let observed = observed_mount(&probe.pose);
    let deviation = MountDeviation::between(reference, &observed);
    (observed, deviation.to_report_vector())
}

/// The covariance of a deviation in report units from a pose covariance in the tangent space of
/// `PoseEstimate`, through the deviation Jacobian `jac` ([`deviation_jacobian`]), packed.
pub fn deviation_covariance_packed(
    jac: &Matrix6<f64>,
    pose_covariance: &Matrix6<f64>,
) -> PackedSym6 {
    PackedSym6::from_matrix(&(jac * pose_covariance * jac.transpose()))
}

/// The observed mount, its deviation from `reference` (report units) and the Jacobian of that
/// deviation, sharing one inversion of the pose and one deviation between them.
fn deviation_and_jacobian(
    probe: &PoseEstimate,
    reference: &Mount,
) -> (Mount, Vector6<f64>, Matrix6<f64>) {
    let observed = observed_mount(&probe.pose);
    let deviation = MountDeviation::between(reference, &observed);
    let jac = jacobian_at(&probe.pose, &deviation.rotation);
    (observed, deviation.to_report_vector(), jac)
}

/// A point of the drogue model expressed in the camera frame, with its 3x3 covariance from the
/// drogue solution: `x_C = R p + t`, `∂x_C/∂δθ = −[R p]x`, `∂x_C/∂δt = I`.
pub fn drogue_point_in_camera(
    drogue: &PoseEstimate,
    p_d: &Vector3<f64>,
) -> (Vector3<f64>, Matrix3<f64>) {
    let rotated = drogue.pose.rotation * p_d;
    let x_c = point_in_camera(drogue, p_d);
    let jac = point_jacobian(&(-skew(&rotated)), &Matrix3::identity());
    let cov = jac * drogue.covariance * jac.transpose();
    (x_c, symmetrize3(&cov))
}

/// A point of the drogue model expressed in the camera frame, `x_C = R p + t` (m), without
/// its covariance.
pub fn point_in_camera(drogue: &PoseEstimate, p_d: &Vector3<f64>) -> Vector3<f64> {
    drogue.pose.rotation * p_d + drogue.pose.translation.vector
}

/// Dual-object probe-to-drogue vector in body axes: the drogue point `x_C` mapped with the
/// observed mount (`T_CB⁻¹`), minus the probe reference point `p_probe_b`. Its covariance adds
/// the probe pose term `[Rᵀ[x_C − t]x, −Rᵀ]` and the drogue point term `Rᵀ Σ_x R`, the two
/// solutions being independent (disjoint keypoints).
pub fn dual_vector(
    probe: &PoseEstimate,
    p_probe_b: &Vector3<f64>,
    x_c: &Vector3<f64>,
    x_c_covariance: &Matrix3<f64>,
) -> (Vector3<f64>, Matrix3<f64>) {
    let r_t = probe
        .pose
        .rotation
        .to_rotation_matrix()
        .matrix()
        .transpose();
    let t = probe.pose.translation.vector;
    let vector = r_t * (x_c - t) - p_probe_b;
    let jac = point_jacobian(&(r_t * skew(&(x_c - t))), &(-r_t));
    let cov = jac * probe.covariance * jac.transpose() + r_t * x_c_covariance * r_t.transpose();
    (vector, symmetrize3(&cov))
}

/// The vector a fixed-offset pipeline computes: the drogue point mapped with `mount` (the
/// nominal one, or a segment's estimate) instead of the per-frame observed mount.
pub fn vector_with_mount(
    mount: &Mount,
    p_probe_b: &Vector3<f64>,
    x_c: &Vector3<f64>,
) -> Vector3<f64> {
    mount.body_from_camera() * nalgebra::Point3::from(*x_c) - nalgebra::Point3::from(*p_probe_b)
}

/// Error of a fixed-offset pipeline that assumes `assumed` while the camera actually sits at
/// `actual`: `(R_BC,assumed − R_BC,actual) x_C + (p_assumed − p_actual)` (DESIGN section 2).
pub fn fixed_offset_error(assumed: &Mount, actual: &Mount, x_c: &Vector3<f64>) -> Vector3<f64> {
    let a = assumed.body_from_camera();
    let b = actual.body_from_camera();
    (a.rotation.to_rotation_matrix().matrix() - b.rotation.to_rotation_matrix().matrix()) * x_c
        + (a.translation.vector - b.translation.vector)
}

fn point_jacobian(d_theta: &Matrix3<f64>, d_t: &Matrix3<f64>) -> nalgebra::Matrix3x6<f64> {
    let mut jac = nalgebra::Matrix3x6::zeros();
    jac.fixed_view_mut::<3, 3>(0, 0).copy_from(d_theta);
    jac.fixed_view_mut::<3, 3>(0, 3).copy_from(d_t);
    jac
}

fn symmetrize(m: &Matrix6<f64>) -> Matrix6<f64> {
    (m + m.transpose()) * 0.5
}

fn symmetrize3(m: &Matrix3<f64>) -> Matrix3<f64> {
    (m + m.transpose()) * 0.5
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::{exp_so3, YawPitchRoll};
    use approx::assert_relative_eq;
    use nalgebra::{Translation3, UnitQuaternion};

    fn nominal() -> Mount {
        Mount {
            position_m: Vector3::new(2.1, 0.45, -0.6),
            attitude: YawPitchRoll::new(-0.08, 0.05, 0.01),
        }
    }

    fn perturb(pose: &Isometry3<f64>, d: &Vector6<f64>) -> Isometry3<f64> {
        let w = Vector3::new(d[0], d[1], d[2]);
        let r = exp_so3(&w) * pose.rotation.to_rotation_matrix();
        Isometry3::from_parts(
            Translation3::from(pose.translation.vector + Vector3::new(d[3], d[4], d[5])),
            UnitQuaternion::from_rotation_matrix(&r),
        )
    }

    fn probe_estimate(pose: Isometry3<f64>) -> PoseEstimate {
        let info = Matrix6::from_diagonal(&Vector6::new(4e4, 3e4, 2e4, 5e5, 6e5, 1e5));
        PoseEstimate::from_information(pose, info, 0.5, 0.0, vec![true; 8])
    }

    #[test]
    fn deviation_jacobian_matches_finite_differences() {
        let reference = nominal();
        let actual = MountDeviation {
            translation_m: Vector3::new(0.003, -0.001, 0.002),
            rotation: YawPitchRoll::new(0.004, -0.003, 0.006),
        }
        .apply_to(&reference);
        let pose = actual.body_from_camera().inverse();
        let jac = deviation_jacobian(&pose, &reference);
        let f = |p: &Isometry3<f64>| {
            MountDeviation::between(&reference, &observed_mount(p)).to_report_vector()
        };
        let h = 1e-7;
        for k in 0..6 {
            let mut d = Vector6::zeros();
            d[k] = h;
            let plus = f(&perturb(&pose, &d));
            d[k] = -h;
            let minus = f(&perturb(&pose, &d));
            let numeric = (plus - minus) / (2.0 * h);
            assert_relative_eq!(
                numeric,
                jac.column(k).into_owned(),
                epsilon = 1e-4,
                max_relative = 1e-6
            );
        }
    }

    #[test]
    fn information_and_covariance_are_inverse() {
        let pose = nominal().body_from_camera().inverse();
        let sample = mount_deviation(&probe_estimate(pose), &nominal());
        assert_relative_eq!(sample.value, Vector6::zeros(), epsilon = 1e-9);
        assert_relative_eq!(
            sample.covariance * sample.information,
            Matrix6::identity(),
            epsilon = 1e-8
        );
    }

    #[test]
    fn dual_vector_jacobian_matches_finite_differences() {
        let pose = nominal().body_from_camera().inverse();
        let probe = probe_estimate(pose);
        let p_ref = Vector3::new(4.0, 0.1, 0.2);
        let x_c = Vector3::new(0.4, -0.3, 12.0);
        let (v0, cov) = dual_vector(&probe, &p_ref, &x_c, &Matrix3::zeros());
        // Reconstruct the Jacobian from finite differences and compare J P Jᵀ.
        let h = 1e-7;
        let mut jac = nalgebra::Matrix3x6::zeros();
        for k in 0..6 {
            let mut d = Vector6::zeros();
            d[k] = h;
            let mut p = probe.clone();
            p.pose = perturb(&pose, &d);
            let plus = dual_vector(&p, &p_ref, &x_c, &Matrix3::zeros()).0;
            d[k] = -h;
            p.pose = perturb(&pose, &d);
            let minus = dual_vector(&p, &p_ref, &x_c, &Matrix3::zeros()).0;
            jac.set_column(k, &((plus - minus) / (2.0 * h)));
        }
        let expected = jac * probe.covariance * jac.transpose();
        assert_relative_eq!(cov, expected, epsilon = 1e-10, max_relative = 1e-5);
        // With the nominal equal to the observed mount the two vectors agree exactly.
        assert_relative_eq!(
            v0,
            vector_with_mount(&nominal(), &p_ref, &x_c),
            epsilon = 1e-12
        );
    }

    #[test]
    fn fixed_offset_error_of_a_small_yaw_is_range_times_angle() {
        // Hand-worked small-angle case: a camera that looks along body x, yawed right by δ
        // more than the pipeline assumes, sees a drogue straight ahead of its optical axis at
        // range r. The pipeline puts it at lateral offset 0 while it is really at r·sin δ to
        // the right, so the error is (r(1 − cos δ), −r sin δ, 0) ≈ (0, −r δ, 0).
        let assumed = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(0.0, 0.0, 0.0),
        };
        let delta = 0.2f64.to_radians();
        let actual = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(delta, 0.0, 0.0),
        };
        let r = 20.0;
        let err = fixed_offset_error(&assumed, &actual, &Vector3::new(0.0, 0.0, r));
        assert_relative_eq!(err.y, -r * delta.sin(), epsilon = 1e-12);
        assert_relative_eq!(err.x, r * (1.0 - delta.cos()), epsilon = 1e-12);
        assert_relative_eq!(err.y * 1000.0, -69.813, epsilon = 1e-3);
        // And the error equals the difference of the two vectors.
        let p_ref = Vector3::new(3.0, 0.0, 0.5);
        let x_c = Vector3::new(0.3, 0.2, r);
        let diff =
            vector_with_mount(&assumed, &p_ref, &x_c) - vector_with_mount(&actual, &p_ref, &x_c);
        assert_relative_eq!(
            diff,
            fixed_offset_error(&assumed, &actual, &x_c),
            epsilon = 1e-12
        );
    }

    #[test]
    fn drogue_point_covariance_matches_finite_differences() {
        let pose = Isometry3::from_parts(
            Translation3::new(0.5, -0.2, 15.0),
            UnitQuaternion::from_euler_angles(0.1, -0.2, 0.3),
        );
        let est = probe_estimate(pose);
        let p = Vector3::new(0.3, 0.0, -0.1);
        let (_, cov) = drogue_point_in_camera(&est, &p);
        let h = 1e-7;
        let mut jac = nalgebra::Matrix3x6::zeros();
        for k in 0..6 {
            let mut d = Vector6::zeros();
            d[k] = h;
            let mut e = est.clone();
            e.pose = perturb(&pose, &d);
            let plus = drogue_point_in_camera(&e, &p).0;
            d[k] = -h;
            e.pose = perturb(&pose, &d);
            let minus = drogue_point_in_camera(&e, &p).0;
            jac.set_column(k, &((plus - minus) / (2.0 * h)));
        }
        let expected = jac * est.covariance * jac.transpose();
        assert_relative_eq!(cov, expected, epsilon = 1e-10, max_relative = 1e-5);
    }
}
