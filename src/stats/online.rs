//! Online (real-time) change detectors: the two-sided tabular CUSUM on a standardised scalar
//! and the multivariate EWMA on whitened vectors, with the threshold that gives a session its
//! false-alarm rate.

use std::collections::HashMap;
use std::sync::{Arc, Mutex};

use nalgebra::Vector6;
use rand::SeedableRng;
use rand_pcg::Pcg64Mcg;
use rayon::prelude::*;

use super::noise::{estimate_effective_noise, NoiseScales};
use super::penalty::{ar1_series, stream_seed, tolerance_bound, CALIBRATION_CONFIDENCE};
use super::{check_positive, check_probability, StatsError};

/// Two-sided tabular CUSUM on standardised values `z_t` (in-control mean 0, variance 1):
/// `C⁺_t = max(0, C⁺_{t−1} + z_t − k)`, `C⁻_t = max(0, C⁻_{t−1} − z_t − k)`, `C±_0 = 0`; signal
/// when either exceeds `h` (Page 1954, Biometrika 41:100-115; the tabular form and its
/// run-length table: Lucas & Crosier 1982, Technometrics 24:199-205; Montgomery,
/// *Introduction to Statistical Quality Control*, section 9.1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TabularCusum {
    /// Reference value (allowance) in standard deviations, usually half the shift to detect.
    pub k: f64,
    /// Decision interval in standard deviations.
    pub h: f64,
}

impl TabularCusum {
    /// Validates `k >= 0` and `h > 0`.
    pub fn new(k: f64, h: f64) -> Result<Self, StatsError> {
        if !(k.is_finite() && k >= 0.0) {
            return Err(StatsError::InvalidParameter {
                name: "CUSUM reference value k",
                value: k,
                expected: "a finite number >= 0",
            });
        }
        check_positive("CUSUM decision interval h", h)?;
        Ok(Self { k, h })
    }

    /// Index of the first sample at which the chart signals, if any.
    pub fn first_alarm(&self, z: impl IntoIterator<Item = f64>) -> Option<usize> {
        let (mut upper, mut lower) = (0.0f64, 0.0f64);
        z.into_iter().position(|v| {
            upper = (upper + v - self.k).max(0.0);
            lower = (lower - v - self.k).max(0.0);
            upper > self.h || lower > self.h
        })
    }
}

/// Multivariate EWMA on whitened vectors (in-control mean 0, covariance `I` in the first `dim`
/// coordinates): `Z_t = λ x_t + (1 − λ) Z_{t−1}`, `Z_0 = 0`,
/// `T²_t = Z_tᵀ Σ_Z⁻¹ Z_t` with the asymptotic `Σ_Z = λ/(2 − λ) I`; signal when `T²_t > h`
/// (Lowry, Woodall, Champ & Rigdon 1992, Technometrics 34:46-53).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mewma {
    pub lambda: f64,
    pub h: f64,
}

impl Mewma {
    /// Validates `0 < λ <= 1` and `h > 0`.
    pub fn new(lambda: f64, h: f64) -> Result<Self, StatsError> {
        if !(lambda > 0.0 && lambda <= 1.0) {
            return Err(StatsError::InvalidParameter {
                name: "MEWMA smoothing constant lambda",
                value: lambda,
                expected: "a number in (0, 1]",
            });
        }
        check_positive("MEWMA threshold h", h)?;
        Ok(Self { lambda, h })
    }

    /// The statistic `T²_t` for every sample.
    pub fn statistics(&self, x: &[Vector6<f64>]) -> Vec<f64> {
        let scale = (2.0 - self.lambda) / self.lambda;
        let mut z = Vector6::zeros();
        x.iter()
            .map(|v| {
                z = v * self.lambda + z * (1.0 - self.lambda);
                scale * z.norm_squared()
            })
            .collect()
    }

    /// Index of the first sample at which the chart signals, if any.
    pub fn first_alarm(&self, x: impl IntoIterator<Item = Vector6<f64>>) -> Option<usize> {
        let scale = (2.0 - self.lambda) / self.lambda;
        let mut z = Vector6::zeros();
        x.into_iter().position(|v| {
            z = v * self.lambda + z * (1.0 - self.lambda);
            scale * z.norm_squared() > self.h
        })
    }
}

/// The session's online detector: a MEWMA on the effective-whitened deviations after an initial
/// reference window, whose mean is taken as the in-control state.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct OnlineSettings {
    /// MEWMA smoothing constant.
    pub lambda: f64,
    /// Samples averaged for the in-control mean before monitoring starts.
    pub warmup: usize,
    /// Monte Carlo runs for the threshold.
    pub runs: usize,
    pub seed: u64,
    /// Longest simulated session; longer ones scale the rate (see [`calibrate_session_mewma`]).
    pub max_simulated_samples: usize,
}

impl Default for OnlineSettings {
    fn default() -> Self {
        Self {
            lambda: 0.1,
            warmup: 50,
            runs: 1000,
            seed: 0x6f6e_6c69_6e65,
            max_simulated_samples: 4000,
        }
    }
}

/// Runs the session detector: the in-control mean is the mean of `y[..warmup]`, monitoring
/// starts at `warmup` on `y_t − mean`. Returns the alarm index in `y`.
pub fn session_alarm(y: &[Vector6<f64>], warmup: usize, chart: &Mewma) -> Option<usize> {
    if warmup == 0 || y.len() <= warmup {
        return None;
    }
    let mean = y[..warmup].iter().sum::<Vector6<f64>>() / warmup as f64;
    chart
        .first_alarm(y[warmup..].iter().map(|v| v - mean))
        .map(|i| i + warmup)
}

/// The clean sessions the threshold is simulated on: AR(1) noise of coefficient `lag1`,
/// rescaled by its own effective-noise estimate exactly as the data are (`penalty` module).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SessionNull {
    pub n: usize,
    pub dim: usize,
    pub lag1: f64,
    /// Minimum segment length (the smallest scale of the noise estimate).
    pub min_size: usize,
}

/// The largest `T²` of one simulated clean session (after the warm-up).
pub(crate) fn null_session_maximum(
    null: &SessionNull,
    settings: &OnlineSettings,
    seed: u64,
) -> f64 {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let z = ar1_series(&mut rng, null.n, null.dim, null.lag1);
    let scales = NoiseScales::for_min_size(null.min_size);
    let map = estimate_effective_noise(&z, null.dim, &[(0, null.n)], &scales).inverse_sqrt();
    let y: Vec<Vector6<f64>> = z.iter().map(|v| map * v).collect();
    let mean = y[..settings.warmup].iter().sum::<Vector6<f64>>() / settings.warmup as f64;
    let centred: Vec<Vector6<f64>> = y[settings.warmup..].iter().map(|v| v - mean).collect();
    let chart = Mewma {
        lambda: settings.lambda,
        h: f64::INFINITY,
    };
    chart.statistics(&centred).into_iter().fold(0.0, f64::max)
}

/// Length, dimension, AR(1) coefficient bits and minimum segment of a simulated null.
type NullKey = (usize, usize, u64, usize);

/// The seed of simulated run `run` of the clean sessions `null`: one stream per noise class,
/// one sub-stream per run.
pub(crate) fn session_run_seed(settings: &OnlineSettings, null: &SessionNull, run: u64) -> u64 {
    stream_seed(stream_seed(settings.seed, null.lag1.to_bits()), run)
}

/// The sorted session maxima of `T²` over the simulated clean sessions `null`.
pub(crate) fn simulate_maxima(settings: &OnlineSettings, null: &SessionNull) -> Vec<f64> {
    let mut maxima: Vec<f64> = (0..settings.runs.max(1) as u64)
        .into_par_iter()
        .map(|i| null_session_maximum(null, settings, session_run_seed(settings, null, i)))
        .collect();
    maxima.sort_by(f64::total_cmp);
    maxima
}

/// Calibrates session MEWMA thresholds ([`calibrate`](Self::calibrate)) and remembers each
/// simulated null distribution, so that sessions of the same length and noise class share one.
/// The classes every long audit meets are simulated ahead of time (`null_table`): with the
/// default settings they are read instead of simulated, with identical results.
#[derive(Debug)]
pub struct OnlineCalibrator {
    settings: OnlineSettings,
    cache: Mutex<HashMap<NullKey, Arc<Vec<f64>>>>,
    /// Whether the precomputed null distributions may serve a class.
    tabulated: bool,
}

impl Default for OnlineCalibrator {
    fn default() -> Self {
        Self::new(OnlineSettings::default())
    }
}

impl OnlineCalibrator {
    /// A calibrator for the detector and simulation described by `settings` (served by the
    /// precomputed null distributions where they were made with the same settings).
    pub fn new(settings: OnlineSettings) -> Self {
        Self {
            settings,
            cache: Mutex::new(HashMap::new()),
            tabulated: true,
        }
    }

    /// A calibrator that simulates every null distribution it needs, never reading the
    /// precomputed ones (to make or check them).
    pub fn simulating(settings: OnlineSettings) -> Self {
        Self {
            tabulated: false,
            ..Self::new(settings)
        }
    }

    /// The detector settings.
    pub fn settings(&self) -> &OnlineSettings {
        &self.settings
    }

    /// The MEWMA whose threshold `h` makes a clean session (warm-up mean estimated as in
    /// [`session_alarm`]) alarm with probability at most `false_alarm_rate`: Wilks' upper tolerance bound
    /// (confidence [`CALIBRATION_CONFIDENCE`], see `penalty`) of the `1 − α` quantile of the
    /// session maximum of `T²` over simulated clean sessions ([`SessionNull`]). A session longer
    /// than `max_simulated_samples` is simulated at that length with the rate scaled by
    /// `n_sim/n` (a constant per-sample alarm hazard, i.e. a geometric run length).
    pub fn calibrate(
        &self,
        null: &SessionNull,
        false_alarm_rate: f64,
    ) -> Result<Mewma, StatsError> {
        check_probability(false_alarm_rate)?;
        let settings = &self.settings;
        if null.n <= settings.warmup || settings.warmup == 0 || !(1..=6).contains(&null.dim) {
            return Err(StatsError::TooFewSamples {
                what: "an online detector (warm-up plus monitored samples)",
                needed: settings.warmup + 1,
                got: null.n,
            });
        }
        let simulated = SessionNull {
            n: null
                .n
                .min(settings.max_simulated_samples.max(settings.warmup + 1)),
            ..*null
        };
        let maxima = self.null_maxima(&simulated);
        let rate = false_alarm_rate * simulated.n as f64 / null.n as f64;
        let bound = tolerance_bound(&maxima, rate, CALIBRATION_CONFIDENCE)?;
        Mewma::new(settings.lambda, bound.value)
    }

    fn null_maxima(&self, null: &SessionNull) -> Arc<Vec<f64>> {
        let key = (null.n, null.dim, null.lag1.to_bits(), null.min_size);
        let lock = || self.cache.lock().unwrap_or_else(|e| e.into_inner());
        if let Some(found) = lock().get(&key) {
            return found.clone();
        }
        let tabulated = self
            .tabulated
            .then(|| super::null_table::online_maxima(&self.settings, null))
            .flatten();
        let maxima = tabulated.unwrap_or_else(|| simulate_maxima(&self.settings, null));
        let maxima = Arc::new(maxima);
        lock().insert(key, maxima.clone());
        maxima
    }
}
