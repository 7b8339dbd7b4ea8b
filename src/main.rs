//! The `dryfront` command: a thin front end over the library (see `dryfront::cli`).
use std::process::ExitCode;

use clap::error::ErrorKind;
use clap::Parser;

fn main() -> ExitCode {
    quiet_on_broken_pipe();
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

/// A reader that stops reading our standard output (`dryfront weather summary FILE --daily | head -1`) ends the
/// program quietly with success, for every command: Rust's printing macros panic on the broken pipe, and this hook
/// turns that one panic into exit 0 (whatever was not yet printed or written is dropped; an `--out` set is still
/// written whole or not at all). Every other panic goes to the default hook.
fn quiet_on_broken_pipe() {
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let payload = info.payload();
        let message = payload
            .downcast_ref::<String>()
            .map(String::as_str)
            .or_else(|| payload.downcast_ref::<&str>().copied())
            .unwrap_or("");
        if message.starts_with("failed printing to stdout") && message.contains("Broken pipe") {
            std::process::exit(0);
        }
        default_hook(info);
    }));
}
