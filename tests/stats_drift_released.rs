//! The drift analysis of a series handed over (its information matrices freed before the
//! change-point search) against the same analysis of the borrowed series: the same segments and
//! change points, and the excess scatter, formed from the model's roots, equal to rounding.

use mountdrift::stats::drift::{analyse_drift, Calibrators, DriftAnalysis, DriftOptions};
use mountdrift::stats::online::{OnlineCalibrator, OnlineSettings};
use mountdrift::stats::penalty::{CalibrationSettings, PenaltyCalibrator};
use mountdrift::stats::segments::LocationSettings;
use mountdrift::stats::series::{DeviationSample, DeviationSeries};

use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

/// Per-axis 1-sigma of the invented deviation (mm, mm, mm, deg, deg, deg).
const SIGMA: [f64; 6] = [0.5, 0.35, 0.9, 0.06, 0.05, 0.07];

/// 600 frames whose covariance changes from frame to frame (a random scale and correlation),
/// a roll that every 41st frame does not observe, and a shift of 2.5 mm in z at frame 350.
fn samples() -> Vec<DeviationSample> {
    let mut rng = Pcg64Mcg::seed_from_u64(77);
    let mut normal = move || Distribution::<f64>::sample(&StandardNormal, &mut rng);
    let mut scales = Pcg64Mcg::seed_from_u64(78);
    let sd = Vector6::from_row_slice(&SIGMA);
    (0..600)
        .map(|t| {
            let scale = 0.5 + 1.5 * scales.random::<f64>();
            let mix = 0.4 * (scales.random::<f64>() - 0.5);
            let mut root = Matrix6::from_diagonal(&(sd * scale.sqrt()));
            root[(2, 0)] = mix * root[(0, 0)];
            root[(4, 3)] = mix * root[(3, 3)];
            let mut covariance = root * root.transpose();
            let mut x = root * Vector6::from_fn(|_, _| normal());
            if t % 41 == 0 {
                covariance.row_mut(5).fill(0.0);
                covariance.column_mut(5).fill(0.0);
                x[5] = 40.0 * normal();
            }
            if t >= 350 {
                x[2] += 2.5;
            }
            DeviationSample {
                frame: 1000 + t as i64,
                time_s: t as f64 / 30.0,
                deviation: x,
                covariance,
            }
        })
        .collect()
}

fn calibrators() -> Calibrators {
    Calibrators {
        penalty: PenaltyCalibrator::new(CalibrationSettings {
            runs: 300,
            ..Default::default()
        }),
        online: OnlineCalibrator::new(OnlineSettings {
            runs: 300,
            ..Default::default()
        }),
    }
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    a == b || (a - b).abs() <= rel * a.abs().max(b.abs())
}

fn assert_same(borrowed: &DriftAnalysis, owned: &DriftAnalysis) {
    assert_eq!(borrowed.penalty, owned.penalty);
    assert_eq!(borrowed.rounds, owned.rounds);
    assert_eq!(borrowed.online, owned.online);
    assert_eq!(borrowed.change_points.len(), owned.change_points.len());
    for (a, b) in borrowed.change_points.iter().zip(&owned.change_points) {
        assert_eq!(
            (a.index, a.frame, a.frame_interval),
            (b.index, b.frame, b.frame_interval)
        );
        assert!(close(a.gain, b.gain, 1e-12), "{} {}", a.gain, b.gain);
    }
    assert_eq!(borrowed.segments.len(), owned.segments.len());
    for (a, b) in borrowed.segments.iter().zip(&owned.segments) {
        assert_eq!(a.mean, b.mean);
        let (s, t) = (&a.scatter, &b.scatter);
        assert_eq!(s.test.dof, t.test.dof);
        assert!(close(s.test.statistic, t.test.statistic, 1e-12));
        assert!(close(
            s.test.p_value.unwrap(),
            t.test.p_value.unwrap(),
            1e-10
        ));
        for (u, v) in s.axis_variance_factor.iter().zip(&t.axis_variance_factor) {
            assert_eq!(u.is_some(), v.is_some());
            assert!(close(u.unwrap_or(0.0), v.unwrap_or(0.0), 1e-12));
        }
    }
}

/// Basis: the borrowed series keeps every information matrix, so its analysis is the
/// definition; the handed-over one must find the same change point (at frame 1350, where the
/// shift was put) with the scatter statistics equal to 1e-12 relative.
#[test]
fn a_handed_over_series_gives_the_same_analysis() {
    let options = DriftOptions {
        location: LocationSettings { runs: 200, seed: 3 },
        ..DriftOptions::default()
    };
    let calibrators = calibrators();
    let series = DeviationSeries::new(&samples()).unwrap();
    let borrowed = analyse_drift(&series, &options, &calibrators).unwrap();
    assert!(!borrowed.common_information);
    assert_eq!(borrowed.change_points.len(), 1);
    assert_eq!(borrowed.change_points[0].frame, 1350);
    let owned = analyse_drift(series, &options, &calibrators).unwrap();
    assert_same(&borrowed, &owned);
}
