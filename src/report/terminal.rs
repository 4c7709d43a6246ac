//! The terminal summary of an audit, read in ten seconds: verdict and gate on the first line,
//! then change points, segments, fixed-offset error, data quality and warnings with advice.
//! Colour only when the style says so; the text is the same either way.

use std::io::{self, Write};

use crate::commands::audit::{
    AuditOutcome, ChangePoint, ErrorStats, Gate, Segment, TruthRangeBin, Verdict,
};

use super::format::{
    decimals_to_tell_apart, fixed, gate_word, p_value, reason, signed, verdict_sentence,
    verdict_word, with_ci,
};
use super::style::{TerminalStyle, Tone};

/// Writes the summary of `outcome`.
pub fn write_audit_summary(
    w: &mut dyn Write,
    outcome: &AuditOutcome,
    style: TerminalStyle,
) -> io::Result<()> {
    let mut out = String::new();
    headline(&mut out, outcome, style);
    change_points(&mut out, outcome, style);
    segments(&mut out, outcome, style);
    fixed_offset(&mut out, outcome, style);
    data_quality(&mut out, outcome, style);
    warnings(&mut out, outcome, style);
    w.write_all(out.as_bytes())
}

fn verdict_tone(verdict: Verdict) -> Tone {
    match verdict {
        Verdict::Stable => Tone::Good,
        Verdict::OffNominal => Tone::Caution,
        Verdict::Shifted => Tone::Bad,
    }
}

fn gate_tone(gate: Gate) -> Tone {
    match gate {
        Gate::Pass => Tone::Good,
        Gate::Fail => Tone::Bad,
    }
}

fn heading(out: &mut String, text: &str, style: TerminalStyle) {
    out.push('\n');
    out.push_str(&style.paint(text, Tone::Heading));
    out.push('\n');
}

/// Lines of the summary stay within this many columns.
const COLUMNS: usize = 100;

/// `lead` then `text`, broken between words into lines of at most `COLUMNS` columns, the
/// continuation lines indented by `indent` spaces; each line ends with a newline. A single word
/// longer than a line is left whole.
fn wrapped(lead: &str, text: &str, indent: usize) -> String {
    let mut out = String::from(lead);
    let mut used = lead.chars().count();
    let mut fresh = true;
    for word in text.split_whitespace() {
        let width = word.chars().count();
        if !fresh && used + 1 + width > COLUMNS {
            out.push('\n');
            out.push_str(&" ".repeat(indent));
            used = indent;
            fresh = true;
        }
        if !fresh {
            out.push(' ');
            used += 1;
        }
        out.push_str(word);
        used += width;
        fresh = false;
    }
    out.push('\n');
    out
}

fn headline(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    let verdict = style.paint(verdict_word(outcome.verdict), verdict_tone(outcome.verdict));
    let gate = style.paint(
        &format!("gate {}", gate_word(outcome.gate)),
        gate_tone(outcome.gate),
    );
    out.push_str(&format!("{verdict} \u{b7} {gate}\n"));
    out.push_str(&wrapped("  ", &verdict_sentence(outcome), 2));
    for why in &outcome.gate_reasons {
        let lines = wrapped("  fails: ", why, 9);
        out.push_str(&lines.replacen("fails:", &style.paint("fails:", Tone::Bad), 1));
    }
    let f = &outcome.frames;
    let span = match (outcome.rows.first(), outcome.rows.last()) {
        (Some(a), Some(b)) => format!(", {}-{} s", fixed(a.time_s, 2), fixed(b.time_s, 2)),
        _ => String::new(),
    };
    let line = format!(
        "session {}: {} frames, {} solved, {} rejected{span}",
        outcome.inputs.session, f.total, f.solved, f.rejected
    );
    out.push_str(&style.paint(&line, Tone::Dim));
    out.push('\n');
}

/// Rows of cells printed with each column as wide as its widest cell; the first `left`
/// columns are left-aligned, the rest right-aligned.
pub(super) fn table(out: &mut String, rows: &[Vec<String>], left: usize) {
    let columns = rows.iter().map(Vec::len).max().unwrap_or(0);
    let widths: Vec<usize> = (0..columns)
        .map(|c| {
            rows.iter()
                .filter_map(|r| r.get(c))
                .map(|s| s.chars().count())
                .max()
                .unwrap_or(0)
        })
        .collect();
    for row in rows {
        let mut line = String::new();
        for (c, cell) in row.iter().enumerate() {
            let pad = " ".repeat(widths[c] - cell.chars().count());
            line.push_str("  ");
            if c < left {
                line.push_str(cell);
                line.push_str(&pad);
            } else {
                line.push_str(&pad);
                line.push_str(cell);
            }
        }
        out.push_str(line.trim_end());
        out.push('\n');
    }
}

const AXIS_HEADERS: [&str; 6] = ["x mm", "y mm", "z mm", "yaw deg", "pitch deg", "roll deg"];

fn change_points(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    heading(
        out,
        "Change points (shift from the segment before, \u{b1} 95%)",
        style,
    );
    if outcome.change_points.is_empty() {
        out.push_str("  none found\n");
    }
    for cp in &outcome.change_points {
        change_point(out, cp);
    }
    if let Some(alarm) = &outcome.online_alarm {
        let delay = match alarm.delay_frames {
            Some(d) => format!(", {d} frames after the change point"),
            None => String::new(),
        };
        out.push_str(&format!(
            "  online alarm at frame {} (t = {} s){delay}\n    detector: {}\n",
            alarm.frame,
            fixed(alarm.time_s, 2),
            alarm.detector
        ));
    }
}

fn change_point(out: &mut String, cp: &ChangePoint) {
    out.push_str(&format!(
        "  frame {} (95%: {}-{}), t = {} s\n",
        cp.frame,
        cp.frame_ci95[0],
        cp.frame_ci95[1],
        fixed(cp.time_s, 2)
    ));
    let t: Vec<String> = (0..3)
        .map(|i| with_ci(cp.translation_mm[i], cp.translation_ci95_mm[i], 2))
        .collect();
    let r: Vec<String> = (0..3)
        .map(|i| with_ci(cp.rotation_deg[i], cp.rotation_ci95_deg[i], 3))
        .collect();
    out.push_str(&format!(
        "    translation  x {}  y {}  z {} mm\n",
        t[0], t[1], t[2]
    ));
    out.push_str(&format!(
        "    rotation     yaw {}  pitch {}  roll {} deg\n",
        r[0], r[1], r[2]
    ));
}

fn segments(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    let reference = if outcome.inputs.nominal_mount.is_some() {
        "nominal"
    } else {
        "first segment"
    };
    heading(
        out,
        &format!("Segments (mount deviation from the {reference})"),
        style,
    );
    let head = ["#", "frames", "solved"]
        .iter()
        .chain(AXIS_HEADERS.iter())
        .chain(["fixed err p95 mm"].iter());
    let mut rows = vec![head.map(|s| s.to_string()).collect()];
    rows.extend(outcome.segments.iter().enumerate().map(segment_row));
    table(out, &rows, 2);
}

fn segment_row((index, s): (usize, &Segment)) -> Vec<String> {
    let d = &s.mount_deviation;
    let mut row = vec![
        index.to_string(),
        format!("{}-{}", s.first_frame, s.last_frame),
        s.solved_frames.to_string(),
    ];
    row.extend(d.translation_mm.iter().map(|v| signed(*v, 2)));
    row.extend(d.rotation_deg.iter().map(|v| signed(*v, 3)));
    row.push(
        s.fixed_offset_error_mm
            .map_or("-".into(), |e| fixed(e.p95, 1)),
    );
    row
}

fn fixed_offset(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    let Some(fo) = &outcome.fixed_offset else {
        heading(out, "Fixed-offset error", style);
        out.push_str("  not computed: no nominal mount was given\n");
        truth_line(out, outcome);
        return;
    };
    heading(
        out,
        &format!(
            "Fixed-offset error (tolerance {} mm within {} m range)",
            fixed(fo.tolerance_mm, 1),
            fixed(fo.contact_range_m, 1)
        ),
        style,
    );
    let over = format!("{} frames over tolerance", fo.frames_over_tolerance);
    let over = if fo.frames_over_tolerance > 0 {
        style.paint(&over, Tone::Bad)
    } else {
        over
    };
    let first = fo
        .first_frame_over_tolerance
        .map_or(String::new(), |f| format!(", the first at frame {f}"));
    out.push_str(&format!(
        "  max {} mm, {over}{first}\n",
        fixed(fo.max_error_mm, 1)
    ));
    truth_line(out, outcome);
}

/// True errors of both pipelines (p95) as a small table: by range bin, within the contact
/// range (where the tolerance applies) and over the whole session.
fn truth_line(out: &mut String, outcome: &AuditOutcome) {
    let Some(truth) = &outcome.truth else {
        return;
    };
    let p95 = |e: Option<&ErrorStats>| e.map_or("-".into(), |e| fixed(e.p95, 1));
    let mut rows = vec![
        vec!["true error p95, mm".to_string()],
        vec!["  dual-object".to_string()],
        vec!["  fixed-offset".to_string()],
    ];
    let mut column =
        |head: String, dual: Option<&ErrorStats>, fixed_offset: Option<&ErrorStats>| {
            rows[0].push(head);
            rows[1].push(p95(dual));
            rows[2].push(p95(fixed_offset));
        };
    if truth.by_range.len() > 1 {
        for bin in &truth.by_range {
            column(
                range_head(bin),
                bin.dual_error_mm.as_ref(),
                bin.fixed_error_mm.as_ref(),
            );
        }
    }
    let every_frame = truth
        .dual_within_contact_mm
        .is_some_and(|e| e.frames == truth.dual_error_mm.frames);
    let within = format!("within {} m", fixed(truth.contact_range_m, 1));
    if every_frame {
        column(
            format!("{within} (all)"),
            Some(&truth.dual_error_mm),
            truth.fixed_error_mm.as_ref(),
        );
    } else {
        column(
            within,
            truth.dual_within_contact_mm.as_ref(),
            truth.fixed_within_contact_mm.as_ref(),
        );
        column(
            "all ranges".into(),
            Some(&truth.dual_error_mm),
            truth.fixed_error_mm.as_ref(),
        );
    }
    table(out, &rows, 1);
}

fn range_head(bin: &TruthRangeBin) -> String {
    if bin.range_max_m.is_finite() {
        format!("{}-{} m", bin.range_min_m, bin.range_max_m)
    } else {
        format!("{}+ m", bin.range_min_m)
    }
}

fn data_quality(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    heading(out, "Data quality", style);
    let f = &outcome.frames;
    let mut rows = vec![vec![
        "frames".to_string(),
        format!(
            "{} read, {} solved ({} with the drogue), {} rejected",
            f.total, f.solved, f.both_solved, f.rejected
        ),
    ]];
    if !f.rejected_by_reason.is_empty() {
        let reasons: Vec<String> = f
            .rejected_by_reason
            .iter()
            .map(|(why, n)| format!("{} {n}", reason(why)))
            .collect();
        rows.push(vec!["rejected".into(), reasons.join(", ")]);
    }
    rows.push(vec![
        "flags".into(),
        format!(
            "{} probe ill-conditioned, {} drogue ambiguous, {} outlier keypoints dropped",
            f.probe_ill_conditioned, f.drogue_ambiguous, f.outlier_keypoints
        ),
    ]);
    if f.gross_error_frames > 0 {
        rows.push(vec![
            "set aside".into(),
            format!(
                "{} frames whose mount lies far from all their neighbours'",
                f.gross_error_frames
            ),
        ]);
    }
    rows.push(vec!["pixel sigma".into(), sigma_text(outcome, style)]);
    if let Some(nc) = &outcome.nominal_consistency {
        rows.push(vec![
            "vs nominal".into(),
            format!(
                "{} of {} frames over the d2 threshold {}; session p = {}",
                nc.frames_over_threshold,
                nc.frames_tested,
                fixed(nc.frame_threshold_d2, 2),
                p_value(nc.session_p_value)
            ),
        ]);
    }
    table(out, &rows, 2);
}

fn sigma_text(outcome: &AuditOutcome, style: TerminalStyle) -> String {
    let s = &outcome.pixel_sigma;
    let stated = format!("stated {} px", fixed(s.assumed, 2));
    let Some(estimated) = s.estimated else {
        return format!("{stated}, not estimated (no redundant keypoints)");
    };
    let decimals = s
        .estimated_ci95
        .map_or(2, |[lo, hi]| decimals_to_tell_apart(lo, hi, 2, 4));
    let ci = s.estimated_ci95.map_or(String::new(), |[lo, hi]| {
        format!(" (95%: {}-{})", fixed(lo, decimals), fixed(hi, decimals))
    });
    let agreement = if s.consistent {
        "consistent".to_string()
    } else {
        style.paint("NOT consistent", Tone::Caution)
    };
    format!(
        "{stated}, estimated {} px{ci}: {agreement}",
        fixed(estimated, decimals)
    )
}

fn warnings(out: &mut String, outcome: &AuditOutcome, style: TerminalStyle) {
    if outcome.warnings.is_empty() {
        return;
    }
    heading(out, "Warnings", style);
    for warning in &outcome.warnings {
        let mark = style.paint("!", Tone::Caution);
        out.push_str(&wrapped("  ! ", &warning.message, 4).replacen('!', &mark, 1));
        out.push_str(&wrapped("    advice: ", &warning.advice, 12));
    }
}
