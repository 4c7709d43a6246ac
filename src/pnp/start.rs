//! Global starts that need no prior: IPPE for (near-)planar point sets, EPnP for (near-)non-planar
//! ones, ranked by their gated reprojection cost; their mirrors (depth-reversed poses); and, when
//! outliers are suspected, the same starts computed from subsets that leave them out.

use rand::seq::index;
use rand::SeedableRng;
use rand_pcg::Pcg64Mcg;

use super::pose::Pose;
use super::prepare::{Correspondence, PointGeometry};
use super::refine::{gated_cost, Problem};
use super::{ambiguity, epnp, planar, PoseStart};
use crate::tol;

/// Starts from all points, best first by gated cost (unscored when there is only one). Keypoints
/// far outside the image (`plausible`) are left out of the start, not of the refinement.
pub(crate) fn global_starts(problem: &Problem, geometry: &PointGeometry) -> Vec<(Pose, PoseStart)> {
    let starts = if problem.pts.iter().all(|c| plausible(problem, c)) {
        starts_for(problem.pts, geometry, problem.noise_floor())
    } else {
        let kept: Vec<Correspondence> = plausible_points(problem).collect();
        let g = PointGeometry::of(kept.iter().map(|c| c.model_m));
        if kept.len() < 4 || g.check().is_err() {
            return Vec::new();
        }
        starts_for(&kept, &g, problem.noise_floor())
    };
    if starts.len() < 2 {
        return starts;
    }
    ranked(problem, starts)
}

/// The mirrors of the given starts, best first: the depth-reversed (Necker) pose is the classic
/// wrong basin of a start under weak perspective.
pub(crate) fn mirror_starts(
    problem: &Problem,
    geometry: &PointGeometry,
    starts: &[(Pose, PoseStart)],
) -> Vec<(Pose, PoseStart)> {
    let mirrors = starts
        .iter()
        .filter_map(|(p, _)| ambiguity::mirror(p, geometry).map(|m| (m, PoseStart::Mirror)))
        .collect();
    ranked(problem, mirrors)
}

/// Whether a keypoint could be a detection at all: within one image size of the image. A pixel
/// beyond that (a corrupted detection) would wreck the algebraic start; the refinement still sees
/// it and gates it out.
fn plausible(problem: &Problem, c: &Correspondence) -> bool {
    let (w, h) = (
        f64::from(problem.camera.width),
        f64::from(problem.camera.height),
    );
    (-w..=2.0 * w).contains(&c.px.x) && (-h..=2.0 * h).contains(&c.px.y)
}

fn plausible_points<'a>(problem: &'a Problem) -> impl Iterator<Item = Correspondence> + 'a {
    problem
        .pts
        .iter()
        .filter(|c| plausible(problem, c))
        .copied()
}

/// Planar and near-planar sets get both IPPE solutions; non-planar and near-planar sets the
/// EPnP solution (its closed-form N = 1 solution if it reprojects within `epnp_accept`).
fn starts_for(
    pts: &[Correspondence],
    geometry: &PointGeometry,
    epnp_accept: f64,
) -> Vec<(Pose, PoseStart)> {
    let mut starts = Vec::with_capacity(3);
    let planarity = geometry.planarity();
    if planarity < tol::PNP_NEAR_PLANAR_REL {
        for p in planar::ippe_starts(pts, geometry).into_iter().flatten() {
            starts.push((p, PoseStart::Planar));
        }
    }
    if planarity >= tol::PNP_PLANAR_REL {
        for p in epnp::epnp_starts(pts, geometry, epnp_accept) {
            starts.push((p, PoseStart::Epnp));
        }
    }
    starts
}

fn ranked(problem: &Problem, starts: Vec<(Pose, PoseStart)>) -> Vec<(Pose, PoseStart)> {
    let mut scored: Vec<(f64, Pose, PoseStart)> = starts
        .into_iter()
        .map(|(p, k)| (gated_cost(problem, &p), p, k))
        .collect();
    scored.sort_by(|a, b| a.0.total_cmp(&b.0));
    scored.into_iter().map(|(_, p, k)| (p, k)).collect()
}

/// Starts from subsets that leave outliers out (of the plausible keypoints): every leave-one-out
/// subset (one outlier cannot bias them) and, for 8 points or more, `tol::PNP_RANDOM_SUBSETS` random subsets of a third of
/// the points (at least 6) from a fixed seed, so that several outliers are also avoided by some
/// subset. Scored by the gated cost over all points; the best `tol::PNP_SUBSET_REFINED` returned.
pub(crate) fn subset_starts(problem: &Problem) -> Vec<(Pose, PoseStart)> {
    let pool: Vec<Correspondence> = plausible_points(problem).collect();
    let n = pool.len();
    if n < 5 {
        return Vec::new();
    }
    // Subsets only need rough starts: EPnP's closed form, without its hypothesis search.
    let noise_floor = f64::INFINITY;
    let mut subset: Vec<Correspondence> = Vec::with_capacity(n);
    let mut starts = Vec::with_capacity(2 * n + 2 * tol::PNP_RANDOM_SUBSETS);
    let mut add = |keep: &mut dyn Iterator<Item = usize>, subset: &mut Vec<Correspondence>| {
        subset.clear();
        subset.extend(keep.map(|i| pool[i]));
        let geometry = PointGeometry::of(subset.iter().map(|c| c.model_m));
        if geometry.check().is_ok() {
            starts.extend(starts_for(subset, &geometry, noise_floor));
        }
    };
    for skip in 0..n {
        add(&mut (0..n).filter(|&i| i != skip), &mut subset);
    }
    if n >= 8 {
        let size = (n / 3).max(6);
        let mut rng = Pcg64Mcg::seed_from_u64(tol::PNP_SUBSET_SEED);
        for _ in 0..tol::PNP_RANDOM_SUBSETS {
            let picked = index::sample(&mut rng, n, size);
            add(&mut picked.into_iter(), &mut subset);
        }
    }
    let mut out = ranked(problem, starts);
    out.truncate(tol::PNP_SUBSET_REFINED);
    out
}

/// Starts from the given inliers alone (of the plausible keypoints), best first by gated cost over
/// all points: the subset that leaves out exactly the points a refinement gated out.
pub(crate) fn inlier_starts(problem: &Problem, inliers: &[bool]) -> Vec<(Pose, PoseStart)> {
    let kept: Vec<Correspondence> = problem
        .pts
        .iter()
        .zip(inliers)
        .filter(|(c, &keep)| keep && plausible(problem, c))
        .map(|(c, _)| *c)
        .collect();
    let geometry = PointGeometry::of(kept.iter().map(|c| c.model_m));
    if kept.len() < 4 || geometry.check().is_err() {
        return Vec::new();
    }
    ranked(problem, starts_for(&kept, &geometry, problem.noise_floor()))
}
