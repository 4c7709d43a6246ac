//! Renderers: turn job outcomes into what people read (terminal summary, HTML report, SVG
//! plots) and what programs read (report JSON, frames CSV). They read outcomes only and never
//! compute statistics: formatting, layout, and the smallest and largest values for axes.
//!
//! The binary writes an audit's files with [`AuditReport`]:
//!
//! ```no_run
//! # fn demo(outcome: &mountdrift::commands::audit::AuditOutcome) -> std::io::Result<()> {
//! use mountdrift::report::{AuditFile, AuditReport};
//! let report = AuditReport::new(outcome);
//! for file in AuditFile::ALL {
//!     let mut out = std::fs::File::create(file.name())?;
//!     report.write(file, &mut out)?;
//! }
//! # Ok(()) }
//! ```

use std::io::{self, Write};

use crate::commands::audit::AuditOutcome;

mod chart;
mod curves;
mod decimate;
mod format;
mod frames_csv;
mod gate;
mod gate_html;
mod html;
mod html_sections;
pub mod overlay;
mod plots;
mod scale;
pub mod sensitivity;
mod style;
mod svg;
mod terminal;

pub use curves::{curve_set_svg, detection_delay_svg, detection_probability_svg, Curve, CurveSet};
pub use frames_csv::{write_frames_csv, FRAMES_CSV_HEADER};
pub use gate::{
    outcome_sentence, outcome_word, survey_mount_yaml, write_compare_json, write_compare_summary,
    write_survey_json, write_survey_summary,
};
pub use gate_html::{compare_files, compare_plot_svg, write_compare_html};
pub use html::{write_audit_html, CAUTIONS};
pub use plots::{d2_svg, deviation_svg, fit_svg, fixed_offset_svg, AuditPlots, PLOT_WIDTH};
pub use style::{ColorEnv, TerminalStyle, Tone};
pub use svg::escape as escape_html;
pub use terminal::write_audit_summary;

/// The report JSON: the outcome itself, pretty-printed, with a final newline.
pub fn write_audit_json(w: &mut dyn Write, outcome: &AuditOutcome) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, outcome)?;
    writeln!(w)
}

/// One file of an audit's output folder.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AuditFile {
    Json,
    FramesCsv,
    Html,
    PlotDeviation,
    PlotD2,
    PlotFixedOffset,
    PlotFit,
}

impl AuditFile {
    /// Every file, in the order they are best written.
    pub const ALL: [AuditFile; 7] = [
        AuditFile::Json,
        AuditFile::FramesCsv,
        AuditFile::Html,
        AuditFile::PlotDeviation,
        AuditFile::PlotD2,
        AuditFile::PlotFixedOffset,
        AuditFile::PlotFit,
    ];

    /// The file name inside the output folder.
    pub fn name(self) -> &'static str {
        match self {
            AuditFile::Json => "report.json",
            AuditFile::FramesCsv => "frames.csv",
            AuditFile::Html => "report.html",
            AuditFile::PlotDeviation => "plot_deviation.svg",
            AuditFile::PlotD2 => "plot_d2.svg",
            AuditFile::PlotFixedOffset => "plot_fixed_offset.svg",
            AuditFile::PlotFit => "plot_fit.svg",
        }
    }
}

/// An audit outcome with its plots drawn once, ready to be written file by file.
pub struct AuditReport<'a> {
    outcome: &'a AuditOutcome,
    plots: AuditPlots,
}

impl<'a> AuditReport<'a> {
    pub fn new(outcome: &'a AuditOutcome) -> Self {
        Self {
            outcome,
            plots: AuditPlots::render(outcome),
        }
    }

    pub fn plots(&self) -> &AuditPlots {
        &self.plots
    }

    /// Writes one file's content.
    pub fn write(&self, file: AuditFile, w: &mut dyn Write) -> io::Result<()> {
        let svg = |w: &mut dyn Write, text: &str| w.write_all(text.as_bytes());
        match file {
            AuditFile::Json => write_audit_json(w, self.outcome),
            AuditFile::FramesCsv => write_frames_csv(w, &self.outcome.rows),
            AuditFile::Html => write_audit_html(w, self.outcome, &self.plots),
            AuditFile::PlotDeviation => svg(w, &self.plots.deviation),
            AuditFile::PlotD2 => svg(w, &self.plots.d2),
            AuditFile::PlotFixedOffset => svg(w, &self.plots.fixed_offset),
            AuditFile::PlotFit => svg(w, &self.plots.fit),
        }
    }
}

/// Every file of an audit's output folder, in memory: (file name, content).
pub fn audit_files(outcome: &AuditOutcome) -> io::Result<Vec<(String, Vec<u8>)>> {
    let report = AuditReport::new(outcome);
    AuditFile::ALL
        .iter()
        .map(|&file| {
            let mut bytes = Vec::new();
            report.write(file, &mut bytes)?;
            Ok((file.name().to_string(), bytes))
        })
        .collect()
}
