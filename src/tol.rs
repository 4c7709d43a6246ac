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

/// EXIF intrinsics: when the stored image's width and height scale the EXIF pixel dimensions
/// (PixelXDimension, PixelYDimension) by factors that differ by more than this fraction, the file
/// was cropped, rotated or resampled unevenly, so the focal-plane density no longer maps cleanly
/// to the stored pixels. A plain resize rounds each side to whole pixels, which stays well below
/// 1 % for images of 100 px or more.
pub const EXIF_SCALE_MISMATCH_REL: f64 = 0.01;

/// Simulator: a scenario range at or below this (m) counts as contact. Closing legs end exactly
/// at their target, so this only absorbs rounding in hand-written scenario values.
pub const SIM_CONTACT_RANGE_M: f64 = 1e-9;

/// Simulator: step of the scan for the radius where lens distortion folds over, in normalised
/// radius (pinhole) or radians off axis (fisheye). 1e-4 places the fold within 0.006° or better,
/// far finer than any keypoint's position matters there.
pub const SIM_FOLD_SCAN_STEP: f64 = 1e-4;
