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

/// Levenberg-Marquardt convergence: the refinement stops when the Gauss-Newton step from the
/// current pose has length `δᵀHδ` (chi-square units) below this, i.e. the optimum is within 1e-4
/// standard deviations, a thousandth of what the covariance can resolve.
pub const LM_STEP_CHI2: f64 = 1e-8;

/// Initial Marquardt damping, relative to the diagonal of the normal matrix, of every refinement
/// but the first one from a warm start (`LM_WARM_DAMPING`). Global starts are close enough that
/// nearly undamped Gauss-Newton steps are accepted at once.
pub const LM_INITIAL_DAMPING: f64 = 1e-3;

/// Initial damping of a refinement from the previous frame's pose. There the first
/// Gauss-Newton step is nearly exact; with `LM_INITIAL_DAMPING` the damping shortens it along
/// weakly observed directions and most warm refinements needed a third step. On the 100k demo
/// session, of about 330,000 refinements, those of two steps went from 42,000 to 136,000 and
/// those of three from 243,000 to 149,000.
pub const LM_WARM_DAMPING: f64 = 1e-6;

/// Damping is multiplied by this after a rejected step (Marquardt 1963 used 10).
pub const LM_DAMPING_UP: f64 = 10.0;

/// Damping is multiplied by this after an accepted step.
pub const LM_DAMPING_DOWN: f64 = 0.1;

/// Damping never drops below this (pure Gauss-Newton for practical purposes).
pub const LM_MIN_DAMPING: f64 = 1e-9;

/// Damping above this means no step lowers the cost: the refinement stops there.
pub const LM_MAX_DAMPING: f64 = 1e12;

/// Floor for the damped diagonal, relative to its largest entry, so that an unobservable
/// direction (zero information) still gets a finite, damped step.
pub const LM_DIAGONAL_FLOOR: f64 = 1e-12;

/// At most this many starts computed from all points are refined per frame (IPPE gives two, EPnP
/// its best hypothesis, each with its mirror), best first; refinement stops at the first that
/// fits every point.
pub const PNP_MAX_STARTS: usize = 4;

/// Observed model points whose RMS thickness off their best-fit plane is below this fraction of
/// their RMS length are treated as exactly planar (IPPE start only; EPnP's third control point
/// would be undetermined).
pub const PNP_PLANAR_REL: f64 = 1e-3;

/// Below this thickness-to-length ratio a point set is near-planar: both IPPE (on its best-fit
/// plane) and EPnP starts are tried and the one with the lower cost is refined first.
pub const PNP_NEAR_PLANAR_REL: f64 = 0.1;

/// Observed model points whose RMS spread is below this times (1 + distance of their centroid
/// from the model origin) coincide: only rounding separates them.
pub const PNP_COINCIDENT_REL: f64 = 1e-12;

/// Observed model points whose second principal extent is below this fraction of the first are
/// collinear: the rotation about their line carries less than 1e-10 of the information of the
/// other directions, beyond what double precision resolves after squaring.
pub const PNP_COLLINEAR_REL: f64 = 1e-5;

/// Rounds of "least squares over inliers, then re-gate at the new pose" before the inlier set
/// is taken as it stands. One or two suffice in practice.
pub const PNP_GATE_ROUNDS: usize = 5;

/// A warm start is rejected in favour of the global start if more than 1/this of the keypoints
/// fail the gate (a wrong basin shows up as many apparent outliers).
pub const WARM_MAX_OUTLIER_DIVISOR: usize = 4;

/// Gauss-Newton iterations on the EPnP betas. The paper's implementation uses 5; with 4 points
/// the linearised start leaves the fourth beta at 0 and 10 let it converge to rounding (the loop
/// stops as soon as a step vanishes).
pub const EPNP_BETA_ITER: usize = 10;

/// Two refined minima closer than this (chi-square units, `dᵀ I d` with I the information) are
/// the same minimum, not an ambiguity.
pub const MIRROR_SAME_CHI2: f64 = 1e-6;

/// The mirror minimum is examined when the target's relief off its best-fit plane projects to
/// fewer than this many standard deviations (always for planar targets). Beyond it a mirror
/// minimum, where one exists at all, fits far worse than the ambiguity threshold: its excess cost
/// grows as the square of the relief in standard deviations.
pub const MIRROR_RELIEF_SIGMA: f64 = 30.0;

/// The Gauss-Newton iteration on the EPnP betas stops once a step is below this fraction of the
/// betas: the result is only a start for the pixel-space refinement (and with exact data the
/// quadratic convergence leaves about the square of it).
pub const EPNP_BETA_STEP_REL: f64 = 1e-6;

/// EPnP's closed-form single-vector (N = 1) solution is taken as the start, without trying the
/// N = 2 and 3 hypotheses, when its RMS error on the normalised image is within this many pixel
/// standard deviations: the refinement cannot tell a better start from it.
pub const EPNP_ACCEPT_SIGMA: f64 = 3.0;

/// Jacobi eigen-decompositions that only feed a start (principal axes of the model points,
/// EPnP's null space, Horn's absolute orientation) stop at this relative off-diagonal size: the
/// directions come out accurate to about 1e-10 over their relative gap, far below what the
/// refinement then corrects.
pub const START_EIGEN_REL: f64 = 1e-10;

/// Relative off-diagonal tolerance of the Jacobi eigen-decomposition of a rank-deficient Fisher
/// information: the tolerance itself perturbs the eigenvalues by about its square, below rounding
/// and far inside `RANK_REL_EIG`.
pub const COVARIANCE_EIGEN_REL: f64 = 1e-13;

/// Shift (relative to the trace) that keeps EPnP's reduced 4x4 matrix positive definite for the
/// inverse iteration towards its smallest eigenvector; small enough not to move that vector.
pub const EPNP_INVERSE_SHIFT: f64 = 1e-13;

/// Inverse iterations for EPnP's null vector. The true depths are positive and alike, so the start
/// (equal depths) is already close, and each iteration shrinks the error by the eigenvalue ratio.
pub const EPNP_INVERSE_ITER: usize = 3;

/// Iteration limit of the Newton polar decomposition (Higham's scaled iteration converges in
/// fewer than 10 steps for any matrix a pose problem produces).
pub const POLAR_MAX_ITER: usize = 20;

/// The polar iteration stops when an update moves the (near-orthogonal) matrix by less than this
/// per unit column.
pub const POLAR_STEP: f64 = 1e-13;

/// When the best solution from all points leaves some point outside the gate, starts from
/// subsets (leave-one-out and random) are ranked by gated cost and this many are refined too.
pub const PNP_SUBSET_REFINED: usize = 3;

/// Random subsets tried when outliers are suspected. With 2 outliers among 16 points a random
/// 6-point subset is clean with probability 0.375, so 20 subsets all miss with probability
/// 0.625^20 ≈ 1e-4.
pub const PNP_RANDOM_SUBSETS: usize = 20;

/// Fixed seed of the subset sampler, so that a frame always gets the same answer.
pub const PNP_SUBSET_SEED: u64 = 0x6d6f_756e_7464_7269;

/// The Huber stage only has to reach the right basin before the gate: it stops once its step is
/// below this (about 0.01 standard deviations); least squares over the inliers then converges to
/// `LM_STEP_CHI2`.
pub const HUBER_STEP_CHI2: f64 = 1e-4;

/// Cost (chi-square units) of declaring a keypoint an outlier when comparing poses that keep
/// different inliers: −2 ln of the outlier density relative to the inlier Gaussian's
/// normalisation, 2 ln(A (1 − π) / (π 2π σ²)), which for a 1-megapixel image, σ = 1 px and an
/// outlier rate π between 1% and 10% is 29 to 34 (MLESAC, Torr and Zisserman, CVIU 78, 2000).
/// Above the gate threshold, so a pose does not win by gating out a point that merely fits badly.
pub const OUTLIER_COST_CHI2: f64 = 30.0;

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

/// Two camera intrinsics (focal lengths, principal point, skew, distortion coefficients) count
/// as the same when they differ by at most this fraction of the larger magnitude (at least 1):
/// the same calibration read back from text, not a recalibration, which moves them by 1e-4 or
/// more.
pub const CAMERA_SAME_REL: f64 = 1e-9;

/// A frame whose probe pose sits more than this many robust standard deviations (1.4826 × the
/// median absolute deviation of its neighbours) from its neighbours' median on some axis is a
/// gross pose error and is left out of a survey. For Gaussian noise, 10 sigma happens with
/// probability below 1e-22 per axis; a genuine step of the mount moves the neighbours' median
/// with it and is not flagged.
pub const GROSS_FRAME_ROBUST_SIGMA: f64 = 10.0;

/// Neighbours on each side of a frame in the gross-frame screen: 15 (a window of 31 solved
/// frames, about one second at 30 Hz) keeps the median and MAD of the window robust to several
/// bad frames while following a real mount step within half a window.
pub const GROSS_FRAME_HALF_WINDOW: usize = 15;

/// The change-point search skips a group of candidate starts when a lower bound on their totals
/// exceeds the best total found by more than this fraction of the magnitudes involved (costs of
/// the whole series, the bound, the best total). Costs from prefix sums carry rounding of about
/// 1e-16 of those magnitudes per operation; 1e-9 leaves a wide margin, so a start that could tie
/// in floating point is always evaluated, while the bound still rules out groups whose totals
/// are worse by a fraction of a penalty (the penalties are 10 or more cost units).
pub const PELT_BOUND_SLACK_REL: f64 = 1e-9;

/// A fit that gated points out is confirmed without the subset search only when each of them
/// lies at least this far out (squared whitened residual, 20 sigma): no pose that fits the
/// remaining points to their noise can take such a point in, so the full search could only
/// find the same minimum. Points just outside the 3.7-sigma gate go through the full search,
/// which may find a pose that keeps them. A choice of this library, checked by the audit giving
/// the same outlier count with and without the shortcut.
pub const PNP_CLEAR_OUTLIER_CHI2: f64 = 400.0;

/// Largest `tr(P) · tr(P⁻¹)` for which a covariance's pseudo-inverse is taken as its Cholesky
/// inverse (`stats::information`). The product bounds the condition number from above, and the
/// eigen path zeroes eigenvalues below `COVARIANCE_RANK_REL` (1e-12) of the largest; 1e10 keeps
/// a margin of 100 over that floor for the rounding of either computation.
pub const COVARIANCE_FAST_CONDITION: f64 = 1e10;

/// Largest product of the condition numbers of a frame's whitened information `Ω_t` and of the
/// noise inflation `Γ` for which the effective information is formed directly as
/// `Ω_t^{1/2} Γ⁻¹ Ω_t^{1/2}` (`stats::series`): the pseudo-inverse of `Ω_t^{-1/2} Γ Ω_t^{-1/2}`
/// keeps every eigenvalue above `INFORMATION_SUM_RANK_REL` (1e-10) of the largest as long as its
/// condition number, at most this product, stays below 1e10; 1e8 keeps a margin of 100.
pub const EFFECTIVE_FAST_CONDITION: f64 = 1e8;

/// A frame whose whitened information `Ω_t` has a condition number above this keeps its
/// information matrix when a long series releases the others (`stats::series`,
/// `EffectiveModel::detached`). Below it, the square of the stored root `Ω_t^{1/2}` gives back
/// `Ω_t` to about `cond · ε ≈ 2e-13` relative in its weakest direction (the eigen-decomposition
/// is backward stable: errors of a few `ε ‖Ω_t‖`), so the other frames' information is formed
/// from the root; at the 1e-12 level the results are the same.
pub const NOMINAL_FROM_ROOT_CONDITION: f64 = 1e3;
