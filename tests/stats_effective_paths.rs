//! The shortcuts of the per-frame statistics against their definitions: a covariance's
//! information taken by the Cholesky inverse when it is provably regular, and a frame's effective
//! information `(Ω^{+1/2} Γ Ω^{+1/2})⁺` formed as `Ω^{1/2} Γ⁻¹ Ω^{1/2}`. The references are
//! nalgebra's SVD pseudo-inverse and its symmetric eigen-decomposition, computed here from the
//! definitions.

use mountdrift::stats::information::Information;
use mountdrift::stats::series::{DeviationSample, DeviationSeries, EffectiveModel};
use nalgebra::{Matrix6, SymmetricEigen, Vector6};

/// Moore-Penrose pseudo-inverse by nalgebra's SVD, singular values below `rel` of the largest
/// dropped.
fn svd_pinv(m: &Matrix6<f64>, rel: f64) -> Matrix6<f64> {
    let svd = m.svd(true, true);
    let eps = rel * svd.singular_values.max();
    svd.pseudo_inverse(eps).unwrap()
}

/// `V f(λ) Vᵀ` over the eigenvalues above `rel` of the largest (nalgebra `SymmetricEigen`).
fn eigen_map(m: &Matrix6<f64>, rel: f64, f: impl Fn(f64) -> f64) -> Matrix6<f64> {
    let eig = SymmetricEigen::new((m + m.transpose()) * 0.5);
    let floor = rel * eig.eigenvalues.amax();
    let mapped = eig.eigenvalues.map(|v| if v > floor { f(v) } else { 0.0 });
    eig.eigenvectors * Matrix6::from_diagonal(&mapped) * eig.eigenvectors.transpose()
}

fn relative_error(a: &Matrix6<f64>, b: &Matrix6<f64>) -> f64 {
    (a - b).norm() / b.norm()
}

/// A symmetric positive definite matrix with a chosen spread of eigenvalues.
fn spd(seed: usize, spread: f64) -> Matrix6<f64> {
    let a = Matrix6::from_fn(|i, j| (((seed * 31 + i * 7 + j * 13) % 11) as f64 - 5.0) / 5.0);
    let q = a.qr().q();
    let values = Vector6::from_fn(|i, _| spread.powf(i as f64 / 5.0));
    q * Matrix6::from_diagonal(&values) * q.transpose()
}

#[test]
fn information_of_a_regular_covariance_is_its_inverse() {
    // Hand-worked: the inverse of diag(4, 1, 0.25, 9, 16, 0.01) is diag(0.25, 1, 4, 1/9, 1/16, 100).
    let p = Matrix6::from_diagonal(&Vector6::new(4.0, 1.0, 0.25, 9.0, 16.0, 0.01));
    let w = Information::from_covariance(&p, 0).unwrap();
    let expected = Vector6::new(0.25, 1.0, 4.0, 1.0 / 9.0, 1.0 / 16.0, 100.0);
    assert!((w.matrix().diagonal() - expected).amax() <= 1e-14 * 100.0);
    assert_eq!(w.rank(), 6);
    // Condition numbers on both sides of the Cholesky shortcut's limit agree with the SVD.
    for (seed, spread) in [(1, 10.0), (2, 1e4), (3, 1e8), (4, 1e11)] {
        let p = spd(seed, spread);
        let w = Information::from_covariance(&p, seed).unwrap();
        let reference = svd_pinv(&p, 1e-12);
        let error = relative_error(&w.matrix(), &reference);
        assert!(
            error <= 1e-15 * spread * 100.0,
            "spread {spread}: {error:e}"
        );
        assert_eq!(w.rank(), 6);
    }
}

#[test]
fn information_of_a_singular_covariance_keeps_its_rank() {
    // One direction removed entirely (projected out): rank 5.
    let u = Vector6::new(1.0, 0.5, -0.3, 0.2, 0.0, 0.7).normalize();
    let projector = Matrix6::identity() - u * u.transpose();
    let p = projector * spd(6, 50.0) * projector;
    let w = Information::from_covariance(&p, 0).unwrap();
    assert_eq!(w.rank(), 5);
    let reference = svd_pinv(&p, 1e-12);
    assert!(relative_error(&w.matrix(), &reference) <= 1e-10);
    assert!(Information::from_covariance(&(-p), 0).is_err());
}

fn series(covariances: &[Matrix6<f64>]) -> DeviationSeries {
    let samples: Vec<DeviationSample> = covariances
        .iter()
        .enumerate()
        .map(|(t, p)| DeviationSample {
            frame: t as i64,
            time_s: t as f64 / 30.0,
            deviation: Vector6::from_fn(|i, _| ((t * 5 + i * 3) % 7) as f64 * 0.1),
            covariance: *p,
        })
        .collect();
    DeviationSeries::new(&samples).unwrap()
}

/// `Ω̃_t` from the model against the definition evaluated with nalgebra's eigen-decomposition
/// and SVD, for well-conditioned frames (the direct formula), badly conditioned ones and a
/// rank-deficient one (the eigen path).
#[test]
fn effective_information_matches_its_definition() {
    let u = Vector6::new(0.3, -0.2, 0.9, 0.1, 0.0, 0.2).normalize();
    let projector = Matrix6::identity() - u * u.transpose();
    let mut covariances: Vec<Matrix6<f64>> = (0..40).map(|k| spd(k, 1.0 + k as f64)).collect();
    covariances[7] = spd(70, 1e7);
    covariances[12] = projector * spd(12, 20.0) * projector;
    let series = series(&covariances);
    let mut model = EffectiveModel::new(&series).unwrap();
    assert!(!model.common);
    let regular = model.regular();
    assert!(!regular[12] && regular.iter().filter(|r| !**r).count() == 1);
    for gamma_spread in [1.0, 3.0, 1e3] {
        let gamma = spd(99, gamma_spread) * 1.7;
        model.inflate(&gamma);
        for t in 0..series.len() {
            let omega = model.nominal(t);
            let root = eigen_map(&omega, 1e-10, |v| 1.0 / v.sqrt());
            let covariance = root * gamma * root;
            let reference = svd_pinv(&covariance, 1e-10);
            // Rounding grows with the condition number of the matrix inverted.
            let values = covariance.singular_values();
            let kept = values.iter().filter(|v| **v > 1e-10 * values.max());
            let condition = values.max() / kept.fold(f64::INFINITY, |a, &v| a.min(v));
            let error = relative_error(&model.effective(t), &reference);
            assert!(
                error <= 1e-13 * condition.max(1.0),
                "frame {t}, Γ spread {gamma_spread}: {error:e} (condition {condition:e})"
            );
        }
    }
}
