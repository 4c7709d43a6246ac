//! Turns the solved frames and the statistics into the audit outcome: frame counts, change points
//! and segments in report units, the fixed-offset error from each segment's mount, truth errors,
//! verdict, gate and warnings.

use std::collections::HashMap;

use nalgebra::Vector6;

use crate::offset::fixed_offset_error;
use crate::offset::frames::FrameRecord;
use crate::pnp::RejectionReason;
use crate::session::{MountFile, Policy};
use crate::stats::drift::{DriftAnalysis, SegmentEstimate};
use crate::stats::segments::shift_between;

use super::analysis::{Analysis, FRAME_ALPHA, LEVEL, WINDOW_FRAMES};
use super::input::Setup;
use super::outcome::*;
use super::solve::Solved;
use super::verdict;

/// Range bins of the error tables, m (the last bin is open-ended); the policy's contact range is
/// added as one more edge ([`range_bin_edges_m`]).
const RANGE_BIN_EDGES_M: [f64; 7] = [0.0, 5.0, 10.0, 20.0, 40.0, 80.0, f64::INFINITY];

/// [`RANGE_BIN_EDGES_M`] with the contact range as an edge, so that no bin straddles the range
/// within which the vector-error tolerance applies.
fn range_bin_edges_m(contact_range_m: f64) -> Vec<f64> {
    let mut edges = RANGE_BIN_EDGES_M.to_vec();
    if contact_range_m.is_finite() && contact_range_m > 0.0 && !edges.contains(&contact_range_m) {
        edges.push(contact_range_m);
        edges.sort_by(f64::total_cmp);
    }
    edges
}

/// The bin of `range_m` among `edges` (lower edge included).
fn range_bin(edges: &[f64], range_m: f64) -> Option<usize> {
    edges
        .windows(2)
        .position(|w| range_m >= w[0] && range_m < w[1])
}

/// Everything the per-frame rows and the summary tables share.
struct FrameErrors {
    /// Fixed-offset error (segment mount) per record, mm.
    fixed_mm: Vec<Option<f64>>,
    segment: Vec<Option<usize>>,
}

pub fn build(setup: &Setup, solved: &Solved, analysis: &Analysis, policy: &Policy) -> AuditOutcome {
    let errors = frame_errors(setup, solved, analysis);
    let segments = segments(setup, solved, analysis, &errors);
    let change_points = change_points(analysis.drift.as_ref());
    let fixed = setup.nominal.map(|_| fixed_offset(solved, &errors, policy));
    let truth = setup
        .has_truth
        .then(|| truth_errors(setup, solved, policy))
        .flatten();
    let mut frames = frame_counts(&solved.records);
    frames.gross_error_frames = analysis.screened_records.len() as u64;
    let pixel_sigma = pixel_sigma(setup, analysis);
    let nominal_consistency = setup.nominal.map(|_| nominal_consistency(analysis));
    let verdict = verdict::verdict(&change_points, nominal_consistency.as_ref(), policy);
    let gate_reasons = verdict::gate_reasons(
        &change_points,
        &segments,
        fixed.as_ref(),
        setup.nominal.is_some(),
        policy,
    );
    let mut outcome = AuditOutcome {
        schema: AUDIT_SCHEMA,
        tool_version: env!("CARGO_PKG_VERSION"),
        verdict,
        gate: if gate_reasons.is_empty() {
            Gate::Pass
        } else {
            Gate::Fail
        },
        gate_reasons,
        inputs: inputs(setup, policy),
        frames,
        pixel_sigma,
        nominal_consistency,
        change_search: change_search(analysis.drift.as_ref(), policy),
        change_points,
        segments,
        fixed_offset: fixed,
        truth,
        online_alarm: online_alarm(solved, analysis),
        warnings: Vec::new(),
        rows: Vec::new(),
    };
    outcome.rows = rows(setup, solved, analysis, &errors);
    outcome.warnings = verdict::warnings(&outcome, analysis);
    outcome
}

fn inputs(setup: &Setup, policy: &Policy) -> InputsSummary {
    let model = |m: &crate::model::KeypointModel| ModelSummary {
        points: m.len(),
        reference: m.reference_id().to_string(),
    };
    InputsSummary {
        session: setup.name.clone(),
        camera: setup.camera.clone(),
        probe: model(&setup.probe),
        drogue: model(&setup.drogue),
        nominal_mount: setup.nominal.as_ref().map(MountFile::from_mount),
        policy: *policy,
        has_truth: setup.has_truth,
    }
}

fn frame_counts(records: &[FrameRecord]) -> FrameCounts {
    let mut counts = FrameCounts {
        total: records.len() as u64,
        ..FrameCounts::default()
    };
    let mut reasons: HashMap<(&str, RejectionReason), u64> = HashMap::new();
    for r in records {
        match &r.probe {
            Ok(fit) => {
                counts.solved += 1;
                counts.probe_ill_conditioned += u64::from(fit.ill_conditioned);
                counts.outlier_keypoints += fit.outliers();
            }
            Err(reason) => {
                counts.rejected += 1;
                *reasons.entry(("probe", *reason)).or_default() += 1;
            }
        }
        match &r.drogue {
            Ok(fit) => {
                counts.drogue_ambiguous += u64::from(fit.ambiguous);
                counts.outlier_keypoints += fit.outliers();
                counts.both_solved += u64::from(r.probe.is_ok());
            }
            Err(reason) => {
                *reasons.entry(("drogue", *reason)).or_default() += 1;
            }
        }
    }
    counts.rejected_by_reason = reasons
        .into_iter()
        .map(|((object, reason), n)| (format!("{object}: {}", rejection_name(reason)), n))
        .collect();
    counts
}

fn pixel_sigma(setup: &Setup, analysis: &Analysis) -> PixelSigmaCheck {
    let assumed = setup.camera.pixel_sigma;
    match &analysis.pixel {
        Some(p) => PixelSigmaCheck {
            assumed,
            estimated: Some(p.estimated_px),
            estimated_ci95: Some([p.interval_px.0, p.interval_px.1]),
            consistent: p.interval_px.0 <= assumed && assumed <= p.interval_px.1,
            dof: p.dof as u64,
        },
        None => PixelSigmaCheck {
            assumed,
            estimated: None,
            estimated_ci95: None,
            consistent: true,
            dof: 0,
        },
    }
}

fn nominal_consistency(analysis: &Analysis) -> NominalConsistency {
    let threshold =
        crate::stats::distributions::chi2_quantile(1.0 - FRAME_ALPHA, 6.0).unwrap_or(f64::NAN);
    let over = |tests: &[crate::stats::consistency::ChiSquareTest]| {
        tests
            .iter()
            .filter(|t| t.p_value.is_some_and(|p| p < FRAME_ALPHA))
            .count() as u64
    };
    NominalConsistency {
        frame_alpha: FRAME_ALPHA,
        frame_threshold_d2: threshold,
        frames_tested: analysis.frame_tests.len() as u64,
        frames_over_threshold: over(&analysis.frame_tests),
        window_frames: WINDOW_FRAMES as u64,
        windows: analysis.windows.len() as u64,
        windows_over_threshold: over(&analysis.windows),
        session_p_value: verdict::session_p_value(analysis),
    }
}

fn change_search(drift: Option<&DriftAnalysis>, policy: &Policy) -> ChangeSearch {
    let Some(d) = drift else {
        return ChangeSearch {
            method: "not run: too few solved frames".to_string(),
            penalty: 0.0,
            min_segment_frames: 0,
            false_alarm_rate: policy.false_alarm_rate,
            calibration_runs: 0,
            calibration_confidence: 0.0,
            noise_inflation: [0.0; 6],
        };
    };
    let mut factors: Vec<f64> = d.noise.factors.iter().copied().collect();
    factors.sort_by(|a, b| b.total_cmp(a));
    ChangeSearch {
        method: "exact PELT, information-weighted Gaussian cost under the effective noise"
            .to_string(),
        penalty: d.penalty.penalty,
        min_segment_frames: d.min_segment_samples as u64,
        false_alarm_rate: d.penalty.false_alarm_rate,
        calibration_runs: d.penalty.runs as u64,
        calibration_confidence: d.penalty.confidence,
        noise_inflation: std::array::from_fn(|i| factors[i]),
    }
}

fn online_alarm(solved: &Solved, analysis: &Analysis) -> Option<OnlineAlarm> {
    let online = analysis.drift.as_ref()?.online.as_ref()?;
    let record = &solved.records[*analysis.sample_records.get(online.index?)?];
    Some(OnlineAlarm {
        detector: format!(
            "MEWMA (lambda {}, threshold {:.2}, {} warm-up frames)",
            online.lambda, online.threshold, online.warmup_samples
        ),
        frame: record.frame,
        time_s: record.time_s,
        delay_frames: online.delay_frames,
    })
}

fn split(v: &Vector6<f64>) -> ([f64; 3], [f64; 3]) {
    ([v[0], v[1], v[2]], [v[3], v[4], v[5]])
}

fn half_widths(h: &[Option<f64>; 6]) -> ([f64; 3], [f64; 3]) {
    let v = Vector6::from_fn(|i, _| h[i].unwrap_or(f64::INFINITY));
    split(&v)
}

fn change_points(drift: Option<&DriftAnalysis>) -> Vec<ChangePoint> {
    let Some(d) = drift else { return Vec::new() };
    d.change_points
        .iter()
        .map(|c| {
            let (t, r) = split(&c.shift.shift);
            let (th, rh) = half_widths(&c.shift.half_width);
            ChangePoint {
                frame: c.frame as u64,
                time_s: c.time_s,
                frame_ci95: [c.frame_interval.0 as u64, c.frame_interval.1 as u64],
                translation_mm: t,
                rotation_deg: r,
                translation_ci95_mm: th,
                rotation_ci95_deg: rh,
            }
        })
        .collect()
}

fn frame_errors(setup: &Setup, solved: &Solved, analysis: &Analysis) -> FrameErrors {
    let n = solved.records.len();
    let mut segment = vec![None; n];
    for (s, &rec) in analysis.sample_records.iter().enumerate() {
        segment[rec] = analysis.sample_segment.get(s).copied();
    }
    // Frames without a probe solution inherit the segment of the last solved frame before them.
    let mut last = None;
    for seg in segment.iter_mut() {
        match *seg {
            Some(k) => last = Some(k),
            None => *seg = last,
        }
    }
    let fixed_mm = solved
        .records
        .iter()
        .zip(&segment)
        .map(|(r, seg)| {
            let nominal = setup.nominal?;
            let mount = analysis.segment_mounts.get((*seg)?)?;
            let x_c = r.drogue_camera_m?;
            Some(fixed_offset_error(&nominal, mount, &x_c).norm() * 1000.0)
        })
        .collect();
    FrameErrors { fixed_mm, segment }
}

fn segments(
    setup: &Setup,
    solved: &Solved,
    analysis: &Analysis,
    errors: &FrameErrors,
) -> Vec<Segment> {
    let Some(drift) = &analysis.drift else {
        return Vec::new();
    };
    let first = drift.segments.first();
    drift
        .segments
        .iter()
        .map(|s| {
            let range = segment_records(solved, s);
            let fixed: Vec<f64> = range.clone().filter_map(|i| errors.fixed_mm[i]).collect();
            Segment {
                first_frame: s.first_frame as u64,
                last_frame: s.last_frame as u64,
                first_time_s: solved.records[range.start].time_s,
                last_time_s: solved.records[range.end - 1].time_s,
                solved_frames: (s.mean.end - s.mean.start) as u64,
                mount_deviation: segment_deviation(s, first.filter(|_| setup.nominal.is_none())),
                fixed_offset_error_mm: setup.nominal.and_then(|_| error_stats(fixed)),
                scatter: scatter(s),
            }
        })
        .collect()
}

/// Record indices spanned by a segment (first to last frame).
fn segment_records(solved: &Solved, s: &SegmentEstimate) -> std::ops::Range<usize> {
    let start = solved
        .records
        .partition_point(|r| r.frame < s.first_frame as u64);
    let end = solved
        .records
        .partition_point(|r| r.frame <= s.last_frame as u64);
    start..end.max(start + 1)
}

/// Deviation from the nominal, or (without one) from the first segment.
fn segment_deviation(s: &SegmentEstimate, relative_to: Option<&SegmentEstimate>) -> Deviation {
    let (mean, half) = match relative_to {
        Some(first) => match shift_between(&first.mean, &s.mean, LEVEL) {
            Ok(shift) => (shift.shift, shift.half_width),
            Err(_) => (s.mean.mean, s.mean.half_width),
        },
        None => (s.mean.mean, s.mean.half_width),
    };
    let (t, r) = split(&mean);
    let (th, rh) = half_widths(&half);
    Deviation {
        translation_mm: t,
        rotation_deg: r,
        translation_ci95_mm: th,
        rotation_ci95_deg: rh,
    }
}

fn scatter(s: &SegmentEstimate) -> ScatterCheck {
    let p = s.scatter.test.p_value.unwrap_or(1.0);
    ScatterCheck {
        ratio: s.scatter.variance_factor.unwrap_or(1.0),
        p_value: p,
        excess: p < FRAME_ALPHA,
    }
}

/// Median, 95th percentile and maximum (nearest-rank percentiles).
pub fn error_stats(mut values: Vec<f64>) -> Option<ErrorStats> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let rank =
        |q: f64| values[((q * values.len() as f64).ceil() as usize).clamp(1, values.len()) - 1];
    Some(ErrorStats {
        frames: values.len() as u64,
        median: rank(0.5),
        p95: rank(0.95),
        max: values[values.len() - 1],
    })
}

fn fixed_offset(solved: &Solved, errors: &FrameErrors, policy: &Policy) -> FixedOffset {
    let mut over = 0;
    let mut first_over = None;
    let mut max_error: f64 = 0.0;
    let edges = range_bin_edges_m(policy.contact_range_m);
    let mut bins: Vec<Vec<f64>> = vec![Vec::new(); edges.len() - 1];
    for (r, e) in solved.records.iter().zip(&errors.fixed_mm) {
        let (Some(e), Some(range)) = (*e, r.dual_vector_m.map(|v| v.norm())) else {
            continue;
        };
        max_error = max_error.max(e);
        if range <= policy.contact_range_m && e > policy.max_vector_error_mm {
            over += 1;
            first_over.get_or_insert(r.frame);
        }
        if let Some(b) = range_bin(&edges, range) {
            bins[b].push(e);
        }
    }
    let by_range = bins
        .into_iter()
        .enumerate()
        .filter_map(|(b, v)| {
            error_stats(v).map(|s| RangeBin {
                range_min_m: edges[b],
                range_max_m: edges[b + 1],
                error_mm: s,
            })
        })
        .collect();
    FixedOffset {
        tolerance_mm: policy.max_vector_error_mm,
        contact_range_m: policy.contact_range_m,
        frames_over_tolerance: over,
        first_frame_over_tolerance: first_over,
        max_error_mm: max_error,
        by_range,
    }
}

/// True errors of both pipelines' vectors, mm: over the session, within the contact range and
/// by range bin (measured range, as for the fixed-offset table and the gate).
fn truth_errors(setup: &Setup, solved: &Solved, policy: &Policy) -> Option<TruthComparison> {
    let mut all: [Vec<f64>; 2] = Default::default();
    let mut contact: [Vec<f64>; 2] = Default::default();
    let edges = range_bin_edges_m(policy.contact_range_m);
    let mut bins: Vec<[Vec<f64>; 2]> = vec![Default::default(); edges.len() - 1];
    for (r, t) in solved.records.iter().zip(&solved.true_vector_m) {
        let errors = true_errors(setup, r, t.as_ref());
        let range = r.dual_vector_m.map(|v| v.norm());
        let bin = range.and_then(|m| range_bin(&edges, m));
        for (k, e) in [errors.0, errors.1].into_iter().enumerate() {
            let Some(e) = e else { continue };
            all[k].push(e);
            if range.is_some_and(|m| m <= policy.contact_range_m) {
                contact[k].push(e);
            }
            if let Some(b) = bin {
                bins[b][k].push(e);
            }
        }
    }
    let by_range = bins
        .into_iter()
        .enumerate()
        .filter(|(_, [d, f])| !(d.is_empty() && f.is_empty()))
        .map(|(b, [d, f])| TruthRangeBin {
            range_min_m: edges[b],
            range_max_m: edges[b + 1],
            dual_error_mm: error_stats(d),
            fixed_error_mm: error_stats(f),
        })
        .collect();
    let [dual, fixed] = all;
    let [dual_contact, fixed_contact] = contact;
    Some(TruthComparison {
        dual_error_mm: error_stats(dual)?,
        fixed_error_mm: error_stats(fixed),
        contact_range_m: policy.contact_range_m,
        dual_within_contact_mm: error_stats(dual_contact),
        fixed_within_contact_mm: error_stats(fixed_contact),
        by_range,
    })
}

fn true_errors(
    setup: &Setup,
    record: &FrameRecord,
    true_vector_m: Option<&nalgebra::Vector3<f64>>,
) -> (Option<f64>, Option<f64>) {
    let Some(truth_m) = true_vector_m else {
        return (None, None);
    };
    let dual = record.dual_vector_m.map(|v| (v - truth_m).norm() * 1000.0);
    let fixed = setup
        .nominal
        .and_then(|m| record.vector_with_mount_m(&m, &setup.probe.reference_point()))
        .map(|v| (v - truth_m).norm() * 1000.0);
    (dual, fixed)
}

fn rows(
    setup: &Setup,
    solved: &Solved,
    analysis: &Analysis,
    errors: &FrameErrors,
) -> Vec<FrameRow> {
    let mut sample_of = vec![None; solved.records.len()];
    for (s, &rec) in analysis.sample_records.iter().enumerate() {
        sample_of[rec] = Some(s);
    }
    let mut screened = vec![false; solved.records.len()];
    for &rec in &analysis.screened_records {
        screened[rec] = true;
    }
    solved
        .records
        .iter()
        .enumerate()
        .map(|(i, r)| {
            let test = sample_of[i].map(|s| analysis.frame_tests[s]);
            let (true_dual, true_fixed) = true_errors(setup, r, solved.true_vector_m[i].as_ref());
            let vector = r.dual_vector_m;
            FrameRow {
                frame: r.frame,
                time_s: r.time_s,
                status: frame_status(r.probe.map(|_| ()), r.drogue.map(|_| ()), screened[i]),
                deviation: r.deviation.map(|d| d.into()),
                d2: setup.nominal.and(test.map(|t| t.statistic)),
                dof: setup
                    .nominal
                    .and(test.map(|t| u8::try_from(t.dof).unwrap_or(u8::MAX))),
                vector_m: vector.map(|v| v.into()),
                range_m: vector.map(|v| v.norm()),
                fixed_error_mm: errors.fixed_mm[i],
                segment: errors.segment[i].map(|k| u32::try_from(k).unwrap_or(u32::MAX)),
                probe_fit: r.probe.as_ref().ok().and_then(fit_ratio),
                drogue_fit: r.drogue.as_ref().ok().and_then(fit_ratio),
                true_dual_error_mm: true_dual,
                true_fixed_error_mm: true_fixed,
            }
        })
        .collect()
}

fn fit_ratio(f: &crate::offset::frames::Fit) -> Option<f64> {
    (f.dof > 0).then(|| f.chi2 / f.dof as f64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_contact_range_is_a_bin_edge() {
        let edges = range_bin_edges_m(15.0);
        assert_eq!(
            edges,
            vec![0.0, 5.0, 10.0, 15.0, 20.0, 40.0, 80.0, f64::INFINITY]
        );
        assert_eq!(range_bin(&edges, 14.99), Some(2));
        assert_eq!(range_bin(&edges, 15.0), Some(3));
        assert_eq!(range_bin(&edges, 1e6), Some(6));
        // An edge already present is not repeated; a meaningless range adds none.
        assert_eq!(range_bin_edges_m(20.0).len(), RANGE_BIN_EDGES_M.len());
        assert_eq!(
            range_bin_edges_m(f64::INFINITY).len(),
            RANGE_BIN_EDGES_M.len()
        );
    }
}
