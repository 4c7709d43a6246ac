//! Renderers of the maintenance-gate jobs: the terminal summaries and JSON of `survey` and
//! `compare`, and the surveyed mount file (YAML with comments saying what its numbers mean and
//! which frames they come from). They read outcomes only and compute no statistics.

use std::io::{self, Write};

use crate::commands::audit::Gate;
use crate::commands::compare::{AxisResult, ChangeOutcome, CompareOutcome, SideKind, SideSummary};
use crate::commands::survey::{GateWarning, GateWarningCode, SurveyOutcome, AXES};
use crate::session::yaml::{self, YamlWriteError};

use super::format::{fixed, p_value, signed};
use super::style::{TerminalStyle, Tone};
use super::terminal::table;

/// A survey's report JSON: the outcome itself, pretty-printed, with a final newline.
pub fn write_survey_json(w: &mut dyn Write, outcome: &SurveyOutcome) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, outcome)?;
    writeln!(w)
}

/// A comparison's report JSON.
pub fn write_compare_json(w: &mut dyn Write, outcome: &CompareOutcome) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, outcome)?;
    writeln!(w)
}

/// The surveyed mount file: the mount format the audit reads as a nominal, with comments.
pub fn survey_mount_yaml(outcome: &SurveyOutcome) -> Result<String, YamlWriteError> {
    let u = &outcome.used;
    let mut text = String::new();
    let mut comment = |line: String| {
        text.push_str("# ");
        text.push_str(&line);
        text.push('\n');
    };
    comment(format!(
        "As-installed camera mount surveyed by mountdrift {} from {}",
        outcome.tool_version, outcome.session
    ));
    comment(
        "Camera pose in the body frame B (x forward, y right, z down): position_m of the camera \
         centre, Z-Y-X yaw/pitch/roll of the boresight (deg)."
            .into(),
    );
    comment(format!(
        "Frames used: {} to {} (t = {} to {} s, {} solved frames), {}.",
        u.first_frame,
        u.last_frame,
        fixed(u.first_time_s, 2),
        fixed(u.last_time_s, 2),
        u.solved_frames,
        u.rule
    ));
    comment(
        "covariance: 6x6, row by row, order x, y, z (mm, body axes), yaw, pitch, roll (deg) of \
         the true mount about this one (translation p_true - p, Z-Y-X angles of R^T R_true); \
         a zero eigenvalue marks a direction the keypoints do not observe."
            .into(),
    );
    comment("ci95: 95% half-widths, position in mm, angles in deg.".into());
    comment(
        "camera: the intrinsics this survey was made with (a later compare tells a camera swap)."
            .into(),
    );
    text.push_str(&yaml::to_string(&outcome.mount)?);
    Ok(text)
}

fn heading(out: &mut String, text: &str, style: TerminalStyle) {
    out.push('\n');
    out.push_str(&style.paint(text, Tone::Heading));
    out.push('\n');
}

fn warnings(out: &mut String, list: &[GateWarning], style: TerminalStyle) {
    if list.is_empty() {
        return;
    }
    heading(out, "Warnings", style);
    for w in list {
        out.push_str(&format!(
            "  {} {}\n",
            style.paint("!", Tone::Caution),
            w.message
        ));
        out.push_str(&format!("    {}\n", style.paint(&w.advice, Tone::Dim)));
    }
}

/// Decimals for an axis: mm with 2, degrees with 3.
fn decimals(k: usize) -> usize {
    if k < 3 {
        2
    } else {
        3
    }
}

/// The terminal summary of a survey.
pub fn write_survey_summary(
    w: &mut dyn Write,
    outcome: &SurveyOutcome,
    style: TerminalStyle,
) -> io::Result<()> {
    let mut out = String::new();
    let (word, tone) = if outcome.precision.sufficient {
        ("SURVEYED", Tone::Good)
    } else {
        ("SURVEYED, PRECISION SHORT", Tone::Caution)
    };
    out.push_str(&format!(
        "{} \u{b7} session {}\n",
        style.paint(word, tone),
        outcome.session
    ));
    let u = &outcome.used;
    out.push_str(&format!(
        "  frames {} to {} (t = {}-{} s, {} frames used of {} in the session): {}\n",
        u.first_frame,
        u.last_frame,
        fixed(u.first_time_s, 2),
        fixed(u.last_time_s, 2),
        u.solved_frames,
        outcome.frames.total,
        u.rule
    ));
    survey_mount(&mut out, outcome, style);
    survey_precision(&mut out, outcome, style);
    survey_quality(&mut out, outcome, style);
    let mut all = outcome.warnings.clone();
    all.extend(outcome.session_warnings.iter().map(|w| GateWarning {
        code: GateWarningCode::SessionWarning,
        message: w.message.clone(),
        advice: w.advice.clone(),
    }));
    warnings(&mut out, &all, style);
    w.write_all(out.as_bytes())
}

fn survey_mount(out: &mut String, outcome: &SurveyOutcome, style: TerminalStyle) {
    heading(
        out,
        "Mount (camera pose in the body frame, \u{b1} 95%)",
        style,
    );
    let m = &outcome.mount;
    let values = [
        m.position_m[0] * 1000.0,
        m.position_m[1] * 1000.0,
        m.position_m[2] * 1000.0,
        m.yaw_deg,
        m.pitch_deg,
        m.roll_deg,
    ];
    let mut rows = vec![vec![
        "axis".to_string(),
        "value".into(),
        "\u{b1}95%".into(),
        "from nominal".into(),
    ]];
    for (k, &(axis, unit)) in AXES.iter().enumerate() {
        let half = outcome.precision.axes[k].half_width;
        let from_nominal = outcome.nominal.as_ref().map_or("n/a".to_string(), |n| {
            let d = &n.deviation;
            let v = if k < 3 {
                d.translation_mm[k]
            } else {
                d.rotation_deg[k - 3]
            };
            signed(v, decimals(k))
        });
        rows.push(vec![
            format!("{axis} {unit}"),
            fixed(values[k], decimals(k)),
            half.map_or("not observed".into(), |h| fixed(h, decimals(k))),
            from_nominal,
        ]);
    }
    table(out, &rows, 1);
}

fn survey_precision(out: &mut String, outcome: &SurveyOutcome, style: TerminalStyle) {
    let p = &outcome.precision;
    heading(out, &format!("Precision: {}", p.rule), style);
    let mut rows = Vec::new();
    for a in &p.axes {
        let mark = if a.met { "ok" } else { "SHORT" }.to_string();
        rows.push(vec![
            format!("{} {}", a.axis, a.unit),
            a.half_width
                .map_or("n/a".into(), |h| format!("\u{b1}{h:.3}")),
            format!("asked \u{b1}{:.3}", a.required),
            mark,
        ]);
    }
    table(out, &rows, 1);
    if let (Some(n), Some(s)) = (p.frames_needed, p.seconds_needed) {
        out.push_str(&format!(
            "  about {n} stable solved frames ({s:.0} s) would meet the rule\n"
        ));
    }
}

fn survey_quality(out: &mut String, outcome: &SurveyOutcome, style: TerminalStyle) {
    heading(out, "Data", style);
    let s = &outcome.pixel_sigma;
    let estimated = s
        .estimated
        .map_or("n/a".to_string(), |e| format!("{} px", fixed(e, 2)));
    out.push_str(&format!(
        "  pixel noise: estimated {estimated}, stated {} px\n",
        fixed(s.assumed, 2)
    ));
    out.push_str(&format!(
        "  effective noise: up to {}x the per-frame variance (intervals allow for it)\n",
        fixed(outcome.noise_inflation, 1)
    ));
    out.push_str(&format!(
        "  change points in the session: {}\n",
        outcome.change_points.len()
    ));
    if !outcome.screened_frames.is_empty() {
        let listed: Vec<String> = outcome
            .screened_frames
            .iter()
            .take(12)
            .map(u64::to_string)
            .collect();
        let more = outcome.screened_frames.len().saturating_sub(12);
        out.push_str(&format!(
            "  left out as gross pose errors: frame {}{}\n",
            listed.join(", "),
            if more > 0 {
                format!(" and {more} more")
            } else {
                String::new()
            }
        ));
    }
}

fn outcome_tone(outcome: ChangeOutcome) -> Tone {
    match outcome {
        ChangeOutcome::Unchanged => Tone::Good,
        ChangeOutcome::Inconclusive => Tone::Caution,
        ChangeOutcome::Changed => Tone::Bad,
    }
}

/// The first word of a comparison, in capitals.
pub fn outcome_word(outcome: ChangeOutcome) -> &'static str {
    match outcome {
        ChangeOutcome::Unchanged => "UNCHANGED",
        ChangeOutcome::Changed => "CHANGED",
        ChangeOutcome::Inconclusive => "INCONCLUSIVE",
    }
}

/// One sentence saying what the outcome means.
pub fn outcome_sentence(outcome: &CompareOutcome) -> String {
    let p = &outcome.policy;
    let limits = format!(
        "\u{b1}{} mm, \u{b1}{} deg",
        p.max_translation_mm, p.max_rotation_deg
    );
    match outcome.outcome {
        ChangeOutcome::Unchanged => format!(
            "The mount is the same within tolerance ({limits}): every axis's 90% interval lies \
             inside it."
        ),
        ChangeOutcome::Changed => format!("The mount changed beyond tolerance ({limits})."),
        ChangeOutcome::Inconclusive => format!(
            "Not decided: no axis is beyond tolerance ({limits}), but not every one is shown \
             inside it; record longer sessions."
        ),
    }
}

fn side_line(name: &str, s: &SideSummary) -> String {
    match (s.kind, &s.used) {
        (SideKind::SurveyFile, _) => format!("{name}: survey file {}", s.path),
        (SideKind::Session, Some(u)) => format!(
            "{name}: session {}, frames {} to {} ({} solved){}",
            s.path,
            u.first_frame,
            u.last_frame,
            u.solved_frames,
            if s.change_points > 0 {
                format!(", after {} change point(s)", s.change_points)
            } else {
                String::new()
            }
        ),
        (SideKind::Session, None) => format!("{name}: session {}", s.path),
    }
}

/// The terminal summary of a comparison.
pub fn write_compare_summary(
    w: &mut dyn Write,
    outcome: &CompareOutcome,
    style: TerminalStyle,
) -> io::Result<()> {
    let mut out = String::new();
    let gate_tone = if outcome.gate == Gate::Pass {
        Tone::Good
    } else {
        Tone::Bad
    };
    out.push_str(&format!(
        "{} \u{b7} {}\n  {}\n",
        style.paint(outcome_word(outcome.outcome), outcome_tone(outcome.outcome)),
        style.paint(
            &format!("gate {}", outcome.gate.name().to_uppercase()),
            gate_tone
        ),
        outcome_sentence(outcome)
    ));
    for r in &outcome.reasons {
        out.push_str(&format!("  - {r}\n"));
    }
    out.push_str(&style.paint(
        &format!("  {}\n", side_line("before", &outcome.before)),
        Tone::Dim,
    ));
    out.push_str(&style.paint(
        &format!("  {}\n", side_line("after", &outcome.after)),
        Tone::Dim,
    ));
    compare_axes(&mut out, outcome, style);
    let t = &outcome.change_test;
    heading(&mut out, "Changed at all?", style);
    out.push_str(&format!(
        "  {}: chi-square {} on {} dof, p = {}: {}\n",
        t.method,
        fixed(t.statistic, 2),
        t.dof,
        t.p_value.map_or("n/a".into(), p_value),
        if t.significant {
            "a change is detected (its size is judged above)"
        } else {
            "no change detected"
        }
    ));
    warnings(&mut out, &outcome.warnings, style);
    w.write_all(out.as_bytes())
}

fn result_word(result: AxisResult) -> &'static str {
    match result {
        AxisResult::Equivalent => "within",
        AxisResult::Beyond => "BEYOND",
        AxisResult::Straddles => "straddles",
        AxisResult::Unobserved => "not observed",
    }
}

fn compare_axes(out: &mut String, outcome: &CompareOutcome, style: TerminalStyle) {
    heading(
        out,
        "Change AFTER relative to BEFORE (body axes; Z-Y-X angles of R_before^T R_after)",
        style,
    );
    let mut rows = vec![vec![
        "axis".to_string(),
        "change".into(),
        "\u{b1}95%".into(),
        "90% interval".into(),
        "tolerance".into(),
        "TOST".into(),
    ]];
    let half: Vec<Option<f64>> = outcome
        .translation_ci95_mm
        .iter()
        .chain(&outcome.rotation_ci95_deg)
        .copied()
        .collect();
    for (k, a) in outcome.equivalence.axes.iter().enumerate() {
        let d = decimals(k);
        let interval = a.interval.map_or("n/a".into(), |[lo, hi]| {
            format!("{} to {}", signed(lo, d), signed(hi, d))
        });
        rows.push(vec![
            format!("{} {}", a.axis, a.unit),
            signed(a.estimate, d),
            half[k].map_or("n/a".into(), |h| fixed(h, d)),
            interval,
            format!("\u{b1}{}", a.tolerance),
            result_word(a.result).to_string(),
        ]);
    }
    table(out, &rows, 1);
}
