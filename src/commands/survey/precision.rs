//! Is the survey precise enough? Each axis's 95% half-width against a third of its tolerance,
//! and how many stable frames would reach that.
//!
//! The one-third rule is common practice for a measurement that decides conformance (a 3:1
//! ratio of tolerance to measurement uncertainty). Here it also has a concrete meaning for the
//! maintenance gate: when both sides of a comparison are surveyed to `h ≤ Δ/3` (95%,
//! `σ = h/1.96`), the 90% interval of their difference has half-width
//! `1.645 √2 σ ≤ 0.40 Δ`, so an unchanged mount passes the equivalence test unless its estimate
//! wanders beyond `0.6 Δ`, about 2.5 standard deviations of the difference.

use serde::Serialize;

use crate::commands::audit::SegmentMount;
use crate::session::Policy;

use super::{GateWarning, GateWarningCode, UsedFrames, AXES};

/// Largest acceptable 95% half-width as a fraction of the tolerance (common practice).
pub const PRECISION_RATIO: f64 = 1.0 / 3.0;

/// Precision reached against precision asked for.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Precision {
    pub rule: String,
    pub ratio: f64,
    pub axes: Vec<AxisPrecision>,
    /// Every axis meets the rule.
    pub sufficient: bool,
    /// Stable solved frames that would meet it (half-widths shrink as `1/√n`); `None` when met
    /// or when an axis is not observed at all.
    pub frames_needed: Option<u64>,
    /// The same as a duration at the session's rate of solved frames.
    pub seconds_needed: Option<f64>,
}

/// One axis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AxisPrecision {
    pub axis: &'static str,
    pub unit: &'static str,
    /// 95% half-width reached; `None` for an axis the keypoints do not observe.
    pub half_width: Option<f64>,
    pub tolerance: f64,
    /// `ratio × tolerance`.
    pub required: f64,
    pub met: bool,
}

/// Checks the half-widths (x, y, z mm; yaw, pitch, roll deg) against the policy.
pub fn check(half_widths: &[f64; 6], policy: &Policy, segment: &SegmentMount) -> Precision {
    let axes: Vec<AxisPrecision> = AXES
        .iter()
        .zip(half_widths)
        .enumerate()
        .map(|(k, (&(axis, unit), &h))| {
            let tolerance = if k < 3 {
                policy.max_translation_mm
            } else {
                policy.max_rotation_deg
            };
            let required = PRECISION_RATIO * tolerance;
            let half_width = h.is_finite().then_some(h);
            AxisPrecision {
                axis,
                unit,
                half_width,
                tolerance,
                required,
                met: half_width.is_some_and(|h| h <= required),
            }
        })
        .collect();
    let sufficient = axes.iter().all(|a| a.met);
    let worst = axes
        .iter()
        .map(|a| a.half_width.map(|h| (h / a.required).powi(2)))
        .try_fold(1.0_f64, |m, r| r.map(|r| m.max(r)));
    let frames_needed = match worst {
        Some(factor) if !sufficient => Some((segment.solved_frames as f64 * factor).ceil() as u64),
        _ => None,
    };
    let seconds_needed = frames_needed.and_then(|n| seconds_for(n, segment));
    Precision {
        rule: format!(
            "each 95% half-width at most {:.0}% of its tolerance (common practice: a 3:1 \
             tolerance-to-uncertainty ratio)",
            100.0 * PRECISION_RATIO
        ),
        ratio: PRECISION_RATIO,
        axes,
        sufficient,
        frames_needed,
        seconds_needed,
    }
}

/// Duration of `frames` solved frames at the segment's own rate of solved frames.
fn seconds_for(frames: u64, segment: &SegmentMount) -> Option<f64> {
    let span_s = segment.last_time_s - segment.first_time_s;
    (segment.solved_frames > 1 && span_s > 0.0)
        .then(|| frames as f64 * span_s / (segment.solved_frames - 1) as f64)
}

/// The warning for a survey short of the rule, with how long a session would do.
pub fn short_warning(precision: &Precision, used: &UsedFrames) -> GateWarning {
    let short: Vec<String> = precision
        .axes
        .iter()
        .filter(|a| !a.met)
        .map(|a| {
            format!(
                "{} ±{:.3} {} (asked ±{:.3})",
                a.axis,
                a.half_width.unwrap_or(f64::INFINITY),
                a.unit,
                a.required
            )
        })
        .collect();
    let had_s = used.last_time_s - used.first_time_s;
    let advice = match precision.seconds_needed {
        Some(s) => format!(
            "record a longer session: about {s:.0} s of stable frames (this one had {had_s:.0} s)"
        ),
        None => "record a longer session".to_string(),
    };
    GateWarning {
        code: GateWarningCode::PrecisionShort,
        message: format!(
            "the survey is less precise than a third of the tolerance on {}",
            short.join(", ")
        ),
        advice,
    }
}
