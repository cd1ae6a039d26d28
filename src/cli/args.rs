//! Options that several commands share, each declared once here and flattened into the
//! commands that take it: the help, the shell completions and the man page all derive from
//! these definitions, and every default is the library's own (never typed again).
//!
//! Spellings that used to mean something else are kept for one release as hidden flags
//! that still work and print a deprecation warning ([`deprecated`]).

use std::path::{Path, PathBuf};

use clap::{Args, ValueEnum};
use sextant::analysis::audit::AuditOptions;
use sextant::data::split::DEFAULT_HOLDOUT;
use sextant::index::Metric;
use sextant::model::implicit::{Confidence, DEFAULT_ALPHA, DEFAULT_EPSILON};
use sextant::model::manifest::RunOptions;
use sextant::model::{Center, FitOptions};

use super::UsageError;
use super::inputs::RatingsArgs;
use super::output::Format;

/// The model directory every model command starts from.
#[derive(Debug, Clone, Args)]
pub struct ModelArg {
    /// The model directory (made by `sextant fit` or `sextant import`).
    #[arg(value_name = "MODEL")]
    pub model: PathBuf,
}

/// What a command prints on stdout.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Output")]
pub struct OutputArgs {
    /// Output format: table (for reading), csv (a header row and one row per list
    /// entry) or json (one object). The README lists the fields of each command.
    #[arg(long, value_enum, default_value_t = Format::default())]
    pub format: Format,
}

/// Worker threads and chattiness of the long-running commands.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Output")]
pub struct RunArgs {
    /// Worker threads (default: all cores). Results are identical for any value.
    #[arg(long, value_name = "N")]
    pub threads: Option<usize>,
    /// Print nothing on stderr except warnings and errors.
    #[arg(long, short)]
    pub quiet: bool,
}

impl RunArgs {
    /// A pool of the requested size.
    pub fn pool(&self) -> anyhow::Result<rayon::ThreadPool> {
        use anyhow::Context as _;
        if self.threads == Some(0) {
            return Err(UsageError("--threads must be at least 1".into()).into());
        }
        rayon::ThreadPoolBuilder::new()
            .num_threads(self.threads.unwrap_or(0))
            .build()
            .context("starting worker threads")
    }
}

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

/// How μ is chosen, for a fit (default: the library's) or an import (required, or --mu).
#[derive(Debug, Clone, Copy, Args)]
pub struct CenterArgs {
    /// The global offset μ: global (the mean of the training ratings) or none (μ = 0,
    /// predictions are plain dot products). fit: default global; import: this or --mu is
    /// required, since a wrong μ shifts every prediction.
    #[arg(long, value_enum)]
    pub center: Option<CenterArg>,
}

impl CenterArgs {
    /// The centring given, else the library's default.
    pub fn or_default(self) -> Center {
        self.center
            .map_or(FitOptions::default().center, Center::from)
    }
}

/// The noise variance of a rating.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Model and fit")]
pub struct NoiseArgs {
    /// Noise variance σ² of a rating (for import: the σ² the vectors were fitted with).
    #[arg(long, default_value_t = FitOptions::default().sigma2)]
    pub sigma2: f64,
}

/// The prior of one fitted model: λ and σ².
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Model and fit")]
pub struct PriorArgs {
    /// Prior precision λ of every vector coordinate, 0 for maximum likelihood (for import:
    /// the λ the vectors were fitted with, used for uncertainty and fold-in).
    #[arg(long, default_value_t = FitOptions::default().lambda)]
    pub lambda: f64,
    #[command(flatten)]
    pub noise: NoiseArgs,
}

/// The prior precision of the member and item offsets of a model with biases.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Model and fit")]
pub struct LambdaBiasArg {
    /// Prior precision λ_b of the member and item offsets of a model with biases (default:
    /// the same as --lambda; for import: the λ_b the offsets were fitted with).
    #[arg(long, value_name = "LAMBDA_B")]
    pub lambda_bias: Option<f64>,
}

impl LambdaBiasArg {
    /// λ_b, defaulting to `lambda`.
    pub fn or(&self, lambda: f64) -> f64 {
        self.lambda_bias.unwrap_or(lambda)
    }
}

/// Whether a fit has member and item offsets, and their prior.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Model and fit")]
#[command(mut_arg("lambda_bias", |a| a.requires("biases")))]
pub struct BiasArgs {
    /// Fit a member offset and an item offset beside the vectors (a generous rater, a
    /// universally liked item): prediction = μ + b_member + c_item + u·v.
    #[arg(long)]
    pub biases: bool,
    #[command(flatten)]
    pub prior: LambdaBiasArg,
}

impl BiasArgs {
    /// `Some(λ_b)` for a fit with biases.
    pub fn lambda_bias(&self, lambda: f64) -> Option<f64> {
        self.biases.then(|| self.prior.or(lambda))
    }
}

/// What the value column of the input holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FeedbackArg {
    /// Ratings (stars, marks): the model predicts them.
    Ratings,
    /// Counts of plays, purchases, clicks (or any weight ≥ 0): the model scores a
    /// preference for every member–item pair, weighted by a confidence that grows with the
    /// count (Hu, Koren & Volinsky 2008).
    Implicit,
}

/// How a count becomes a confidence.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ConfidenceArg {
    /// 1 + α·count.
    Linear,
    /// 1 + α·log(1 + count/ε), for counts that vary over orders of magnitude.
    Log,
}

/// Ratings or implicit feedback, and the confidence rule of implicit feedback.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Implicit feedback")]
pub struct FeedbackArgs {
    /// What the value column holds: ratings, or implicit (counts; the value column is then
    /// `count` unless renamed with --rating-col).
    #[arg(long, value_enum, default_value_t = FeedbackArg::Ratings)]
    pub feedback: FeedbackArg,
    /// α of the confidence (default: 40, the published method's).
    #[arg(long)]
    pub alpha: Option<f64>,
    /// How a count becomes a confidence: linear (default) or log.
    #[arg(long, value_enum)]
    pub confidence: Option<ConfidenceArg>,
    /// ε of the log confidence (default: 1).
    #[arg(long)]
    pub epsilon: Option<f64>,
}

impl FeedbackArgs {
    /// The confidence rule of implicit feedback (`None` for ratings), or a usage error
    /// when a confidence flag is given for ratings or --epsilon without the log form.
    pub fn implicit(&self) -> Result<Option<Confidence>, UsageError> {
        let given = [
            ("--alpha", self.alpha.is_some()),
            ("--confidence", self.confidence.is_some()),
            ("--epsilon", self.epsilon.is_some()),
        ];
        if self.feedback == FeedbackArg::Ratings {
            return match given.iter().find(|(_, g)| *g) {
                Some((flag, _)) => Err(UsageError(format!(
                    "{flag} is a setting of implicit feedback: add --feedback implicit, or leave it out"
                ))),
                None => Ok(None),
            };
        }
        let alpha = self.alpha.unwrap_or(DEFAULT_ALPHA);
        let confidence = match (self.confidence, self.epsilon) {
            (Some(ConfidenceArg::Log), epsilon) => Confidence::Log {
                alpha,
                epsilon: epsilon.unwrap_or(DEFAULT_EPSILON),
            },
            (_, Some(_)) => {
                return Err(UsageError(
                    "--epsilon is a setting of the log confidence: add --confidence log".into(),
                ));
            }
            (_, None) => Confidence::Linear { alpha },
        };
        confidence.validate().map_err(UsageError)?;
        Ok(Some(confidence))
    }
}

/// How a fit runs: centring, seed, held-out share, stopping rule.
#[derive(Debug, Clone, Copy, Args)]
#[command(next_help_heading = "Model and fit")]
pub struct SolverArgs {
    #[command(flatten)]
    pub center: CenterArgs,
    /// Seed of the initial item vectors and of the held-out split.
    #[arg(long, default_value_t = FitOptions::default().seed)]
    pub seed: u64,
    /// Fraction of each member's ratings held out to measure accuracy (tune needs some).
    #[arg(long, value_name = "FRACTION", default_value_t = DEFAULT_HOLDOUT)]
    pub holdout: f64,
    /// Stop when the log joint likelihood changes by at most TOL times its size.
    #[arg(long, default_value_t = FitOptions::default().tol)]
    pub tol: f64,
    /// Largest number of iterations of a fit.
    #[arg(long, default_value_t = FitOptions::default().max_iters)]
    pub max_iters: usize,
}

impl SolverArgs {
    /// Fit options with these settings at one rank, λ and σ².
    pub fn options(&self, rank: usize, lambda: f64, sigma2: f64) -> FitOptions {
        FitOptions {
            rank,
            lambda,
            sigma2,
            center: self.center.or_default(),
            max_iters: self.max_iters,
            tol: self.tol,
            seed: self.seed,
            lambda_bias: None,
            accel: sextant::model::Accel::None,
        }
    }

    /// The run record kept in the manifest.
    pub fn run_options(&self, input: &RatingsArgs, init_items: Option<String>) -> RunOptions {
        RunOptions {
            max_iters: self.max_iters,
            tol: self.tol,
            holdout: self.holdout,
            duplicates: input.duplicates.into(),
            init_items,
        }
    }
}

/// The catalogue file that describes the items.
#[derive(Debug, Clone, Args)]
#[command(next_help_heading = "Reading the CSV files")]
pub struct CatalogueArg {
    /// Catalogue CSV describing the items: an id column plus optional title, category and
    /// other columns (see --title-col, --category-col, --meta-id-col). Kept in the model.
    #[arg(long, value_name = "FILE")]
    pub catalogue: Option<PathBuf>,
}

/// The files a fit reads: ratings, optional catalogue, and how to read them.
#[derive(Debug, Clone, Args)]
#[command(mut_arg("catalogue", |a| a.alias("items")))]
pub struct FitInputs {
    /// Ratings CSV with a header row (columns user,item,rating unless renamed).
    #[arg(value_name = "RATINGS.csv", help_heading = None::<&str>)]
    pub ratings: PathBuf,
    #[command(flatten)]
    pub catalogue: CatalogueArg,
    #[command(flatten)]
    pub columns: RatingsArgs,
}

impl FitInputs {
    /// The catalogue file (given as --catalogue or, deprecated, --items).
    pub fn catalogue(&self) -> Option<&Path> {
        if self.catalogue.catalogue.is_some() {
            warn_if_spelled(&["--items"], "--catalogue");
        }
        self.catalogue.catalogue.as_deref()
    }
}

/// How neighbours are ranked.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MetricArg {
    /// Euclidean distance between the raw vectors.
    Euclidean,
    /// Cosine similarity (direction only, length ignored).
    Cosine,
}

impl From<MetricArg> for Metric {
    fn from(arg: MetricArg) -> Self {
        match arg {
            MetricArg::Euclidean => Metric::Euclidean,
            MetricArg::Cosine => Metric::Cosine,
        }
    }
}

/// The ranking metric of a neighbour search.
#[derive(Debug, Clone, Copy, Args)]
pub struct MetricArgs {
    /// How neighbours are ranked: euclidean or cosine (default: euclidean; cosine for
    /// audit's coherence check). Both measures are shown whatever the ranking.
    #[arg(long, value_enum)]
    pub metric: Option<MetricArg>,
}

impl MetricArgs {
    /// The metric given, else the one neighbour lists use by default.
    pub fn or_euclidean(self) -> Metric {
        self.metric.map_or(Metric::Euclidean, Metric::from)
    }

    /// The metric given, else the audit's default.
    pub fn or_audit_default(self) -> Metric {
        self.metric
            .map_or(AuditOptions::default().metric, Metric::from)
    }
}

/// The name of a metric in JSON and in table headings.
pub fn metric_name(metric: Metric) -> &'static str {
    match metric {
        Metric::Euclidean => "euclidean",
        Metric::Cosine => "cosine",
    }
}

/// How many neighbours per list.
#[derive(Debug, Clone, Copy, Args)]
pub struct NeighbourCount {
    /// How many neighbours in each list.
    #[arg(short, long, default_value_t = 10)]
    pub k: usize,
}

/// How many suggestions.
#[derive(Debug, Clone, Copy, Args)]
pub struct SuggestionCount {
    /// How many suggestions.
    #[arg(short, long, default_value_t = 10)]
    pub n: usize,
}

/// Warns on stderr when a renamed flag was given under an old spelling (a hidden alias of
/// the new flag, so completions and the manual offer only the new one). clap does not say
/// which spelling matched, so the command line is read: every argument before `--` that is
/// an old spelling, alone or with `=VALUE` (or a short flag with its value attached).
pub fn warn_if_spelled(old: &[&str], new: &str) {
    let words: Vec<String> = std::env::args_os()
        .skip(1)
        .map(|a| a.to_string_lossy().into_owned())
        .take_while(|a| a != "--")
        .collect();
    for spelling in old {
        let used = words.iter().any(|w| {
            w == spelling
                || w.strip_prefix(spelling).is_some_and(|rest| {
                    rest.starts_with('=') || (spelling.len() == 2 && !spelling.starts_with("--"))
                })
        });
        if used {
            eprintln!(
                "warning: {spelling} is deprecated and will be removed in the next release; \
                 use {new}, which means the same"
            );
        }
    }
}
