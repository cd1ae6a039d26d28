//! Command-line front end: argument definitions and one module per subcommand. Each
//! subcommand parses and validates, resolves a plan (data loaded, model fitted or loaded),
//! then does the work through the library and prints through [`output`].

mod args;
mod audit;
mod demo;
mod explain;
mod explore;
mod export;
mod fit;
mod foldin;
mod import;
mod info;
mod inputs;
mod lookup;
mod manual;
mod neighbours;
mod notes;
mod output;
mod suggest;
mod summary;
mod tune;

use clap::{Parser, Subcommand};

use sextant::error::{DataError, FitError};
use sextant::files::output::OutputError;
use sextant::model::store::SaveError;

/// Take bearings in the latent space of a rating-based recommender.
///
/// sextant fits a probabilistic matrix factorization to a ratings CSV (or imports vectors
/// fitted elsewhere) and keeps it as a self-contained model directory. Ratings are personal
/// data: sextant keeps everything on this machine and sends nothing anywhere.
///
/// Run without arguments to open the explorer on the bundled demo model.
#[derive(Debug, Parser)]
#[command(name = "sextant", version, propagate_version = true)]
pub struct Cli {
    #[command(subcommand)]
    command: Option<Command>,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Fit a model to a ratings CSV and write a model directory.
    Fit(fit::FitArgs),
    /// Build a model directory from factor tables fitted elsewhere.
    Import(import::ImportArgs),
    /// Summarise a model directory: options, counts, convergence, accuracy.
    Info(info::InfoArgs),
    /// Open the terminal explorer on a model (needs an interactive terminal).
    Explore(explore::ExploreArgs),
    /// The items nearest to an item (or members nearest to a member) in the latent space.
    Neighbours(neighbours::NeighboursArgs),
    /// A member's top items by predicted rating, with their uncertainty.
    Suggest(suggest::SuggestArgs),
    /// Take one prediction apart: factors, uncertainty, evidence, support.
    ///
    /// Shows the global mean, every factor's contribution (they add up to the prediction),
    /// the predictive standard deviation, the member's own rated items nearest to the item,
    /// and how many ratings stand behind the member and the item.
    ///
    /// Cautions: ratings and the vectors fitted from them are personal data — handle them as
    /// local data-protection law and your organisation's policy require; sextant keeps
    /// everything on this machine and sends nothing anywhere. An explanation describes the
    /// model's arithmetic, not a person's motives or traits, and is no basis for decisions
    /// about people beyond what to show them. An explanation given to a member uses that
    /// member's own ratings only.
    ///
    /// CSV has one row per factor contribution (factor, value, label); every row also
    /// carries mu, predicted, rounded, predictive_sd and actual, the same on each row.
    Explain(explain::ExplainArgs),
    /// Audit a model: coherence, worst fits, support, factor meaning, ranking, notes.
    Audit(audit::AuditArgs),
    /// Fold a what-if profile (item,rating CSV) into a model: its vector and suggestions.
    #[command(name = "fold-in")]
    FoldIn(foldin::FoldInArgs),
    /// Fit a grid of ranks × λ on one held-out split and compare held-out RMSE.
    Tune(tune::TuneArgs),
    /// List a model's curator notes, or set an item note, a factor label or a pair flag.
    Notes(notes::NotesArgs),
    /// Write a model's factor tables, held-out predictions and neighbour lists as Parquet or CSV.
    Export(export::ExportArgs),
    /// Print a shell completion script (bash, zsh, fish, elvish or powershell) on stdout.
    Completions(manual::CompletionsArgs),
    /// Print the manual page of sextant or of one command (roff, for `man -l -`).
    Man(manual::ManArgs),
}

/// Runs the parsed command line.
pub fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Some(Command::Fit(args)) => fit::run(&args),
        Some(Command::Import(args)) => import::run(&args),
        Some(Command::Info(args)) => info::run(&args),
        Some(Command::Explore(args)) => explore::run(&args),
        Some(Command::Neighbours(args)) => neighbours::run(&args),
        Some(Command::Suggest(args)) => suggest::run(&args),
        Some(Command::Explain(args)) => explain::run(&args),
        Some(Command::Audit(args)) => audit::run(&args),
        Some(Command::FoldIn(args)) => foldin::run(&args),
        Some(Command::Tune(args)) => tune::run(&args),
        Some(Command::Notes(args)) => notes::run(&args),
        Some(Command::Export(args)) => export::run(&args),
        Some(Command::Completions(args)) => manual::completions(&args),
        Some(Command::Man(args)) => manual::man(&args),
        None => demo::run(),
    }
}

pub use output::readable;

/// True for errors whose message already puts their operating-system cause in words.
pub fn explains_its_source(err: &(dyn std::error::Error + 'static)) -> bool {
    matches!(
        err.downcast_ref::<OutputError>(),
        Some(OutputError::Io { .. })
    ) || matches!(err.downcast_ref::<SaveError>(), Some(SaveError::Io { .. }))
        || matches!(
            err.downcast_ref::<DataError>(),
            Some(DataError::Read { .. })
        )
}

/// A problem with how sextant was called that clap cannot see (exit code 2).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

/// Maps an error to the documented exit code: 2 for bad usage or bad input, 1 otherwise.
pub fn exit_code(err: &anyhow::Error) -> u8 {
    for cause in err.chain() {
        if cause.is::<DataError>()
            || cause.is::<UsageError>()
            || cause.is::<sextant::model::notes::NoteError>()
        {
            return 2;
        }
        if let Some(fit) = cause.downcast_ref::<FitError>() {
            return match fit {
                FitError::NotPositiveDefinite { .. } => 1,
                FitError::Option(_) | FitError::Underdetermined { .. } | FitError::Init(_) => 2,
            };
        }
        if let Some(notes) = cause.downcast_ref::<sextant::model::notes::NotesError>() {
            return match notes {
                sextant::model::notes::NotesError::Data(_) => 2,
                sextant::model::notes::NotesError::Io { .. } => 1,
            };
        }
        if let Some(out) = cause.downcast_ref::<OutputError>() {
            return match out {
                OutputError::Refused { .. } => 2,
                OutputError::Io { .. } => 1,
            };
        }
        if let Some(save) = cause.downcast_ref::<SaveError>() {
            return match save {
                SaveError::Refused { .. } => 2,
                SaveError::Io { .. } => 1,
            };
        }
    }
    1
}

/// True when the error is only that stdout was closed (e.g. `sextant info m | head -1`).
pub fn is_broken_pipe(err: &anyhow::Error) -> bool {
    err.chain().any(|cause| {
        cause
            .downcast_ref::<std::io::Error>()
            .is_some_and(|e| e.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

#[cfg(test)]
mod tests {
    use std::collections::BTreeMap;

    use clap::CommandFactory;

    use super::Cli;

    /// Flags whose help differs by command on purpose: where a command writes (`--out`)
    /// is a model directory, a file or a folder depending on the command.
    const OWN_WORDING: &[&str] = &["out", "help", "version"];

    /// A flag means the same thing in every command: its help text is the same wherever it
    /// appears, which holds by construction when it is declared once, in `args.rs`.
    #[test]
    fn every_flag_is_worded_the_same_in_every_command() {
        let mut cli = Cli::command();
        cli.build();
        let mut seen: BTreeMap<String, (String, String)> = BTreeMap::new();
        let mut clashes = Vec::new();
        for command in cli.get_subcommands() {
            for arg in command.get_arguments() {
                let Some(long) = arg.get_long() else { continue };
                if OWN_WORDING.contains(&long) || arg.is_hide_set() {
                    continue;
                }
                let help = arg.get_help().map(ToString::to_string).unwrap_or_default();
                match seen.get(long) {
                    Some((first, other)) if *first != help => clashes.push(format!(
                        "--{long}: '{first}' in {other} but '{help}' in {}",
                        command.get_name()
                    )),
                    Some(_) => {}
                    None => {
                        seen.insert(long.to_owned(), (help, command.get_name().to_owned()));
                    }
                }
            }
        }
        assert!(clashes.is_empty(), "{}", clashes.join("\n"));
    }
}
