//! False-alarm rate of the audit's change-point search on clean simulated sessions: runs the
//! audit on `N` seeds of a preset with its mount events removed and counts sessions with any
//! change point. Usage: `cargo run --release --example audit_false_alarms -- PRESET SECONDS N [RATE]` (RATE:
//! the policy's false-alarm rate, default 0.01; a larger one makes the count informative about
//! the calibration with fewer sessions).

use mountdrift::commands::audit::{audit_frames, simulated, Setup};
use mountdrift::session::Policy;
use mountdrift::sim::{preset, Simulation};

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let name = args.get(1).map(String::as_str).unwrap_or("clean");
    let seconds: f64 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(40.0);
    let runs: u64 = args.get(3).and_then(|s| s.parse().ok()).unwrap_or(50);
    let policy = Policy {
        false_alarm_rate: args.get(4).and_then(|s| s.parse().ok()).unwrap_or(0.01),
        ..Policy::default()
    };
    let mut alarms = 0;
    for seed in 1..=runs {
        let mut scenario = preset(name).expect("known preset");
        scenario.duration_s = seconds;
        scenario.seed = seed;
        scenario.mount_events.clear();
        let sim = Simulation::new(&scenario).expect("valid scenario");
        let setup = Setup::from_simulation(&sim, name);
        let outcome = audit_frames(&setup, sim.frames().map(simulated), &policy, &|_| {})
            .expect("audit runs");
        let found = outcome.change_points.len();
        alarms += u64::from(found > 0);
        println!(
            "seed {seed}: {found} change point(s), verdict {}",
            outcome.verdict.name()
        );
    }
    println!(
        "{name}, {seconds} s, rate {}: {alarms} of {runs} clean sessions raised a change point",
        policy.false_alarm_rate
    );
}
