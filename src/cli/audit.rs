//! `sextant audit`: neighbour coherence, worst fits, support, vector lengths, factor meaning,
//! ranking quality and curator notes, as a Markdown report and CSV files.

use std::path::PathBuf;

use std::io::Write as _;

use clap::Args;
use sextant::analysis::audit::{AuditOptions, audit};
use sextant::files::export::{ExportFolder, FolderKind};
use sextant::files::output::write_file;
use sextant::model::notes::load_with_notes;
use sextant::report;

use super::args::{MetricArgs, ModelArg, warn_if_spelled};
use super::output;

/// Audit a model: how coherent item neighbourhoods are, where the fit misses, which members
/// and items the data cannot place, what each factor stands for, how well held-out ratings
/// are ranked, and the curators' notes.
///
/// Without --report or --csv the Markdown report goes to stdout.
#[derive(Debug, Args)]
pub struct AuditArgs {
    #[command(flatten)]
    model: ModelArg,
    /// Write the Markdown report to this file (- for stdout; a device or pipe is written
    /// in place, an existing file replaced whole).
    #[arg(long, value_name = "FILE")]
    report: Option<PathBuf>,
    /// Write the figures as CSV files into this folder: a new or empty one, or one an
    /// earlier audit --csv wrote (it holds sextant-audit.ron); nothing else is overwritten.
    #[arg(long, value_name = "DIR")]
    csv: Option<PathBuf>,
    /// Neighbours per item for the coherence check.
    #[arg(long, default_value_t = AuditOptions::default().neighbours, value_name = "K")]
    neighbours: usize,
    #[command(flatten)]
    metric: MetricArgs,
    /// Length of each "worst" list.
    #[arg(long, default_value_t = AuditOptions::default().top, value_name = "N")]
    top: usize,
    /// Items listed at each end of a factor.
    #[arg(long, default_value_t = AuditOptions::default().ends, value_name = "N")]
    ends: usize,
    /// Cut-off K of precision@K, recall@K and NDCG@K.
    #[arg(
        long,
        value_name = "K",
        default_value_t = AuditOptions::default().k,
        short_alias = 'k',
        alias = "k"
    )]
    at: usize,
    /// Examine at most N items for coherence, an even sample through the catalogue
    /// (default: every item; each needs a neighbour search, so a million-item catalogue
    /// takes a while).
    #[arg(long, value_name = "N")]
    sample: Option<usize>,
    /// Held-out ratings at or above this count as relevant (default: three quarters of the
    /// way up the rating scale, 4 on 1–5; with implicit feedback, any held-out interaction).
    #[arg(long, value_name = "RATING")]
    relevant: Option<f64>,
}

pub fn run(args: &AuditArgs) -> anyhow::Result<()> {
    warn_if_spelled(&["-k", "--k"], "--at");
    let at = args.at;
    if args.neighbours == 0 || at == 0 || args.sample == Some(0) {
        return Err(
            super::UsageError("--neighbours, --at and --sample must be at least 1".into()).into(),
        );
    }
    if args.relevant.is_some_and(|r| !r.is_finite()) {
        return Err(super::UsageError("--relevant must be a finite number".into()).into());
    }
    let (model, notes) = load_with_notes(&args.model.model)?;
    let notes = notes.current;
    let options = AuditOptions {
        neighbours: args.neighbours,
        metric: args.metric.or_audit_default(),
        top: args.top,
        ends: args.ends,
        k: at,
        threshold: args.relevant,
        sample: args.sample.unwrap_or(usize::MAX),
    };
    let found = audit(&model, options);
    let name = args.model.model.display().to_string();
    let text = report::markdown(&model, &name, &found, &notes);
    if let Some(dir) = &args.csv {
        let files = report::csv_files(&model, &found, &notes);
        let names: Vec<&str> = files.iter().map(|(name, _)| *name).collect();
        let mut folder = ExportFolder::open(dir, FolderKind::AuditCsv, &names)?;
        for (file, content) in &files {
            folder.write(file, |w| w.write_all(content.as_bytes()))?;
        }
        folder.finish()?;
        eprintln!("wrote the audit's CSV files to {}", dir.display());
    }
    match &args.report {
        Some(path) => {
            write_file(path, output::readable(&text).as_bytes())?;
            eprintln!("wrote the audit report to {}", path.display());
            if let Some(c) = &found.coherence {
                eprintln!(
                    "neighbour coherence {:.3} (random {:.3}); {} members and items prior-dominated",
                    c.mean,
                    c.baseline,
                    found.low_support.len()
                );
            }
            Ok(())
        }
        None if args.csv.is_none() => output::print(&text, output::Format::Table),
        None => Ok(()),
    }
}
