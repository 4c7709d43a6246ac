//! The 100,000-problem census of the pose solver: random well-posed problems (seeded), counting
//! gross failures (rejections, or errors beyond 10 predicted standard deviations not covered by a
//! flagged ambiguity). Definitions in tests/pnp_common/stress.rs. Run with
//! `cargo run --release --example pnp_stress [PROBLEMS [SEED]]`; docs/benchmarks.md records the
//! output of the default run (100,000 problems, seed 0x5eed0000).

#[path = "../tests/pnp_common/mod.rs"]
mod pnp_common;

use pnp_common::stress::{census, KINDS};

fn main() {
    let problems = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(100_000u64);
    let seed = std::env::args()
        .nth(2)
        .and_then(|a| a.parse().ok())
        .unwrap_or(0x5eed_0000u64);
    let started = std::time::Instant::now();
    let c = census(problems, seed);
    println!("problems solved:          {}", c.solved);
    for (kind, n) in KINDS.iter().zip(&c.per_kind) {
        println!("  {kind:<12}            {n}");
    }
    println!("draws redrawn (ill-posed): {}", c.redrawn);
    println!("gross failures:           {}", c.failures.len());
    for f in &c.failures {
        println!("  {f}");
    }
    println!("flagged ambiguous:        {}", c.flagged_ambiguous);
    println!("  alternative was right:  {}", c.rescued_by_alternative);
    println!("worst unflagged error:    {:.2} sigma", c.worst_sigma);
    println!(
        "wall time:                {:.1} s",
        started.elapsed().as_secs_f64()
    );
}
