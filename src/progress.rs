//! Progress on long runs: a counter or a bar on standard error, drawn only when standard error is a
//! terminal and the run prints a human summary (never in pipes or with `--json`).

use std::io::IsTerminal;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressStyle};

/// Frames solved so far, as a spinner with a count (the total is not known while streaming).
pub struct FrameProgress {
    bar: Option<ProgressBar>,
}

impl FrameProgress {
    /// `wanted` is false for machine-readable output.
    pub fn new(wanted: bool) -> Self {
        let bar = (wanted && std::io::stderr().is_terminal()).then(|| {
            let bar = ProgressBar::new_spinner();
            bar.set_style(
                ProgressStyle::with_template("{spinner} {pos} frames solved ({per_sec}) {elapsed}")
                    .unwrap_or_else(|_| ProgressStyle::default_spinner()),
            );
            bar.enable_steady_tick(Duration::from_millis(120));
            bar
        });
        Self { bar }
    }

    pub fn update(&self, frames: u64) {
        if let Some(bar) = &self.bar {
            bar.set_position(frames);
        }
    }

    pub fn finish(&self) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
    }
}

/// Progress through a known number of items (e.g. simulated sessions), as a bar with a count and
/// an estimate of the time left.
pub struct CountProgress {
    bar: Option<ProgressBar>,
}

impl CountProgress {
    /// `wanted` is false for machine-readable output; `what` names the items (`sessions`).
    pub fn new(wanted: bool, total: u64, what: &str) -> Self {
        let bar = (wanted && std::io::stderr().is_terminal()).then(|| {
            let bar = ProgressBar::new(total);
            let template = format!("{{bar:40}} {{pos}}/{{len}} {what} {{elapsed}} (eta {{eta}})");
            bar.set_style(
                ProgressStyle::with_template(&template)
                    .unwrap_or_else(|_| ProgressStyle::default_bar()),
            );
            bar.enable_steady_tick(Duration::from_millis(250));
            bar
        });
        Self { bar }
    }

    /// `done` items are finished; safe to call from several threads.
    pub fn update(&self, done: u64) {
        if let Some(bar) = &self.bar {
            // Threads report out of order; the bar only moves forward.
            if done > bar.position() {
                bar.set_position(done);
            }
        }
    }

    pub fn finish(&self) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
    }
}
