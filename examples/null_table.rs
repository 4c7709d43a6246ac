//! Writes, or checks, the null distributions the calibrators read instead of simulating
//! (`src/stats/null_table.rs`): every AR(1) class of the penalty and of the online threshold at
//! the lengths a long audit is calibrated at, with the default calibration settings.
//!
//!     cargo run --release --example null_table -- assets/null_distributions.json
//!     cargo run --release --example null_table -- --check
//!
//! `--check` simulates every class again and compares it with the table compiled into the
//! program (exit code 1 on any difference).

use std::process::ExitCode;

use mountdrift::stats::null_table::{embedded, simulate_table};

fn main() -> ExitCode {
    let argument = std::env::args().nth(1);
    let started = std::time::Instant::now();
    let progress = |class: &str| eprintln!("{:>7.1} s  {class}", started.elapsed().as_secs_f64());
    let table = match simulate_table(&progress) {
        Ok(table) => table,
        Err(error) => {
            eprintln!("error: {error}");
            return ExitCode::from(2);
        }
    };
    match argument.as_deref() {
        Some("--check") => match embedded() {
            Some(stored) if *stored == table => {
                eprintln!("the compiled-in table equals a fresh simulation");
                ExitCode::SUCCESS
            }
            Some(_) => {
                eprintln!("the compiled-in table differs from a fresh simulation: write it again");
                ExitCode::from(1)
            }
            None => {
                eprintln!("no table is compiled in");
                ExitCode::from(1)
            }
        },
        Some(path) => {
            let text = match serde_json::to_string(&table) {
                Ok(text) => text,
                Err(error) => {
                    eprintln!("error: {error}");
                    return ExitCode::from(2);
                }
            };
            if let Err(error) = std::fs::write(path, text + "\n") {
                eprintln!("error: cannot write {path}: {error}");
                return ExitCode::from(2);
            }
            eprintln!("wrote {path}");
            ExitCode::SUCCESS
        }
        None => {
            eprintln!("usage: null_table OUTPUT.json | --check");
            ExitCode::from(2)
        }
    }
}
