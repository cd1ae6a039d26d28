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
            // The message and each cause not already part of it (our errors name their
            // operating-system reason themselves).
            let mut text = err.to_string();
            let mut previous: &(dyn std::error::Error + 'static) = err.as_ref();
            for cause in err.chain().skip(1) {
                // Our file errors already say what the operating system's error means.
                let explained = std::mem::replace(&mut previous, cause);
                if cli::explains_its_source(explained) {
                    continue;
                }
                let cause = cause.to_string();
                if !text.contains(&cause) {
                    text.push_str(": ");
                    text.push_str(&cause);
                }
            }
            // Messages quote values from the user's files: shown escaped, never raw.
            eprintln!("error: {}", cli::readable(&text));
            ExitCode::from(cli::exit_code(&err))
        }
    }
}
