//! Renders a sensitivity study: the terminal table (false alarms, then per axis and size the
//! detection probability with its interval and the median delay, then the minimum detectable
//! shifts), the CSV and JSON files, and the plots of detection probability and delay against
//! shift size (one figure per unit, since millimetres and degrees share no axis). Reads the
//! outcome only and computes no statistics.

use std::io::{self, Write};

use crate::commands::sensitivity::{
    AxisSensitivity, MinDetectable, SensitivityOutcome, ShiftPoint,
};

use super::curves::{
    curve_set_svg, detection_delay_svg, detection_probability_svg, Curve, CurveSet,
};
use super::format::fixed;
use super::style::{TerminalStyle, Tone};
use super::terminal::table;

/// One file of a study's output folder.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SensitivityFile {
    Json,
    Csv,
    ProbabilityMm,
    ProbabilityDeg,
    DelayMm,
    DelayDeg,
}

impl SensitivityFile {
    /// Every file, in the order they are best written.
    pub const ALL: [SensitivityFile; 6] = [
        SensitivityFile::Json,
        SensitivityFile::Csv,
        SensitivityFile::ProbabilityMm,
        SensitivityFile::ProbabilityDeg,
        SensitivityFile::DelayMm,
        SensitivityFile::DelayDeg,
    ];

    /// The file name inside the output folder.
    pub fn name(self) -> &'static str {
        match self {
            SensitivityFile::Json => "sensitivity.json",
            SensitivityFile::Csv => "sensitivity.csv",
            SensitivityFile::ProbabilityMm => "plot_detection_probability_mm.svg",
            SensitivityFile::ProbabilityDeg => "plot_detection_probability_deg.svg",
            SensitivityFile::DelayMm => "plot_detection_delay_mm.svg",
            SensitivityFile::DelayDeg => "plot_detection_delay_deg.svg",
        }
    }

    /// The unit a plot file is drawn for; `None` for the data files.
    fn unit(self) -> Option<&'static str> {
        match self {
            SensitivityFile::ProbabilityMm | SensitivityFile::DelayMm => Some("mm"),
            SensitivityFile::ProbabilityDeg | SensitivityFile::DelayDeg => Some("deg"),
            SensitivityFile::Json | SensitivityFile::Csv => None,
        }
    }

    /// The files a study has: the data files, and the plots of the units it studied.
    pub fn for_outcome(outcome: &SensitivityOutcome) -> Vec<SensitivityFile> {
        Self::ALL
            .into_iter()
            .filter(|f| {
                f.unit()
                    .is_none_or(|u| outcome.axes.iter().any(|a| a.unit == u))
            })
            .collect()
    }

    /// Writes this file's content.
    pub fn write(self, outcome: &SensitivityOutcome, w: &mut dyn Write) -> io::Result<()> {
        let svg = |w: &mut dyn Write, text: String| w.write_all(text.as_bytes());
        match self {
            SensitivityFile::Json => write_sensitivity_json(w, outcome),
            SensitivityFile::Csv => write_sensitivity_csv(w, outcome),
            SensitivityFile::ProbabilityMm => svg(
                w,
                detection_probability_svg(&probability_curves(outcome, "mm")),
            ),
            SensitivityFile::ProbabilityDeg => svg(
                w,
                detection_probability_svg(&probability_curves(outcome, "deg")),
            ),
            SensitivityFile::DelayMm => svg(w, delay_svg(&delay_curves(outcome, "mm"))),
            SensitivityFile::DelayDeg => svg(w, delay_svg(&delay_curves(outcome, "deg"))),
        }
    }
}

/// The outcome itself, pretty-printed, with a final newline.
pub fn write_sensitivity_json(w: &mut dyn Write, outcome: &SensitivityOutcome) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, outcome)?;
    writeln!(w)
}

/// Columns of `sensitivity.csv`: one `false_alarm` row for the clean sessions (no axis, size 0),
/// then one `step` row per axis and size.
pub const SENSITIVITY_CSV_HEADER: [&str; 16] = [
    "kind",
    "axis",
    "unit",
    "size",
    "trials",
    "detected",
    "probability",
    "probability_ci95_lo",
    "probability_ci95_hi",
    "monotone_probability",
    "sessions_with_change_point",
    "median_delay_frames",
    "median_delay_s",
    "unsearched",
    "min_detectable",
    "delay_source",
];

fn cell(value: Option<f64>, decimals: usize) -> String {
    value.map_or(String::new(), |v| fixed(v, decimals))
}

/// `sensitivity.csv` (see [`SENSITIVITY_CSV_HEADER`]). For the `false_alarm` row, `detected`
/// and `probability` count the sessions with a change point.
pub fn write_sensitivity_csv(w: &mut dyn Write, outcome: &SensitivityOutcome) -> io::Result<()> {
    let mut writer = csv::Writer::from_writer(w);
    writer.write_record(SENSITIVITY_CSV_HEADER)?;
    let fa = &outcome.false_alarm;
    let ci = |i: usize, c: Option<[f64; 2]>| cell(c.map(|c| c[i]), 6);
    let delay_source = serde_json::to_value(outcome.delay_source)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default();
    writer.write_record([
        "false_alarm".to_string(),
        String::new(),
        String::new(),
        "0".to_string(),
        fa.trials.to_string(),
        fa.sessions_with_change_point.to_string(),
        fixed(fa.rate, 6),
        ci(0, fa.rate_ci95),
        ci(1, fa.rate_ci95),
        String::new(),
        fa.sessions_with_change_point.to_string(),
        String::new(),
        String::new(),
        fa.unsearched.to_string(),
        String::new(),
        String::new(),
    ])?;
    for axis in &outcome.axes {
        for p in &axis.points {
            writer.write_record([
                "step".to_string(),
                axis.axis.name().to_string(),
                axis.unit.to_string(),
                p.size.to_string(),
                p.trials.to_string(),
                p.detected.to_string(),
                fixed(p.probability, 6),
                ci(0, p.probability_ci95),
                ci(1, p.probability_ci95),
                fixed(p.monotone_probability, 6),
                p.sessions_with_change_point.to_string(),
                cell(p.median_delay_frames, 1),
                cell(p.median_delay_s, 4),
                p.unsearched.to_string(),
                cell(axis.min_detectable.size(), 6),
                delay_source.clone(),
            ])?;
        }
    }
    writer.flush()
}

/// Detection probability against step size, one curve per axis of `unit`.
pub fn probability_curves(outcome: &SensitivityOutcome, unit: &str) -> CurveSet {
    CurveSet {
        title: format!(
            "Detection probability against step size ({} trials per point)",
            outcome.trials
        ),
        x_label: format!("step size, {unit}"),
        y_label: "detection probability".into(),
        curves: curves_of(outcome, unit, |p| Some(p.probability)),
    }
}

/// Median detection delay (s) against step size, one curve per axis of `unit`; sizes without a
/// detection are left out.
pub fn delay_curves(outcome: &SensitivityOutcome, unit: &str) -> CurveSet {
    CurveSet {
        title: format!(
            "Median detection delay ({} frame minus step frame)",
            outcome.delay_source.label()
        ),
        x_label: format!("step size, {unit}"),
        y_label: "median delay, s".into(),
        curves: curves_of(outcome, unit, |p| p.median_delay_s),
    }
}

/// Delays from an online alarm are never negative and the axis starts at 0; an offline change
/// point may sit a little before the step, so then the axis follows the values.
fn delay_svg(set: &CurveSet) -> String {
    let negative = set
        .curves
        .iter()
        .flat_map(|c| c.points.iter())
        .any(|p| p.1 < 0.0);
    if negative {
        curve_set_svg(set)
    } else {
        detection_delay_svg(set)
    }
}

fn curves_of(
    outcome: &SensitivityOutcome,
    unit: &str,
    value: impl Fn(&ShiftPoint) -> Option<f64>,
) -> Vec<Curve> {
    outcome
        .axes
        .iter()
        .filter(|a| a.unit == unit)
        .map(|a| Curve {
            label: a.axis.name().to_string(),
            points: a
                .points
                .iter()
                .filter_map(|p| value(p).map(|v| (p.size, v)))
                .collect(),
        })
        .collect()
}

/// The terminal table.
pub fn write_sensitivity_summary(
    w: &mut dyn Write,
    outcome: &SensitivityOutcome,
    style: TerminalStyle,
) -> io::Result<()> {
    let mut out = String::new();
    headline(&mut out, outcome, style);
    false_alarm_line(&mut out, outcome, style);
    out.push('\n');
    out.push_str(&style.paint("Detection of a step at mid-session", Tone::Heading));
    out.push('\n');
    table(&mut out, &detection_rows(outcome), 2);
    out.push('\n');
    out.push_str(&style.paint(
        &format!(
            "Minimum detectable step at {:.0}% power",
            outcome.power * 100.0
        ),
        Tone::Heading,
    ));
    out.push('\n');
    for axis in &outcome.axes {
        out.push_str(&format!(
            "  {:<6} {}\n",
            axis.axis.name(),
            min_detectable_text(axis)
        ));
    }
    notes(&mut out, outcome, style);
    w.write_all(out.as_bytes())
}

fn headline(out: &mut String, outcome: &SensitivityOutcome, style: TerminalStyle) {
    let s = &outcome.scenario;
    let name = s.name.as_deref().unwrap_or("unnamed scenario");
    out.push_str(&style.paint(&format!("Sensitivity of {name}"), Tone::Heading));
    out.push('\n');
    let line = format!(
        "{} trials per cell, {} sessions of {} s at {} Hz ({} frames), base seed {}; {} mount event(s) of the scenario removed",
        outcome.trials,
        outcome.sessions,
        fixed(s.duration_s, 1),
        s.frame_rate_hz,
        s.frames,
        s.base_seed,
        s.removed_mount_events
    );
    out.push_str(&style.paint(&line, Tone::Dim));
    out.push('\n');
}

fn percent(p: f64) -> String {
    format!("{}%", fixed(p * 100.0, 1))
}

fn interval_text(ci: Option<[f64; 2]>) -> String {
    ci.map_or("n/a".into(), |[lo, hi]| {
        format!("{} to {}", percent(lo), percent(hi))
    })
}

fn false_alarm_line(out: &mut String, outcome: &SensitivityOutcome, style: TerminalStyle) {
    let fa = &outcome.false_alarm;
    let above = fa.rate_ci95.is_some_and(|[lo, _]| lo > fa.target_rate);
    let tone = if above { Tone::Bad } else { Tone::Good };
    let rate = style.paint(&percent(fa.rate), tone);
    out.push_str(&format!(
        "False alarms on clean sessions: {} of {} ({rate}, 95% interval {}); target {}\n",
        fa.sessions_with_change_point,
        fa.trials,
        interval_text(fa.rate_ci95),
        percent(fa.target_rate)
    ));
}

fn detection_rows(outcome: &SensitivityOutcome) -> Vec<Vec<String>> {
    let mut rows = vec![vec![
        "axis".to_string(),
        "step".into(),
        "detected".into(),
        "probability".into(),
        "95% interval".into(),
        "median delay".into(),
    ]];
    for axis in &outcome.axes {
        for p in &axis.points {
            rows.push(vec![
                axis.axis.name().to_string(),
                format!("{} {}", p.size, axis.unit),
                format!("{}/{}", p.detected, p.trials),
                fixed(p.probability, 2),
                p.probability_ci95.map_or("n/a".into(), |[lo, hi]| {
                    format!("{}-{}", fixed(lo, 2), fixed(hi, 2))
                }),
                match (p.median_delay_frames, p.median_delay_s) {
                    (Some(f), Some(s)) => format!("{} frames ({} s)", fixed(f, 1), fixed(s, 2)),
                    _ => "-".into(),
                },
            ]);
        }
    }
    rows
}

/// Three significant digits, the precision a ladder of a few sizes supports.
fn size_text(size: f64, unit: &str) -> String {
    let decimals = if size > 0.0 {
        (2 - size.log10().floor() as i64).clamp(0, 6) as usize
    } else {
        2
    };
    format!("{} {unit}", fixed(size, decimals))
}

fn min_detectable_text(axis: &AxisSensitivity) -> String {
    match axis.min_detectable {
        MinDetectable::Interpolated { size } => size_text(size, axis.unit),
        MinDetectable::AtOrBelowSmallest { size } => {
            format!(
                "at most {} (the smallest size tried)",
                size_text(size, axis.unit)
            )
        }
        MinDetectable::NotReached { largest } => {
            format!("not reached (above {})", size_text(largest, axis.unit))
        }
    }
}

fn notes(out: &mut String, outcome: &SensitivityOutcome, style: TerminalStyle) {
    out.push('\n');
    let lines = [
        format!("Detected: {}.", outcome.detection.rule),
        format!(
            "Step at frame {} (t = {} s); delay: {}.",
            outcome.detection.step_frame,
            fixed(outcome.detection.step_time_s, 2),
            outcome.delay_source.describe()
        ),
        format!("Intervals: {}.", outcome.interval_reference),
    ];
    for line in lines {
        out.push_str(&style.paint(&line, Tone::Dim));
        out.push('\n');
    }
    for w in &outcome.warnings {
        out.push_str(&format!(
            "{} {}\n  {}\n",
            style.paint("warning:", Tone::Caution),
            w.message,
            w.advice
        ));
    }
}
