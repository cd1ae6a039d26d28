//! `sextant info`: summarise a model directory.

use std::path::PathBuf;

use clap::Args;
use sextant::model::load_model;

use super::output::{self, Format};
use super::summary;

/// Summarise a model: options, counts, convergence, accuracy, low-support counts.
#[derive(Debug, Args)]
pub struct InfoArgs {
    /// The model directory.
    #[arg(value_name = "MODEL")]
    model: PathBuf,
    /// Output format: a readable summary, JSON (everything, with the per-iteration trace),
    /// or CSV (the per-iteration trace).
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
}

pub fn run(args: &InfoArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model)?;
    output::print(
        &summary::render(&model, &args.model.display().to_string(), args.format)?,
        args.format,
    )
}
