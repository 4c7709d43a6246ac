//! Per-frame solve of both objects and the offsets derived from them: the frame records that
//! every job (audit, survey, compare) builds its statistics from.
//!
//! Frames are solved in parallel in fixed blocks; inside a block each pose warm-starts from the
//! previous frame's. Block boundaries depend only on frame order, so results do not depend on
//! thread scheduling.

use std::collections::HashMap;
use std::sync::Mutex;

use nalgebra::{Isometry3, Matrix6, Vector3, Vector6};
use rayon::prelude::*;

use crate::camera::Camera;
use crate::geometry::Mount;
use crate::model::KeypointModel;
use crate::pnp::{
    solve_pose, PnpOptions, PointInformation, PoseEstimate, PoseStatus, RejectionReason,
};
use crate::session::{FrameDetections, Observation};
use crate::stats::packed::PackedSym6;

use super::{
    deviation_covariance_packed, deviation_jacobian, mount_deviation_packed, observed_deviation,
    point_in_camera, vector_with_mount,
};

/// Frames per warm-start block: long enough that cold starts are rare, short enough to keep
/// both cores busy on a few thousand frames.
const BLOCK_FRAMES: usize = 64;

/// Fit summary of one solved object (24 bytes: counts are small, kept in small integers).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fit {
    /// Weighted reprojection chi-square over inliers, and its degrees of freedom.
    pub chi2: f64,
    pub dof: usize,
    pub keypoints: u16,
    pub inliers: u16,
    pub rank: u8,
    pub ill_conditioned: bool,
    pub ambiguous: bool,
}

impl Fit {
    fn of(estimate: &PoseEstimate) -> Self {
        let inliers = estimate.inliers.iter().filter(|&&b| b).count();
        Self {
            chi2: estimate.chi2,
            dof: estimate.dof,
            keypoints: small_count(estimate.inliers.len()),
            inliers: small_count(inliers),
            rank: estimate.rank.min(usize::from(u8::MAX)) as u8,
            ill_conditioned: estimate.ill_conditioned,
            ambiguous: estimate.ambiguous,
        }
    }

    /// Keypoints dropped as outliers.
    pub fn outliers(&self) -> u64 {
        u64::from(self.keypoints - self.inliers)
    }
}

/// A keypoint count in 16 bits (a model has far fewer points; saturates rather than wraps).
fn small_count(n: usize) -> u16 {
    u16::try_from(n).unwrap_or(u16::MAX)
}

/// Everything later stages need from one frame (about 360 bytes: a long session keeps one per
/// frame until the report rows are built).
#[derive(Debug, Clone, PartialEq)]
pub struct FrameRecord {
    pub frame: u64,
    pub time_s: f64,
    pub probe: Result<Fit, RejectionReason>,
    pub drogue: Result<Fit, RejectionReason>,
    /// Deviation from the reference mount in report units (mm, deg); present when the probe was
    /// solved. Its covariance travels beside the record ([`SolvedFrame`]), so that the
    /// statistics can take it over and free it.
    pub deviation: Option<Vector6<f64>>,
    /// The drogue reference point in the camera frame (m); present when the drogue was solved.
    pub drogue_camera_m: Option<Vector3<f64>>,
    /// The dual-object probe-to-drogue vector in body axes (m): the drogue point mapped with
    /// the frame's observed mount, minus the probe reference point; present when both objects
    /// were solved.
    pub dual_vector_m: Option<Vector3<f64>>,
}

/// A frame's record and the covariance of its mount deviation (report units, packed; singular
/// where the probe solution leaves a direction unobservable), present when the probe was solved.
pub type SolvedFrame = (FrameRecord, Option<PackedSym6>);

impl FrameRecord {
    /// The vector a pipeline assuming `mount` would report (m), when the drogue was solved;
    /// `probe_reference_b` is the probe model's reference point in body axes (m).
    pub fn vector_with_mount_m(
        &self,
        mount: &Mount,
        probe_reference_b: &Vector3<f64>,
    ) -> Option<Vector3<f64>> {
        let x_c = self.drogue_camera_m?;
        Some(super::vector_with_mount(mount, probe_reference_b, &x_c))
    }
}

/// What the per-frame solve needs: the camera, both models, the mount deviations are measured
/// from, and the solver settings (fixed at construction: the reference geometry is derived from
/// them).
#[derive(Debug)]
pub struct FrameSolver<'a> {
    camera: &'a Camera,
    probe: &'a KeypointModel,
    drogue: &'a KeypointModel,
    reference: Mount,
    options: PnpOptions,
    /// The probe points' information at the reference mount and the deviation Jacobian there:
    /// what a frame's deviation covariance is computed from.
    at_reference: ReferenceGeometry,
    covariances: CovarianceCache,
}

/// The probe seen from the reference mount.
#[derive(Debug, Clone)]
struct ReferenceGeometry {
    points: PointInformation,
    jacobian: Matrix6<f64>,
}

/// Deviation covariances already computed, by the set of points used and their common sigma:
/// most frames of a session see the same few sets with the same sigma. Shared by the solver's
/// parallel blocks (the lock is taken twice per frame at most, beside a pose solve).
#[derive(Debug, Default)]
struct CovarianceCache(Mutex<HashMap<UsedPoints, PackedSym6>>);

/// A set of model points (indices below 128) used with one common sigma.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
struct UsedPoints {
    mask: u128,
    sigma_bits: u64,
}

/// Distinct sets remembered: beyond this (sigmas that vary from frame to frame) the cache only
/// costs, and it stops growing.
const CACHED_SETS: usize = 256;

impl UsedPoints {
    /// The key of the observations flagged in `used`, or `None` when it has none (a point index
    /// beyond 127, or sigmas that differ).
    fn of(obs: &[Observation], used: &[bool]) -> Option<Self> {
        let mut mask = 0u128;
        let mut sigma = None;
        for (o, _) in obs.iter().zip(used).filter(|(_, &u)| u) {
            let bit = 1u128.checked_shl(u32::try_from(o.point).ok()?)?;
            mask |= bit;
            match sigma {
                None => sigma = Some(o.sigma_px.to_bits()),
                Some(b) if b == o.sigma_px.to_bits() => {}
                Some(_) => return None,
            }
        }
        Some(Self {
            mask,
            sigma_bits: sigma?,
        })
    }
}

impl CovarianceCache {
    fn get_or_insert(
        &self,
        key: Option<UsedPoints>,
        compute: impl FnOnce() -> Option<PackedSym6>,
    ) -> Option<PackedSym6> {
        let Some(key) = key else {
            return compute();
        };
        // A poisoned lock only means another block panicked; the map itself is whole.
        let lock = || {
            self.0
                .lock()
                .unwrap_or_else(|poisoned| poisoned.into_inner())
        };
        if let Some(c) = lock().get(&key) {
            return Some(*c);
        }
        let c = compute()?;
        let mut map = lock();
        if map.len() < CACHED_SETS {
            map.insert(key, c);
        }
        Some(c)
    }
}

/// Warm starts carried from one frame to the next inside a block.
#[derive(Debug, Clone, Default)]
struct WarmStarts {
    probe: Option<Isometry3<f64>>,
    drogue: Option<Isometry3<f64>>,
}

impl<'a> FrameSolver<'a> {
    /// A solver measuring deviations from `reference`.
    pub fn new(
        camera: &'a Camera,
        probe: &'a KeypointModel,
        drogue: &'a KeypointModel,
        reference: Mount,
        options: PnpOptions,
    ) -> Self {
        let pose = reference.body_from_camera().inverse();
        let at_reference = ReferenceGeometry {
            points: PointInformation::at(camera, probe, &pose),
            jacobian: deviation_jacobian(&pose, &reference),
        };
        Self {
            camera,
            probe,
            drogue,
            reference,
            options,
            at_reference,
            covariances: CovarianceCache::default(),
        }
    }
}

impl FrameSolver<'_> {
    /// Solves a batch of frames (any length), in parallel blocks, keeping frame order.
    pub fn solve_batch(&self, frames: &[FrameDetections]) -> Vec<SolvedFrame> {
        frames
            .par_chunks(BLOCK_FRAMES)
            .flat_map_iter(|block| {
                let mut warm = WarmStarts::default();
                block
                    .iter()
                    .map(|f| self.solve_frame(f, &mut warm))
                    .collect::<Vec<_>>()
            })
            .collect()
    }

    fn solve_frame(&self, det: &FrameDetections, warm: &mut WarmStarts) -> SolvedFrame {
        let probe = solve_pose(
            self.camera,
            self.probe,
            &det.probe,
            warm.probe.as_ref(),
            &self.options,
        );
        let drogue = solve_pose(
            self.camera,
            self.drogue,
            &det.drogue,
            warm.drogue.as_ref(),
            &self.options,
        );
        warm.probe = probe.estimate().map(|e| e.pose);
        warm.drogue = drogue.estimate().map(|e| e.pose);
        let deviation = probe.estimate().map(|e| self.deviation(e, &det.probe));
        let drogue_camera_m = drogue
            .estimate()
            .map(|e| point_in_camera(e, &self.drogue.reference_point()));
        let dual_vector_m = match (&deviation, &drogue_camera_m) {
            (Some((mount, _, _)), Some(x_c)) => {
                Some(vector_with_mount(mount, &self.probe.reference_point(), x_c))
            }
            _ => None,
        };
        let record = FrameRecord {
            frame: det.frame,
            time_s: det.time_s,
            probe: fit_or_reason(&probe),
            drogue: fit_or_reason(&drogue),
            deviation: deviation.map(|d| d.1),
            drogue_camera_m,
            dual_vector_m,
        };
        (record, deviation.map(|d| d.2))
    }
}

impl FrameSolver<'_> {
    /// The observed mount and its deviation from the reference with covariance. The covariance
    /// is the one of the points this solution used, evaluated at the reference mount rather than
    /// at the solution (independent of this frame's noise, so that information-weighted means
    /// over frames stay unbiased: docs/method.md); at the solution only when a used point is not
    /// in front of the camera at the reference.
    fn deviation(
        &self,
        estimate: &PoseEstimate,
        obs: &[Observation],
    ) -> (Mount, Vector6<f64>, PackedSym6) {
        let geometry = &self.at_reference;
        let covariance =
            self.covariances
                .get_or_insert(UsedPoints::of(obs, &estimate.inliers), || {
                    let summary = geometry.points.summary(obs, &estimate.inliers)?;
                    Some(deviation_covariance_packed(
                        &geometry.jacobian,
                        &summary.covariance,
                    ))
                });
        match covariance {
            Some(c) => {
                let (mount, value) = observed_deviation(estimate, &self.reference);
                (mount, value, c)
            }
            None => mount_deviation_packed(estimate, &self.reference),
        }
    }
}

fn fit_or_reason(status: &PoseStatus) -> Result<Fit, RejectionReason> {
    match status {
        PoseStatus::Solved(e) => Ok(Fit::of(e)),
        PoseStatus::Rejected(r) => Err(r.reason),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_stay_small() {
        // Common practice for a type kept once per frame: a size guard, so growth is a
        // decision (a million-frame session keeps a million records).
        assert_eq!(std::mem::size_of::<Fit>(), 24);
        assert_eq!(std::mem::size_of::<Result<Fit, RejectionReason>>(), 24);
        assert!(std::mem::size_of::<FrameRecord>() <= 360);
    }
}
