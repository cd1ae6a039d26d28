//! `sextant info`: summarise a model directory.

use clap::Args;
use sextant::model::load_model;

use super::args::{ModelArg, OutputArgs};
use super::output;
use super::summary;

/// Summarise a model: options, counts, convergence, accuracy, low-support counts.
///
/// JSON carries everything, with the per-iteration trace; CSV lists the per-iteration
/// trace.
#[derive(Debug, Args)]
pub struct InfoArgs {
    #[command(flatten)]
    model: ModelArg,
    #[command(flatten)]
    output: OutputArgs,
}

pub fn run(args: &InfoArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model.model)?;
    output::print(
        &summary::render(
            &model,
            &args.model.model.display().to_string(),
            args.output.format,
        )?,
        args.output.format,
    )
}
