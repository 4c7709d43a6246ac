//! Re-expressing a mount's uncertainty: from deviations about the audit's reference to
//! deviations about the mount itself, and the covariance of the change between two mounts.
//!
//! Coordinates throughout are the audit's deviation 6-vector (x, y, z mm in body axes; yaw,
//! pitch, roll deg as Z-Y-X angles of `R_ref^T R`). A small right rotation `R exp([w]x)` has
//! Z-Y-X angles `P w` to first order, with `P` the axis reversal (z, y, x); a deviation `δ`
//! about a mount `m` thus stands for the rotation `R_m exp([P δ_rot]x)` to first order.

use nalgebra::{Matrix3, Matrix6, Vector3};

use crate::geometry::{Mount, MountDeviation, YawPitchRoll};

/// `P`: Z-Y-X angles of a small right rotation `exp([w]x)` are `(w_z, w_y, w_x)`.
fn axis_reversal() -> Matrix3<f64> {
    YawPitchRoll::new(0.0, 0.0, 0.0).rate_jacobian()
}

fn block_diagonal(translation: Matrix3<f64>, rotation: Matrix3<f64>) -> Matrix6<f64> {
    let mut m = Matrix6::zeros();
    m.fixed_view_mut::<3, 3>(0, 0).copy_from(&translation);
    m.fixed_view_mut::<3, 3>(3, 3).copy_from(&rotation);
    m
}

/// The Z-Y-X Euler-rate matrix `E`: a change `δ` of (yaw, pitch, roll) at `angles` is the right
/// rotation `R(angles) exp([E δ]x)` to first order, with `w_x = δroll − sin(pitch) δyaw`,
/// `w_y = cos(roll) δpitch + sin(roll) cos(pitch) δyaw`,
/// `w_z = cos(roll) cos(pitch) δyaw − sin(roll) δpitch` (the inverse of
/// [`YawPitchRoll::rate_jacobian`] where that exists; `E` itself exists everywhere).
pub fn euler_rate_matrix(angles: &YawPitchRoll) -> Matrix3<f64> {
    let (sr, cr) = angles.roll.sin_cos();
    let (sp, cp) = angles.pitch.sin_cos();
    Matrix3::new(
        -sp,
        0.0,
        1.0, // w_x
        sr * cp,
        cr,
        0.0, // w_y
        cr * cp,
        -sr,
        0.0, // w_z
    )
}

/// Jacobian from deviations about a reference to deviations about `reference ⊕ d`, at `d`
/// (angles in degrees). Translations add in body axes (identity); for the rotation,
/// `R(d + δ) = R(d) exp([E(d) δ]x)` ([`euler_rate_matrix`]), so the angles about the mount are
/// `P E(d) δ`.
pub fn reexpress_jacobian(deviation_angles_deg: &Vector3<f64>) -> Matrix6<f64> {
    let [yaw, pitch, roll] = [0, 1, 2].map(|k| deviation_angles_deg[k].to_radians());
    let e = euler_rate_matrix(&YawPitchRoll::new(yaw, pitch, roll));
    block_diagonal(Matrix3::identity(), axis_reversal() * e)
}

/// `J C Jᵀ`, symmetrised against rounding.
pub fn transform(jacobian: &Matrix6<f64>, covariance: &Matrix6<f64>) -> Matrix6<f64> {
    let c = jacobian * covariance * jacobian.transpose();
    (c + c.transpose()) * 0.5
}

/// The change of `after` relative to `before` (audit convention: translation
/// `p_after − p_before` in mm, Z-Y-X angles of `R_before^T R_after` in deg) and the Jacobians
/// `(A_before, A_after)` of the change with respect to each mount's own deviation vector.
///
/// With `R_b exp([w_b]x)`, `R_a exp([w_a]x)` and `D = R_b^T R_a`:
/// `(R_b e^{w_b})^T R_a e^{w_a} = D exp([w_a − Dᵀ w_b]x)` to first order, so the angles change by
/// `G (w_a − Dᵀ w_b)` with `G = K(angles of D)`, and `w = P δ_rot`. Hence
/// `A_after = diag(I, G P)` and `A_before = −diag(I, G Dᵀ P)`.
pub fn change_between(
    before: &Mount,
    after: &Mount,
) -> (MountDeviation, Matrix6<f64>, Matrix6<f64>) {
    let change = MountDeviation::between(before, after);
    let d = (before.boresight_rotation().inverse() * after.boresight_rotation()).into_inner();
    let g = change.rotation.rate_jacobian();
    let p = axis_reversal();
    let a_after = block_diagonal(Matrix3::identity(), g * p);
    let a_before = -block_diagonal(Matrix3::identity(), g * d.transpose() * p);
    (change, a_before, a_after)
}

/// Covariance of the change between two mounts with independent errors of covariances
/// `before` and `after` (each about its own mount): `A_b C_b A_bᵀ + A_a C_a A_aᵀ`.
pub fn change_covariance(
    a_before: &Matrix6<f64>,
    before: &Matrix6<f64>,
    a_after: &Matrix6<f64>,
    after: &Matrix6<f64>,
) -> Matrix6<f64> {
    transform(a_before, before) + transform(a_after, after)
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::Vector6;

    fn mount(p: [f64; 3], ypr_deg: [f64; 3]) -> Mount {
        let [y, pi, r] = ypr_deg.map(f64::to_radians);
        Mount {
            position_m: Vector3::from(p),
            attitude: YawPitchRoll::new(y, pi, r),
        }
    }

    fn about(m: &Mount, delta: &Vector6<f64>) -> Mount {
        MountDeviation::from_report_vector(delta).apply_to(m)
    }

    /// Finite differences of the exact maps (`MountDeviation::between`/`apply_to`) against the
    /// first-order Jacobians: the residual must shrink with the square of the step.
    #[test]
    fn jacobians_match_finite_differences() {
        let reference = mount([1.1, 0.3, -0.9], [2.0, -3.5, 0.4]);
        let d = Vector6::new(4.0, -2.0, 3.0, 1.5, -2.2, 0.9);
        let at = about(&reference, &d);
        let j = reexpress_jacobian(&Vector3::new(d[3], d[4], d[5]));
        let before = mount([1.0, 0.2, -0.8], [-7.0, 4.0, 2.0]);
        let after = mount([1.004, 0.197, -0.805], [-6.2, 3.1, 2.6]);
        let (change, a_b, a_a) = change_between(&before, &after);
        let base = change.to_report_vector();
        for (i, h) in [1e-2, 1e-3].iter().enumerate() {
            let step = Vector6::new(0.7, -0.4, 0.5, 0.6, -0.3, 0.8) * *h;
            // About the reference: deviation about `at` of reference ⊕ (d + step).
            let moved = about(&reference, &(d + step));
            let exact = MountDeviation::between(&at, &moved).to_report_vector();
            let residual = (exact - j * step).norm() / step.norm();
            let limit = if i == 0 { 1e-3 } else { 1e-4 };
            assert!(
                residual < limit,
                "re-expression residual {residual} at step {h}"
            );
            let exact_change =
                MountDeviation::between(&about(&before, &step), &after).to_report_vector() - base;
            let residual_b = (exact_change - a_b * step).norm() / step.norm();
            let exact_change =
                MountDeviation::between(&before, &about(&after, &step)).to_report_vector() - base;
            let residual_a = (exact_change - a_a * step).norm() / step.norm();
            assert!(
                residual_b < limit && residual_a < limit,
                "{residual_b} {residual_a}"
            );
        }
    }

    #[test]
    fn small_deviations_keep_the_covariance() {
        let j = reexpress_jacobian(&Vector3::zeros());
        assert!((j - Matrix6::identity()).norm() < 1e-15);
        // E is the inverse of the rate Jacobian away from pitch ±90°, and finite at it.
        let angles = YawPitchRoll::new(0.4, -0.7, 1.1);
        let product = angles.rate_jacobian() * euler_rate_matrix(&angles);
        assert!((product - Matrix3::identity()).norm() < 1e-12);
        let j = reexpress_jacobian(&Vector3::new(10.0, 90.0, -5.0));
        assert!(j.iter().all(|v| v.is_finite()));
    }
}
