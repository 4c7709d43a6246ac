//! Maximum-likelihood pose refinement: Levenberg-Marquardt (Marquardt's diagonal damping) on the
//! sigma-whitened pixel reprojection error through the full camera model, in the left-perturbation
//! tangent space; a Huber-loss stage (iteratively reweighted) when some point fails the gate, and
//! least squares over the points inside a chi-square (2 dof) gate recomputed at the final pose.

use nalgebra::{Matrix6, Vector2, Vector3, Vector6};

use super::linalg::cholesky_solve;

use super::pose::Pose;
use super::prepare::Correspondence;
use super::{PnpOptions, PoseStart};
use crate::camera::Camera;
use crate::tol;

/// Everything a refinement needs about one frame.
pub(crate) struct Problem<'a> {
    pub(crate) camera: &'a Camera,
    pub(crate) pts: &'a [Correspondence],
    pub(crate) gate: &'a Gate,
}

impl Problem<'_> {
    /// Mean squared error on the normalised image plane that a start matching the data to
    /// `tol::EPNP_ACCEPT_SIGMA` standard deviations would leave: k² · 2 σ̄² / (fx fy).
    pub(crate) fn noise_floor(&self) -> f64 {
        let n = self.pts.len() as f64;
        let mean_var: f64 = self
            .pts
            .iter()
            .map(|c| 1.0 / (c.inv_sigma * c.inv_sigma))
            .sum::<f64>()
            / n;
        let k = tol::EPNP_ACCEPT_SIGMA;
        k * k * 2.0 * mean_var / (self.camera.fx * self.camera.fy)
    }
}

/// Inlier gate and robust-loss settings derived from the options.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Gate {
    /// Chi-square (2 dof) threshold on a point's squared whitened residual: `−2 ln(1 − p)`.
    pub(crate) threshold: f64,
    pub(crate) huber_sigma: f64,
    pub(crate) max_iterations: usize,
}

impl Gate {
    pub(crate) fn from_options(o: &PnpOptions) -> Self {
        // Chi-square with 2 dof is exponential: P(X ≤ x) = 1 − exp(−x/2).
        let p = if o.inlier_probability > 0.0 && o.inlier_probability < 1.0 {
            o.inlier_probability
        } else {
            PnpOptions::default().inlier_probability
        };
        let huber = if o.huber_sigma.is_finite() && o.huber_sigma > 0.0 {
            o.huber_sigma
        } else {
            PnpOptions::default().huber_sigma
        };
        Self {
            threshold: -2.0 * (1.0 - p).ln(),
            huber_sigma: huber,
            max_iterations: o.max_iterations.max(1),
        }
    }
}

/// Loss applied to each point's squared whitened residual `s = |r|²`.
#[derive(Debug, Clone, Copy)]
pub(crate) enum Loss {
    Squared,
    /// ρ(s) = s for √s ≤ k, else 2k√s − k² (Huber 1964, on the residual norm).
    Huber(f64),
}

impl Loss {
    /// (ρ(s), ρ'(s)): the cost and the iteratively-reweighted least-squares weight.
    fn eval(self, s: f64) -> (f64, f64) {
        match self {
            Loss::Squared => (s, 1.0),
            Loss::Huber(k) => {
                if s <= k * k {
                    (s, 1.0)
                } else {
                    let norm = s.sqrt();
                    (2.0 * k * norm - k * k, k / norm)
                }
            }
        }
    }
}

/// Normal equations of the (reweighted) problem at one pose: `h = Σ w JᵀJ`, `g = Σ w Jᵀ r`,
/// `cost = Σ ρ(|r|²)`. With the squared loss over inliers, `h` is the Fisher information.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Normal {
    pub(crate) h: Matrix6<f64>,
    pub(crate) g: Vector6<f64>,
    pub(crate) cost: f64,
    /// Largest squared whitened residual of a point (decides the gate without another pass).
    pub(crate) max_sq: f64,
}

/// Whitened residual and its 2x6 Jacobian rows for one point, or `None` behind the camera.
/// With `p_C = R p + t`: `d p_C / d δθ = −[R p]x`, `d p_C / d δt = I`.
#[inline]
fn point_rows(
    camera: &Camera,
    c: &Correspondence,
    pose: &Pose,
) -> Option<(Vector2<f64>, Vector6<f64>, Vector6<f64>)> {
    let rp = pose.r * c.model_m;
    let (px, jp) = camera.project_with_jacobian(&(rp + pose.t))?;
    let r = (px - c.px) * c.inv_sigma;
    let a0 = Vector3::new(jp[(0, 0)], jp[(0, 1)], jp[(0, 2)]) * c.inv_sigma;
    let a1 = Vector3::new(jp[(1, 0)], jp[(1, 1)], jp[(1, 2)]) * c.inv_sigma;
    // Row a of the projection Jacobian times −[rp]x equals (rp × a)ᵀ.
    let b0 = rp.cross(&a0);
    let b1 = rp.cross(&a1);
    let j0 = Vector6::new(b0.x, b0.y, b0.z, a0.x, a0.y, a0.z);
    let j1 = Vector6::new(b1.x, b1.y, b1.z, a1.x, a1.y, a1.z);
    Some((r, j0, j1))
}

/// Builds the normal equations over the active points; `None` if one is behind the camera.
pub(crate) fn accumulate(
    problem: &Problem,
    active: &[bool],
    loss: Loss,
    pose: &Pose,
) -> Option<Normal> {
    // Lower triangle of h.
    let mut lower = [[0.0f64; 6]; 6];
    let mut g = Vector6::zeros();
    let mut cost = 0.0;
    let mut max_sq: f64 = 0.0;
    for (c, _) in problem.pts.iter().zip(active).filter(|(_, &a)| a) {
        let (r, j0, j1) = point_rows(problem.camera, c, pose)?;
        let sq = r.norm_squared();
        max_sq = max_sq.max(sq);
        let (rho, w) = loss.eval(sq);
        cost += rho;
        let (w0, w1) = (j0 * w, j1 * w);
        for (i, row) in lower.iter_mut().enumerate() {
            let (a0, a1) = (w0[i], w1[i]);
            for (j, entry) in row.iter_mut().enumerate().take(i + 1) {
                *entry += a0 * j0[j] + a1 * j1[j];
            }
        }
        g += w0 * r.x + w1 * r.y;
    }
    let h = Matrix6::from_fn(|i, j| if j <= i { lower[i][j] } else { lower[j][i] });
    Some(Normal { h, g, cost, max_sq })
}

/// Whether every point lies in front of the camera at `pose`.
pub(crate) fn all_in_front(problem: &Problem, pose: &Pose) -> bool {
    problem
        .pts
        .iter()
        .all(|c| pose.transform(&c.model_m).z > tol::MIN_DEPTH_M)
}

/// Squared whitened residual of one point, `None` behind the camera.
pub(crate) fn squared_residual(problem: &Problem, c: &Correspondence, pose: &Pose) -> Option<f64> {
    let px = problem.camera.project(&pose.transform(&c.model_m))?;
    Some(((px - c.px) * c.inv_sigma).norm_squared())
}

/// Gated cost: `|r|²` for each point inside the gate, `tol::OUTLIER_COST_CHI2` for each point
/// outside it or behind the camera. It scores starts and compares minima that keep different
/// inliers: the negative log-likelihood (×2) of a Gaussian-plus-uniform outlier mixture, as in
/// MLESAC (Torr and Zisserman, CVIU 78, 2000).
pub(crate) fn gated_cost(problem: &Problem, pose: &Pose) -> f64 {
    if !pose.is_finite() {
        return f64::INFINITY;
    }
    let tau = problem.gate.threshold;
    problem
        .pts
        .iter()
        .map(|c| match squared_residual(problem, c, pose) {
            Some(s) if s <= tau => s,
            _ => tol::OUTLIER_COST_CHI2,
        })
        .sum()
}

/// Marks as inliers the points whose squared whitened residual is within the gate.
fn gate_points(problem: &Problem, pose: &Pose, mask: &mut [bool]) {
    for (c, m) in problem.pts.iter().zip(mask.iter_mut()) {
        *m = squared_residual(problem, c, pose).is_some_and(|s| s <= problem.gate.threshold);
    }
}

/// Result of one Levenberg-Marquardt run.
#[derive(Debug, Clone, Copy)]
pub(crate) struct LmRun {
    pub(crate) pose: Pose,
    /// Normal equations at `pose` (same loss and active set as the run).
    pub(crate) normal: Normal,
    pub(crate) converged: bool,
    pub(crate) iterations: usize,
}

/// Levenberg-Marquardt from `start` over the active points. Converged when the (nearly
/// undamped) step from the current pose is shorter than `step_chi2` in the metric of the normal
/// matrix, `δᵀHδ` in chi-square units: the Gauss-Newton estimate of the distance to the optimum
/// (with `tol::LM_STEP_CHI2` the returned pose is within about 1e-4 standard deviations of it).
/// The damping starts at `initial_damping`; the convergence test runs only while the damping is
/// back at or below it (a rejected step multiplies it by `tol::LM_DAMPING_UP`, an accepted one by
/// `tol::LM_DAMPING_DOWN`). `None` if the start puts an active point behind the camera.
pub(crate) fn levenberg_marquardt(
    problem: &Problem,
    active: &[bool],
    loss: Loss,
    start: Pose,
    step_chi2: f64,
    initial_damping: f64,
) -> Option<LmRun> {
    let mut pose = start;
    let mut cur = accumulate(problem, active, loss, &pose)?;
    let mut lambda = initial_damping;
    // Up and down by factors of ten, the damping may come back to its start an ulp or two
    // above it: that still counts as back.
    let undamped = initial_damping * (1.0 + 1e-9);
    let mut iterations = 0;
    while iterations < problem.gate.max_iterations {
        let step = damped_step(&cur, lambda);
        if let Some(step) = step.filter(|_| lambda <= undamped) {
            if step.dot(&(cur.h * step)) <= step_chi2 {
                return Some(done(pose, cur, true, iterations));
            }
        }
        iterations += 1;
        let accepted = step.and_then(|step| {
            let trial = pose.perturbed(&step);
            accumulate(problem, active, loss, &trial)
                .filter(|n| n.cost <= cur.cost)
                .map(|n| (trial, n))
        });
        match accepted {
            Some((trial, n)) => {
                pose = trial;
                cur = n;
                lambda = (lambda * tol::LM_DAMPING_DOWN).max(tol::LM_MIN_DAMPING);
            }
            None => {
                lambda *= tol::LM_DAMPING_UP;
                if lambda > tol::LM_MAX_DAMPING {
                    // No step lowers the cost: converged only if the optimum is already here.
                    let at_optimum = newton_decrement(&cur).is_some_and(|d| d <= tol::LM_STEP_CHI2);
                    return Some(done(pose, cur, at_optimum, iterations));
                }
            }
        }
    }
    Some(done(pose, cur, false, iterations))
}

fn done(pose: Pose, normal: Normal, converged: bool, iterations: usize) -> LmRun {
    LmRun {
        pose,
        normal,
        converged,
        iterations,
    }
}

/// `gᵀ H⁻¹ g`: the chi-square length of the undamped Gauss-Newton step.
fn newton_decrement(n: &Normal) -> Option<f64> {
    cholesky_solve(&n.h, &n.g).map(|x| n.g.dot(&x))
}

/// Solves `(H + λ diag(H)) δ = −g` (Marquardt 1963); the diagonal gets a small floor so an
/// unobservable direction still has a damped, finite step.
fn damped_step(n: &Normal, lambda: f64) -> Option<Vector6<f64>> {
    let floor = n.h.diagonal().max() * tol::LM_DIAGONAL_FLOOR;
    let mut a = n.h;
    for k in 0..6 {
        a[(k, k)] += lambda * n.h[(k, k)].max(floor) + f64::MIN_POSITIVE;
    }
    let step = cholesky_solve(&a, &(-n.g))?;
    step.iter().all(|c| c.is_finite()).then_some(step)
}

/// A refined pose with its inliers and the least-squares normal equations over them.
#[derive(Debug, Clone)]
pub(crate) struct Solution {
    pub(crate) pose: Pose,
    /// Least-squares normal equations over the inliers at `pose`: `h` is the Fisher
    /// information and `cost` the chi-square.
    pub(crate) normal: Normal,
    pub(crate) inliers: Vec<bool>,
    pub(crate) gated_cost: f64,
    pub(crate) converged: bool,
    pub(crate) iterations: usize,
    pub(crate) start: PoseStart,
}

impl Solution {
    pub(crate) fn inlier_count(&self) -> usize {
        self.inliers.iter().filter(|&&b| b).count()
    }

    /// Converged solutions beat unconverged ones; then the lower gated cost wins.
    pub(crate) fn better_than(&self, other: &Solution) -> bool {
        match (self.converged, other.converged) {
            (true, false) => true,
            (false, true) => false,
            _ => self.gated_cost < other.gated_cost,
        }
    }
}

/// Robust refinement from one start: least squares over all points; if some point then fails the
/// gate, a Huber stage over all points from the same start, then least squares over the gated
/// inliers, re-gating at each new pose until the inlier set is stable (the inliers always refer to
/// the final pose). The inliers are first decided at the Huber optimum and, when that differs, at
/// the start itself (with few points, or a keypoint very far off, outliers still pull the Huber
/// optimum); the better of the two refinements wins.
pub(crate) fn robust_solve(problem: &Problem, start: Pose, kind: PoseStart) -> Option<Solution> {
    let n = problem.pts.len();
    let all = vec![true; n];
    // A warm start sits close to the optimum: nearly undamped steps converge in fewer
    // iterations there (a rejected step raises the damping as usual).
    let damping = if kind == PoseStart::Warm {
        tol::LM_WARM_DAMPING
    } else {
        tol::LM_INITIAL_DAMPING
    };
    let first = levenberg_marquardt(
        problem,
        &all,
        Loss::Squared,
        start,
        tol::LM_STEP_CHI2,
        damping,
    )?;
    if first.normal.max_sq <= problem.gate.threshold {
        // Every point passes: the gated cost is the chi-square itself.
        return Some(Solution {
            pose: first.pose,
            normal: first.normal,
            gated_cost: first.normal.cost,
            inliers: all,
            converged: first.converged,
            iterations: first.iterations,
            start: kind,
        });
    }
    robust_solve_with_outliers(problem, start, kind, first.iterations)
}

/// The outlier part of `robust_solve`, for a start already known to face outliers (the
/// least-squares stage over all points is skipped).
pub(crate) fn robust_solve_with_outliers(
    problem: &Problem,
    start: Pose,
    kind: PoseStart,
    mut iterations: usize,
) -> Option<Solution> {
    let all = vec![true; problem.pts.len()];
    let huber = Loss::Huber(problem.gate.huber_sigma);
    // From the start, not from the least-squares pose, which the outliers have pulled.
    // Only a basin is wanted here: a loose tolerance, and no need to have converged.
    let robust = levenberg_marquardt(
        problem,
        &all,
        huber,
        start,
        tol::HUBER_STEP_CHI2,
        tol::LM_INITIAL_DAMPING,
    );
    let mut seeds: Vec<(Pose, Vec<bool>)> = Vec::with_capacity(2);
    if let Some(r) = &robust {
        iterations += r.iterations;
        seeds.push((r.pose, gate_mask(problem, &r.pose)));
    }
    let at_start = gate_mask(problem, &start);
    if seeds.iter().all(|(_, m)| *m != at_start) {
        seeds.push((start, at_start));
    }
    let mut best: Option<Solution> = None;
    for (pose, mask) in seeds {
        if let Some(s) = gated_refinement(problem, pose, mask, &mut iterations, kind) {
            if best.as_ref().is_none_or(|b| s.better_than(b)) {
                best = Some(s);
            }
        }
    }
    best.map(|mut s| {
        s.iterations = iterations;
        s
    })
}

fn gate_mask(problem: &Problem, pose: &Pose) -> Vec<bool> {
    let mut mask = vec![false; problem.pts.len()];
    gate_points(problem, pose, &mut mask);
    mask
}

/// Least squares over the inliers of `mask` from `pose`, re-gating at each new pose until the
/// inlier set is stable; `None` with fewer than 4 inliers.
fn gated_refinement(
    problem: &Problem,
    mut pose: Pose,
    mut mask: Vec<bool>,
    iterations: &mut usize,
    kind: PoseStart,
) -> Option<Solution> {
    let mut next_mask = mask.clone();
    for _ in 0..tol::PNP_GATE_ROUNDS {
        if mask.iter().filter(|&&m| m).count() < 4 {
            return None;
        }
        let run = levenberg_marquardt(
            problem,
            &mask,
            Loss::Squared,
            pose,
            tol::LM_STEP_CHI2,
            tol::LM_INITIAL_DAMPING,
        )?;
        *iterations += run.iterations;
        gate_points(problem, &run.pose, &mut next_mask);
        if next_mask == mask {
            return Some(finish(problem, run, mask, *iterations, kind));
        }
        std::mem::swap(&mut mask, &mut next_mask);
        pose = run.pose;
    }
    // The gate kept changing: report the last pose with the inliers it implies.
    if mask.iter().filter(|&&m| m).count() < 4 {
        return None;
    }
    let normal = accumulate(problem, &mask, Loss::Squared, &pose)?;
    let run = done(pose, normal, false, *iterations);
    Some(finish(problem, run, mask, *iterations, kind))
}

fn finish(
    problem: &Problem,
    run: LmRun,
    inliers: Vec<bool>,
    iterations: usize,
    start: PoseStart,
) -> Solution {
    Solution {
        pose: run.pose,
        normal: run.normal,
        gated_cost: gated_cost(problem, &run.pose),
        inliers,
        converged: run.converged,
        iterations,
        start,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::Vector3;

    fn problem_fixture() -> (Camera, Vec<Correspondence>, Pose) {
        let cam = Camera::ideal(640, 480, 800.0, 320.0, 240.0);
        let truth = Pose {
            r: nalgebra::Rotation3::new(Vector3::new(0.1, -0.2, 0.3)).into_inner(),
            t: Vector3::new(0.05, -0.1, 4.0),
        };
        let model = [
            [-0.5, -0.5, 0.0],
            [0.5, -0.5, 0.0],
            [0.5, 0.5, 0.0],
            [-0.5, 0.5, 0.0],
            [0.0, 0.0, 0.3],
            [0.25, -0.1, 0.15],
        ];
        let pts = model
            .iter()
            .enumerate()
            .map(|(i, p)| {
                let m = Vector3::from(*p);
                let px = cam.project(&truth.transform(&m)).unwrap();
                Correspondence {
                    model_m: m,
                    px,
                    inv_sigma: 1.0,
                    normalized: cam.undistort(&px).unwrap(),
                    observation: i,
                }
            })
            .collect();
        (cam, pts, truth)
    }

    #[test]
    fn jacobian_rows_match_finite_differences() {
        // Central differences of the whitened residual along each left-perturbation axis.
        let (cam, pts, truth) = problem_fixture();
        let h = 1e-6;
        for c in &pts {
            let (_, j0, j1) = point_rows(&cam, c, &truth).unwrap();
            for k in 0..6 {
                let mut d = Vector6::zeros();
                d[k] = h;
                let plus = point_rows(&cam, c, &truth.perturbed(&d)).unwrap().0;
                let minus = point_rows(&cam, c, &truth.perturbed(&(-d))).unwrap().0;
                let fd = (plus - minus) / (2.0 * h);
                assert!((fd.x - j0[k]).abs() < 1e-4 * (1.0 + j0[k].abs()));
                assert!((fd.y - j1[k]).abs() < 1e-4 * (1.0 + j1[k].abs()));
            }
        }
    }

    #[test]
    fn refinement_returns_to_the_truth() {
        let (cam, pts, truth) = problem_fixture();
        let gate = Gate::from_options(&PnpOptions::default());
        let problem = Problem {
            camera: &cam,
            pts: &pts,
            gate: &gate,
        };
        let start = truth.perturbed(&Vector6::new(0.05, -0.03, 0.02, 0.1, -0.1, 0.3));
        let s = robust_solve(&problem, start, PoseStart::Given).unwrap();
        assert!(s.converged);
        assert!(s.pose.minus(&truth).norm() < 1e-6);
    }
}
