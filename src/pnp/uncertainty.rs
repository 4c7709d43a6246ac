//! Pose uncertainty: the Fisher information `JᵀWJ` of the pixel observations, its rank-aware
//! pseudo-inverse (the Cramér-Rao bound, reached by the maximum-likelihood estimate as the noise
//! shrinks: Hartley and Zisserman, Multiple View Geometry, 2nd ed., ch. 5), conditioning, and a
//! quick chi-square quantile for fit checks.

use nalgebra::{Isometry3, Matrix6, Vector3, Vector6};

use super::linalg::{symmetric_eigen, tridiagonal_eigenvalues, Cholesky};

use super::pose::Pose;
use super::prepare::{Correspondence, PointGeometry};
use super::refine::{accumulate, Gate, Loss, Problem};
use crate::camera::Camera;
use crate::model::KeypointModel;
use crate::session::Observation;
use crate::tol;

/// Fisher information `Σ Jᵢᵀ Jᵢ / σᵢ²` of the observations at `pose` (`T_CO`), in the
/// left-perturbation tangent space (δθ, δt) of `PoseEstimate`. Its inverse at the true pose is the
/// Cramér-Rao bound. `None` when an observation names no model point, has a non-finite pixel or
/// sigma, or its model point is not in front of the camera.
pub fn fisher_information(
    camera: &Camera,
    model: &KeypointModel,
    obs: &[Observation],
    pose: &Isometry3<f64>,
) -> Option<Matrix6<f64>> {
    let mut pts = Vec::with_capacity(obs.len());
    for (i, o) in obs.iter().enumerate() {
        let ok = o.point < model.len()
            && o.px.iter().all(|c| c.is_finite())
            && o.sigma_px.is_finite()
            && o.sigma_px > 0.0;
        if !ok {
            return None;
        }
        pts.push(Correspondence {
            model_m: model.points()[o.point].xyz_m,
            px: o.px,
            inv_sigma: 1.0 / o.sigma_px,
            normalized: o.px,
            observation: i,
        });
    }
    let gate = Gate::from_options(&super::PnpOptions::default());
    let problem = Problem {
        camera,
        pts: &pts,
        gate: &gate,
    };
    let active = vec![true; pts.len()];
    accumulate(&problem, &active, Loss::Squared, &Pose::from_isometry(pose)).map(|n| n.h)
}

/// The Fisher information of each model point at one fixed pose, for unit pixel sigma: the
/// information of any set of those points seen with sigmas `σᵢ` at that pose is `Σ Aᵢ / σᵢ²`.
///
/// Weighting a frame by the information at its own estimate couples the weight to the frame's
/// noise: the weighted mean of many frames then carries a bias of second order in the noise
/// (the information rises where the estimate errs towards the camera). The information at a pose
/// fixed beforehand depends only on which points were seen and their sigmas, never on where the
/// noise put them.
#[derive(Debug, Clone, PartialEq)]
pub struct PointInformation {
    /// `Aᵢ`, or `None` where point `i` is not in front of the camera at the pose.
    per_point: Vec<Option<Matrix6<f64>>>,
    points_m: Vec<Vector3<f64>>,
}

impl PointInformation {
    /// Each point of `model` at `pose` (`T_CO`).
    pub fn at(camera: &Camera, model: &KeypointModel, pose: &Isometry3<f64>) -> Self {
        let per_point = (0..model.len())
            .map(|point| {
                let unit = Observation {
                    point,
                    px: nalgebra::Vector2::zeros(),
                    sigma_px: 1.0,
                };
                fisher_information(camera, model, &[unit], pose)
            })
            .collect();
        Self {
            per_point,
            points_m: model.points().iter().map(|p| p.xyz_m).collect(),
        }
    }

    /// The information of the observations flagged in `used` (parallel to `obs`) at the fixed
    /// pose, summarised as `solve_pose` summarises its own (rotations scaled by the RMS radius of
    /// the used points, so that the result depends on the used points and their sigmas alone).
    /// `None` when a used point names no model point, has no information at
    /// the pose, or has a sigma that is not positive and finite.
    pub fn summary(&self, obs: &[Observation], used: &[bool]) -> Option<CovarianceSummary> {
        let mut information = Matrix6::zeros();
        for (o, _) in obs.iter().zip(used).filter(|(_, &u)| u) {
            let a = self.per_point.get(o.point)?.as_ref()?;
            if !(o.sigma_px.is_finite() && o.sigma_px > 0.0) {
                return None;
            }
            information += a / (o.sigma_px * o.sigma_px);
        }
        let points = obs
            .iter()
            .zip(used)
            .filter(|(_, &u)| u)
            .filter_map(|(o, _)| self.points_m.get(o.point).copied());
        let length_m = PointGeometry::of(points).rms_radius_m();
        Some(CovarianceSummary::of(&information, length_m))
    }
}

/// Rank-aware pseudo-inverse of an information matrix and its conditioning.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CovarianceSummary {
    pub covariance: Matrix6<f64>,
    pub rank: usize,
    pub condition_number: Option<f64>,
    pub ill_conditioned: bool,
}

impl CovarianceSummary {
    /// Eigen-decomposes the information with rotations scaled by `length_m` (so that (L·δθ, δt)
    /// are both lengths and the rank decision does not depend on units), drops directions whose
    /// eigenvalue is below `tol::RANK_REL_EIG` of the largest, and inverts the rest:
    /// `Σ = D V_k Λ_k⁻¹ V_kᵀ D` with `D = diag(L, L, L, 1, 1, 1)`.
    pub fn of(information: &Matrix6<f64>, length_m: f64) -> Self {
        let length = if length_m.is_finite() && length_m > 0.0 {
            length_m
        } else {
            1.0
        };
        let d = Vector6::new(1.0 / length, 1.0 / length, 1.0 / length, 1.0, 1.0, 1.0);
        let scaled = Matrix6::from_fn(|i, j| information[(i, j)] * d[i] * d[j]);
        let values = tridiagonal_eigenvalues(&scaled);
        let (max, min) = (values.max(), values.min());
        let full_rank = max.is_finite() && max > 0.0 && min > tol::RANK_REL_EIG * max;
        // With every direction kept the pseudo-inverse is the inverse: a Cholesky solve is
        // cheaper and exact. Otherwise invert on the kept eigenvectors.
        let inverse = full_rank
            .then(|| Cholesky::new(&scaled).map(|c| c.inverse()))
            .flatten();
        let (cov_scaled, rank) = match inverse {
            Some(inv) => (inv, 6),
            None => pseudo_inverse(&scaled),
        };
        let covariance = Matrix6::from_fn(|i, j| cov_scaled[(i, j)] * d[i] * d[j]);
        let condition_number = (rank == 6).then(|| max / min);
        let ill_conditioned = condition_number.is_none_or(|c| c > tol::ILL_CONDITIONED);
        Self {
            covariance,
            rank,
            condition_number,
            ill_conditioned,
        }
    }
}

/// `V_k Λ_k⁻¹ V_kᵀ` over the eigen-directions above `tol::RANK_REL_EIG` of the largest.
fn pseudo_inverse(a: &Matrix6<f64>) -> (Matrix6<f64>, usize) {
    let (values, vectors) = symmetric_eigen(a, tol::COVARIANCE_EIGEN_REL);
    let max = values.max();
    let mut pinv = Matrix6::zeros();
    let mut rank = 0;
    if max.is_finite() && max > 0.0 {
        for k in 0..6 {
            let lam = values[k];
            if lam > tol::RANK_REL_EIG * max {
                let v = vectors.column(k);
                pinv += v * v.transpose() / lam;
                rank += 1;
            }
        }
    }
    (pinv, rank)
}

/// Whether `chi2` lies below the `p` quantile of a chi-square with `dof` degrees of freedom, by
/// the Wilson-Hilferty cube-root normal approximation (Wilson and Hilferty, PNAS 17, 1931),
/// accurate to about 1% at dof ≥ 2, plenty for a fit gate. With no degrees of freedom any fit
/// passes.
pub(crate) fn chi2_below_quantile(chi2: f64, dof: usize, p: f64) -> bool {
    if dof == 0 {
        return true;
    }
    let z = standard_normal_quantile(p.clamp(1e-12, 1.0 - 1e-12));
    let k = dof as f64;
    let a = 2.0 / (9.0 * k);
    let q = k * (1.0 - a + z * a.sqrt()).max(0.0).powi(3);
    chi2 <= q
}

fn standard_normal_quantile(p: f64) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    Normal::standard().inverse_cdf(p)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn wilson_hilferty_brackets_the_nist_quantiles() {
        // NIST/SEMATECH e-Handbook 1.3.6.7.4 (CHECK_VALUES.md section 1): chi2_6(0.999) = 22.458,
        // chi2_60(0.999) = 99.607; the approximation is within 1%.
        assert!(chi2_below_quantile(22.458 * 0.99, 6, 0.999));
        assert!(!chi2_below_quantile(22.458 * 1.01, 6, 0.999));
        assert!(chi2_below_quantile(99.607 * 0.995, 60, 0.999));
        assert!(!chi2_below_quantile(99.607 * 1.005, 60, 0.999));
    }

    #[test]
    fn pseudo_inverse_drops_the_null_direction() {
        // A diagonal information with one zero: rank 5, the inverse of the rest, ill-conditioned.
        let info = Matrix6::from_diagonal(&Vector6::new(4.0, 9.0, 0.0, 1.0, 2.0, 5.0));
        let s = CovarianceSummary::of(&info, 1.0);
        assert_eq!(s.rank, 5);
        assert!(s.ill_conditioned);
        assert_eq!(s.condition_number, None);
        let expect = Matrix6::from_diagonal(&Vector6::new(0.25, 1.0 / 9.0, 0.0, 1.0, 0.5, 0.2));
        assert_relative_eq!(s.covariance, expect, epsilon = 1e-12);
    }

    #[test]
    fn scaling_does_not_change_a_full_rank_inverse() {
        let a = Matrix6::from_fn(|i, j| ((i * 7 + j * 3) % 5) as f64 * 0.1);
        let info = a * a.transpose() + Matrix6::identity();
        let s = CovarianceSummary::of(&info, 0.37);
        assert_eq!(s.rank, 6);
        assert_relative_eq!(s.covariance, info.try_inverse().unwrap(), epsilon = 1e-10);
    }
}
