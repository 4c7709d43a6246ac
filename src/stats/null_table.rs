//! Null distributions simulated ahead of time for the noise classes every long audit meets.
//!
//! A session of at least `max_simulated_samples` deviation samples (1000 for the penalty, 4000
//! for the online threshold) in six dimensions with the default minimum segment length is
//! calibrated against simulated clean series of exactly those lengths, one distribution per
//! AR(1) class of [`NULL_LAG1_GRID`]. Simulating one class takes about a second of CPU per
//! thousand runs, so a process that audits one long session would spend most of its time on
//! them. They are deterministic (seeded per class and run), so `assets/null_distributions.json`
//! holds them, written by `cargo run --release --example null_table -- assets/null_distributions.json`
//! with the same code the calibrators run, and the calibrators read a class from it when their
//! settings are the ones it was made with; everything else is still simulated on demand.
//!
//! The file also holds, per class, the value of its first few runs computed alone ("probes"):
//! a test simulates those runs again, so any change to the null simulation (noise estimate,
//! cost, search, random streams) that would make the file stale fails the tests until it is
//! written again. `null_table --check` compares every class with a fresh simulation.

use std::sync::{Arc, OnceLock};

use serde::{Deserialize, Serialize};

use super::cost::L2Cost;
use super::drift::DriftOptions;
use super::online::{
    null_session_maximum, session_run_seed, simulate_maxima, OnlineSettings, SessionNull,
};
use super::penalty::{
    critical_penalty, null_series, run_seed, simulate_null, CalibrationSettings, NullDistribution,
    NullKey, NULL_LAG1_GRID,
};
use super::StatsError;

/// The file the calibrators read (made by the `null_table` example).
const TABLE_JSON: &str = include_str!("../../assets/null_distributions.json");

/// Runs per class whose values are stored alone, for the staleness test.
pub const PROBE_RUNS: usize = 2;

/// Dimension of the tabulated classes (a full-rank mount deviation).
pub const TABULATED_DIM: usize = 6;

/// The precomputed null distributions and the settings they were simulated with.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NullTable {
    /// How the file was made.
    pub made_by: String,
    pub penalty_settings: CalibrationSettings,
    pub online_settings: OnlineSettings,
    pub penalty: Vec<PenaltyClass>,
    pub online: Vec<TabulatedClass>,
}

/// One tabulated null: what it was simulated for, the values of its first runs computed alone
/// and every run's value, ascending. For the online threshold the values are the simulated
/// sessions' largest MEWMA statistics.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TabulatedClass {
    pub n: usize,
    pub dim: usize,
    pub min_size: usize,
    pub lag1: f64,
    /// Runs `0..PROBE_RUNS` (for a penalty null, their uncensored `β*`).
    pub probes: Vec<f64>,
    pub sorted: Vec<f64>,
}

impl TabulatedClass {
    /// Whether the class was simulated for this length, dimension, minimum segment and AR(1)
    /// coefficient.
    fn is(&self, n: usize, dim: usize, min_size: usize, lag1: f64) -> bool {
        (self.n, self.dim, self.min_size) == (n, dim, min_size)
            && self.lag1.to_bits() == lag1.to_bits()
    }
}

/// One penalty null: every run's critical penalty `β*`, censored below `censor` (see
/// `PenaltyCalibrator`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PenaltyClass {
    pub runs: TabulatedClass,
    pub censor: f64,
    pub censored_runs: usize,
}

/// The table compiled into the program (`None` if it does not parse, which a test rules out).
pub fn embedded() -> Option<&'static NullTable> {
    static TABLE: OnceLock<Option<NullTable>> = OnceLock::new();
    TABLE
        .get_or_init(|| serde_json::from_str(TABLE_JSON).ok())
        .as_ref()
}

/// The tabulated penalty null of `key`, if the table was made with `settings` and holds it.
pub(crate) fn penalty_null(
    settings: &CalibrationSettings,
    key: &NullKey,
) -> Option<NullDistribution> {
    let table = embedded().filter(|t| t.penalty_settings == *settings)?;
    if !key.censored {
        return None;
    }
    let lag1 = NULL_LAG1_GRID[key.lag1_index];
    let class = (table.penalty.iter()).find(|c| c.runs.is(key.n, key.dim, key.min_size, lag1))?;
    Some(NullDistribution {
        sorted: Arc::new(class.runs.sorted.clone()),
        censor: class.censor,
        censored: class.censored_runs,
    })
}

/// The tabulated session maxima of `null`, if the table was made with `settings` and holds it.
pub(crate) fn online_maxima(settings: &OnlineSettings, null: &SessionNull) -> Option<Vec<f64>> {
    let table = embedded().filter(|t| t.online_settings == *settings)?;
    table
        .online
        .iter()
        .find(|c| c.is(null.n, null.dim, null.min_size, null.lag1))
        .map(|c| c.sorted.clone())
}

/// The penalty key of a tabulated class (`lag1_index` into [`NULL_LAG1_GRID`]).
fn penalty_key(settings: &CalibrationSettings, lag1_index: usize) -> NullKey {
    NullKey {
        n: settings.max_simulated_samples,
        dim: TABULATED_DIM,
        min_size: DriftOptions::default().min_segment_samples,
        lag1_index,
        censored: true,
    }
}

/// The online null of a tabulated class.
fn online_null(settings: &OnlineSettings, lag1: f64) -> SessionNull {
    SessionNull {
        n: settings.max_simulated_samples,
        dim: TABULATED_DIM,
        lag1,
        min_size: DriftOptions::default().min_segment_samples,
    }
}

/// The penalty key of a tabulated class.
fn key_of(class: &TabulatedClass) -> Result<NullKey, StatsError> {
    let lag1_index = NULL_LAG1_GRID
        .iter()
        .position(|&g| g.to_bits() == class.lag1.to_bits())
        .ok_or(StatsError::InvalidParameter {
            name: "tabulated AR(1) coefficient",
            value: class.lag1,
            expected: "a coefficient of the null grid",
        })?;
    Ok(NullKey {
        n: class.n,
        dim: class.dim,
        min_size: class.min_size,
        lag1_index,
        censored: true,
    })
}

/// The clean series of run `run` of a penalty class, as its calibration simulates it.
fn penalty_run(
    settings: &CalibrationSettings,
    class: &TabulatedClass,
    run: u64,
) -> Result<(NullKey, L2Cost), StatsError> {
    let key = key_of(class)?;
    let y = null_series(&key, run_seed(settings, &key, run));
    Ok((key, L2Cost::from_vectors(&y)?))
}

/// `β*` of run `run` of a penalty class computed alone (uncensored).
pub fn penalty_probe(
    settings: &CalibrationSettings,
    class: &TabulatedClass,
    run: u64,
) -> Result<f64, StatsError> {
    let (key, cost) = penalty_run(settings, class, run)?;
    critical_penalty(&cost, key.min_size)
}

/// The session maximum of run `run` of an online class computed alone.
pub fn online_probe(settings: &OnlineSettings, class: &TabulatedClass, run: u64) -> f64 {
    let null = SessionNull {
        n: class.n,
        dim: class.dim,
        lag1: class.lag1,
        min_size: class.min_size,
    };
    null_session_maximum(&null, settings, session_run_seed(settings, &null, run))
}

/// Simulates the whole table with the default settings; `progress` hears each class done.
pub fn simulate_table(progress: &dyn Fn(&str)) -> Result<NullTable, StatsError> {
    let penalty_settings = CalibrationSettings::default();
    let online_settings = OnlineSettings::default();
    let mut table = NullTable {
        made_by: "cargo run --release --example null_table -- assets/null_distributions.json"
            .to_string(),
        penalty_settings,
        online_settings,
        penalty: Vec::new(),
        online: Vec::new(),
    };
    for (index, &lag1) in NULL_LAG1_GRID.iter().enumerate() {
        let key = penalty_key(&penalty_settings, index);
        let null = simulate_null(&penalty_settings, &key)?;
        let mut runs = TabulatedClass {
            n: key.n,
            dim: key.dim,
            min_size: key.min_size,
            lag1,
            probes: Vec::new(),
            sorted: null.sorted.to_vec(),
        };
        runs.probes = (0..PROBE_RUNS as u64)
            .map(|run| penalty_probe(&penalty_settings, &runs, run))
            .collect::<Result<_, _>>()?;
        table.penalty.push(PenaltyClass {
            runs,
            censor: null.censor,
            censored_runs: null.censored,
        });
        let null = online_null(&online_settings, lag1);
        let mut class = TabulatedClass {
            n: null.n,
            dim: null.dim,
            min_size: null.min_size,
            lag1,
            probes: Vec::new(),
            sorted: simulate_maxima(&online_settings, &null),
        };
        class.probes = (0..PROBE_RUNS as u64)
            .map(|run| online_probe(&online_settings, &class, run))
            .collect();
        table.online.push(class);
        progress(&format!("AR(1) coefficient {lag1}"));
    }
    Ok(table)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::changepoint::pelt;

    /// Whether PELT at penalty `beta` splits run `run` of `class`.
    fn splits_at(
        settings: &CalibrationSettings,
        class: &TabulatedClass,
        run: u64,
        beta: f64,
    ) -> bool {
        penalty_run(settings, class, run)
            .and_then(|(key, cost)| pelt(&cost, beta, key.min_size))
            .map(|s| !s.change_points().is_empty())
            .unwrap_or(false)
    }

    /// Definition of `β*` (module docs of `penalty`): PELT splits the run's series just below
    /// its critical penalty and not above it.
    #[test]
    fn a_probe_is_the_critical_penalty_of_its_run() {
        let table = embedded().expect("the embedded null table parses");
        let settings = table.penalty_settings;
        let class = &table.penalty[0].runs;
        let beta = class.probes[0];
        assert!(splits_at(&settings, class, 0, beta * (1.0 - 1e-6)));
        assert!(!splits_at(&settings, class, 0, beta * (1.0 + 1e-6)));
    }
}
