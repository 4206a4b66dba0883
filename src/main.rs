//! The `furrow` command: parse arguments, call the library, print results
//! and errors, and map errors to the documented exit codes (0 success,
//! 1 failure, 2 usage error, 3 no allocation satisfies the constraints).
//! Nothing else in the crate prints or exits.

mod cli;
mod progress;

use clap::Parser;
use std::process::ExitCode;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(code) => code,
        Err(err) => {
            eprintln!("error: {err:#}");
            let code = err
                .downcast_ref::<furrow::Error>()
                .map(cli::exit_code)
                .unwrap_or(1);
            ExitCode::from(code)
        }
    }
}
