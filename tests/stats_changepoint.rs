//! Change-point search checked against ruptures 1.1.10 (fixture from
//! scripts/ruptures_reference.py), unpruned optimal partitioning and exhaustive enumeration.

use mountdrift::stats::changepoint::{optimal_partitioning, pelt, pelt_ruptures};
use mountdrift::stats::cost::{InformationCost, L2Cost, NumpyOrderL2Cost, SegmentCost};
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::StandardNormal;
use rand_pcg::Pcg64Mcg;
use serde::Deserialize;

#[derive(Deserialize)]
struct Fixture {
    versions: serde_json::Value,
    steps_1d_costs: Vec<SpanCost>,
    cases: Vec<Case>,
}

#[derive(Deserialize)]
struct SpanCost {
    start: usize,
    end: usize,
    cost: f64,
}

#[derive(Deserialize)]
struct Case {
    name: String,
    n_samples: usize,
    dim: usize,
    signal: Vec<f64>,
    runs: Vec<Run>,
}

#[derive(Deserialize)]
struct Run {
    min_size: usize,
    jump: usize,
    pen: f64,
    breakpoints: Vec<usize>,
}

fn fixture() -> Fixture {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/ruptures/pelt_l2.json"
    ))
    .expect("fixture fixtures/ruptures/pelt_l2.json (run scripts/ruptures_reference.py)");
    serde_json::from_str(&text).expect("valid ruptures fixture")
}

/// ruptures `CostL2().fit(x).error(a, b)` on the CHECK_VALUES steps signal (section 5: [0,20)
/// 2.12, [20,37) 1.66117647059, [37,60) 2.2, [0,60) 88.2618333333).
#[test]
fn l2_cost_matches_ruptures_cost_l2() {
    let fx = fixture();
    let steps = &fx.cases[0];
    assert_eq!(steps.name, "steps_1d");
    let cost = L2Cost::new(&steps.signal, 1).unwrap();
    for span in &fx.steps_1d_costs {
        let ours = cost.cost(span.start, span.end);
        assert!(
            (ours - span.cost).abs() <= 1e-12 * span.cost.max(1.0),
            "[{}, {}): ours {ours}, ruptures {}",
            span.start,
            span.end,
            span.cost
        );
    }
}

/// Every breakpoint list of ruptures 1.1.10 `Pelt(model="l2", min_size, jump).predict(pen)`
/// in the fixture (steps signals of CHECK_VALUES section 5 and seeded random signals) is
/// reproduced exactly. The steps signal lies on a 0.1 grid, so some penalties (0.1) have
/// exactly tied optima; the numpy-order cost breaks those ties as ruptures does.
#[test]
fn ruptures_compatible_pelt_reproduces_ruptures_breakpoints() {
    let fx = fixture();
    assert_eq!(fx.versions["ruptures"], "v1.1.10");
    let mut checked = 0;
    for case in &fx.cases {
        assert_eq!(case.signal.len(), case.n_samples * case.dim);
        let cost = NumpyOrderL2Cost::new(&case.signal, case.dim).unwrap();
        for run in &case.runs {
            let ours = pelt_ruptures(&cost, run.pen, run.min_size, run.jump).unwrap();
            assert_eq!(
                ours, run.breakpoints,
                "{} min_size {} jump {} pen {}",
                case.name, run.min_size, run.jump, run.pen
            );
            checked += 1;
        }
    }
    assert!(checked >= 200, "only {checked} ruptures runs checked");
}

/// With min_size = 1 and jump = 1 ruptures runs exact PELT, so our exact search with the fast
/// prefix-sum cost must reach the same optimum (CHECK_VALUES section 5: pen 0.3...30 ->
/// [20, 37, 60]); the breakpoints agree wherever the optimum is unique.
#[test]
fn exact_pelt_matches_ruptures_with_unit_grid() {
    let fx = fixture();
    let mut same = 0;
    for case in &fx.cases {
        let fast = L2Cost::new(&case.signal, case.dim).unwrap();
        let reference = NumpyOrderL2Cost::new(&case.signal, case.dim).unwrap();
        for run in case.runs.iter().filter(|r| r.min_size == 1 && r.jump == 1) {
            let ours = pelt(&fast, run.pen, 1).unwrap();
            let theirs_objective = objective(&reference, &run.breakpoints, run.pen);
            assert!(
                (ours.objective - theirs_objective).abs() <= 1e-9 * theirs_objective.max(1.0),
                "{} pen {}: {} vs {}",
                case.name,
                run.pen,
                ours.objective,
                theirs_objective
            );
            same += usize::from(ours.breakpoints == run.breakpoints);
        }
    }
    assert!(same >= 40, "only {same} identical breakpoint lists");
}

fn objective<C: SegmentCost>(cost: &C, breakpoints: &[usize], penalty: f64) -> f64 {
    let mut start = 0;
    let mut total = -penalty;
    for &end in breakpoints {
        total += cost.cost(start, end) + penalty;
        start = end;
    }
    total
}

fn random_steps(rng: &mut Pcg64Mcg, n: usize, dim: usize) -> Vec<f64> {
    let mut level: Vec<f64> = (0..dim).map(|_| rng.sample(StandardNormal)).collect();
    let mut out = Vec::with_capacity(n * dim);
    for _ in 0..n {
        if rng.random::<f64>() < 0.06 {
            level = (0..dim)
                .map(|_| 2.0 * rng.sample::<f64, _>(StandardNormal))
                .collect();
        }
        out.extend(
            level
                .iter()
                .map(|l| l + rng.sample::<f64, _>(StandardNormal)),
        );
    }
    out
}

/// The minimum over all 2^(n-1) segmentations with segments of at least `min_size`.
fn exhaustive_minimum<C: SegmentCost>(cost: &C, penalty: f64, min_size: usize) -> f64 {
    let n = cost.n_samples();
    let mut best = f64::INFINITY;
    for mask in 0u32..(1 << (n - 1)) {
        let mut cuts: Vec<usize> = (1..n).filter(|k| mask & (1 << (k - 1)) != 0).collect();
        cuts.push(n);
        let mut start = 0;
        let mut total = -penalty;
        for &end in &cuts {
            if end - start < min_size {
                total = f64::INFINITY;
                break;
            }
            total += cost.cost(start, end) + penalty;
            start = end;
        }
        best = best.min(total);
    }
    best
}

/// Optimal partitioning (Jackson et al. 2005) checked against enumerating every segmentation.
#[test]
fn optimal_partitioning_equals_exhaustive_search_on_tiny_series() {
    let mut rng = Pcg64Mcg::seed_from_u64(7);
    for trial in 0..40 {
        let n = 4 + trial % 8;
        let dim = 1 + trial % 3;
        let signal = random_steps(&mut rng, n, dim);
        let cost = L2Cost::new(&signal, dim).unwrap();
        let min_size = 1 + trial % 3;
        if n < min_size {
            continue;
        }
        let penalty = 0.3 + 3.0 * rng.random::<f64>();
        let op = optimal_partitioning(&cost, penalty, min_size).unwrap();
        let brute = exhaustive_minimum(&cost, penalty, min_size);
        assert!((op.objective - brute).abs() <= 1e-9 * brute.abs().max(1.0));
    }
}

/// PELT returns the optimal-partitioning optimum (Killick et al. 2012, section 3): same
/// objective and same breakpoints, for several minimum segment lengths and penalties.
#[test]
fn pelt_equals_optimal_partitioning_with_l2_cost() {
    let mut rng = Pcg64Mcg::seed_from_u64(11);
    for trial in 0..60 {
        let n = 30 + (trial * 7) % 90;
        let dim = 1 + trial % 4;
        let signal = random_steps(&mut rng, n, dim);
        let cost = L2Cost::new(&signal, dim).unwrap();
        let min_size = 1 + trial % 6;
        let penalty = [0.5, 2.0, 6.0, 15.0][trial % 4] * dim as f64;
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let slow = optimal_partitioning(&cost, penalty, min_size).unwrap();
        assert!(
            (fast.objective - slow.objective).abs() <= 1e-9 * slow.objective.abs().max(1.0),
            "trial {trial}: {} vs {}",
            fast.objective,
            slow.objective
        );
        assert_eq!(fast.breakpoints, slow.breakpoints, "trial {trial}");
        assert!(fast.segments().iter().all(|(a, b)| b - a >= min_size));
    }
}

fn random_information(rng: &mut Pcg64Mcg, rank: usize) -> Matrix6<f64> {
    let mut w = Matrix6::zeros();
    for _ in 0..rank {
        let v = Vector6::from_fn(|_, _| rng.sample::<f64, _>(StandardNormal));
        w += v * v.transpose();
    }
    w
}

/// The same with the information-weighted cost, including frames whose information is rank
/// deficient (a direction unobserved) and whose samples are garbage in that direction.
#[test]
fn pelt_equals_optimal_partitioning_with_information_cost() {
    let mut rng = Pcg64Mcg::seed_from_u64(12);
    for trial in 0..24 {
        let n = 25 + (trial * 5) % 40;
        let mut y = Vec::with_capacity(n);
        let mut omega = Vec::with_capacity(n);
        let mut level = Vector6::<f64>::zeros();
        for _ in 0..n {
            if rng.random::<f64>() < 0.08 {
                level = Vector6::from_fn(|_, _| 3.0 * rng.sample::<f64, _>(StandardNormal));
            }
            let rank = if rng.random::<f64>() < 0.2 { 3 } else { 6 };
            let w = random_information(&mut rng, rank);
            let noise = Vector6::from_fn(|_, _| rng.sample::<f64, _>(StandardNormal));
            y.push(level + noise);
            omega.push(w);
        }
        let cost = InformationCost::new(&y, &omega, 6).unwrap();
        let min_size = 1 + trial % 4;
        let penalty = [4.0, 12.0, 30.0][trial % 3];
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let slow = optimal_partitioning(&cost, penalty, min_size).unwrap();
        assert!(
            (fast.objective - slow.objective).abs() <= 1e-8 * slow.objective.abs().max(1.0),
            "trial {trial}: {} vs {}",
            fast.objective,
            slow.objective
        );
        assert_eq!(fast.breakpoints, slow.breakpoints, "trial {trial}");
    }
}

/// With identical information in every frame the weighted cost equals the L2 cost of the
/// whitened samples (the identity the fast path of the audit relies on).
#[test]
fn information_cost_with_identity_weights_is_l2_cost() {
    let mut rng = Pcg64Mcg::seed_from_u64(13);
    let rows: Vec<Vector6<f64>> = (0..50)
        .map(|_| Vector6::from_fn(|_, _| rng.sample::<f64, _>(StandardNormal)))
        .collect();
    let weighted = InformationCost::new(&rows, &vec![Matrix6::identity(); 50], 6).unwrap();
    let plain = L2Cost::from_vectors(&rows).unwrap();
    for (a, b) in [(0, 50), (3, 9), (10, 11), (20, 47)] {
        let (w, p) = (weighted.cost(a, b), plain.cost(a, b));
        assert!((w - p).abs() <= 1e-10 * p.max(1.0), "[{a},{b}): {w} vs {p}");
    }
}

/// The 2000 x 6 signal timed by scripts/bench_ruptures.py (defined by integer formulas there and
/// in benches/changepoint.rs): ruptures 1.1.10 breakpoints for Pelt(l2) at pen 50 with its
/// defaults (min_size 2, jump 5) and with the exact grid, reproduced by both our searches.
#[test]
fn benchmark_signal_matches_ruptures() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/ruptures/bench_2000x6.json"
    ))
    .expect("fixture fixtures/ruptures/bench_2000x6.json (run scripts/bench_ruptures.py)");
    let fx: serde_json::Value = serde_json::from_str(&text).unwrap();
    let mut signal = Vec::with_capacity(12_000);
    for i in 0..2000i64 {
        let level = if i < 600 {
            0.0
        } else if i < 1300 {
            3.0
        } else {
            1.0
        };
        for j in 0..6i64 {
            let a = ((37 * i + 13 * j) % 11 - 5) as f64 / 5.0;
            let b = ((53 * i + 7 * j) % 7 - 3) as f64 / 10.0;
            signal.push(level * (1 + j) as f64 / 3.0 + a + b);
        }
    }
    let checksum: f64 = signal.iter().sum();
    assert!((checksum - fx["checksum"].as_f64().unwrap()).abs() < 1e-6);
    let cost = L2Cost::new(&signal, 6).unwrap();
    for run in fx["runs"].as_array().unwrap() {
        let expected: Vec<usize> = serde_json::from_value(run["breakpoints"].clone()).unwrap();
        let (min_size, jump) = (
            run["min_size"].as_u64().unwrap() as usize,
            run["jump"].as_u64().unwrap() as usize,
        );
        assert_eq!(
            pelt_ruptures(&cost, 50.0, min_size, jump).unwrap(),
            expected
        );
        if jump == 1 {
            assert_eq!(pelt(&cost, 50.0, min_size).unwrap().breakpoints, expected);
        }
    }
}
