//! The censored null distribution of the change-point penalty (only runs whose critical penalty
//! can reach the upper tail are solved in full) gives exactly the penalty and p-values of the
//! full simulation, for every rate up to `CENSOR_RATE`; Dinkelbach's iteration (Dinkelbach
//! 1967, Management Science 13:492-498) started above the best single split still finds β*.

use mountdrift::stats::changepoint::pelt;
use mountdrift::stats::cost::L2Cost;
use mountdrift::stats::penalty::{
    ar1_series, best_single_split_gain, critical_penalty, critical_penalty_above, tolerance_bound,
    CalibrationSettings, PenaltyCalibrator, CALIBRATION_CONFIDENCE,
};
use rand::SeedableRng;
use rand_pcg::Pcg64Mcg;

/// Rates above `CENSOR_RATE` use the full simulation, so calibrating at 0.5 and at a censored
/// rate with one calibrator gives both distributions of the same runs.
#[test]
fn censored_calibration_equals_the_full_one_in_the_tail() {
    let settings = CalibrationSettings {
        runs: 400,
        ..Default::default()
    };
    for (n, dim, lag1) in [(200usize, 3usize, 0.0), (300, 6, 0.85)] {
        let calibrator = PenaltyCalibrator::new(settings);
        let full = calibrator.calibrate(n, dim, 10, 0.5, lag1).unwrap();
        assert_eq!(full.censored_runs, 0);
        for rate in [0.2, 0.1, 0.05, 0.01] {
            let censored = calibrator.calibrate(n, dim, 10, rate, lag1).unwrap();
            assert!(censored.censored_runs > 0 && censored.censor.is_finite());
            // The full distribution's tolerance bound at `rate` (at or above its quantile).
            let sorted = &full.null_critical;
            let bound = tolerance_bound(sorted, rate, CALIBRATION_CONFIDENCE).unwrap();
            assert_eq!(censored.penalty, bound.value, "n {n} rate {rate}");
            assert!(censored.penalty >= censored.censor);
            for gain in [
                censored.penalty,
                censored.penalty * 1.3,
                sorted[sorted.len() - 1],
            ] {
                assert_eq!(censored.p_value(gain), full.p_value(gain), "gain {gain}");
            }
            // Below the censoring level the p-value is an upper bound.
            let low = censored.censor * 0.5;
            assert!(censored.p_value(low) >= full.p_value(low));
        }
    }
}

#[test]
fn dinkelbach_from_any_start_below_the_critical_penalty_is_exact() {
    let mut rng = Pcg64Mcg::seed_from_u64(41);
    for trial in 0..20 {
        let y = ar1_series(&mut rng, 250, 1 + trial % 6, [0.0, 0.6, 0.9][trial % 3]);
        let cost = L2Cost::from_vectors(&y).unwrap();
        let beta = critical_penalty(&cost, 5).unwrap();
        let first = best_single_split_gain(&cost, 5);
        assert!(first <= beta);
        for start in [first, 0.5 * (first + beta), beta * 0.999] {
            let found = critical_penalty_above(&cost, 5, start)
                .unwrap()
                .unwrap_or(start);
            assert!((found - beta).abs() <= 1e-9 * beta, "{found} vs {beta}");
        }
        // Above β* the search reports no change point, so the run is censored.
        assert_eq!(critical_penalty_above(&cost, 5, beta * 1.01).unwrap(), None);
        assert!(pelt(&cost, beta * 1.01, 5)
            .unwrap()
            .change_points()
            .is_empty());
    }
}
