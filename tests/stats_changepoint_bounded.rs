//! The bound-tree search (`pelt`) returns exactly what PELT as published returns (Killick,
//! Fearnhead & Eckley 2012, JASA 107:1590-1598; `pelt_pruned`) and what unpruned optimal
//! partitioning returns (Jackson et al. 2005): same breakpoints and objective, on random series
//! with long change-free stretches (where the tree skips almost everything), dense changes, tiny
//! and large penalties, minimum segment lengths from 1 to 12, rank-deficient information and
//! data on a grid that make exact ties.

use mountdrift::stats::changepoint::{optimal_partitioning, pelt, pelt_pruned, Segmentation};
use mountdrift::stats::cost::{InformationCost, L2Cost, SegmentCost};
use mountdrift::stats::penalty::ar1_series;
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::StandardNormal;
use rand_pcg::Pcg64Mcg;

fn normal(rng: &mut Pcg64Mcg) -> f64 {
    rng.sample::<f64, _>(StandardNormal)
}

/// Unit white noise in `dim` columns whose mean jumps by `jump` sigma (random direction) at
/// `changes` random places.
fn sparse_steps(rng: &mut Pcg64Mcg, n: usize, dim: usize, changes: usize, jump: f64) -> Vec<f64> {
    let mut at: Vec<usize> = (0..changes).map(|_| rng.random_range(0..n)).collect();
    at.sort_unstable();
    let mut level = vec![0.0; dim];
    let mut out = Vec::with_capacity(n * dim);
    for t in 0..n {
        if at.binary_search(&t).is_ok() {
            level.iter_mut().for_each(|l| *l += jump * normal(rng));
        }
        out.extend(level.iter().map(|l| l + normal(rng)));
    }
    out
}

fn assert_same(fast: &Segmentation, reference: &Segmentation, what: &str) {
    assert_eq!(fast.breakpoints, reference.breakpoints, "{what}");
    let tol = 1e-12 * reference.objective.abs().max(1.0);
    assert!(
        (fast.objective - reference.objective).abs() <= tol,
        "{what}: {} vs {}",
        fast.objective,
        reference.objective
    );
}

#[test]
fn bounded_search_equals_published_pelt_on_long_stretches() {
    let mut rng = Pcg64Mcg::seed_from_u64(21);
    for trial in 0..40 {
        let n = 200 + rng.random_range(0..2800);
        let dim = 1 + trial % 6;
        let changes = trial % 4;
        let signal = sparse_steps(&mut rng, n, dim, changes, 1.5);
        let cost = L2Cost::new(&signal, dim).unwrap();
        let min_size = 1 + trial % 12;
        let penalty = [2.0, 10.0, 25.0, 60.0, 200.0][trial % 5] * (dim as f64).sqrt();
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let reference = pelt_pruned(&cost, penalty, min_size).unwrap();
        assert_same(
            &fast,
            &reference,
            &format!("trial {trial}, n {n}, dim {dim}"),
        );
    }
}

#[test]
fn bounded_search_equals_published_pelt_with_dense_changes() {
    let mut rng = Pcg64Mcg::seed_from_u64(22);
    for trial in 0..20 {
        let n = 500 + rng.random_range(0..1500);
        let dim = 1 + trial % 6;
        let signal = sparse_steps(&mut rng, n, dim, n / 25, 2.0);
        let cost = L2Cost::new(&signal, dim).unwrap();
        let min_size = 1 + trial % 5;
        let penalty = [0.5, 5.0, 20.0, 40.0][trial % 4];
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let reference = pelt_pruned(&cost, penalty, min_size).unwrap();
        assert_same(&fast, &reference, &format!("trial {trial}"));
    }
}

/// Clean AR(1) series at the critical penalty's neighbourhood, the calibration's workload.
#[test]
fn bounded_search_equals_published_pelt_on_correlated_noise() {
    let mut rng = Pcg64Mcg::seed_from_u64(23);
    for trial in 0..16 {
        let rho = [0.0, 0.5, 0.9, 0.97][trial % 4];
        let y = ar1_series(&mut rng, 1000, 6, rho);
        let cost = L2Cost::from_vectors(&y).unwrap();
        for penalty in [5.0, 20.0, 40.0, 80.0] {
            let fast = pelt(&cost, penalty, 10).unwrap();
            let reference = pelt_pruned(&cost, penalty, 10).unwrap();
            assert_same(&fast, &reference, &format!("trial {trial}, pen {penalty}"));
        }
    }
}

fn random_information(rng: &mut Pcg64Mcg, rank: usize) -> Matrix6<f64> {
    let mut w = Matrix6::zeros();
    for _ in 0..rank {
        let v = Vector6::from_fn(|_, _| normal(rng));
        w += v * v.transpose();
    }
    w
}

#[test]
fn bounded_search_equals_published_pelt_with_information_cost() {
    let mut rng = Pcg64Mcg::seed_from_u64(24);
    for trial in 0..8 {
        let n = 300 + 150 * trial;
        let mut level = Vector6::<f64>::zeros();
        let (mut y, mut omega) = (Vec::with_capacity(n), Vec::with_capacity(n));
        for _ in 0..n {
            if rng.random::<f64>() < 0.004 {
                level += Vector6::from_fn(|_, _| 0.5 * normal(&mut rng));
            }
            let rank = if rng.random::<f64>() < 0.1 { 4 } else { 6 };
            let w = random_information(&mut rng, rank);
            y.push(level + Vector6::from_fn(|_, _| normal(&mut rng)));
            omega.push(w);
        }
        let cost = InformationCost::new(&y, &omega, 6).unwrap();
        let min_size = [1, 5, 10][trial % 3];
        let penalty = [8.0, 30.0][trial % 2];
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let reference = pelt_pruned(&cost, penalty, min_size).unwrap();
        assert_same(&fast, &reference, &format!("trial {trial}"));
    }
}

/// Small integers make many exact ties between segmentations; the tie goes to the earliest last
/// change point in every search.
#[test]
fn bounded_search_breaks_exact_ties_like_optimal_partitioning() {
    let mut rng = Pcg64Mcg::seed_from_u64(25);
    for trial in 0..60 {
        let n = 20 + rng.random_range(0..120);
        let dim = 1 + trial % 3;
        let signal: Vec<f64> = (0..n * dim)
            .map(|i| (rng.random_range(0..3) + if i / dim > n / 2 { 2 } else { 0 }) as f64)
            .collect();
        let cost = L2Cost::new(&signal, dim).unwrap();
        let min_size = 1 + trial % 4;
        let penalty = [1.0, 2.0, 4.0, 8.0][trial % 4];
        let fast = pelt(&cost, penalty, min_size).unwrap();
        let reference = optimal_partitioning(&cost, penalty, min_size).unwrap();
        assert_eq!(fast.breakpoints, reference.breakpoints, "trial {trial}");
        assert!((fast.objective - reference.objective).abs() <= 1e-9 * reference.objective);
    }
}

/// The tree covers series whose length is not a multiple of the leaf size and the shortest
/// series allowed.
#[test]
fn bounded_search_handles_short_and_odd_lengths() {
    let mut rng = Pcg64Mcg::seed_from_u64(26);
    for n in [1usize, 2, 3, 15, 16, 17, 31, 32, 33, 63, 65, 129] {
        let signal = sparse_steps(&mut rng, n, 2, 1, 4.0);
        let cost = L2Cost::new(&signal, 2).unwrap();
        for min_size in [1usize, 2, 8] {
            if n < min_size {
                assert!(pelt(&cost, 3.0, min_size).is_err());
                continue;
            }
            let fast = pelt(&cost, 3.0, min_size).unwrap();
            let reference = optimal_partitioning(&cost, 3.0, min_size).unwrap();
            assert_same(&fast, &reference, &format!("n {n}, min_size {min_size}"));
        }
    }
}

/// A cost that refuses empty segments (`start < end` is the trait's contract).
struct NonEmptyOnly<'a>(&'a L2Cost);

impl SegmentCost for NonEmptyOnly<'_> {
    fn n_samples(&self) -> usize {
        self.0.n_samples()
    }

    fn cost(&self, start: usize, end: usize) -> f64 {
        assert!(
            start < end,
            "cost of the empty segment {start}..{end} asked for"
        );
        self.0.cost(start, end)
    }

    fn costs_to(&self, starts: &[usize], end: usize, out: &mut [f64]) {
        for (o, &start) in out.iter_mut().zip(starts) {
            *o = self.cost(start, end);
        }
    }
}

/// With a minimum length of one the last covering node can end at the current end: the search
/// must not ask the cost for that empty tail.
#[test]
fn bounded_search_never_asks_for_an_empty_segment() {
    let mut rng = Pcg64Mcg::seed_from_u64(27);
    for n in [5usize, 64, 257, 500] {
        let signal = sparse_steps(&mut rng, n, 3, 2, 2.0);
        let cost = L2Cost::new(&signal, 3).unwrap();
        for min_size in [1usize, 2, 3] {
            let fast = pelt(&NonEmptyOnly(&cost), 5.0, min_size).unwrap();
            let reference = pelt_pruned(&cost, 5.0, min_size).unwrap();
            assert_same(&fast, &reference, &format!("n {n}, min_size {min_size}"));
        }
    }
}
