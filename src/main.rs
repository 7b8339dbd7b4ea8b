//! The `dryfront` command: a thin front end over the library (see `dryfront::cli`).
use std::process::ExitCode;

use clap::error::ErrorKind;
use clap::Parser;

fn main() -> ExitCode {
    let args = match dryfront::cli::Args::try_parse() {
        Ok(args) => args,
        Err(err) => return option_error(err),
    };
    match dryfront::cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("dryfront: error: {err:#}");
            ExitCode::from(2)
        }
    }
}

/// Help and version go out as clap writes them; an option error is one line with a pointer to `--help` (before
/// the parser's message, so the message ends the line as every other error does), exit 2.
fn option_error(err: clap::Error) -> ExitCode {
    match err.kind() {
        ErrorKind::DisplayHelp
        | ErrorKind::DisplayVersion
        | ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => err.exit(),
        _ => {
            let text = err.render().to_string();
            let first = text.lines().next().unwrap_or("bad command line");
            let first = first.strip_prefix("error: ").unwrap_or(first);
            eprintln!("dryfront: error: command line (see --help): {first}");
            ExitCode::from(2)
        }
    }
}
