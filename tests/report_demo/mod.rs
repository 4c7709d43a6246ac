//! Hand-built audit outcomes for the report tests. Every number is invented for the demo: a
//! 3000-frame session at 30 Hz whose mount steps at frame 1800, made by a small deterministic
//! function, plus a short stable session without a nominal mount whose name contains markup.
#![allow(dead_code)]

use std::collections::BTreeMap;

use mountdrift::camera::{Camera, Distortion};
use mountdrift::commands::audit::*;
use mountdrift::session::{MountFile, Policy};

/// Deterministic wobble in [-0.5, 0.5), different for each (frame, channel).
pub fn wobble(frame: u64, channel: u64) -> f64 {
    let h = (frame.wrapping_mul(2_654_435_761) ^ channel.wrapping_mul(40_503)) % 10_007;
    h as f64 / 10_007.0 - 0.5
}

const BEFORE: [f64; 6] = [0.3, -0.2, 0.5, 0.01, 0.005, -0.01];
const AFTER: [f64; 6] = [4.5, -1.7, 1.3, 0.19, -0.055, 0.01];
const SPREAD: [f64; 6] = [1.2, 1.0, 2.5, 0.03, 0.03, 0.05];

/// One frame of a session of `total` frames whose mount steps at `step`.
pub fn demo_row(frame: u64, total: u64, step: u64) -> FrameRow {
    let time_s = frame as f64 / 30.0;
    let progress = frame as f64 / total as f64;
    let after = frame >= step;
    let mut row = FrameRow {
        frame,
        time_s,
        status: "ok",
        deviation: None,
        d2: None,
        dof: None,
        vector_m: None,
        range_m: None,
        fixed_error_mm: None,
        segment: None,
        probe_fit: None,
        drogue_fit: None,
        true_dual_error_mm: None,
        true_fixed_error_mm: None,
    };
    if frame % 60 == 59 {
        row.status = "rejected:too_few_points";
        return row;
    }
    let base = if after { AFTER } else { BEFORE };
    let deviation: [f64; 6] =
        std::array::from_fn(|k| base[k] + 2.0 * SPREAD[k] * wobble(frame, k as u64));
    row.deviation = Some(deviation);
    row.d2 = Some(if after {
        45.0 + 60.0 * wobble(frame, 7)
    } else {
        6.0 + 10.0 * wobble(frame, 7)
    });
    row.dof = Some(6);
    row.segment = Some(u32::from(after));
    row.probe_fit = Some(1.25 + 0.9 * wobble(frame, 8));
    if frame % 97 == 5 {
        row.status = "no_drogue:not_converged";
        return row;
    }
    let range_m = 40.0 - 38.0 * progress + 0.3 * wobble(frame, 9);
    row.range_m = Some(range_m);
    row.vector_m = Some([range_m * 0.998, 0.21, range_m * 0.05]);
    let fixed = if after {
        18.0 + 0.6 * (40.0 - range_m)
    } else {
        3.0 + 0.1 * (40.0 - range_m)
    };
    row.fixed_error_mm = Some(fixed + 2.0 * wobble(frame, 10));
    row.drogue_fit = Some(1.2 + 1.1 * wobble(frame, 11));
    row.true_dual_error_mm = Some(1.3 + 1.6 * wobble(frame, 12));
    row.true_fixed_error_mm = Some(fixed + 5.0 * wobble(frame, 13));
    row
}

pub fn demo_rows(total: u64, step: u64) -> Vec<FrameRow> {
    (0..total).map(|f| demo_row(f, total, step)).collect()
}

fn stats(frames: u64, median: f64, p95: f64, max: f64) -> ErrorStats {
    ErrorStats {
        frames,
        median,
        p95,
        max,
    }
}

fn deviation(t: [f64; 3], r: [f64; 3], t_ci: [f64; 3], r_ci: [f64; 3]) -> Deviation {
    Deviation {
        translation_mm: t,
        rotation_deg: r,
        translation_ci95_mm: t_ci,
        rotation_ci95_deg: r_ci,
    }
}

fn camera() -> Camera {
    let distortion = Distortion::BrownConrady {
        k1: -0.12,
        k2: 0.04,
        p1: 0.0,
        p2: 0.0,
        k3: 0.0,
    };
    Camera::new(1280, 800, 910.0, 908.5, 640.5, 399.0, 0.0, distortion, 1.0).unwrap()
}

fn inputs(session: &str, nominal: bool, truth: bool) -> InputsSummary {
    InputsSummary {
        session: session.into(),
        camera: camera(),
        probe: ModelSummary {
            points: 6,
            reference: "tip".into(),
        },
        drogue: ModelSummary {
            points: 8,
            reference: "throat".into(),
        },
        nominal_mount: nominal.then_some(MountFile::new([1.2, 0.35, -0.4], [2.0, -4.0, 0.0])),
        policy: Policy::default(),
        has_truth: truth,
    }
}

fn change_search() -> ChangeSearch {
    ChangeSearch {
        method: "PELT, information-weighted Gaussian cost".into(),
        penalty: 38.4,
        min_segment_frames: 30,
        false_alarm_rate: 0.01,
        calibration_runs: 200,
        calibration_confidence: 0.95,
        noise_inflation: [1.3, 1.2, 1.4, 1.1, 1.2, 1.0],
    }
}

fn scatter(ratio: f64, p_value: f64) -> ScatterCheck {
    ScatterCheck {
        ratio,
        p_value,
        excess: false,
    }
}

fn shifted_segments() -> Vec<Segment> {
    vec![
        Segment {
            first_frame: 0,
            last_frame: 1799,
            first_time_s: 0.0,
            last_time_s: 59.966_667,
            solved_frames: 1770,
            mount_deviation: deviation(
                [0.3, -0.2, 0.5],
                [0.01, 0.005, -0.01],
                [0.2, 0.18, 0.4],
                [0.008, 0.007, 0.011],
            ),
            fixed_offset_error_mm: Some(stats(1740, 3.1, 6.4, 9.8)),
            scatter: scatter(1.05, 0.31),
        },
        Segment {
            first_frame: 1800,
            last_frame: 2999,
            first_time_s: 60.0,
            last_time_s: 99.966_667,
            solved_frames: 1180,
            mount_deviation: deviation(
                [4.5, -1.7, 1.3],
                [0.19, -0.055, 0.01],
                [0.25, 0.22, 0.5],
                [0.01, 0.009, 0.014],
            ),
            fixed_offset_error_mm: Some(stats(1160, 28.4, 38.9, 41.3)),
            scatter: scatter(1.1, 0.12),
        },
    ]
}

fn range_bins() -> Vec<RangeBin> {
    [
        (0.0, 5.0, 240, 34.1, 39.7, 41.3),
        (5.0, 10.0, 390, 30.2, 35.8, 38.0),
    ]
    .into_iter()
    .chain([
        (10.0, 15.0, 385, 16.9, 33.1, 35.6),
        (15.0, 40.0, 1885, 4.8, 27.5, 31.0),
    ])
    .map(|(lo, hi, n, median, p95, max)| RangeBin {
        range_min_m: lo,
        range_max_m: hi,
        error_mm: stats(n, median, p95, max),
    })
    .collect()
}

/// True errors by range: the dual-object error grows with range, the fixed-offset error with
/// the shifted mount's lever arm (invented numbers).
fn truth_bins() -> Vec<TruthRangeBin> {
    [
        (0.0, 5.0, 240, (0.4, 0.9, 1.1), (34.0, 39.9, 41.5)),
        (5.0, 10.0, 390, (0.7, 1.5, 1.9), (30.1, 36.0, 38.3)),
        (10.0, 15.0, 385, (1.0, 2.1, 2.6), (17.2, 33.5, 35.9)),
        (15.0, 40.0, 1905, (1.4, 3.1, 4.9), (5.1, 28.0, 44.0)),
    ]
    .into_iter()
    .map(|(lo, hi, n, dual, fixed)| TruthRangeBin {
        range_min_m: lo,
        range_max_m: hi,
        dual_error_mm: Some(stats(n, dual.0, dual.1, dual.2)),
        fixed_error_mm: Some(stats(n, fixed.0, fixed.1, fixed.2)),
    })
    .collect()
}

fn shifted_warnings() -> Vec<Warning> {
    vec![
        Warning {
            code: WarningCode::PixelSigmaMismatch,
            message: "The reprojection residuals suggest a pixel sigma of 1.12 px while 1.00 px is stated.".into(),
            advice: "Set pixel_sigma in the camera file to the estimate, or check the keypoint detector.".into(),
        },
        Warning {
            code: WarningCode::DrogueAmbiguous,
            message: "11 drogue poses had two nearly equal planar solutions.".into(),
            advice: "Add a drogue keypoint off the plane of the others.".into(),
        },
    ]
}

/// The 3000-frame session whose mount steps at frame 1800; the gate fails.
pub fn shifted_outcome() -> AuditOutcome {
    let mut rejected_by_reason = BTreeMap::new();
    rejected_by_reason.insert("probe: too_few_points".to_string(), 50);
    AuditOutcome {
        schema: AUDIT_SCHEMA,
        tool_version: "0.0.0-demo",
        verdict: Verdict::Shifted,
        gate: Gate::Fail,
        gate_reasons: vec![
            "The fixed-offset error reaches 41.3 mm, over the 30.0 mm tolerance near contact."
                .into(),
        ],
        inputs: inputs("demo/bracket-slip.yaml", true, true),
        frames: FrameCounts {
            total: 3000,
            solved: 2950,
            rejected: 50,
            both_solved: 2920,
            rejected_by_reason,
            probe_ill_conditioned: 4,
            drogue_ambiguous: 11,
            outlier_keypoints: 27,
            gross_error_frames: 3,
        },
        pixel_sigma: PixelSigmaCheck {
            assumed: 1.0,
            estimated: Some(1.12),
            estimated_ci95: Some([1.10, 1.14]),
            consistent: false,
            dof: 41_300,
        },
        nominal_consistency: Some(NominalConsistency {
            frame_alpha: 0.01,
            frame_threshold_d2: 16.81,
            frames_tested: 2950,
            frames_over_threshold: 1120,
            window_frames: 60,
            windows: 49,
            windows_over_threshold: 20,
            session_p_value: 3.2e-12,
        }),
        change_search: change_search(),
        change_points: vec![ChangePoint {
            frame: 1800,
            time_s: 60.0,
            frame_ci95: [1796, 1803],
            translation_mm: [4.2, -1.5, 0.8],
            rotation_deg: [0.18, -0.06, 0.02],
            translation_ci95_mm: [0.31, 0.28, 0.55],
            rotation_ci95_deg: [0.012, 0.01, 0.015],
        }],
        segments: shifted_segments(),
        fixed_offset: Some(FixedOffset {
            tolerance_mm: 30.0,
            contact_range_m: 15.0,
            frames_over_tolerance: 214,
            first_frame_over_tolerance: Some(1807),
            max_error_mm: 41.3,
            by_range: range_bins(),
        }),
        truth: Some(TruthComparison {
            dual_error_mm: stats(2920, 1.1, 2.6, 4.9),
            fixed_error_mm: Some(stats(2920, 9.0, 37.8, 44.0)),
            contact_range_m: 15.0,
            dual_within_contact_mm: Some(stats(1015, 0.7, 1.6, 2.2)),
            fixed_within_contact_mm: Some(stats(1015, 27.4, 39.1, 44.0)),
            by_range: truth_bins(),
        }),
        online_alarm: Some(OnlineAlarm {
            detector: "CUSUM".into(),
            frame: 1812,
            time_s: 60.4,
            delay_frames: Some(12),
        }),
        warnings: shifted_warnings(),
        rows: demo_rows(3000, 1800),
    }
}

/// A session name with markup, to check escaping.
pub const HOSTILE_SESSION: &str = "night <script>alert(\"x\")</script> & 'co'.yaml";

/// A short stable session without nominal mount or truth; the gate passes.
pub fn stable_outcome() -> AuditOutcome {
    let mut outcome = shifted_outcome();
    outcome.verdict = Verdict::Stable;
    outcome.gate = Gate::Pass;
    outcome.gate_reasons.clear();
    outcome.inputs = inputs(HOSTILE_SESSION, false, false);
    outcome.frames = FrameCounts {
        total: 200,
        solved: 197,
        rejected: 3,
        both_solved: 194,
        rejected_by_reason: BTreeMap::from([("probe: too_few_points".to_string(), 3)]),
        ..FrameCounts::default()
    };
    outcome.pixel_sigma = PixelSigmaCheck {
        assumed: 1.0,
        estimated: Some(0.98),
        estimated_ci95: Some([0.95, 1.01]),
        consistent: true,
        dof: 1200,
    };
    outcome.nominal_consistency = None;
    outcome.change_points.clear();
    outcome.segments.truncate(1);
    outcome.segments[0].last_frame = 199;
    outcome.segments[0].solved_frames = 197;
    outcome.segments[0].mount_deviation = deviation(
        [0.0; 3],
        [0.0; 3],
        [0.21, 0.19, 0.42],
        [0.008, 0.007, 0.012],
    );
    outcome.segments[0].last_time_s = 6.633_333;
    outcome.segments[0].fixed_offset_error_mm = None;
    outcome.fixed_offset = None;
    outcome.truth = None;
    outcome.online_alarm = None;
    outcome.warnings = vec![Warning {
        code: WarningCode::NoNominalMount,
        message: "No nominal mount was given <so> only drift within the session is reported."
            .into(),
        advice: "Add a mount file to the session to check the mount against its nominal.".into(),
    }];
    outcome.rows = (0..200)
        .map(|f| {
            let mut row = demo_row(f, 200, u64::MAX);
            row.d2 = None;
            row.dof = None;
            row.fixed_error_mm = None;
            row.true_dual_error_mm = None;
            row.true_fixed_error_mm = None;
            row
        })
        .collect();
    outcome
}
