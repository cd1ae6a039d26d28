//! `sextant completions` and `sextant man`: shell completions and manual pages, generated
//! from the same clap definitions as `--help`, so the three never disagree.

use std::io::Write as _;
use std::path::PathBuf;

use clap::{Args, CommandFactory};
use clap_complete::Shell;

use super::{Cli, UsageError};

/// Arguments of `completions`.
#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell to complete for. Install, for example, with
    /// `sextant completions bash > ~/.local/share/bash-completion/completions/sextant`.
    #[arg(value_name = "SHELL", value_enum)]
    shell: Shell,
}

/// Arguments of `man`.
#[derive(Debug, Args)]
pub struct ManArgs {
    /// The command whose page to print (default: the page of sextant itself).
    #[arg(value_name = "COMMAND")]
    command: Option<String>,
    /// Write every page instead (sextant.1 and one sextant-COMMAND.1 per command) into this
    /// existing folder, for example a man1 folder on the MANPATH; pages already there are
    /// replaced whole.
    #[arg(long, value_name = "DIR", conflicts_with = "command")]
    out: Option<PathBuf>,
}

pub fn completions(args: &CompletionsArgs) -> anyhow::Result<()> {
    let mut command = Cli::command();
    let mut script = Vec::new();
    clap_complete::generate(args.shell, &mut command, "sextant", &mut script);
    write_stdout(&script)
}

pub fn man(args: &ManArgs) -> anyhow::Result<()> {
    let pages = pages()?;
    if let Some(dir) = &args.out {
        if !dir.is_dir() {
            return Err(UsageError(format!(
                "--out {}: not an existing folder; create it first (for example a man1 folder \
                 on your MANPATH)",
                dir.display()
            ))
            .into());
        }
        for (name, page) in &pages {
            sextant::files::output::write_file(&dir.join(format!("{name}.1")), page)?;
        }
        eprintln!("wrote {} manual pages to {}", pages.len(), dir.display());
        return Ok(());
    }
    let wanted = args
        .command
        .as_deref()
        .map_or_else(|| "sextant".to_owned(), |c| format!("sextant-{c}"));
    if let Some((_, page)) = pages.iter().find(|(name, _)| *name == wanted) {
        return write_stdout(page);
    }
    let commands: Vec<&str> = pages
        .iter()
        .filter_map(|(name, _)| name.strip_prefix("sextant-"))
        .collect();
    Err(UsageError(format!(
        "no command '{}'; the commands are {}",
        args.command.as_deref().unwrap_or_default(),
        commands.join(", ")
    ))
    .into())
}

/// Every manual page: `sextant` first, then `sextant-COMMAND` for each visible command.
fn pages() -> anyhow::Result<Vec<(String, Vec<u8>)>> {
    let mut top = Cli::command();
    top.build();
    let mut pages = Vec::new();
    let mut page = Vec::new();
    clap_mangen::Man::new(top.clone()).render(&mut page)?;
    pages.push(("sextant".to_owned(), page));
    for sub in top
        .get_subcommands()
        .filter(|s| !s.is_hide_set() && s.get_name() != "help")
    {
        let name = format!("sextant-{}", sub.get_name());
        let command = sub
            .clone()
            .name(name.clone())
            .version(env!("CARGO_PKG_VERSION"))
            .display_name(format!("sextant {}", sub.get_name()));
        let mut page = Vec::new();
        clap_mangen::Man::new(command)
            .title(name.clone())
            .render(&mut page)?;
        pages.push((name, page));
    }
    Ok(pages)
}

fn write_stdout(bytes: &[u8]) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(bytes)?;
    out.flush()?;
    Ok(())
}
