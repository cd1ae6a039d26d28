//! `sextant fit`: ratings CSV in, model directory out.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::{Args, ValueEnum};
use sextant::data::{FactorTable, IdMap, RatingScale, assign_holdout};
use sextant::model::fit::IterationRecord;
use sextant::model::manifest::RunOptions;
use sextant::model::{Center, FitOptions, Fitter, Model, Provenance};

use super::UsageError;
use super::inputs::{self, RatingsArgs};
use super::output::{self, Format};
use super::summary;

/// How the global offset μ is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CenterArg {
    /// μ = mean of the training ratings.
    Global,
    /// μ = 0: predictions are plain dot products.
    None,
}

impl From<CenterArg> for Center {
    fn from(c: CenterArg) -> Self {
        match c {
            CenterArg::Global => Self::Global,
            CenterArg::None => Self::None,
        }
    }
}

/// Fit a probabilistic matrix factorization by coordinate ascent.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// Ratings CSV with a header row (columns user,item,rating unless renamed).
    #[arg(value_name = "RATINGS.csv")]
    ratings: PathBuf,
    /// Items metadata CSV: item plus optional title, category and other columns.
    #[arg(long, value_name = "FILE")]
    items: Option<PathBuf>,
    /// Model directory to write: created, or replaced atomically when it is empty or holds a
    /// sextant model and nothing else (anything else is refused).
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// Rank D: the number of latent factors.
    #[arg(long, default_value_t = 10)]
    rank: usize,
    /// Prior precision λ of every vector coordinate (0 = maximum likelihood).
    #[arg(long, default_value_t = 1.0)]
    lambda: f64,
    /// Noise variance σ² of a rating.
    #[arg(long, default_value_t = 1.0)]
    sigma2: f64,
    /// Subtract the global mean rating before fitting, or not.
    #[arg(long, value_enum, default_value_t = CenterArg::Global)]
    center: CenterArg,
    /// Seed of the initial item vectors and of the held-out split.
    #[arg(long, default_value_t = 0)]
    seed: u64,
    /// Fraction of each user's ratings held out for evaluation (0 allowed).
    #[arg(long, value_name = "FRACTION", default_value_t = 0.1)]
    holdout: f64,
    /// Stop when the log joint likelihood changes by at most TOL times its size.
    #[arg(long, default_value_t = 1e-6)]
    tol: f64,
    /// Largest number of iterations.
    #[arg(long, default_value_t = 100)]
    max_iters: usize,
    /// Start from these item vectors (a factor table id,f1,…,fD, e.g. an earlier model's
    /// items.csv) instead of random ones.
    #[arg(long, value_name = "FILE")]
    init_items: Option<PathBuf>,
    /// Worker threads (default: all cores). Results are identical for any value.
    #[arg(long, value_name = "N")]
    threads: Option<usize>,
    /// Print nothing on stderr except errors.
    #[arg(long, short)]
    quiet: bool,
    /// Output format of the summary printed after the fit.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    #[command(flatten)]
    input: RatingsArgs,
}

impl FitArgs {
    fn fit_options(&self) -> FitOptions {
        FitOptions {
            rank: self.rank,
            lambda: self.lambda,
            sigma2: self.sigma2,
            center: self.center.into(),
            max_iters: self.max_iters,
            tol: self.tol,
            seed: self.seed,
        }
    }
}

pub fn run(args: &FitArgs) -> anyhow::Result<()> {
    let options = args.fit_options();
    options.validate()?;
    if !(0.0..1.0).contains(&args.holdout) {
        return Err(UsageError(format!(
            "--holdout must be at least 0 and below 1, not {}",
            args.holdout
        ))
        .into());
    }
    let scale = args.input.scale()?;
    // A target that will be refused is refused before the fit, not after it.
    sextant::model::dir::check_target(&args.out)?;
    let pool = thread_pool(args.threads)?;
    pool.install(|| fit_and_save(args, &options, scale))
}

/// Ratings and metadata read for a fit, with their fingerprints.
pub struct Prepared {
    pub ratings: sextant::data::Ratings,
    pub scale: RatingScale,
    pub inputs: Vec<sextant::model::manifest::Input>,
    pub meta: Option<sextant::data::ItemsMeta>,
}

/// Reads the ratings and the optional items metadata.
pub fn prepare(
    ratings_path: &Path,
    items: Option<&Path>,
    input: &RatingsArgs,
    scale: Option<RatingScale>,
) -> anyhow::Result<Prepared> {
    let read_options = input.options(scale.clone(), None, false)?;
    let (ratings, ratings_input) =
        inputs::load_ratings(ratings_path, &read_options, IdMap::new(), IdMap::new())?;
    let scale =
        scale.unwrap_or_else(|| RatingScale::infer(ratings.entries.iter().map(|r| r.value)));
    let mut input_prints = vec![ratings_input];
    let meta = match items {
        Some(path) => {
            let (meta, print) = inputs::read_meta(path, input, &ratings.items)?;
            input_prints.push(print);
            Some(meta)
        }
        None => None,
    };
    Ok(Prepared {
        ratings,
        scale,
        inputs: input_prints,
        meta,
    })
}

fn fit_and_save(
    args: &FitArgs,
    options: &FitOptions,
    scale: Option<RatingScale>,
) -> anyhow::Result<()> {
    let Prepared {
        mut ratings,
        scale,
        inputs: mut input_prints,
        meta,
    } = prepare(&args.ratings, args.items.as_deref(), &args.input, scale)?;
    let init = match &args.init_items {
        Some(path) => {
            let mut reader = inputs::open(path)?;
            let table = sextant::data::read_factor_table(&mut reader, path)?;
            input_prints.push(inputs::input("init-items", path, &reader));
            Some((table, path.clone()))
        }
        None => None,
    };
    assign_holdout(&mut ratings, args.holdout, args.seed);
    if !args.quiet {
        announce(args, &ratings, &scale, meta.as_ref());
    }
    let init_ref = init
        .as_ref()
        .map(|(t, p): &(FactorTable, PathBuf)| (t, p.as_path()));
    let fitter = Fitter::new(&ratings, options, init_ref)?;
    let mut progress = Progress::new(args.quiet, args.max_iters);
    let result = fitter.run(|record| progress.update(record))?;
    progress.finish(result.converged, result.trace.len());
    let run = RunOptions {
        max_iters: args.max_iters,
        tol: args.tol,
        holdout: args.holdout,
        duplicates: args.input.duplicates.into(),
        init_items: args.init_items.as_deref().map(file_name),
    };
    let provenance = Provenance {
        scale,
        inputs: input_prints,
        meta,
    };
    let model = Model::from_fit(ratings, options, run, result, provenance)
        .context("the fit produced no training ratings to evaluate")?;
    summary::save_and_print(&model, &args.out, args.quiet, args.format)
}

fn file_name(path: &Path) -> String {
    path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

pub fn thread_pool(threads: Option<usize>) -> anyhow::Result<rayon::ThreadPool> {
    if threads == Some(0) {
        return Err(UsageError("--threads must be at least 1".into()).into());
    }
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads.unwrap_or(0))
        .build()
        .context("starting worker threads")
}

/// Prints the data size and every option, marking the ones left at their default.
fn announce(
    args: &FitArgs,
    ratings: &sextant::data::Ratings,
    scale: &RatingScale,
    meta: Option<&sextant::data::ItemsMeta>,
) {
    let d = FitOptions::default();
    let mark = |is_default: bool| if is_default { " (default)" } else { "" };
    eprintln!(
        "fitting {} ratings from {} users and {} items ({} held out); scale {}",
        output::group(ratings.entries.len()),
        output::group(ratings.users.len()),
        output::group(ratings.items.len()),
        output::group(ratings.holdout_count()),
        scale.describe()
    );
    if let Some(meta) = meta {
        inputs::note_unknown_items(meta, "that have no ratings");
    }
    eprintln!(
        "options: rank {}{}, lambda {}{}, sigma2 {}{}, center {}{}, holdout {}{}, tol {:e}{}, max-iters {}{}, seed {}{}",
        args.rank,
        mark(args.rank == d.rank),
        args.lambda,
        mark(args.lambda == d.lambda),
        args.sigma2,
        mark(args.sigma2 == d.sigma2),
        args.fit_options().center.name(),
        mark(args.fit_options().center == d.center),
        args.holdout,
        mark(args.holdout == 0.1),
        args.tol,
        mark(args.tol == d.tol),
        args.max_iters,
        mark(args.max_iters == d.max_iters),
        args.seed,
        mark(args.seed == d.seed),
    );
}

/// Per-iteration progress: a bar when stderr is a terminal, nothing otherwise.
struct Progress {
    bar: Option<indicatif::ProgressBar>,
    quiet: bool,
}

impl Progress {
    fn new(quiet: bool, max_iters: usize) -> Self {
        let bar = (!quiet && std::io::stderr().is_terminal()).then(|| {
            let bar = indicatif::ProgressBar::new(max_iters as u64);
            let style = indicatif::ProgressStyle::with_template(
                "{elapsed:>4} [{bar:30}] iteration {pos}/{len}  {msg}",
            )
            .expect("the template is valid")
            .progress_chars("=> ");
            bar.set_style(style);
            bar
        });
        Self { bar, quiet }
    }

    fn update(&mut self, record: &IterationRecord) {
        if let Some(bar) = &self.bar {
            let holdout = record
                .holdout_rmse
                .map(|v| format!(", held-out RMSE {v:.4}"))
                .unwrap_or_default();
            bar.set_message(format!(
                "L {:.4e}, train RMSE {:.4}{holdout}",
                record.log_joint, record.train_rmse
            ));
            bar.set_position(record.iter as u64);
        }
    }

    fn finish(&self, converged: bool, iterations: usize) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
        if !self.quiet {
            let state = if converged {
                "converged"
            } else {
                "reached the iteration limit"
            };
            eprintln!("{state} after {iterations} iteration(s)");
        }
    }
}
