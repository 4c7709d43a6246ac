//! Named numerical tolerances and iteration limits, each with the reason for its value.
//!
//! Every threshold the estimation and statistics code compares against lives here, so a reader can
//! see in one place what "converged", "degenerate" or "behind the camera" means. Nothing here
//! computes; it only names numbers.

/// Smallest camera-frame depth (m) at which a point still projects. Anything closer sits on or
/// behind the pinhole plane, where the projection is undefined or flips sign.
pub const MIN_DEPTH_M: f64 = 1e-6;

/// Newton undistortion stops when a step moves the normalised point by less than this. In pixels
/// that is 1e-12 times the focal length, far below any keypoint detector's precision.
pub const UNDISTORT_STEP: f64 = 1e-14;

/// Iteration limit for Newton undistortion. Newton converges quadratically inside the valid radius,
/// so more than a couple of dozen iterations means the point lies outside it.
pub const UNDISTORT_MAX_ITER: usize = 40;

/// An undistorted point is accepted only if re-distorting it reproduces the input to this many
/// pixels. It guards against a Newton step that lands on a fold of the distortion polynomial.
pub const UNDISTORT_RESIDUAL_PX: f64 = 1e-6;

/// The radial distortion map must stay monotonic (derivative of distorted radius with respect to
/// undistorted radius above this) for a point to have a unique undistortion.
pub const MIN_RADIAL_SLOPE: f64 = 1e-6;

/// Levenberg-Marquardt iteration limit for one pose. A warm or closed-form start converges in
/// 3 to 6 iterations; hitting the limit is reported as a status.
pub const LM_MAX_ITER: usize = 50;

/// LM stops when the relative decrease of the weighted cost is below this.
pub const LM_COST_REL: f64 = 1e-12;

/// LM stops when the pose step (radians and metres) falls below this relative size.
pub const LM_STEP_REL: f64 = 1e-12;

/// Relative eigenvalue floor for a Fisher information matrix: directions whose information is
/// below this fraction of the largest are treated as unobservable (pseudo-inverse, reduced rank).
/// 1e-9 keeps double precision's ~1e-16 rounding far away while catching true collinearity.
pub const RANK_REL_EIG: f64 = 1e-9;

/// A pose whose information matrix has condition number above this is flagged ill-conditioned
/// (its covariance is still reported, but the flag warns that one direction is barely observed).
pub const ILL_CONDITIONED: f64 = 1e8;

/// Two planar minima whose weighted costs differ by less than this chi-square amount are
/// ambiguous: the data cannot tell them apart at about the 95% level (chi-square 1 dof, 3.84,
/// rounded up to 4; common practice for a likelihood-ratio test).
pub const AMBIGUITY_DELTA_CHI2: f64 = 4.0;

/// Iteration cap for solving the inverse of a continuous distribution function by bisection.
pub const QUANTILE_MAX_ITER: usize = 200;

/// Relative convergence of an upper-tail quantile solved on the survival function: 1e-14 is two
/// orders above double-precision rounding, the same accuracy statrs targets for its own quantiles.
pub const QUANTILE_REL: f64 = 1e-14;

/// A covariance eigenvalue below this fraction of the largest is an unobservable direction (the
/// pose solver's pseudo-inverse leaves an exact zero there, about 1e-16 after rounding), while an
/// observable direction of an information matrix just above `RANK_REL_EIG` (condition number up
/// to 1e9) still sits three orders of magnitude above it.
pub const COVARIANCE_RANK_REL: f64 = 1e-12;

/// A covariance may be asymmetric or have negative eigenvalues only by rounding: relative to its
/// largest entry or eigenvalue, more than this means the input is not a covariance at all.
pub const COVARIANCE_ASYMMETRY_REL: f64 = 1e-9;

/// Eigenvalues of a sum of information matrices below this fraction of the largest are treated
/// as zero (pseudo-inverse). Sums of rank-deficient matrices carry rounding of about 1e-16 times
/// their norm in the null directions; 1e-10 leaves a margin while keeping condition numbers of
/// 1e9 (the per-frame limit `RANK_REL_EIG`) observable.
pub const INFORMATION_SUM_RANK_REL: f64 = 1e-10;

/// An axis counts as observable in a segment when at most this fraction of its unit vector lies
/// outside the range of the segment's information matrix; otherwise its estimate and interval do
/// not exist (the direction is unobservable and any number would be arbitrary).
pub const AXIS_OBSERVABLE_RESIDUAL: f64 = 1e-6;

/// Two information matrices closer than this (relative Frobenius norm) are the same matrix, which
/// lets the change-point search use the plain squared-error cost after one common whitening
/// (identical in exact arithmetic; the difference is rounding).
pub const COMMON_INFORMATION_REL: f64 = 1e-9;
