//! Reading the minimum detectable shift off a ladder: the pool-adjacent-violators monotone fit
//! and the linear interpolation at the requested power, on hand-worked numbers.

use mountdrift::commands::sensitivity::{median, min_detectable, monotone_fit, MinDetectable};

const SIZES_MM: [f64; 5] = [0.25, 0.5, 1.0, 2.0, 4.0];

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-12
}

#[test]
fn monotone_fit_pools_adjacent_violators() {
    // Hand-worked (pool-adjacent-violators, Ayer et al. 1955): 0.6 then 0.5 violate the order
    // and pool to their weighted mean (0.6·10 + 0.5·30)/40 = 0.525.
    let fitted = monotone_fit(&[0.1, 0.6, 0.5, 0.97, 1.0], &[10.0, 10.0, 30.0, 10.0, 10.0]);
    let want = [0.1, 0.525, 0.525, 0.97, 1.0];
    assert!(
        fitted.iter().zip(want).all(|(a, b)| close(*a, b)),
        "{fitted:?}"
    );
    // A violation that reaches back two blocks: 0.5, 0.8, 0.2 → (0.5 + 0.8 + 0.2)/3 = 0.5.
    let fitted = monotone_fit(&[0.5, 0.8, 0.2, 0.9], &[1.0; 4]);
    let want = [0.5, 0.5, 0.5, 0.9];
    assert!(
        fitted.iter().zip(want).all(|(a, b)| close(*a, b)),
        "{fitted:?}"
    );
    // An increasing sequence is left alone.
    let increasing = [0.0, 0.2, 0.2, 0.7, 1.0];
    assert_eq!(monotone_fit(&increasing, &[5.0; 5]), increasing.to_vec());
}

#[test]
fn interpolates_between_the_sizes_that_bracket_the_power() {
    // Hand-worked: 0.9 at 2 mm, 1.0 at 4 mm; 0.95 lies halfway, so 2 + 0.5 · 2 = 3 mm.
    let got = min_detectable(&SIZES_MM, &[0.1, 0.3, 0.8, 0.9, 1.0], 0.95).unwrap();
    assert!(matches!(got, MinDetectable::Interpolated { size } if close(size, 3.0)));
    // Hand-worked: 0.55 at 1 mm, 0.97 at 2 mm; 1 + (0.95 − 0.55)/(0.97 − 0.55) = 1.952381 mm.
    let fitted = monotone_fit(&[0.1, 0.6, 0.5, 0.97, 1.0], &[1.0; 5]);
    let got = min_detectable(&SIZES_MM, &fitted, 0.95).unwrap();
    let want = 1.0 + 0.40 / 0.42;
    assert!(
        matches!(got, MinDetectable::Interpolated { size } if close(size, want)),
        "{got:?}"
    );
    // Exactly at a ladder size: that size (fraction 1 of the bracket).
    let got = min_detectable(&SIZES_MM, &[0.0, 0.2, 0.95, 1.0, 1.0], 0.95).unwrap();
    assert_eq!(got.size(), Some(1.0));
}

#[test]
fn power_at_the_ends_of_the_ladder() {
    let below = min_detectable(&SIZES_MM, &[0.96, 1.0, 1.0, 1.0, 1.0], 0.95).unwrap();
    assert_eq!(below, MinDetectable::AtOrBelowSmallest { size: 0.25 });
    assert_eq!(below.size(), Some(0.25));
    let above = min_detectable(&SIZES_MM, &[0.0, 0.1, 0.2, 0.5, 0.94], 0.95).unwrap();
    assert_eq!(above, MinDetectable::NotReached { largest: 4.0 });
    assert_eq!(above.size(), None);
    assert_eq!(min_detectable(&[], &[], 0.95), None);
}

#[test]
fn medians_of_delays() {
    assert_eq!(median(&[]), None);
    assert_eq!(median(&[7]), Some(7.0));
    assert_eq!(median(&[3, -1, 10]), Some(3.0));
    assert_eq!(median(&[4, 1, -2, 9]), Some(2.5));
}
