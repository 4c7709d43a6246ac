//! Series of white plus AR(1) noise (a "mixture") shared by the tests of the noise estimate and
//! the penalty on such series.

use nalgebra::Vector6;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

/// Unit-variance mixture `√(1−s) w_t + √s e_t` of `n` samples, `e_t` stationary AR(1) with
/// coefficient `rho`, `s` the `share` of the variance that is correlated.
pub fn mixture(seed: u64, n: usize, share: f64, rho: f64) -> Vec<Vector6<f64>> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let mut draw = || Vector6::<f64>::from_fn(|_, _| StandardNormal.sample(&mut rng));
    let innovation = (1.0 - rho * rho).sqrt();
    let mut e = draw();
    (0..n)
        .map(|_| {
            e = e * rho + draw() * innovation;
            draw() * (1.0 - share).sqrt() + e * share.sqrt()
        })
        .collect()
}

/// Long-run over marginal variance of the mixture: `1 − s + s (1+ρ)/(1−ρ)` (the AR(1) spectrum
/// at frequency zero, Box & Jenkins, Time Series Analysis, ch. 3; the white part adds its own
/// variance).
pub fn mixture_long_run(share: f64, rho: f64) -> f64 {
    1.0 - share + share * (1.0 + rho) / (1.0 - rho)
}
