//! The `sextant` binary: parses arguments, runs one subcommand, turns errors into exit codes.
//!
//! Exit codes: 0 ok (also when stdout is closed early, as by `| head`), 1 runtime failure,
//! 2 bad usage or bad input.

mod cli;
mod tui;

use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(()) => ExitCode::SUCCESS,
        Err(err) if cli::is_broken_pipe(&err) => ExitCode::SUCCESS,
        Err(err) => {
            eprintln!("error: {err:#}");
            ExitCode::from(cli::exit_code(&err))
        }
    }
}
