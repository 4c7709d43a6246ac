//! Online detectors checked by Monte Carlo against published average run lengths: the
//! two-sided tabular CUSUM table of Lucas & Crosier (1982) and the MEWMA design of Prabhu &
//! Runger (1997) (values in CHECK_VALUES.md sections 2 and 3).

use mountdrift::stats::noise::{estimate_effective_noise, NoiseScales};
use mountdrift::stats::online::{
    session_alarm, Mewma, OnlineCalibrator, OnlineSettings, SessionNull, TabularCusum,
};
use mountdrift::stats::penalty::{ar1_series, stream_seed};
use nalgebra::Vector6;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

/// Mean and standard error of `runs` zero-state run lengths.
fn mean_and_se(lengths: &[f64]) -> (f64, f64) {
    let n = lengths.len() as f64;
    let mean = lengths.iter().sum::<f64>() / n;
    let var = lengths.iter().map(|l| (l - mean).powi(2)).sum::<f64>() / (n - 1.0);
    (mean, (var / n).sqrt())
}

fn cusum_arl(chart: &TabularCusum, shift: f64, runs: usize, seed: u64) -> (f64, f64) {
    let lengths: Vec<f64> = (0..runs as u64)
        .map(|i| {
            let mut rng = Pcg64Mcg::seed_from_u64(stream_seed(seed, i));
            let samples = std::iter::repeat_with(move || {
                shift + Distribution::<f64>::sample(&StandardNormal, &mut rng)
            });
            (chart.first_alarm(samples.take(1_000_000)).expect("alarm") + 1) as f64
        })
        .collect();
    mean_and_se(&lengths)
}

/// Lucas & Crosier (1982), Technometrics 24:199-205, Table 1, as reprinted in Montgomery,
/// *Introduction to Statistical Quality Control*, Table 9.3 (two-sided tabular CUSUM, k = 0.5,
/// zero start): h = 4: δ = 0 → 168, 0.5 → 26.6, 1 → 8.38, 2 → 3.34, 3 → 2.19; h = 5: δ = 0 → 465,
/// 0.5 → 38.0, 1 → 10.4, 2 → 4.01, 3 → 2.57. Monte Carlo ARLs must lie within 3 standard errors
/// (plus the table's rounding).
#[test]
fn tabular_cusum_run_lengths_match_lucas_crosier_table() {
    let table = [
        (
            4.0,
            [
                (0.0, 168.0),
                (0.5, 26.6),
                (1.0, 8.38),
                (2.0, 3.34),
                (3.0, 2.19),
            ],
        ),
        (
            5.0,
            [
                (0.0, 465.0),
                (0.5, 38.0),
                (1.0, 10.4),
                (2.0, 4.01),
                (3.0, 2.57),
            ],
        ),
    ];
    for (h, row) in table {
        let chart = TabularCusum::new(0.5, h).unwrap();
        for (shift, published) in row {
            let runs = if shift == 0.0 { 1500 } else { 2000 };
            let (mean, se) = cusum_arl(&chart, shift, runs, (h * 100.0 + shift * 10.0) as u64);
            let rounding = 0.005 * published;
            assert!(
                (mean - published).abs() <= 3.0 * se + rounding,
                "h {h} δ {shift}: simulated {mean:.3} ± {se:.3}, published {published}"
            );
        }
    }
}

fn mewma_arl(chart: &Mewma, shift: f64, runs: usize, seed: u64) -> (f64, f64) {
    let lengths: Vec<f64> = (0..runs as u64)
        .map(|i| {
            let mut rng = Pcg64Mcg::seed_from_u64(stream_seed(seed, i));
            let samples = std::iter::repeat_with(move || {
                let mut v = Vector6::zeros();
                v[0] = shift + Distribution::<f64>::sample(&StandardNormal, &mut rng);
                v[1] = Distribution::<f64>::sample(&StandardNormal, &mut rng);
                v
            });
            (chart.first_alarm(samples.take(1_000_000)).expect("alarm") + 1) as f64
        })
        .collect();
    mean_and_se(&lengths)
}

/// MEWMA p = 2, λ = 0.1, H = 8.64 (Lowry et al. 1992 chart; design from Prabhu & Runger 1997,
/// JQT 29, Table 3, for ARL0 ≈ 200). The published ARLs (≈200, δ = 1 → 10.15, δ = 2 → 4.42) are
/// steady-state values recalled from memory; the zero-state simulation of CHECK_VALUES.md
/// section 3 gives 199.9 ± 1.4, 10.18, 4.42. We accept 3 standard errors around the zero-state
/// values plus their own simulation error (1.4 at δ = 0, 1% otherwise).
#[test]
fn mewma_run_lengths_match_prabhu_runger_design() {
    let chart = Mewma::new(0.1, 8.64).unwrap();
    for (shift, reference, reference_se, runs) in [
        (0.0, 199.9, 1.4, 1500),
        (1.0, 10.18, 0.1, 2000),
        (2.0, 4.42, 0.044, 2000),
    ] {
        let (mean, se) = mewma_arl(&chart, shift, runs, 900 + shift as u64);
        assert!(
            (mean - reference).abs() <= 3.0 * (se * se + reference_se * reference_se).sqrt(),
            "δ {shift}: simulated {mean:.3} ± {se:.3}, reference {reference}"
        );
    }
}

/// The session MEWMA threshold makes a clean session alarm with the requested probability:
/// over 600 fresh white sessions (300 samples, 50 warm-up, α = 0.05), each rescaled by its own
/// effective-noise estimate as the analysis does, the alarm rate lies within 3 binomial
/// standard errors of α (calibrated on independent simulated sessions).
#[test]
fn session_mewma_false_alarm_rate_is_as_requested() {
    let settings = OnlineSettings {
        runs: 2000,
        ..OnlineSettings::default()
    };
    let calibrator = OnlineCalibrator::new(settings);
    let null = SessionNull {
        n: 300,
        dim: 6,
        lag1: 0.0,
        min_size: 10,
    };
    let chart = calibrator.calibrate(&null, 0.05).unwrap();
    let trials = 600;
    let alarms = (0..trials as u64)
        .filter(|&i| {
            let mut rng = Pcg64Mcg::seed_from_u64(stream_seed(77, i));
            let z = ar1_series(&mut rng, 300, 6, 0.0);
            let map = estimate_effective_noise(&z, 6, &[(0, 300)], &NoiseScales::for_min_size(10))
                .inverse_sqrt();
            let y: Vec<Vector6<f64>> = z.iter().map(|v| map * v).collect();
            session_alarm(&y, settings.warmup, &chart).is_some()
        })
        .count();
    let rate = alarms as f64 / trials as f64;
    let se = (0.05 * 0.95 / trials as f64).sqrt();
    assert!(
        (rate - 0.05).abs() <= 3.0 * se,
        "false-alarm rate {rate} (threshold {})",
        chart.h
    );
}
