//! False-pass rate of the maintenance gate: how often `compare` says `unchanged` when the mount
//! really moved just beyond tolerance; and its pass rate when nothing moved, against the rate its
//! own standard errors predict. Each seed simulates an independent BEFORE and AFTER session of
//! the `creep` installation (its ramp removed), the AFTER mount moved by a fixed change along
//! body x (or not at all), surveys both and compares them.
//!
//! Run in release (a few seconds per seed):
//!
//! ```text
//! cargo run --release --example gate_false_pass -- [SEEDS] [DURATION_S]
//! ```
//!
//! Defaults: 200 seeds, 30 s sessions. Prints, per case, the outcome counts, the pass rate (a
//! false pass when the mount moved) with its Wilson 95% interval, and the calibration of the
//! change's standard error (mean and spread of (estimate − true change) / standard error,
//! ideally 0 and 1).

use std::time::Instant;

use mountdrift::commands::audit::{simulated, Setup};
use mountdrift::commands::compare::{compare_surveys, AxisEquivalence, ChangeOutcome};
use mountdrift::commands::survey::{survey_frames, SurveyOutcome};
use mountdrift::geometry::{MountDeviation, YawPitchRoll};
use mountdrift::session::{MountFile, Policy};
use mountdrift::sim::scenario::Source;
use mountdrift::sim::{self, Simulation};
use mountdrift::stats::distributions::{normal_quantile, normal_sf};
use nalgebra::Vector3;
use rayon::prelude::*;

/// One studied case: a tolerance and a true change along body x, both in mm.
struct Case {
    name: &'static str,
    tolerance_mm: f64,
    change_mm: f64,
}

const CASES: [Case; 3] = [
    Case {
        name: "default policy, no change",
        tolerance_mm: 5.0,
        change_mm: 0.0,
    },
    Case {
        name: "default policy, x change 1.05 x 5 mm",
        tolerance_mm: 5.0,
        change_mm: 5.25,
    },
    Case {
        name: "tight policy, x change 1.05 x 1 mm",
        tolerance_mm: 1.0,
        change_mm: 1.05,
    },
];

fn survey(seed: u64, duration_s: f64, change_mm: f64, policy: &Policy) -> SurveyOutcome {
    let mut s = sim::preset("creep").expect("preset");
    s.seed = seed;
    s.duration_s = duration_s;
    s.mount_events.clear();
    if let Source::Inline(file) = &mut s.mount {
        let change = MountDeviation {
            translation_m: Vector3::new(change_mm / 1000.0, 0.0, 0.0),
            rotation: YawPitchRoll::new(0.0, 0.0, 0.0),
        };
        *file = MountFile::from_mount(&change.apply_to(&file.to_mount()));
    }
    let simulation = Simulation::new(&s).expect("valid scenario");
    let setup = Setup::from_simulation(&simulation, "simulated");
    survey_frames(&setup, simulation.frames().map(simulated), policy, &|_| {})
        .expect("the survey runs")
}

/// The probability that the two one-sided tests pass every observed axis when the true change
/// is zero, if the reported standard errors are right: an axis passes when
/// `|estimate| < tolerance − z_{1−α} se`, so with `estimate ~ N(0, se²)` it passes with
/// probability `1 − 2 Φ̄(tolerance/se − z_{1−α})` (axes treated as independent).
fn predicted_pass(axes: &[AxisEquivalence], alpha: f64) -> f64 {
    let z = normal_quantile(1.0 - alpha).expect("level");
    axes.iter()
        .filter_map(|a| a.standard_error.map(|se| a.tolerance / se - z))
        .map(|margin| {
            if margin <= 0.0 {
                0.0
            } else {
                1.0 - 2.0 * normal_sf(margin).expect("finite")
            }
        })
        .product()
}

/// Per seed and case: the outcome, the standardised error of the x change, and the pass
/// probability the comparison's own standard errors predict under no change.
fn run_seed(seed: u64, duration_s: f64) -> Vec<(ChangeOutcome, f64, f64)> {
    let defaults = Policy::default();
    let before = survey(10_000 + 2 * seed, duration_s, 0.0, &defaults);
    CASES
        .iter()
        .map(|case| {
            let policy = Policy {
                max_translation_mm: case.tolerance_mm,
                ..defaults
            };
            let after = survey(10_001 + 2 * seed, duration_s, case.change_mm, &policy);
            let outcome = compare_surveys(&before, &after, &policy).expect("comparison");
            let x = &outcome.equivalence.axes[0];
            let z = (x.estimate - case.change_mm) / x.standard_error.unwrap_or(f64::NAN);
            let predicted = predicted_pass(&outcome.equivalence.axes, outcome.equivalence.alpha);
            (outcome.outcome, z, predicted)
        })
        .collect()
}

/// Wilson score interval for `k` successes in `n` trials at 95%.
fn wilson(k: usize, n: usize) -> (f64, f64) {
    let (k, n, z) = (k as f64, n as f64, 1.959_964);
    let p = k / n;
    let centre = (p + z * z / (2.0 * n)) / (1.0 + z * z / n);
    let half = z / (1.0 + z * z / n) * (p * (1.0 - p) / n + z * z / (4.0 * n * n)).sqrt();
    (centre - half, centre + half)
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let seeds: u64 = args.first().and_then(|a| a.parse().ok()).unwrap_or(200);
    let duration_s: f64 = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(30.0);
    let started = Instant::now();
    let results: Vec<Vec<(ChangeOutcome, f64, f64)>> = (0..seeds)
        .into_par_iter()
        .map(|seed| run_seed(seed, duration_s))
        .collect();
    println!(
        "{seeds} seeds, {duration_s} s sessions (creep installation, 20 Hz), {:.0} s",
        started.elapsed().as_secs_f64()
    );
    for (c, case) in CASES.iter().enumerate() {
        let outcomes: Vec<ChangeOutcome> = results.iter().map(|r| r[c].0).collect();
        let count = |o: ChangeOutcome| outcomes.iter().filter(|&&x| x == o).count();
        let passes = count(ChangeOutcome::Unchanged);
        let (lo, hi) = wilson(passes, outcomes.len());
        let z: Vec<f64> = results
            .iter()
            .map(|r| r[c].1)
            .filter(|z| z.is_finite())
            .collect();
        let mean = z.iter().sum::<f64>() / z.len() as f64;
        let sd = (z.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (z.len() - 1) as f64).sqrt();
        println!(
            "{}: unchanged {passes}, inconclusive {}, changed {}; pass (unchanged) rate {:.1}% \
             (95% {:.1}-{:.1}%); x error / se: mean {mean:.2}, sd {sd:.2}",
            case.name,
            count(ChangeOutcome::Inconclusive),
            count(ChangeOutcome::Changed),
            100.0 * passes as f64 / outcomes.len() as f64,
            100.0 * lo,
            100.0 * hi
        );
        if case.change_mm == 0.0 {
            let predicted = results.iter().map(|r| r[c].2).sum::<f64>() / results.len() as f64;
            println!(
                "  (a correct pass here; {:.1}% predicted by the reported standard errors)",
                100.0 * predicted
            );
        }
    }
}
