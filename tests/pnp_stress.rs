//! Random well-posed pose problems without gross failure: the first 50,000 of the census whose
//! full 100,000-problem run is examples/pnp_stress.rs (figures in docs/benchmarks.md; the test
//! takes about 4 s of CPU in the test profile). Definitions in tests/pnp_common/stress.rs: a gross failure
//! is a rejection or an error beyond 10 predicted standard deviations not covered by a flagged
//! ambiguity.

mod pnp_common;

use pnp_common::stress::{census, KINDS};

#[test]
fn random_well_posed_problems_without_gross_failure() {
    let c = census(50_000, 0x5eed_0000);
    assert!(
        c.failures.is_empty(),
        "{} gross failures: {:?}",
        c.failures.len(),
        c.failures
    );
    for (kind, &n) in KINDS.iter().zip(&c.per_kind) {
        assert_eq!(n, 12_500, "{kind} problems");
    }
    // The unflagged errors stay in the Gaussian range (chi with 6 dof over 50,000 draws).
    assert!(c.worst_sigma < 7.0, "worst {}", c.worst_sigma);
}
