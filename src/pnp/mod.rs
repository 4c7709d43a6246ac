//! Pose of a rigid keypoint model from its detections in one frame: a global start that needs no
//! prior, maximum-likelihood refinement on pixel reprojection error, rank-aware covariance,
//! goodness of fit, outlier handling and a status with a reason when a frame cannot be solved.
//!
//! Method: the keypoints are undistorted with the camera model; a global start comes from EPnP
//! (Lepetit, Moreno-Noguer and Fua, IJCV 81(2), 2009) for non-planar point sets and from IPPE
//! (Collins and Bartoli, IJCV 109(3), 2014), which gives both planar solutions, for (near-)coplanar
//! ones; a warm start from the previous frame is tried first when given. Levenberg-Marquardt then
//! minimises the sigma-weighted pixel reprojection error through the full distortion model, first
//! with a Huber loss when some points do not fit, then by least squares over the points that pass a
//! chi-square (2 dof) gate evaluated at the final pose. When points fail the gate, starts from
//! subsets that leave them out (leave-one-out and seeded random subsets) compete, scored as in
//! MLESAC (Torr and Zisserman, CVIU 78, 2000); when the gated points lie far out, a start from the
//! points that pass is tried first, and landing on the same minimum ends the search. The
//! covariance is the rank-aware pseudo-inverse of the Fisher information at the optimum. For
//! coplanar or weakly-perspective targets the mirror (Necker) minimum is refined too and reported
//! with its chi-square difference.
//! Nothing here panics on input or returns NaN: a frame that cannot be solved is a `Rejection`.

mod ambiguity;
mod epnp;
mod linalg;
mod planar;
mod pose;
mod prepare;
mod refine;
mod start;
mod uncertainty;

use nalgebra::{Isometry3, Matrix6};

use crate::camera::Camera;
use crate::model::KeypointModel;
use crate::session::Observation;
use crate::tol;

use pose::Pose;
use prepare::PointGeometry;
use refine::{Gate, Solution};

pub use uncertainty::{fisher_information, CovarianceSummary, PointInformation};

/// A solved pose with its uncertainty.
///
/// `pose` is `T_CO` (object model frame O to camera C): `x_C = R x_O + t`.
/// The covariance lives in the camera-frame tangent space of a left perturbation:
/// `R = exp([δθ]x) R̂`, `t = t̂ + δt`, parameters ordered (δθx, δθy, δθz, δtx, δty, δtz)
/// in radians and metres.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
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
    /// Ratio of the largest to the smallest eigenvalue of the information, with rotations scaled
    /// by the RMS radius of the inlier model points so that the ratio does not depend on units;
    /// `None` when a direction is unobservable (`rank < 6`).
    pub condition_number: Option<f64>,
    /// Some direction is barely or not observable: `rank < 6` or the condition number exceeds
    /// `tol::ILL_CONDITIONED`. The covariance is still right; the flag says it is elongated.
    pub ill_conditioned: bool,
    /// The second local minimum (planar two-fold or Necker reversal), when one was examined
    /// and found distinct from `pose`.
    pub ambiguity: Option<Ambiguity>,
    /// The data cannot tell `pose` from `ambiguity.alternative` (their chi-square costs differ by
    /// less than `PnpOptions::ambiguity_delta_chi2`).
    pub ambiguous: bool,
    /// Where the refinement started.
    pub start: PoseStart,
    /// Levenberg-Marquardt iterations spent on the accepted solution.
    pub iterations: usize,
}

impl PoseEstimate {
    /// Builds an estimate from a pose and its Fisher information alone (rank, covariance and
    /// conditioning derived as in `solve_pose`), e.g. for poses computed elsewhere or in tests.
    /// `length_m` is the characteristic size of the model (RMS radius of its points).
    pub fn from_information(
        pose: Isometry3<f64>,
        information: Matrix6<f64>,
        length_m: f64,
        chi2: f64,
        inliers: Vec<bool>,
    ) -> Self {
        let summary = CovarianceSummary::of(&information, length_m);
        let used = inliers.iter().filter(|&&b| b).count();
        Self {
            pose,
            information,
            covariance: summary.covariance,
            rank: summary.rank,
            chi2,
            dof: (2 * used).saturating_sub(summary.rank),
            inliers,
            condition_number: summary.condition_number,
            ill_conditioned: summary.ill_conditioned,
            ambiguity: None,
            ambiguous: false,
            start: PoseStart::Given,
            iterations: 0,
        }
    }

    /// Pixel-noise scale estimated from the fit, `√(chi2 / dof)`: about 1 when the stated
    /// `sigma_px` is right. `None` without degrees of freedom.
    pub fn sigma_scale(&self) -> Option<f64> {
        (self.dof > 0).then(|| (self.chi2 / self.dof as f64).sqrt())
    }
}

/// The other local minimum of an ambiguous (planar or weak-perspective) pose problem.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Ambiguity {
    /// The alternative pose `T_CO`, refined to its own minimum over the same inliers.
    pub alternative: Isometry3<f64>,
    /// Its chi-square over the reported pose's inliers.
    pub alternative_chi2: f64,
    /// How much worse the alternative fits (≥ 0): `alternative_chi2 − chi2`, a likelihood-ratio
    /// statistic between the two minima.
    pub delta_chi2: f64,
}

/// Which start the accepted refinement came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PoseStart {
    /// The caller's warm start (previous frame).
    Warm,
    /// EPnP (non-planar global start).
    Epnp,
    /// IPPE (planar global start), either of its two solutions.
    Planar,
    /// The mirror of another minimum, which turned out to fit better.
    Mirror,
    /// Not solved here (`PoseEstimate::from_information`).
    Given,
}

/// Settings of the pose solver.
#[derive(Debug, Clone, PartialEq)]
pub struct PnpOptions {
    /// Probability of the chi-square (2 dof) inlier gate on each point's whitened residual:
    /// 0.999 keeps points with `r² ≤ −2 ln(1 − p) = 13.8155`, i.e. within 3.72 sigma.
    pub inlier_probability: f64,
    /// Huber threshold (sigma units, on the norm of a point's whitened 2-D residual) of the
    /// robust stage that runs when some point fails the gate. 2.0 is common practice.
    pub huber_sigma: f64,
    /// Levenberg-Marquardt iteration limit per refinement.
    pub max_iterations: usize,
    /// A frame is rejected when fewer than this fraction of its usable keypoints are inliers.
    pub min_inlier_fraction: f64,
    /// A warm start is kept when its chi-square lies below this quantile of its distribution;
    /// otherwise the global start is used.
    pub warm_fit_probability: f64,
    /// The two minima are called ambiguous when their costs differ by less than this.
    pub ambiguity_delta_chi2: f64,
}

impl Default for PnpOptions {
    fn default() -> Self {
        Self {
            inlier_probability: 0.999,
            huber_sigma: 2.0,
            max_iterations: tol::LM_MAX_ITER,
            min_inlier_fraction: 0.5,
            warm_fit_probability: 0.999,
            ambiguity_delta_chi2: tol::AMBIGUITY_DELTA_CHI2,
        }
    }
}

/// Why settings of the pose solver were refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PnpOptionsError {
    #[error("{name} must be a probability strictly between 0 and 1 (got {value})")]
    Probability { name: &'static str, value: f64 },
    #[error("{name} must be a positive finite number (got {value})")]
    NonPositive { name: &'static str, value: f64 },
    #[error("min_inlier_fraction must lie in [0, 1] (got {0})")]
    Fraction(f64),
    #[error("max_iterations must be at least 1")]
    NoIterations,
}

impl PnpOptions {
    /// Checks every setting; `solve_pose` clamps nonsense values, but callers taking settings
    /// from users should report them with this.
    pub fn validate(&self) -> Result<(), PnpOptionsError> {
        for (name, value) in [
            ("inlier_probability", self.inlier_probability),
            ("warm_fit_probability", self.warm_fit_probability),
        ] {
            if !(value > 0.0 && value < 1.0) {
                return Err(PnpOptionsError::Probability { name, value });
            }
        }
        for (name, value) in [
            ("huber_sigma", self.huber_sigma),
            ("ambiguity_delta_chi2", self.ambiguity_delta_chi2),
        ] {
            if !(value.is_finite() && value > 0.0) {
                return Err(PnpOptionsError::NonPositive { name, value });
            }
        }
        if !(0.0..=1.0).contains(&self.min_inlier_fraction) {
            return Err(PnpOptionsError::Fraction(self.min_inlier_fraction));
        }
        if self.max_iterations == 0 {
            return Err(PnpOptionsError::NoIterations);
        }
        Ok(())
    }
}

/// Outcome of one pose solve: a value either way.
#[derive(Debug, Clone, PartialEq)]
// The status is built once per frame and moved, never stored in bulk; boxing the estimate
// would only add an allocation to the hot path.
#[allow(clippy::large_enum_variant)]
pub enum PoseStatus {
    Solved(PoseEstimate),
    Rejected(Rejection),
}

impl PoseStatus {
    pub fn estimate(&self) -> Option<&PoseEstimate> {
        match self {
            PoseStatus::Solved(e) => Some(e),
            PoseStatus::Rejected(_) => None,
        }
    }

    pub fn rejection(&self) -> Option<&Rejection> {
        match self {
            PoseStatus::Solved(_) => None,
            PoseStatus::Rejected(r) => Some(r),
        }
    }
}

/// Why a frame could not be solved.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RejectionReason {
    /// Fewer than 4 keypoints.
    TooFewPoints,
    /// A keypoint names no model point, or has a non-finite pixel or a non-positive sigma.
    InvalidObservation,
    /// So many keypoints could not be undistorted that fewer than 4 remain.
    UndistortionFailed,
    /// The observed model points are coincident or collinear, or too few in general position.
    DegenerateGeometry,
    /// No refinement converged.
    NotConverged,
    /// No pose puts the observed points in front of the camera.
    BehindCamera,
    /// Too few keypoints agree with the best pose.
    TooManyOutliers,
}

/// A rejected frame: the reason and a message a person understands.
#[derive(Debug, Clone, PartialEq, thiserror::Error, serde::Serialize)]
#[error("{message}")]
pub struct Rejection {
    pub reason: RejectionReason,
    pub message: String,
}

impl Rejection {
    pub(crate) fn new(reason: RejectionReason, message: impl Into<String>) -> Self {
        Self {
            reason,
            message: message.into(),
        }
    }
}

/// Solves the pose `T_CO` of `model` from its keypoints `obs` (each naming its model point) to the
/// maximum-likelihood optimum of the sigma-weighted pixel reprojection error, with covariance,
/// chi-square fit, inliers and ambiguity. `warm_start` (the previous frame's pose) is used when it
/// converges to a good fit of every keypoint; a warm fit that gates keypoints out competes with
/// the global search; otherwise the global start (EPnP or IPPE) is used.
pub fn solve_pose(
    camera: &Camera,
    model: &KeypointModel,
    obs: &[Observation],
    warm_start: Option<&Isometry3<f64>>,
    options: &PnpOptions,
) -> PoseStatus {
    match solve(camera, model, obs, warm_start, options) {
        Ok(estimate) => PoseStatus::Solved(estimate),
        Err(rejection) => PoseStatus::Rejected(rejection),
    }
}

fn solve(
    camera: &Camera,
    model: &KeypointModel,
    obs: &[Observation],
    warm_start: Option<&Isometry3<f64>>,
    options: &PnpOptions,
) -> Result<PoseEstimate, Rejection> {
    let mut pts = prepare::gather(model, obs)?;
    let gate = Gate::from_options(options);
    // A warm start that fits every point is final; one that gates points out competes with the
    // global search, which may find a pose that explains more of them.
    let mut warm_fit = None;
    if let Some(warm) = warm_start {
        let geometry = PointGeometry::of(pts.iter().map(|c| c.model_m));
        geometry.check()?;
        let problem = refine::Problem {
            camera,
            pts: &pts,
            gate: &gate,
        };
        match try_warm(&problem, warm, options) {
            Some(s) if s.inlier_count() == pts.len() => {
                return conclude(&problem, &geometry, s, obs.len(), options);
            }
            other => warm_fit = other,
        }
    }
    let gathered = pts.len();
    prepare::undistort_all(camera, &mut pts)?;
    // A keypoint that undistortion dropped shifts the indices the warm fit's inliers refer to:
    // then only its pose carries over, refined again on the points left.
    let (warm_fit, warm_pose) = match warm_fit {
        Some(s) if pts.len() != gathered => (None, Some(s.pose)),
        other => (other, None),
    };
    let geometry = PointGeometry::of(pts.iter().map(|c| c.model_m));
    geometry.check()?;
    let problem = refine::Problem {
        camera,
        pts: &pts,
        gate: &gate,
    };
    // A warm fit that gated a few points out is final when a start from its inliers alone
    // lands on it again (try_warm already checked its fit and how many points it lost). Not for
    // a weakly seen relief: there the warm fit may sit in the mirror basin, which only the
    // mirror starts of the global search reach.
    let confirmed = warm_fit
        .as_ref()
        .filter(|s| !ambiguity::relief_is_weak(&problem, &geometry, &s.pose))
        .and_then(|s| confirm_leaving_out(&problem, s));
    if let Some(s) = confirmed {
        return conclude(&problem, &geometry, s, obs.len(), options);
    }
    let solution = global_solution(&problem, &geometry, warm_fit, warm_pose, options)?;
    conclude(&problem, &geometry, solution, obs.len(), options)
}

/// Examines the mirror minimum, checks the inlier count and assembles the estimate.
fn conclude(
    problem: &refine::Problem,
    geometry: &PointGeometry,
    mut solution: Solution,
    n_obs: usize,
    options: &PnpOptions,
) -> Result<PoseEstimate, Rejection> {
    let alternative = ambiguity::examine(problem, geometry, &mut solution);
    check_inliers(&solution, problem.pts.len(), options)?;
    Ok(build_estimate(
        problem,
        geometry,
        solution,
        alternative,
        n_obs,
        options,
    ))
}

/// Refines from the warm start; keeps it only if it converged to a fit that passes the
/// chi-square test and lost few points to the gate.
fn try_warm(
    problem: &refine::Problem,
    warm: &Isometry3<f64>,
    options: &PnpOptions,
) -> Option<Solution> {
    if !warm.translation.vector.iter().all(|c| c.is_finite())
        || !warm.rotation.coords.iter().all(|c| c.is_finite())
    {
        return None;
    }
    let mut s = refine::robust_solve(problem, Pose::from_isometry(warm), PoseStart::Warm)?;
    fit_passes(&s, problem.pts.len(), options).then(|| {
        s.start = PoseStart::Warm;
        s
    })
}

/// Tries the global starts in order of their initial cost (after the refined warm pose, if any)
/// and keeps the best refined solution; stops at the first that converges with every point an
/// inlier. If none does, the mirrors of the starts are tried, then starts from subsets. The warm
/// fit, when there is one, is the first best (it is already refined); a bare warm pose is
/// refined first.
fn global_solution(
    problem: &refine::Problem,
    geometry: &PointGeometry,
    warm_fit: Option<Solution>,
    warm_pose: Option<Pose>,
    options: &PnpOptions,
) -> Result<Solution, Rejection> {
    let n = problem.pts.len();
    let any_warm = warm_fit.is_some() || warm_pose.is_some();
    let mut search = Search {
        best: warm_fit
            .or_else(|| warm_pose.and_then(|p| refine::robust_solve(problem, p, PoseStart::Warm))),
        any_start: any_warm,
        any_in_front: false,
    };
    search.any_in_front = search.best.is_some();
    let starts = start::global_starts(problem, geometry);
    for &(pose, kind) in starts.iter().take(tol::PNP_MAX_STARTS) {
        if search.try_start(problem, pose, kind, n) {
            return search.finish();
        }
    }
    for (pose, kind) in start::mirror_starts(problem, geometry, &starts) {
        if search.try_start(problem, pose, kind, n) {
            return search.finish();
        }
    }
    // The best start (or mirror) gated a few points out and fits the rest well: a start from
    // its inliers alone that lands on it again confirms it, as a subset start would below.
    if let Some(best) = search.best.as_ref().filter(|s| fit_passes(s, n, options)) {
        if let Some(s) = confirm_leaving_out(problem, best) {
            return Ok(s);
        }
    }
    // Outliers can drag every start computed from all points into a wrong basin: retry from
    // starts computed on subsets that leave them out.
    for (pose, kind) in start::subset_starts(problem) {
        search.any_start = true;
        search.any_in_front |= refine::all_in_front(problem, &pose);
        if let Some(s) = refine::robust_solve_with_outliers(problem, pose, kind, 0) {
            // A subset start that lands on the same inliers and cost confirms the best.
            let confirms = search.best.as_ref().is_some_and(|b| same_minimum(b, &s));
            keep_better(&mut search.best, s);
            if confirms {
                break;
            }
        }
    }
    search.finish()
}

/// Two refinements reached the same minimum: the same inliers and the same gated cost.
fn same_minimum(a: &Solution, b: &Solution) -> bool {
    a.inliers == b.inliers && (a.gated_cost - b.gated_cost).abs() <= 1e-9 * (1.0 + a.gated_cost)
}

/// A converged solution that lost at most a `tol::WARM_MAX_OUTLIER_DIVISOR`-th of the points to
/// the gate, with an inlier chi-square below the `warm_fit_probability` quantile.
fn fit_passes(s: &Solution, n: usize, options: &PnpOptions) -> bool {
    s.converged
        && n - s.inlier_count() <= n / tol::WARM_MAX_OUTLIER_DIVISOR
        && uncertainty::chi2_below_quantile(
            s.normal.cost,
            (2 * s.inlier_count()).saturating_sub(6),
            options.warm_fit_probability,
        )
}

/// The cheap outlier path, for a solution whose gated points all lie far out
/// (`tol::PNP_CLEAR_OUTLIER_CHI2`): starts computed from its inliers alone (the flagged points
/// left out, no prior) refined over all points as the subset starts are. The first that
/// lands on the same minimum confirms `s`; the better of the two is returned. `None` when none
/// does, and the full search decides.
fn confirm_leaving_out(problem: &refine::Problem, s: &Solution) -> Option<Solution> {
    let clear_outliers = problem.pts.iter().zip(&s.inliers).all(|(c, &inlier)| {
        inlier
            || refine::squared_residual(problem, c, &s.pose)
                .is_none_or(|sq| sq >= tol::PNP_CLEAR_OUTLIER_CHI2)
    });
    if s.inlier_count() == problem.pts.len() || !clear_outliers {
        return None;
    }
    start::inlier_starts(problem, &s.inliers)
        .into_iter()
        .filter_map(|(pose, kind)| refine::robust_solve_with_outliers(problem, pose, kind, 0))
        .find(|c| same_minimum(s, c))
        .map(|c| if c.better_than(s) { c } else { s.clone() })
}

/// State of the global search: the best solution so far and what the starts showed.
struct Search {
    best: Option<Solution>,
    any_start: bool,
    any_in_front: bool,
}

impl Search {
    /// Refines one start; true once the best solution converged with every point an inlier.
    fn try_start(
        &mut self,
        problem: &refine::Problem,
        pose: Pose,
        kind: PoseStart,
        n: usize,
    ) -> bool {
        self.any_start = true;
        self.any_in_front |= refine::all_in_front(problem, &pose);
        if let Some(s) = refine::robust_solve(problem, pose, kind) {
            keep_better(&mut self.best, s);
        }
        self.best
            .as_ref()
            .is_some_and(|s| s.converged && s.inlier_count() == n)
    }

    fn finish(self) -> Result<Solution, Rejection> {
        match self.best {
            None if !self.any_start => Err(Rejection::new(
                RejectionReason::DegenerateGeometry,
                "no start pose could be computed: the observed model points are in a degenerate \
                 configuration (for 4 coplanar points, three of them are collinear)",
            )),
            Some(s) if s.converged => Ok(s),
            Some(s) => Err(Rejection::new(
                RejectionReason::NotConverged,
                format!(
                    "the pose refinement did not converge within {} iterations",
                    s.iterations
                ),
            )),
            None if !self.any_in_front => Err(Rejection::new(
                RejectionReason::BehindCamera,
                "no start pose puts the observed model points in front of the camera",
            )),
            None => Err(Rejection::new(
                RejectionReason::TooManyOutliers,
                "no start led to a pose that fits at least 4 keypoints",
            )),
        }
    }
}

fn keep_better(best: &mut Option<Solution>, s: Solution) {
    if best.as_ref().is_none_or(|b| s.better_than(b)) {
        *best = Some(s);
    }
}

fn check_inliers(s: &Solution, usable: usize, options: &PnpOptions) -> Result<(), Rejection> {
    let inliers = s.inlier_count();
    let needed =
        ((options.min_inlier_fraction.clamp(0.0, 1.0) * usable as f64).ceil() as usize).max(4);
    if inliers < needed {
        return Err(Rejection::new(
            RejectionReason::TooManyOutliers,
            format!(
                "only {inliers} of {usable} usable keypoints agree with the best pose \
                 (need {needed})"
            ),
        ));
    }
    Ok(())
}

fn build_estimate(
    problem: &refine::Problem,
    geometry: &PointGeometry,
    solution: Solution,
    alternative: Option<ambiguity::Alternative>,
    n_obs: usize,
    options: &PnpOptions,
) -> PoseEstimate {
    let summary = CovarianceSummary::of(&solution.normal.h, geometry.rms_radius_m());
    let mut inliers = vec![false; n_obs];
    for (c, &keep) in problem.pts.iter().zip(&solution.inliers) {
        inliers[c.observation] = keep;
    }
    let used = solution.inlier_count();
    let ambiguity = alternative.map(|a| Ambiguity {
        alternative: a.pose.to_isometry(),
        alternative_chi2: a.chi2,
        delta_chi2: (a.chi2 - solution.normal.cost).max(0.0),
    });
    let ambiguous = ambiguity
        .as_ref()
        .is_some_and(|a| a.delta_chi2 < options.ambiguity_delta_chi2);
    PoseEstimate {
        pose: solution.pose.to_isometry(),
        information: solution.normal.h,
        covariance: summary.covariance,
        rank: summary.rank,
        chi2: solution.normal.cost,
        dof: (2 * used).saturating_sub(summary.rank),
        inliers,
        condition_number: summary.condition_number,
        ill_conditioned: summary.ill_conditioned,
        ambiguity,
        ambiguous,
        start: solution.start,
        iterations: solution.iterations,
    }
}
