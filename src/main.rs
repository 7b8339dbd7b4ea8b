//! The `dryfront` command: a thin front end over the library (see `dryfront::cli`).
use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    match dryfront::cli::run(dryfront::cli::Args::parse()) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("dryfront: error: {err:#}");
            ExitCode::from(2)
        }
    }
}
