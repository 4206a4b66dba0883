//! The `furrow` command: parse arguments, call the library, print results
//! and errors, and map errors to the documented exit codes (0 success,
//! 1 failure, 2 usage error, 3 no allocation satisfies the constraints).
//! Nothing else in the crate prints or exits.

mod cli;
mod progress;
mod shell;

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(code) => code,
        Err(err) => {
            // The message echoes user text (names, cells): control
            // characters are shown as escapes, not sent to the terminal.
            eprintln!("error: {}", furrow::text::visible_lines(&message(&err)));
            let code = err
                .downcast_ref::<furrow::Error>()
                .map(furrow::Error::exit_code)
                .unwrap_or(1);
            ExitCode::from(code)
        }
    }
}

/// The error and its causes on one line, each cause once: a library error
/// such as "cannot read F: No such file" already names its cause, so a
/// cause whose text the line holds already is not repeated.
fn message(err: &anyhow::Error) -> String {
    let mut line = String::new();
    for cause in err.chain() {
        let text = cause.to_string();
        if line.contains(&text) {
            continue;
        }
        if !line.is_empty() {
            line.push_str(": ");
        }
        line.push_str(&text);
    }
    line
}
