//! The sections of the HTML report below the verdict: each returns a `<section>` built from the
//! outcome (text escaped by the table and fact helpers) with its plot inlined.

use crate::camera::Distortion;
use crate::commands::audit::{
    AuditOutcome, ChangePoint, ErrorStats, RangeBin, Segment, TruthRangeBin,
};

use super::format::{decimals_to_tell_apart, fixed, p_value, reason, signed, with_ci};
use super::html::{facts, figure, table};
use super::svg::escape;

const AXES: [&str; 6] = ["x mm", "y mm", "z mm", "yaw deg", "pitch deg", "roll deg"];

fn open(id: &str, title: &str) -> String {
    format!("<section id=\"{id}\">\n<h2>{}</h2>\n", escape(title))
}

fn paragraph(text: &str) -> String {
    format!("<p>{}</p>\n", escape(text))
}

fn head_with_axes<'a>(lead: &[&'a str], tail: &[&'a str]) -> Vec<&'a str> {
    lead.iter()
        .chain(AXES.iter())
        .chain(tail)
        .copied()
        .collect()
}

fn axis_cells(t: &[f64; 3], t_ci: &[f64; 3], r: &[f64; 3], r_ci: &[f64; 3]) -> Vec<String> {
    let translation = (0..3).map(|i| with_ci(t[i], t_ci[i], 2));
    let rotation = (0..3).map(|i| with_ci(r[i], r_ci[i], 3));
    translation.chain(rotation).collect()
}

pub(super) fn change_points(outcome: &AuditOutcome) -> String {
    let mut out = open("change-points", "Change points");
    if outcome.change_points.is_empty() {
        out.push_str(&paragraph(
            "No change point: the mount held still within the session as far as the data can tell.",
        ));
    } else {
        out.push_str(&paragraph(
            "Each change point is the first frame of a new segment. The shift is the later \
             segment's mount relative to the earlier one, with 95% half-widths (\u{b1}).",
        ));
        let head = head_with_axes(&["frame", "95% frame range", "time (s)"], &[]);
        let rows: Vec<Vec<String>> = outcome.change_points.iter().map(change_row).collect();
        out.push_str(&table(&head, &rows, 0));
    }
    if let Some(alarm) = &outcome.online_alarm {
        let delay = alarm.delay_frames.map_or(String::new(), |d| {
            format!(", {d} frames after the first change point")
        });
        out.push_str(&paragraph(&format!(
            "A real-time detector would have alarmed at frame {} (t = {} s){delay}. Detector: {}.",
            alarm.frame,
            fixed(alarm.time_s, 2),
            alarm.detector
        )));
    }
    out.push_str("</section>\n");
    out
}

fn change_row(cp: &ChangePoint) -> Vec<String> {
    let mut row = vec![
        cp.frame.to_string(),
        format!("{} to {}", cp.frame_ci95[0], cp.frame_ci95[1]),
        fixed(cp.time_s, 2),
    ];
    row.extend(axis_cells(
        &cp.translation_mm,
        &cp.translation_ci95_mm,
        &cp.rotation_deg,
        &cp.rotation_ci95_deg,
    ));
    row
}

pub(super) fn segments(outcome: &AuditOutcome, plot: &str) -> String {
    let reference = if outcome.inputs.nominal_mount.is_some() {
        "the nominal mount"
    } else {
        "the first segment (no nominal mount was given)"
    };
    let mut out = open("segments", "Segments");
    out.push_str(&paragraph(&format!(
        "Between change points the mount is taken as fixed. Deviation from {reference}: \
         translation in body axes (x forward, y right, z down), rotation as yaw, pitch, roll; \
         95% half-widths (\u{b1})."
    )));
    let head = head_with_axes(&["#", "frames", "time (s)", "solved"], &[]);
    let rows: Vec<Vec<String>> = outcome
        .segments
        .iter()
        .enumerate()
        .map(segment_row)
        .collect();
    out.push_str(&table(&head, &rows, 0));
    out.push_str(&paragraph(
        "Per segment: the fixed-offset error computed with the segment's mount estimate, and the \
         scatter of the per-frame deviations against what the stated noise explains (a ratio \
         well above 1 hints at a loose mount).",
    ));
    let head = [
        "#",
        "frames with a vector",
        "error median mm",
        "error p95 mm",
        "error max mm",
        "scatter ratio",
        "scatter p-value",
    ];
    let rows: Vec<Vec<String>> = outcome
        .segments
        .iter()
        .enumerate()
        .map(segment_quality_row)
        .collect();
    out.push_str(&table(&head, &rows, 0));
    out.push_str(&figure(
        plot,
        "Mount deviation per frame (dots) for each axis, with each segment's estimate and its 95% \
         interval (line and band), change points (dashed) and the online alarm (dotted).",
    ));
    out.push_str("</section>\n");
    out
}

fn segment_row((index, s): (usize, &Segment)) -> Vec<String> {
    let d = &s.mount_deviation;
    let mut row = vec![
        index.to_string(),
        format!("{} to {}", s.first_frame, s.last_frame),
        format!(
            "{} to {}",
            fixed(s.first_time_s, 2),
            fixed(s.last_time_s, 2)
        ),
        s.solved_frames.to_string(),
    ];
    row.extend(axis_cells(
        &d.translation_mm,
        &d.translation_ci95_mm,
        &d.rotation_deg,
        &d.rotation_ci95_deg,
    ));
    row
}

fn segment_quality_row((index, s): (usize, &Segment)) -> Vec<String> {
    let mut row = vec![index.to_string()];
    match &s.fixed_offset_error_mm {
        Some(e) => row.extend([
            e.frames.to_string(),
            fixed(e.median, 1),
            fixed(e.p95, 1),
            fixed(e.max, 1),
        ]),
        None => row.extend(["n/a"; 4].map(String::from)),
    }
    let flag = if s.scatter.excess { " (excess)" } else { "" };
    row.push(format!("{}{flag}", fixed(s.scatter.ratio, 2)));
    row.push(p_value(s.scatter.p_value));
    row
}

pub(super) fn fixed_offset(outcome: &AuditOutcome, plot: &str) -> String {
    let mut out = open("fixed-offset", "Fixed-offset error");
    match &outcome.fixed_offset {
        None => out.push_str(&paragraph(
            "Not computed: without a nominal mount there is no fixed offset to compare with.",
        )),
        Some(fo) => {
            let first = fo
                .first_frame_over_tolerance
                .map_or("none".into(), |f| f.to_string());
            out.push_str(&paragraph(
                "The error a pipeline that assumes the nominal camera-to-probe offset makes in \
                 the probe-to-drogue vector, computed with each segment's mount estimate.",
            ));
            out.push_str(&facts(&[
                (
                    "tolerance",
                    format!(
                        "{} mm at ranges up to {} m",
                        fixed(fo.tolerance_mm, 1),
                        fixed(fo.contact_range_m, 1)
                    ),
                ),
                ("largest error", format!("{} mm", fixed(fo.max_error_mm, 1))),
                (
                    "frames over tolerance",
                    fo.frames_over_tolerance.to_string(),
                ),
                ("first frame over tolerance", first),
            ]));
            out.push_str("<h3>By range</h3>\n");
            let head = ["range (m)", "frames", "median mm", "p95 mm", "max mm"];
            let rows: Vec<Vec<String>> = fo.by_range.iter().map(range_row).collect();
            out.push_str(&table(&head, &rows, 1));
        }
    }
    out.push_str(&truth(outcome));
    out.push_str(&figure(
        plot,
        "Error of the probe-to-drogue vector on a logarithmic axis, against range and against \
         time (frames within the contact range): the fixed-offset error estimated from each \
         segment's mount (dots) and, with truth, both pipelines' errors against truth \
         (crosses: fixed-offset, triangles: dual-object). The dashed line is the tolerance, \
         which applies within the contact range; ranges beyond it are shaded.",
    ));
    out.push_str("</section>\n");
    out
}

fn range_row(bin: &RangeBin) -> Vec<String> {
    vec![
        range_text(bin.range_min_m, bin.range_max_m),
        bin.error_mm.frames.to_string(),
        fixed(bin.error_mm.median, 1),
        fixed(bin.error_mm.p95, 1),
        fixed(bin.error_mm.max, 1),
    ]
}

fn truth(outcome: &AuditOutcome) -> String {
    let Some(truth) = &outcome.truth else {
        return String::new();
    };
    let within = format!("within {} m", fixed(truth.contact_range_m, 1));
    // When every measured range lies within the contact range, one row per pipeline says so.
    let every_frame = truth
        .dual_within_contact_mm
        .is_some_and(|e| e.frames == truth.dual_error_mm.frames);
    let pipelines = [
        (
            "dual-object (both poses solved)",
            truth.dual_within_contact_mm.as_ref(),
            Some(&truth.dual_error_mm),
        ),
        (
            "fixed-offset (nominal mount)",
            truth.fixed_within_contact_mm.as_ref(),
            truth.fixed_error_mm.as_ref(),
        ),
    ];
    let mut rows = Vec::new();
    for (name, near, all) in pipelines {
        match (every_frame, near, all) {
            (true, _, Some(e)) => rows.push(error_stats_row(name, &format!("all ({within})"), e)),
            (false, near, all) => {
                rows.extend(near.map(|e| error_stats_row(name, &within, e)));
                rows.extend(all.map(|e| error_stats_row(name, "all ranges", e)));
            }
            (true, _, None) => {}
        }
    }
    let mut out = String::from("<h3>Against truth</h3>\n");
    out.push_str(&paragraph(&format!(
        "The true error of each pipeline's probe-to-drogue vector. The tolerance applies {within} \
         (contact); far from the drogue both pipelines err more because the drogue's own pose \
         is less certain there, so compare them range by range."
    )));
    let head = [
        "pipeline",
        "ranges",
        "frames",
        "median mm",
        "p95 mm",
        "max mm",
    ];
    out.push_str(&table(&head, &rows, 2));
    if !truth.by_range.is_empty() {
        out.push_str("<h4>True error by range</h4>\n");
        let groups = "<tr><th></th><th class=\"group\" colspan=\"3\">dual-object</th>\
                      <th class=\"group\" colspan=\"3\">fixed-offset</th></tr>";
        let head = [
            "range (m)",
            "frames",
            "median mm",
            "p95 mm",
            "frames",
            "median mm",
            "p95 mm",
        ];
        let rows: Vec<Vec<String>> = truth.by_range.iter().map(truth_range_row).collect();
        let grouped = table(&head, &rows, 1).replacen("<thead>", &format!("<thead>{groups}"), 1);
        out.push_str(&grouped);
    }
    out
}

fn truth_range_row(bin: &TruthRangeBin) -> Vec<String> {
    let mut row = vec![range_text(bin.range_min_m, bin.range_max_m)];
    for e in [&bin.dual_error_mm, &bin.fixed_error_mm] {
        match e {
            Some(e) => row.extend([e.frames.to_string(), fixed(e.median, 1), fixed(e.p95, 1)]),
            None => row.extend(["0".into(), "n/a".into(), "n/a".into()]),
        }
    }
    row
}

/// A range bin as text; the last bin is open-ended.
fn range_text(lo_m: f64, hi_m: f64) -> String {
    if hi_m.is_finite() {
        format!("{} to {}", fixed(lo_m, 1), fixed(hi_m, 1))
    } else {
        format!("{} and beyond", fixed(lo_m, 1))
    }
}

fn error_stats_row(name: &str, ranges: &str, e: &ErrorStats) -> Vec<String> {
    vec![
        name.into(),
        ranges.into(),
        e.frames.to_string(),
        fixed(e.median, 1),
        fixed(e.p95, 1),
        fixed(e.max, 1),
    ]
}

pub(super) fn consistency(outcome: &AuditOutcome, plot: &str) -> String {
    let mut out = open("consistency", "Consistency with the nominal mount");
    match &outcome.nominal_consistency {
        None => out.push_str(&paragraph(
            "Not tested: no nominal mount was given. Drift within the session is still found \
             from the observed offsets alone.",
        )),
        Some(nc) => {
            out.push_str(&facts(&[
                (
                    "frames over the threshold",
                    format!(
                        "{} of {} (threshold d2 = {} for 6 dof, level {})",
                        nc.frames_over_threshold,
                        nc.frames_tested,
                        fixed(nc.frame_threshold_d2, 2),
                        nc.frame_alpha
                    ),
                ),
                (
                    "windows over the threshold",
                    format!(
                        "{} of {} ({} frames each)",
                        nc.windows_over_threshold, nc.windows, nc.window_frames
                    ),
                ),
                ("whole session, p-value", p_value(nc.session_p_value)),
            ]));
            out.push_str(&figure(
                plot,
                "d2 of each frame: the squared, covariance-weighted distance of the observed \
                 mount from the nominal; above the dashed threshold a frame is inconsistent.",
            ));
        }
    }
    out.push_str("</section>\n");
    out
}

pub(super) fn data_quality(outcome: &AuditOutcome, plot: &str) -> String {
    let f = &outcome.frames;
    let mut out = open("quality", "Data quality");
    out.push_str(&facts(&[
        ("frames read", f.total.to_string()),
        ("probe solved", f.solved.to_string()),
        ("probe and drogue solved", f.both_solved.to_string()),
        ("rejected", f.rejected.to_string()),
        ("probe ill-conditioned", f.probe_ill_conditioned.to_string()),
        ("drogue ambiguous", f.drogue_ambiguous.to_string()),
        ("outlier keypoints dropped", f.outlier_keypoints.to_string()),
        (
            "gross-error frames set aside",
            f.gross_error_frames.to_string(),
        ),
        ("pixel sigma", sigma_text(outcome)),
    ]));
    if !f.rejected_by_reason.is_empty() {
        out.push_str("<h3>Rejected frames by reason</h3>\n");
        let rows: Vec<Vec<String>> = f
            .rejected_by_reason
            .iter()
            .map(|(why, n)| vec![reason(why), n.to_string()])
            .collect();
        out.push_str(&table(&["object: reason", "frames"], &rows, 1));
    }
    out.push_str(&warnings(outcome));
    out.push_str(&figure(
        plot,
        "Reprojection fit of each solved pose (chi-square per degree of freedom). Near 1 the \
         stated pixel sigma holds; the dash-dot line is the level the estimated sigma implies.",
    ));
    out.push_str("</section>\n");
    out
}

fn sigma_text(outcome: &AuditOutcome) -> String {
    let s = &outcome.pixel_sigma;
    let stated = format!("stated {} px", fixed(s.assumed, 2));
    match s.estimated {
        None => format!("{stated}; not estimated (no redundant keypoints)"),
        Some(est) => {
            let decimals = s
                .estimated_ci95
                .map_or(2, |[lo, hi]| decimals_to_tell_apart(lo, hi, 2, 4));
            let ci = s.estimated_ci95.map_or(String::new(), |[lo, hi]| {
                format!(
                    " (95% interval {} to {})",
                    fixed(lo, decimals),
                    fixed(hi, decimals)
                )
            });
            let verdict = if s.consistent {
                "consistent with the stated value"
            } else {
                "not consistent with the stated value"
            };
            format!(
                "{stated}; estimated {} px{ci} from {} degrees of freedom: {verdict}",
                fixed(est, decimals),
                s.dof
            )
        }
    }
}

fn warnings(outcome: &AuditOutcome) -> String {
    let mut out = String::from("<h3 id=\"warnings\">Warnings</h3>\n");
    if outcome.warnings.is_empty() {
        out.push_str(&paragraph("None."));
    }
    for w in &outcome.warnings {
        out.push_str(&format!(
            "<div class=\"warning\"><strong>{}</strong>Advice: {}</div>\n",
            escape(&w.message),
            escape(&w.advice)
        ));
    }
    out
}

pub(super) fn inputs(outcome: &AuditOutcome) -> String {
    let i = &outcome.inputs;
    let c = &i.camera;
    let mount = i.nominal_mount.as_ref().map_or(
        "not given: only drift within the session is reported".into(),
        |m| {
            format!(
                "position [{}, {}, {}] m; yaw {}, pitch {}, roll {} deg",
                fixed(m.position_m[0], 4),
                fixed(m.position_m[1], 4),
                fixed(m.position_m[2], 4),
                signed(m.yaw_deg, 3),
                signed(m.pitch_deg, 3),
                signed(m.roll_deg, 3)
            )
        },
    );
    let p = &i.policy;
    let search = &outcome.change_search;
    let inflation: Vec<String> = search
        .noise_inflation
        .iter()
        .map(|v| fixed(*v, 2))
        .collect();
    let mut out = open("inputs", "Inputs");
    out.push_str(&facts(&[
        ("session", i.session.clone()),
        (
            "camera",
            format!(
                "{} {} x {} px; fx {}, fy {}, cx {}, cy {}, skew {}",
                c.distortion.model_name(),
                c.width,
                c.height,
                fixed(c.fx, 2),
                fixed(c.fy, 2),
                fixed(c.cx, 2),
                fixed(c.cy, 2),
                fixed(c.skew, 2)
            ),
        ),
        ("distortion", distortion_text(&c.distortion)),
        (
            "probe model",
            model_text(i.probe.points, &i.probe.reference),
        ),
        (
            "drogue model",
            model_text(i.drogue.points, &i.drogue.reference),
        ),
        ("nominal mount", mount),
        (
            "truth",
            if i.has_truth { "given" } else { "not given" }.into(),
        ),
        (
            "policy",
            format!(
                "translation {} mm, rotation {} deg, vector error {} mm within {} m, \
                 false-alarm rate {}",
                fixed(p.max_translation_mm, 2),
                fixed(p.max_rotation_deg, 3),
                fixed(p.max_vector_error_mm, 1),
                fixed(p.contact_range_m, 1),
                p.false_alarm_rate
            ),
        ),
        (
            "change search",
            format!(
                "{}; penalty {}, segments of at least {} frames, {} calibration runs \
                 (false-alarm rate at most the policy's with {}% confidence)",
                search.method,
                fixed(search.penalty, 2),
                search.min_segment_frames,
                search.calibration_runs,
                fixed(100.0 * search.calibration_confidence, 0)
            ),
        ),
        (
            "noise inflation (x, y, z, yaw, pitch, roll)",
            inflation.join(", "),
        ),
    ]));
    out.push_str("</section>\n");
    out
}

fn model_text(points: usize, reference: &str) -> String {
    format!("{points} keypoints, reference point {reference}")
}

fn distortion_text(d: &Distortion) -> String {
    match *d {
        Distortion::BrownConrady { k1, k2, p1, p2, k3 } => {
            format!("Brown-Conrady k1 {k1}, k2 {k2}, p1 {p1}, p2 {p2}, k3 {k3}")
        }
        Distortion::KannalaBrandt { k1, k2, k3, k4 } => {
            format!("Kannala-Brandt k1 {k1}, k2 {k2}, k3 {k3}, k4 {k4}")
        }
    }
}
