//! The null distributions compiled into the program (`assets/null_distributions.json`, read by
//! the calibrators instead of simulating) are those the current code simulates: made with the
//! default calibration settings, covering every AR(1) class, well formed, and their stored runs
//! reproduced exactly by simulating them again. A change to the null simulation that would make
//! the file stale fails here; `cargo run --release --example null_table -- --check` compares
//! every class in full.

use mountdrift::stats::drift::{Calibrators, DriftOptions};
use mountdrift::stats::null_table::{
    embedded, online_probe, penalty_probe, NullTable, PenaltyClass, TabulatedClass, PROBE_RUNS,
    TABULATED_DIM,
};
use mountdrift::stats::online::{OnlineCalibrator, OnlineSettings, SessionNull};
use mountdrift::stats::penalty::{
    tolerance_bound, CalibrationSettings, PenaltyCalibrator, CALIBRATION_CONFIDENCE, NULL_LAG1_GRID,
};

fn table() -> &'static NullTable {
    embedded().expect("assets/null_distributions.json parses")
}

fn ascending(values: &[f64]) -> bool {
    values.windows(2).all(|w| w[0] <= w[1]) && values.iter().all(|v| v.is_finite())
}

#[test]
fn the_table_was_made_with_the_default_settings_and_covers_every_class() {
    let table = table();
    assert_eq!(table.penalty_settings, CalibrationSettings::default());
    assert_eq!(table.online_settings, OnlineSettings::default());
    let grid: Vec<f64> = NULL_LAG1_GRID.to_vec();
    let lags: Vec<f64> = table.penalty.iter().map(|c| c.runs.lag1).collect();
    assert_eq!(lags, grid);
    let lags: Vec<f64> = table.online.iter().map(|c| c.lag1).collect();
    assert_eq!(lags, grid);
    let settings = &table.penalty_settings;
    for class in &table.penalty {
        let runs = &class.runs;
        assert_tabulated(runs, settings.max_simulated_samples, settings.runs);
        // Censored runs stand in with a value at or below the censoring level.
        let at_or_below = runs.sorted.iter().filter(|&&b| b <= class.censor).count();
        assert!(class.censored_runs <= at_or_below, "class {}", runs.lag1);
        assert!(
            class.censored_runs > 0,
            "class {}: censoring used",
            runs.lag1
        );
    }
    let settings = &table.online_settings;
    for class in &table.online {
        assert_tabulated(class, settings.max_simulated_samples, settings.runs);
    }
}

/// A tabulated class has the simulated length, the full rank, the default minimum segment and
/// one ascending finite value per run.
fn assert_tabulated(class: &TabulatedClass, simulated_n: usize, runs: usize) {
    let min_size = DriftOptions::default().min_segment_samples;
    let lag1 = class.lag1;
    assert_eq!(
        (class.n, class.dim, class.min_size),
        (simulated_n, TABULATED_DIM, min_size),
        "class {lag1}"
    );
    assert_eq!(class.sorted.len(), runs, "class {lag1}");
    assert!(ascending(&class.sorted), "class {lag1} sorted");
}

#[test]
fn stored_runs_are_reproduced_by_simulating_them_again() {
    let table = table();
    for PenaltyClass {
        runs: class,
        censor,
        ..
    } in &table.penalty
    {
        assert_eq!(class.probes.len(), PROBE_RUNS);
        for (run, &stored) in class.probes.iter().enumerate() {
            let fresh = penalty_probe(&table.penalty_settings, class, run as u64).unwrap();
            assert_eq!(
                fresh.to_bits(),
                stored.to_bits(),
                "penalty class {} run {run}",
                class.lag1
            );
            // A run above the censoring level enters the distribution with its exact value.
            if stored > *censor {
                assert!(
                    class.sorted.contains(&stored),
                    "class {} run {run}",
                    class.lag1
                );
            }
        }
    }
    for class in &table.online {
        assert_eq!(class.probes.len(), PROBE_RUNS);
        for (run, &stored) in class.probes.iter().enumerate() {
            let fresh = online_probe(&table.online_settings, class, run as u64);
            assert_eq!(
                fresh.to_bits(),
                stored.to_bits(),
                "online class {} run {run}",
                class.lag1
            );
            assert!(
                class.sorted.contains(&stored),
                "online class {} run {run}",
                class.lag1
            );
        }
    }
}

#[test]
fn default_calibrators_serve_long_series_from_the_table_and_others_by_simulation() {
    let table = table();
    let calibrators = Calibrators::default();
    let min_size = DriftOptions::default().min_segment_samples;
    // A long series of the white class: the penalty is the tolerance bound of the stored
    // distribution (no simulation: the calibration returns its values).
    let long = calibrators
        .penalty
        .calibrate(50_000, TABULATED_DIM, min_size, 0.01, 0.0)
        .unwrap();
    assert_eq!(
        long.null_critical.as_slice(),
        table.penalty[0].runs.sorted.as_slice()
    );
    assert!(long.penalty > table.penalty[0].censor);
    // A short series of a lower dimension is not tabulated: simulated with light settings.
    let light = CalibrationSettings {
        runs: 40,
        ..CalibrationSettings::default()
    };
    let short = PenaltyCalibrator::new(light)
        .calibrate(60, 2, min_size, 0.1, 0.0)
        .unwrap();
    assert_eq!(short.null_critical.len(), 40);
    // The online threshold of a long session is the stored class's tolerance bound.
    let null = SessionNull {
        n: 50_000,
        dim: TABULATED_DIM,
        lag1: 0.0,
        min_size,
    };
    let served = OnlineCalibrator::default().calibrate(&null, 0.01).unwrap();
    let stored = &table.online[0];
    let rate = 0.01 * stored.n as f64 / null.n as f64;
    let expected = tolerance_bound(&stored.sorted, rate, CALIBRATION_CONFIDENCE).unwrap();
    assert_eq!(served.h, expected.value);
}
