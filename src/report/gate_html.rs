//! The comparison's page and plot: `report.html` (self-contained: inline CSS and SVG, no
//! scripts) and `plot_change.svg`, each axis's change with its 90% and 95% intervals drawn
//! against its tolerance band, in units of the tolerance so that millimetres and degrees share
//! one scale. Reads the outcome only; every text is escaped.

use std::io::{self, Write};

use crate::commands::compare::{AxisEquivalence, AxisResult, ChangeOutcome, CompareOutcome};
use crate::commands::survey::GateWarning;

use super::chart::colors;
use super::format::{fixed, p_value, signed};
use super::gate::{outcome_sentence, outcome_word};
use super::html::{close_with_reasons, facts, figure, table, CAUTIONS};
use super::scale::{Scale, Span};
use super::svg::{coord, escape, Anchor, Stroke, Svg, TextStyle};

const STYLESHEET: &str = include_str!("../../assets/report.css");

const WIDTH: f64 = 760.0;
const ROW_H: f64 = 44.0;
const TOP: f64 = 40.0;
const LEFT: f64 = 190.0;
const RIGHT: f64 = 600.0;
const BOTTOM_AXIS: f64 = 46.0;
/// Widest span drawn, in tolerances; anything further lands on the edge.
const MAX_SPAN_TOL: f64 = 10.0;

fn result_color(result: AxisResult) -> &'static str {
    match result {
        AxisResult::Equivalent => colors::GREEN,
        AxisResult::Beyond => colors::VERMILLION,
        AxisResult::Straddles => colors::ORANGE,
        AxisResult::Unobserved => colors::GREY,
    }
}

fn result_text(result: AxisResult) -> &'static str {
    match result {
        AxisResult::Equivalent => "within tolerance",
        AxisResult::Beyond => "beyond tolerance",
        AxisResult::Straddles => "straddles",
        AxisResult::Unobserved => "not observed",
    }
}

/// Half the drawn span, in tolerances: every interval end, padded, at least 1.5.
fn span_in_tolerances(axes: &[AxisEquivalence], half95: &[Option<f64>]) -> f64 {
    let reach = axes
        .iter()
        .zip(half95)
        .map(|(a, h)| (a.estimate.abs() + h.unwrap_or(0.0)) / a.tolerance)
        .filter(|v| v.is_finite())
        .fold(1.5_f64, f64::max);
    (reach * 1.1).min(MAX_SPAN_TOL)
}

/// The interval plot.
pub fn compare_plot_svg(outcome: &CompareOutcome) -> String {
    let axes = &outcome.equivalence.axes;
    let half95: Vec<Option<f64>> = outcome
        .translation_ci95_mm
        .iter()
        .chain(&outcome.rotation_ci95_deg)
        .copied()
        .collect();
    let reach = span_in_tolerances(axes, &half95);
    let height = TOP + axes.len() as f64 * ROW_H + BOTTOM_AXIS;
    let mut svg = Svg::new(WIDTH, height, "Mount change against tolerance");
    let mut title = TextStyle::plain(15.0, Anchor::Start);
    title.bold = true;
    svg.text(
        (12.0, 22.0),
        "Change AFTER relative to BEFORE, in tolerances",
        &title,
    );
    let scale = Scale {
        span: Span {
            lo: -reach,
            hi: reach,
        },
        px_lo: LEFT,
        px_hi: RIGHT,
        log: false,
    };
    let bottom = TOP + axes.len() as f64 * ROW_H;
    let band = (scale.px(-1.0), scale.px(1.0));
    svg.rect(
        (band.0, TOP),
        (band.1 - band.0, bottom - TOP),
        "#E3F2EC",
        None,
    );
    draw_ticks(&mut svg, &scale, bottom);
    let edge = Stroke::dashed(colors::GREEN, 1.2, "5 3");
    for v in [-1.0, 1.0] {
        svg.line((scale.px(v), TOP), (scale.px(v), bottom), &edge);
    }
    svg.line(
        (scale.px(0.0), TOP),
        (scale.px(0.0), bottom),
        &Stroke::solid(colors::FRAME, 1.0),
    );
    for (k, (a, h)) in axes.iter().zip(&half95).enumerate() {
        draw_axis_row(&mut svg, &scale, a, *h, TOP + (k as f64 + 0.5) * ROW_H);
    }
    let frame = Stroke::solid(colors::FRAME, 1.0);
    svg.rect(
        (LEFT, TOP),
        (RIGHT - LEFT, bottom - TOP),
        "none",
        Some(&frame),
    );
    svg.finish()
}

fn draw_ticks(svg: &mut Svg, scale: &Scale, bottom: f64) {
    let grid = Stroke::solid(colors::GRID, 1.0);
    let ticks = scale.ticks(8);
    for (t, label) in ticks.iter().zip(scale.tick_labels(&ticks)) {
        let px = scale.px(*t);
        svg.line((px, TOP), (px, bottom), &grid);
        svg.text(
            (px, bottom + 15.0),
            &label,
            &TextStyle::plain(11.0, Anchor::Middle),
        );
    }
    svg.text(
        ((LEFT + RIGHT) / 2.0, bottom + 34.0),
        "change / tolerance (shaded: within tolerance; thick: 90% interval, thin: 95%)",
        &TextStyle::plain(12.0, Anchor::Middle),
    );
}

fn draw_axis_row(svg: &mut Svg, scale: &Scale, a: &AxisEquivalence, half95: Option<f64>, y: f64) {
    let decimals = if a.unit == "mm" { 2 } else { 3 };
    let mut name = TextStyle::plain(13.0, Anchor::Start);
    name.bold = true;
    svg.text((12.0, y - 3.0), &format!("{} ({})", a.axis, a.unit), &name);
    let detail = format!(
        "{} {} \u{b7} tol \u{b1}{}",
        signed(a.estimate, decimals),
        a.unit,
        a.tolerance
    );
    svg.text(
        (12.0, y + 13.0),
        &detail,
        &TextStyle::plain(11.0, Anchor::Start),
    );
    let color = result_color(a.result);
    let mut verdict = TextStyle::plain(12.0, Anchor::Start);
    verdict.color = color;
    verdict.bold = a.result != AxisResult::Equivalent;
    svg.text((RIGHT + 10.0, y + 4.0), result_text(a.result), &verdict);
    if a.result == AxisResult::Unobserved {
        return;
    }
    let at = |v: f64| scale.px(v / a.tolerance);
    if let Some(h) = half95 {
        let thin = Stroke::solid(color, 1.5);
        svg.line((at(a.estimate - h), y), (at(a.estimate + h), y), &thin);
    }
    if let Some([lo, hi]) = a.interval {
        svg.stroked_path(
            &format!("M{} {}H{}", coord(at(lo)), coord(y), coord(at(hi))),
            &Stroke::solid(color, 6.0),
            false,
        );
    }
    let dot = format!("M{} {}h0", coord(at(a.estimate)), coord(y));
    svg.stroked_path(&dot, &Stroke::solid(colors::BLACK, 8.0), true);
}

fn tone_class(outcome: ChangeOutcome) -> &'static str {
    match outcome {
        ChangeOutcome::Unchanged => "tone-good",
        ChangeOutcome::Inconclusive => "tone-caution",
        ChangeOutcome::Changed => "tone-bad",
    }
}

/// The comparison page, with the already rendered plot.
pub fn write_compare_html(
    w: &mut dyn Write,
    outcome: &CompareOutcome,
    plot_svg: &str,
) -> io::Result<()> {
    let mut page = String::with_capacity(64 * 1024);
    let title = format!(
        "{} \u{b7} gate {} \u{b7} mount comparison",
        outcome_word(outcome.outcome),
        outcome.gate.name().to_uppercase()
    );
    page.push_str(&format!(
        concat!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n",
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n",
            "<meta name=\"generator\" content=\"mountdrift {}\">\n",
            "<title>{}</title>\n<style>\n{}</style>\n</head>\n<body>\n<main>\n"
        ),
        escape(outcome.tool_version),
        escape(&title),
        STYLESHEET
    ));
    page.push_str(&format!(
        "<h1><strong>Maintenance gate</strong> \u{b7} <code>{}</code> against <code>{}</code></h1>\n",
        escape(&outcome.after.path),
        escape(&outcome.before.path)
    ));
    page.push_str(&banner(outcome));
    page.push_str(&figure(
        plot_svg,
        "Each axis's change with its 90% interval (thick; the equivalence test) and 95% interval \
         (thin), in units of its tolerance; the shaded band is within tolerance.",
    ));
    page.push_str(&axes_section(outcome));
    page.push_str(&change_test_section(outcome));
    page.push_str(&sides_section(outcome));
    page.push_str(&cameras_section(outcome));
    page.push_str(&warnings_section(&outcome.warnings));
    page.push_str(&cautions());
    page.push_str(&format!(
        "<footer>mountdrift {} \u{b7} report layout <code>{}</code> \u{b7} the numbers of this \
         page are in report.json beside it</footer>\n</main>\n</body>\n</html>\n",
        escape(outcome.tool_version),
        escape(outcome.schema)
    ));
    w.write_all(page.as_bytes())
}

fn banner(outcome: &CompareOutcome) -> String {
    let gate = outcome.gate.name();
    let mut out = format!(
        concat!(
            "<section class=\"verdict {}\" aria-label=\"outcome and gate\">\n",
            "<div class=\"verdict-word\" id=\"outcome\">{}</div>\n",
            "<div class=\"gate {}\" id=\"gate\">gate {}</div>\n",
            "<p class=\"explain\">{}</p>\n"
        ),
        tone_class(outcome.outcome),
        outcome_word(outcome.outcome),
        gate,
        gate.to_uppercase(),
        escape(&outcome_sentence(outcome))
    );
    close_with_reasons(&mut out, &outcome.reasons);
    out
}

fn axes_section(outcome: &CompareOutcome) -> String {
    let half: Vec<Option<f64>> = outcome
        .translation_ci95_mm
        .iter()
        .chain(&outcome.rotation_ci95_deg)
        .copied()
        .collect();
    let rows: Vec<Vec<String>> = outcome
        .equivalence
        .axes
        .iter()
        .zip(&half)
        .map(|(a, h)| {
            let d = if a.unit == "mm" { 2 } else { 3 };
            vec![
                format!("{} ({})", a.axis, a.unit),
                result_text(a.result).to_string(),
                signed(a.estimate, d),
                h.map_or("n/a".into(), |h| fixed(h, d)),
                a.interval.map_or("n/a".into(), |[lo, hi]| {
                    format!("{} to {}", signed(lo, d), signed(hi, d))
                }),
                format!("\u{b1}{}", a.tolerance),
                a.p_value.map_or("n/a".into(), p_value),
            ]
        })
        .collect();
    format!(
        "<section id=\"axes\">\n<h2>Change per axis</h2>\n<p>Translation in body axes \
         (<code>p_after − p_before</code>), rotation as Z-Y-X yaw, pitch, roll of \
         <code>R_before<sup>T</sup> R_after</code>. {} at α = {}: an axis is within tolerance \
         when its {:.0}% interval lies inside ±tolerance.</p>\n{}</section>\n",
        escape(&outcome.equivalence.method),
        outcome.equivalence.alpha,
        100.0 * outcome.equivalence.level,
        table(
            &[
                "axis",
                "result",
                "change",
                "±95%",
                "90% interval",
                "tolerance",
                "TOST p",
            ],
            &rows,
            2
        )
    )
}

fn change_test_section(outcome: &CompareOutcome) -> String {
    let t = &outcome.change_test;
    let rows = [
        ("method", t.method.clone()),
        ("chi-square", fixed(t.statistic, 2)),
        ("degrees of freedom", t.dof.to_string()),
        ("p-value", t.p_value.map_or("n/a".into(), p_value)),
        (
            "at α = 0.05",
            if t.significant {
                "a change is detected (its size is judged by the equivalence test)".into()
            } else {
                "no change detected".to_string()
            },
        ),
    ];
    format!(
        "<section id=\"change-test\">\n<h2>Changed at all?</h2>\n{}</section>\n",
        facts(&rows)
    )
}

fn sides_section(outcome: &CompareOutcome) -> String {
    let rows: Vec<Vec<String>> = [("before", &outcome.before), ("after", &outcome.after)]
        .iter()
        .map(|(name, s)| {
            let used = s.used.as_ref().map_or("survey file".into(), |u| {
                format!(
                    "frames {} to {} ({} solved), {}",
                    u.first_frame, u.last_frame, u.solved_frames, u.rule
                )
            });
            let m = &s.mount;
            vec![
                name.to_string(),
                s.path.clone(),
                used,
                format!(
                    "[{}, {}, {}] m",
                    fixed(m.position_m[0], 4),
                    fixed(m.position_m[1], 4),
                    fixed(m.position_m[2], 4)
                ),
                format!(
                    "{} / {} / {}",
                    fixed(m.yaw_deg, 3),
                    fixed(m.pitch_deg, 3),
                    fixed(m.roll_deg, 3)
                ),
            ]
        })
        .collect();
    format!(
        "<section id=\"sides\">\n<h2>What was compared</h2>\n{}</section>\n",
        table(
            &[
                "side",
                "file",
                "frames",
                "position",
                "yaw / pitch / roll deg"
            ],
            &rows,
            5
        )
    )
}

fn cameras_section(outcome: &CompareOutcome) -> String {
    let c = &outcome.cameras;
    let body = match c.same {
        Some(true) => "<p>Both sides used the same camera intrinsics.</p>\n".to_string(),
        None => "<p>One side has no camera record; a camera swap cannot be detected.</p>\n".into(),
        Some(false) => {
            let rows: Vec<Vec<String>> = c
                .differences
                .iter()
                .map(|d| vec![d.parameter.clone(), d.before.clone(), d.after.clone()])
                .collect();
            table(&["parameter", "before", "after"], &rows, 1)
        }
    };
    format!("<section id=\"cameras\">\n<h2>Cameras</h2>\n{body}</section>\n")
}

fn warnings_section(warnings: &[GateWarning]) -> String {
    if warnings.is_empty() {
        return String::new();
    }
    let mut out = String::from("<section id=\"warnings\">\n<h2>Warnings</h2>\n");
    for w in warnings {
        out.push_str(&format!(
            "<div class=\"warning\"><strong>{}</strong><p>{}</p></div>\n",
            escape(&w.message),
            escape(&w.advice)
        ));
    }
    out.push_str("</section>\n");
    out
}

fn cautions() -> String {
    let mut out = String::from(
        "<section id=\"cautions\">\n<h2>Cautions</h2>\n<div class=\"cautions\">\n<ul>\n",
    );
    for caution in CAUTIONS {
        out.push_str(&format!("<li>{}</li>\n", escape(caution)));
    }
    out.push_str("</ul>\n</div>\n</section>\n");
    out
}

/// The files of a comparison's output folder, in memory: (file name, content).
pub fn compare_files(outcome: &CompareOutcome) -> io::Result<Vec<(String, Vec<u8>)>> {
    let plot = compare_plot_svg(outcome);
    let mut json = Vec::new();
    super::gate::write_compare_json(&mut json, outcome)?;
    let mut html = Vec::new();
    write_compare_html(&mut html, outcome, &plot)?;
    Ok(vec![
        ("report.json".to_string(), json),
        ("report.html".to_string(), html),
        ("plot_change.svg".to_string(), plot.into_bytes()),
    ])
}
