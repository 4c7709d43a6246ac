//! The internal pose type of the solver (`x_C = R x_O + t` as a plain rotation matrix and
//! translation) and its left perturbation `R = exp([δθ]x) R̂`, `t = t̂ + δt`.

use nalgebra::{Isometry3, Matrix3, Rotation3, Translation3, UnitQuaternion, Vector3, Vector6};

/// `T_CO` as a rotation matrix and a translation, cheap to apply and perturb.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Pose {
    pub(crate) r: Matrix3<f64>,
    pub(crate) t: Vector3<f64>,
}

impl Pose {
    pub(crate) fn from_isometry(iso: &Isometry3<f64>) -> Self {
        Self {
            r: iso.rotation.to_rotation_matrix().into_inner(),
            t: iso.translation.vector,
        }
    }

    /// The pose as an isometry; the rotation is re-orthonormalised through the quaternion.
    pub(crate) fn to_isometry(self) -> Isometry3<f64> {
        let rot = Rotation3::from_matrix_unchecked(self.r);
        Isometry3::from_parts(
            Translation3::from(self.t),
            UnitQuaternion::from_rotation_matrix(&rot),
        )
    }

    pub(crate) fn transform(&self, p: &Vector3<f64>) -> Vector3<f64> {
        self.r * p + self.t
    }

    /// Left perturbation by (δθ, δt): `R' = exp([δθ]x) R`, `t' = t + δt`.
    pub(crate) fn perturbed(&self, d: &Vector6<f64>) -> Self {
        let w = Vector3::new(d[0], d[1], d[2]);
        Self {
            r: Rotation3::new(w).into_inner() * self.r,
            t: self.t + Vector3::new(d[3], d[4], d[5]),
        }
    }

    /// Tangent vector (δθ, δt) that takes `reference` to `self` by a left perturbation:
    /// `δθ = log(R Rrefᵀ)`, `δt = t − t_ref`.
    pub(crate) fn minus(&self, reference: &Pose) -> Vector6<f64> {
        let w = log_so3(&(self.r * reference.r.transpose()));
        let dt = self.t - reference.t;
        Vector6::new(w.x, w.y, w.z, dt.x, dt.y, dt.z)
    }

    pub(crate) fn is_finite(&self) -> bool {
        self.r.iter().chain(self.t.iter()).all(|c| c.is_finite())
    }
}

/// Rotation vector of a rotation matrix, accurate at small angles: with v the axial part
/// (R − Rᵀ)/2 = sin θ · axis and cos θ = (tr R − 1)/2, θ = atan2(|v|, cos θ) and w = θ v / |v|.
/// Near θ = π, where v vanishes, the quaternion route is used instead.
pub(crate) fn log_so3(r: &Matrix3<f64>) -> Vector3<f64> {
    let v = Vector3::new(
        r[(2, 1)] - r[(1, 2)],
        r[(0, 2)] - r[(2, 0)],
        r[(1, 0)] - r[(0, 1)],
    ) * 0.5;
    let cos = ((r.trace() - 1.0) * 0.5).clamp(-1.0, 1.0);
    let sin = v.norm();
    if cos < -0.9 {
        let q = UnitQuaternion::from_rotation_matrix(&Rotation3::from_matrix_unchecked(*r));
        return q.scaled_axis();
    }
    let theta = sin.atan2(cos);
    // θ / sin θ → 1 + θ²/6 as θ → 0.
    let scale = if sin < 1e-8 {
        1.0 + theta * theta / 6.0
    } else {
        theta / sin
    };
    v * scale
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn perturbation_and_difference_are_inverse() {
        // Definition of the left perturbation (the PoseEstimate covariance convention).
        let p = Pose {
            r: Rotation3::new(Vector3::new(0.1, -0.2, 0.3)).into_inner(),
            t: Vector3::new(0.05, -0.1, 4.0),
        };
        let d = Vector6::new(1e-3, -2e-3, 5e-4, 0.01, 0.02, -0.03);
        assert_relative_eq!(p.perturbed(&d).minus(&p), d, epsilon = 1e-14);
        let big = Vector3::new(3.0, -0.5, 0.2) / Vector3::new(3.0, -0.5, 0.2).norm() * 3.1;
        assert_relative_eq!(
            log_so3(&Rotation3::new(big).into_inner()),
            big,
            epsilon = 1e-12
        );
        let tiny = Vector3::new(1e-10, -3e-11, 2e-12);
        assert_relative_eq!(
            log_so3(&Rotation3::new(tiny).into_inner()),
            tiny,
            epsilon = 1e-24
        );
        let back = Pose::from_isometry(&p.to_isometry());
        assert_relative_eq!(back.r, p.r, epsilon = 1e-14);
    }
}
