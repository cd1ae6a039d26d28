//! `sextant explore`: the terminal explorer on a model directory.

use std::io::IsTerminal;
use std::path::PathBuf;

use clap::Args;
use sextant::model::{Model, load_model};

use super::UsageError;
use crate::tui;

/// Open the terminal explorer.
#[derive(Debug, Args)]
pub struct ExploreArgs {
    /// The model directory.
    #[arg(value_name = "MODEL")]
    model: PathBuf,
}

pub fn run(args: &ExploreArgs) -> anyhow::Result<()> {
    ensure_terminal()?;
    let model = load_model(&args.model)?;
    open(model, args.model.display().to_string())
}

/// True when both standard input and output are terminals.
pub fn has_terminal() -> bool {
    std::io::stdin().is_terminal() && std::io::stdout().is_terminal()
}

fn ensure_terminal() -> Result<(), UsageError> {
    if has_terminal() {
        Ok(())
    } else {
        Err(UsageError("the explorer needs an interactive terminal; for scripts use info, neighbours, suggest or explain".into()))
    }
}

/// Builds the explorer's state (indexes included) on the normal screen, then opens it.
pub fn open(model: Model, label: String) -> anyhow::Result<()> {
    let app = tui::app::App::new(model, label);
    tui::run(app)?;
    Ok(())
}
