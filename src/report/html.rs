//! `report.html`: one self-contained page (inline CSS and SVG, no scripts, nothing fetched) that
//! opens with the verdict and gate, then the change points, segments, fixed-offset error, data
//! quality, inputs and cautions, with the plots beside the numbers they show. Every text from
//! the outcome is escaped.

use std::io::{self, Write};

use crate::commands::audit::{AuditOutcome, Gate, Verdict};

use super::format::{fixed, gate_sentence, gate_word, plural, verdict_sentence, verdict_word};
use super::html_sections as sections;
use super::plots::AuditPlots;
use super::svg::escape;

const STYLESHEET: &str = include_str!("../../assets/report.css");

/// The cautions every report carries.
pub const CAUTIONS: [&str; 3] = [
    "mountdrift is an engineering aid, not certified software.",
    "Airworthiness decisions follow the approved maintenance data and the requirements of the \
     local aviation authority, not this report alone.",
    "The figures here are only as good as the detections, the camera intrinsics, the keypoint \
     models and the nominal mount they were computed from.",
];

/// Writes the page for `outcome` with its already rendered plots.
pub fn write_audit_html(
    w: &mut dyn Write,
    outcome: &AuditOutcome,
    plots: &AuditPlots,
) -> io::Result<()> {
    let mut page = String::with_capacity(256 * 1024);
    head(&mut page, outcome);
    page.push_str("<body>\n<main>\n");
    page.push_str(&format!(
        "<h1><strong>Mount audit</strong> \u{b7} session <code>{}</code></h1>\n",
        escape(&outcome.inputs.session)
    ));
    page.push_str(&verdict_banner(outcome));
    page.push_str(&key_figures(outcome));
    page.push_str(NAV);
    page.push_str(&sections::change_points(outcome));
    page.push_str(&sections::segments(outcome, &plots.deviation));
    page.push_str(&sections::fixed_offset(outcome, &plots.fixed_offset));
    page.push_str(&sections::consistency(outcome, &plots.d2));
    page.push_str(&sections::data_quality(outcome, &plots.fit));
    page.push_str(&sections::inputs(outcome));
    page.push_str(&cautions());
    page.push_str(&footer(outcome));
    page.push_str("</main>\n</body>\n</html>\n");
    w.write_all(page.as_bytes())
}

fn head(page: &mut String, outcome: &AuditOutcome) {
    let title = format!(
        "{} \u{b7} gate {} \u{b7} mount audit of {}",
        verdict_word(outcome.verdict),
        gate_word(outcome.gate),
        outcome.inputs.session
    );
    page.push_str(&format!(
        concat!(
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n",
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n",
            "<meta name=\"generator\" content=\"mountdrift {}\">\n",
            "<title>{}</title>\n<style>\n{}</style>\n</head>\n"
        ),
        escape(outcome.tool_version),
        escape(&title),
        STYLESHEET
    ));
}

fn tone_class(outcome: &AuditOutcome) -> &'static str {
    match (outcome.verdict, outcome.gate) {
        (_, Gate::Fail) | (Verdict::Shifted, _) => "tone-bad",
        (Verdict::OffNominal, _) => "tone-caution",
        (Verdict::Stable, Gate::Pass) => "tone-good",
    }
}

fn verdict_banner(outcome: &AuditOutcome) -> String {
    let gate_class = match outcome.gate {
        Gate::Pass => "pass",
        Gate::Fail => "fail",
    };
    let mut out = format!(
        concat!(
            "<section class=\"verdict {}\" aria-label=\"verdict and gate\">\n",
            "<div class=\"verdict-word\" id=\"verdict\">{}</div>\n",
            "<div class=\"gate {}\" id=\"gate\">gate {}</div>\n",
            "<p class=\"explain\">{} {}</p>\n"
        ),
        tone_class(outcome),
        verdict_word(outcome.verdict),
        gate_class,
        gate_word(outcome.gate),
        escape(&verdict_sentence(outcome)),
        escape(&gate_pass_or_summary(outcome)),
    );
    close_with_reasons(&mut out, &outcome.gate_reasons);
    out
}

/// Ends a verdict section: the reasons as a list (none when empty), then the closing tag.
pub(super) fn close_with_reasons(out: &mut String, reasons: &[String]) {
    if !reasons.is_empty() {
        out.push_str("<ul>\n");
        for reason in reasons {
            out.push_str(&format!("<li>{}</li>\n", escape(reason)));
        }
        out.push_str("</ul>\n");
    }
    out.push_str("</section>\n");
}

/// The gate sentence; when it failed, the reasons follow as a list instead.
fn gate_pass_or_summary(outcome: &AuditOutcome) -> String {
    match outcome.gate {
        Gate::Fail if !outcome.gate_reasons.is_empty() => {
            "The gate fails for these reasons:".into()
        }
        _ => gate_sentence(outcome),
    }
}

fn key_figures(outcome: &AuditOutcome) -> String {
    let f = &outcome.frames;
    let error = match &outcome.fixed_offset {
        Some(fo) => format!(
            "{} mm <small>tolerance {} mm</small>",
            fixed(fo.max_error_mm, 1),
            fixed(fo.tolerance_mm, 1)
        ),
        None => "n/a <small>no nominal mount</small>".into(),
    };
    let sigma = &outcome.pixel_sigma;
    let sigma_text = match sigma.estimated {
        Some(est) => format!(
            "{} px <small>stated {} px</small>",
            fixed(est, 2),
            fixed(sigma.assumed, 2)
        ),
        None => format!("n/a <small>stated {} px</small>", fixed(sigma.assumed, 2)),
    };
    let warnings = if outcome.warnings.is_empty() {
        String::new()
    } else {
        format!(
            " <small><a href=\"#warnings\">{}</a></small>",
            plural(outcome.warnings.len(), "warning", "warnings")
        )
    };
    let cards = [
        ("Change points", outcome.change_points.len().to_string()),
        ("Largest fixed-offset error", error),
        (
            "Frames solved",
            format!("{} <small>of {}</small>{warnings}", f.solved, f.total),
        ),
        ("Pixel sigma, estimated", sigma_text),
    ];
    let mut out = String::from("<dl class=\"keys\">\n");
    for (term, value) in cards {
        out.push_str(&format!("<div><dt>{term}</dt><dd>{value}</dd></div>\n"));
    }
    out.push_str("</dl>\n");
    out
}

const NAV: &str = concat!(
    "<nav aria-label=\"sections\">",
    "<a href=\"#change-points\">Change points</a>",
    "<a href=\"#segments\">Segments</a>",
    "<a href=\"#fixed-offset\">Fixed-offset error</a>",
    "<a href=\"#consistency\">Consistency</a>",
    "<a href=\"#quality\">Data quality</a>",
    "<a href=\"#inputs\">Inputs</a>",
    "<a href=\"#cautions\">Cautions</a>",
    "</nav>\n"
);

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

fn footer(outcome: &AuditOutcome) -> String {
    format!(
        "<footer>mountdrift {} \u{b7} report layout <code>{}</code> \u{b7} the numbers of this \
         page are in report.json and frames.csv beside it</footer>\n",
        escape(outcome.tool_version),
        escape(outcome.schema)
    )
}

/// A table of plain-text cells (escaped here); columns from `numeric_from` on are numbers.
pub(super) fn table(head: &[&str], rows: &[Vec<String>], numeric_from: usize) -> String {
    let class = |c: usize| {
        if c >= numeric_from {
            " class=\"num\""
        } else {
            ""
        }
    };
    let mut out = String::from("<table>\n<thead><tr>");
    for (c, h) in head.iter().enumerate() {
        out.push_str(&format!("<th{}>{}</th>", class(c), escape(h)));
    }
    out.push_str("</tr></thead>\n<tbody>\n");
    for row in rows {
        out.push_str("<tr>");
        for (c, cell) in row.iter().enumerate() {
            out.push_str(&format!("<td{}>{}</td>", class(c), escape(cell)));
        }
        out.push_str("</tr>\n");
    }
    out.push_str("</tbody>\n</table>\n");
    out
}

/// A two-column table of facts: name, value.
pub(super) fn facts(rows: &[(&str, String)]) -> String {
    let mut out = String::from("<table class=\"facts\">\n<tbody>\n");
    for (name, value) in rows {
        out.push_str(&format!(
            "<tr><th scope=\"row\">{}</th><td>{}</td></tr>\n",
            escape(name),
            escape(value)
        ));
    }
    out.push_str("</tbody>\n</table>\n");
    out
}

/// An inline SVG plot with its caption.
pub(super) fn figure(svg: &str, caption: &str) -> String {
    format!(
        "<figure>\n{svg}<figcaption>{}</figcaption>\n</figure>\n",
        escape(caption)
    )
}
