//! Shared pieces of the false-alarm examples (`far_mixture`, `far_properties`,
//! `far_semisynthetic`): the drift analysis as they run it, and its alarm count over simulated
//! clean series.

// Each example compiles this module on its own and uses only part of it.
#![allow(dead_code)]

use mountdrift::stats::drift::{analyse_drift, Calibrators, DriftOptions};
use mountdrift::stats::segments::LocationSettings;
use mountdrift::stats::series::{DeviationSample, DeviationSeries};

/// The drift analysis at false-alarm rate `alpha` with light location intervals (only the
/// change points are counted), sharing one set of calibrations.
pub struct Analysis {
    calibrators: Calibrators,
    options: DriftOptions,
}

impl Analysis {
    pub fn new(alpha: f64) -> Self {
        Self {
            calibrators: Calibrators::default(),
            options: DriftOptions {
                false_alarm_rate: alpha,
                location: LocationSettings { runs: 200, seed: 1 },
                ..DriftOptions::default()
            },
        }
    }

    /// Whether a clean series raised a change point, and the AR(1) coefficient of its null.
    pub fn alarm(&self, samples: &[DeviationSample]) -> (bool, f64) {
        let series = DeviationSeries::new(samples).expect("a valid series");
        let analysis =
            analyse_drift(&series, &self.options, &self.calibrators).expect("the analysis runs");
        (
            !analysis.change_points.is_empty(),
            analysis.penalty.null_lag1,
        )
    }

    /// Alarms over `trials` series made by `series(trial)`, and the median null coefficient.
    pub fn count(&self, trials: u64, series: impl Fn(u64) -> Vec<DeviationSample>) -> (usize, f64) {
        let mut alarms = 0;
        let mut lags = Vec::new();
        for trial in 0..trials {
            let (alarm, lag1) = self.alarm(&series(trial));
            alarms += usize::from(alarm);
            lags.push(lag1);
        }
        lags.sort_by(f64::total_cmp);
        (
            alarms,
            lags.get(lags.len() / 2).copied().unwrap_or(f64::NAN),
        )
    }
}
