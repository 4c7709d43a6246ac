//! The segments' mount estimates of an audited session with their effective covariances, for
//! the jobs that build on an audit (survey, compare). Data only; no decisions.

use nalgebra::{Matrix6, Vector6};

use crate::geometry::Mount;

use super::analysis::Analysis;
use super::outcome::AuditOutcome;
use super::solve::Solved;

/// Every segment's mount with the uncertainty the drift analysis gives it.
#[derive(Debug, Clone, PartialEq)]
pub struct SessionMounts {
    /// What the deviations are measured from: the nominal mount, or (without one) the observed
    /// mount of the first solved frame.
    pub reference: Mount,
    pub reference_is_nominal: bool,
    /// In session order; empty when the session had too few solved frames for the analysis.
    pub segments: Vec<SegmentMount>,
    /// Frames left out of the deviation series by a screen, in increasing order.
    pub screened_frames: Vec<u64>,
}

/// One segment between change points.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentMount {
    pub first_frame: u64,
    pub last_frame: u64,
    pub first_time_s: f64,
    pub last_time_s: f64,
    pub solved_frames: u64,
    /// Mean deviation from the reference: x, y, z mm (body axes), yaw, pitch, roll deg.
    pub deviation: Vector6<f64>,
    /// Its covariance under the effective (noise-inflated) information; zero in a direction the
    /// segment does not observe (see `observable`).
    pub covariance: Matrix6<f64>,
    /// Which of the six axes the segment observes.
    pub observable: [bool; 6],
    /// The absolute mount: reference ⊕ deviation.
    pub mount: Mount,
    /// The segment scatters more than the keypoint noise explains (a loose mount).
    pub excess_scatter: bool,
}

/// Collects the segments of an assembled audit.
pub(super) fn collect(
    solved: &Solved,
    analysis: &Analysis,
    outcome: &AuditOutcome,
    reference_is_nominal: bool,
) -> SessionMounts {
    let segments = analysis
        .drift
        .as_ref()
        .map(|d| {
            d.segments
                .iter()
                .zip(&analysis.segment_mounts)
                .zip(&outcome.segments)
                .map(|((estimate, mount), summary)| SegmentMount {
                    first_frame: summary.first_frame,
                    last_frame: summary.last_frame,
                    first_time_s: summary.first_time_s,
                    last_time_s: summary.last_time_s,
                    solved_frames: summary.solved_frames,
                    deviation: estimate.mean.mean,
                    covariance: estimate.mean.covariance,
                    observable: std::array::from_fn(|k| estimate.mean.half_width[k].is_some()),
                    mount: *mount,
                    excess_scatter: summary.scatter.excess,
                })
                .collect()
        })
        .unwrap_or_default();
    SessionMounts {
        reference: solved.reference,
        reference_is_nominal,
        segments,
        screened_frames: Vec::new(),
    }
}
