//! Pose of a rigid keypoint model from its detections in one frame: a global start that needs no
//! prior, maximum-likelihood refinement on pixel reprojection error, rank-aware covariance,
//! goodness of fit, outlier handling and a status with a reason when a frame cannot be solved.

use nalgebra::{Isometry3, Matrix6};

/// A solved pose with its uncertainty.
///
/// `pose` is `T_CO` (object model frame O to camera C): `x_C = R x_O + t`.
/// The covariance lives in the camera-frame tangent space of a left perturbation:
/// `R = exp([δθ]x) R̂`, `t = t̂ + δt`, parameters ordered (δθx, δθy, δθz, δtx, δty, δtz)
/// in radians and metres.
#[derive(Debug, Clone, PartialEq)]
pub struct PoseEstimate {
    pub pose: Isometry3<f64>,
    /// Fisher information `Jᵀ W J` at the optimum (W = diag(1/σ²) over inlier coordinates).
    pub information: Matrix6<f64>,
    /// Pseudo-inverse of `information`, with directions below `tol::RANK_REL_EIG` dropped.
    pub covariance: Matrix6<f64>,
    /// Number of observable directions (6 for a well-posed solve).
    pub rank: usize,
    /// Weighted sum of squared reprojection residuals over inliers.
    pub chi2: f64,
    /// Degrees of freedom of `chi2`: 2 · inliers − 6 (rank-aware: 2 · inliers − rank).
    pub dof: usize,
    /// Per observation (same order as given): kept as an inlier.
    pub inliers: Vec<bool>,
}
