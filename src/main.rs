//! The `mountdrift` command: parses the arguments, runs the job, prints an error once and sets
//! the exit code (0 gate pass, 1 gate fail, 2 bad input or usage; clap's usage errors exit 2).

mod cli;
mod output;
mod progress;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(code) => code,
        Err(e) => {
            eprintln!("error: {e}");
            ExitCode::from(2)
        }
    }
}
