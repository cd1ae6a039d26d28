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

use super::neighbours::MetricArg;
use super::output;

/// Audit a model: how coherent item neighbourhoods are, where the fit misses, which members
/// and items the data cannot place, what each factor stands for, how well held-out ratings
/// are ranked, and the curators' notes.
///
/// Without --report or --csv the Markdown report goes to stdout.
#[derive(Debug, Args)]
pub struct AuditArgs {
    /// The model directory.
    #[arg(value_name = "MODEL")]
    model: PathBuf,
    /// Write the Markdown report to this file (- for stdout; a device or pipe is written
    /// in place, an existing file replaced whole).
    #[arg(long, value_name = "FILE")]
    report: Option<PathBuf>,
    /// Write the figures as CSV files into this folder: a new or empty one, or one an
    /// earlier audit --csv wrote (it holds sextant-audit.ron); nothing else is overwritten.
    #[arg(long, value_name = "DIR")]
    csv: Option<PathBuf>,
    /// Neighbours per item for the coherence check.
    #[arg(long, default_value_t = 10, value_name = "K")]
    neighbours: usize,
    /// Metric for the coherence neighbours.
    #[arg(long, value_enum, default_value_t = MetricArg::Cosine)]
    metric: MetricArg,
    /// Length of each "worst" list.
    #[arg(long, default_value_t = 20, value_name = "N")]
    top: usize,
    /// Items listed at each end of a factor.
    #[arg(long, default_value_t = 8, value_name = "N")]
    ends: usize,
    /// Cut-off k of precision@k, recall@k and NDCG@k.
    #[arg(short, long, default_value_t = 10)]
    k: usize,
    /// Examine at most N items for coherence, an even sample through the catalogue
    /// (default: every item; each needs a neighbour search, so a million-item catalogue
    /// takes a while).
    #[arg(long, value_name = "N")]
    sample: Option<usize>,
    /// Held-out ratings at or above this count as relevant (default: three quarters of the
    /// way up the rating scale, 4 on 1–5).
    #[arg(long, value_name = "RATING")]
    relevant: Option<f64>,
}

pub fn run(args: &AuditArgs) -> anyhow::Result<()> {
    if args.neighbours == 0 || args.k == 0 || args.sample == Some(0) {
        return Err(
            super::UsageError("--neighbours, -k and --sample must be at least 1".into()).into(),
        );
    }
    if args.relevant.is_some_and(|r| !r.is_finite()) {
        return Err(super::UsageError("--relevant must be a finite number".into()).into());
    }
    let (model, notes) = load_with_notes(&args.model)?;
    let notes = notes.current;
    let options = AuditOptions {
        neighbours: args.neighbours,
        metric: args.metric.into(),
        top: args.top,
        ends: args.ends,
        k: args.k,
        threshold: args.relevant,
        sample: args.sample.unwrap_or(usize::MAX),
    };
    let found = audit(&model, options);
    let name = args.model.display().to_string();
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
