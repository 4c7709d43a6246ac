//! Shared pieces of the false-alarm examples (`far_mixture`, `far_properties`,
//! `far_semisynthetic`): the drift analysis as they run it, and its alarm count over simulated
//! clean series.

// Each example compiles this module on its own and uses only part of it.
#![allow(dead_code)]

use mountdrift::stats::drift::{analyse_drift, Calibrators, DriftOptions};
use mountdrift::stats::segments::LocationSettings;
use mountdrift::stats::series::{DeviationSample, DeviationSeries};

/// What one clean series gave: its alarm, its null class and the estimates that chose it.
#[derive(Debug, Clone, Copy)]
pub struct Outcome {
    pub alarm: bool,
    /// The AR(1) coefficient of the simulated null (a grid value).
    pub null_lag1: f64,
    /// The bias-corrected lag-1 coefficient of the residuals.
    pub lag1: f64,
    /// The AR(1) coefficient matching the studentiser over the marginal variance.
    pub scale_lag1: f64,
    /// Mean studentiser `κ_j` over the active directions.
    pub mean_factor: f64,
    /// The calibrated penalty.
    pub penalty: f64,
}

/// The median of some values (NaN when there are none).
pub fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    values.get(values.len() / 2).copied().unwrap_or(f64::NAN)
}

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
        let outcome = self.outcome(samples);
        (outcome.alarm, outcome.null_lag1)
    }

    /// Whether a clean series raised a change point and the noise estimate behind its null.
    pub fn outcome(&self, samples: &[DeviationSample]) -> Outcome {
        let series = DeviationSeries::new(samples).expect("a valid series");
        let analysis =
            analyse_drift(&series, &self.options, &self.calibrators).expect("the analysis runs");
        let noise = &analysis.noise;
        Outcome {
            alarm: !analysis.change_points.is_empty(),
            null_lag1: analysis.penalty.null_lag1,
            lag1: noise.lag1,
            scale_lag1: noise.scale_lag1,
            mean_factor: noise.factors.sum() / analysis.dim as f64,
            penalty: analysis.penalty.penalty,
        }
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
