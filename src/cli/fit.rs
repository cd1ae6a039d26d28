//! `sextant fit`: ratings CSV in, model directory out.

use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::Args;
use sextant::data::split::DEFAULT_HOLDOUT;
use sextant::data::{FactorTable, IdMap, RatingScale, assign_holdout};
use sextant::model::fit::IterationRecord;
use sextant::model::implicit::{Confidence, ImplicitFitter, ImplicitOptions};
use sextant::model::{FitOptions, Fitter, Model, Provenance};

use super::UsageError;
use super::args::{BiasArgs, FeedbackArgs, FitInputs, OutputArgs, PriorArgs, RunArgs, SolverArgs};
use super::inputs;
use super::output;
use super::summary;

/// Fit a probabilistic matrix factorization by coordinate ascent.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// Model directory to write: created, or replaced atomically when it is empty or holds a
    /// sextant model and nothing else (anything else is refused).
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// Rank D: the number of latent factors.
    #[arg(long, default_value_t = FitOptions::default().rank, help_heading = "Model and fit")]
    rank: usize,
    /// Start from these item vectors (a factor table id,f1,…,fD, e.g. an earlier model's
    /// items.csv) instead of random ones.
    #[arg(long, value_name = "FILE", help_heading = "Model and fit")]
    init_items: Option<PathBuf>,
    #[command(flatten)]
    prior: PriorArgs,
    #[command(flatten)]
    biases: BiasArgs,
    #[command(flatten)]
    feedback: FeedbackArgs,
    #[command(flatten)]
    solver: SolverArgs,
    #[command(flatten)]
    inputs: FitInputs,
    #[command(flatten)]
    run: RunArgs,
    #[command(flatten)]
    output: OutputArgs,
}

impl FitArgs {
    fn fit_options(&self) -> FitOptions {
        FitOptions {
            lambda_bias: self.biases.lambda_bias(self.prior.lambda),
            ..self
                .solver
                .options(self.rank, self.prior.lambda, self.prior.noise.sigma2)
        }
    }

    /// The options of an implicit-feedback fit with this confidence rule.
    fn implicit_options(&self, confidence: Confidence) -> ImplicitOptions {
        ImplicitOptions {
            rank: self.rank,
            lambda: self.prior.lambda,
            confidence,
            max_iters: self.solver.max_iters,
            tol: self.solver.tol,
            seed: self.solver.seed,
        }
    }
}

/// The kind of fit asked for.
enum Kind {
    Ratings(FitOptions),
    Implicit(ImplicitOptions),
}

pub fn run(args: &FitArgs) -> anyhow::Result<()> {
    let kind = match args.feedback.implicit()? {
        None => Kind::Ratings(args.fit_options()),
        Some(confidence) => {
            // What a model of implicit feedback does not have.
            let refused = [
                ("--biases", args.biases.biases),
                ("--center", args.solver.center.center.is_some()),
            ];
            if let Some((flag, _)) = refused.iter().find(|(_, given)| *given) {
                return Err(UsageError(format!(
                    "{flag} is a setting of a model of ratings; a model of implicit feedback \
                     scores preferences with no offsets: leave it out, or drop --feedback implicit"
                ))
                .into());
            }
            Kind::Implicit(args.implicit_options(confidence))
        }
    };
    match &kind {
        Kind::Ratings(options) => options.validate()?,
        Kind::Implicit(options) => options.validate()?,
    }
    if !(0.0..1.0).contains(&args.solver.holdout) {
        return Err(UsageError(format!(
            "--holdout must be at least 0 and below 1, not {}",
            args.solver.holdout
        ))
        .into());
    }
    let scale = args.inputs.columns.scale()?;
    // A target that will be refused is refused before the fit, not after it.
    sextant::model::dir::check_target(&args.out)?;
    let pool = args.run.pool()?;
    pool.install(|| fit_and_save(args, &kind, scale))
}

/// Ratings and metadata read for a fit, with their fingerprints.
pub struct Prepared {
    pub ratings: sextant::data::Ratings,
    pub scale: RatingScale,
    pub inputs: Vec<sextant::model::manifest::Input>,
    pub meta: Option<sextant::data::ItemsMeta>,
}

/// Reads the ratings (or, with `counts`, the counts of implicit feedback) and the optional
/// catalogue.
pub fn prepare(
    files: &FitInputs,
    scale: Option<RatingScale>,
    counts: bool,
) -> anyhow::Result<Prepared> {
    let (ratings_path, input) = (files.ratings.as_path(), &files.columns);
    let read_options = input.options(scale.clone(), None, (false, counts))?;
    let (ratings, ratings_input) =
        inputs::load_ratings(ratings_path, &read_options, IdMap::new(), IdMap::new())?;
    let scale = inputs::scale_of(scale, &ratings, ratings_path, counts);
    let mut input_prints = vec![ratings_input];
    let meta = match files.catalogue() {
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

fn fit_and_save(args: &FitArgs, kind: &Kind, scale: Option<RatingScale>) -> anyhow::Result<()> {
    let Prepared {
        mut ratings,
        scale,
        inputs: mut input_prints,
        meta,
    } = prepare(&args.inputs, scale, matches!(kind, Kind::Implicit(_)))?;
    let init = match &args.init_items {
        Some(path) => {
            let mut reader = inputs::open(path)?;
            // An exported table of a model with biases carries its offsets: the vectors
            // are what a start needs.
            let table = sextant::data::read_factor_table_with(
                &mut reader,
                path,
                sextant::data::BiasColumn::IfPresent,
            )?;
            input_prints.push(inputs::input("init-items", path, &reader));
            Some((table, path.clone()))
        }
        None => None,
    };
    assign_holdout(&mut ratings, args.solver.holdout, args.solver.seed);
    if !args.run.quiet {
        announce(args, kind, &ratings, &scale, meta.as_ref());
    }
    let init_ref = init
        .as_ref()
        .map(|(t, p): &(FactorTable, PathBuf)| (t, p.as_path()));
    let run = args.solver.run_options(
        &args.inputs.columns,
        args.init_items.as_deref().map(file_name),
    );
    let provenance = Provenance {
        scale,
        inputs: input_prints,
        meta,
    };
    let mut progress = Progress::new(args.run.quiet, args.solver.max_iters);
    let model = match kind {
        Kind::Ratings(options) => {
            let fitter = Fitter::new(&ratings, options, init_ref)?;
            let result =
                fitter.run(|record| progress.update(record.iter, &rating_message(record)))?;
            progress.finish(result.converged, result.trace.len());
            Model::from_fit(ratings, options, run, result, provenance)
        }
        Kind::Implicit(options) => {
            let fitter = ImplicitFitter::new(&ratings, options, init_ref)?;
            let result = fitter.run(|record| {
                progress.update(record.iter, &format!("loss {:.6e}", record.loss));
            })?;
            progress.finish(result.converged, result.trace.len());
            Model::from_implicit_fit(ratings, options, run, result, provenance)
        }
    }
    .context("the fit produced no training ratings to evaluate")?;
    summary::save_and_print(&model, &args.out, args.run.quiet, args.output.format)
}

/// The progress message of one iteration of a fit of ratings.
fn rating_message(record: &IterationRecord) -> String {
    let holdout = record
        .holdout_rmse
        .map(|v| format!(", held-out RMSE {v:.4}"))
        .unwrap_or_default();
    format!(
        "L {:.4e}, train RMSE {:.4}{holdout}",
        record.log_joint, record.train_rmse
    )
}

fn file_name(path: &Path) -> String {
    path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

/// Prints the data size and every option, marking the ones left at their default.
fn announce(
    args: &FitArgs,
    kind: &Kind,
    ratings: &sextant::data::Ratings,
    scale: &RatingScale,
    meta: Option<&sextant::data::ItemsMeta>,
) {
    let d = FitOptions::default();
    let given = args.fit_options();
    let solver = &args.solver;
    let mark = |is_default: bool| if is_default { " (default)" } else { "" };
    let what = match kind {
        Kind::Ratings(_) => "ratings",
        Kind::Implicit(_) => "interactions",
    };
    eprintln!(
        "fitting {} {what} from {} users and {} items ({} held out); {} {}",
        output::group(ratings.entries.len()),
        output::group(ratings.users.len()),
        output::group(ratings.items.len()),
        output::group(ratings.holdout_count()),
        if matches!(kind, Kind::Implicit(_)) {
            "counts"
        } else {
            "scale"
        },
        scale.describe()
    );
    if let Some(meta) = meta {
        inputs::note_unknown_items(meta, "that have no ratings");
    }
    if let Kind::Implicit(options) = kind {
        eprintln!(
            "implicit feedback: confidence {}{}",
            options.confidence.describe(),
            mark(args.feedback.alpha.is_none() && args.feedback.confidence.is_none())
        );
    }
    if let Some(lambda_bias) = given.lambda_bias {
        eprintln!(
            "member and item biases: lambda-bias {lambda_bias}{}",
            mark(args.biases.prior.lambda_bias.is_none()).replace("default", "default: --lambda")
        );
    }
    let ratings = matches!(kind, Kind::Ratings(_));
    // (name, value, left at its default); σ² and the centring are settings of ratings.
    let options = [
        ("rank", given.rank.to_string(), given.rank == d.rank),
        ("lambda", given.lambda.to_string(), given.lambda == d.lambda),
        ("sigma2", given.sigma2.to_string(), given.sigma2 == d.sigma2),
        (
            "center",
            given.center.name().to_owned(),
            given.center == d.center,
        ),
        (
            "holdout",
            solver.holdout.to_string(),
            solver.holdout == DEFAULT_HOLDOUT,
        ),
        ("tol", format!("{:e}", given.tol), given.tol == d.tol),
        (
            "max-iters",
            given.max_iters.to_string(),
            given.max_iters == d.max_iters,
        ),
        ("seed", given.seed.to_string(), given.seed == d.seed),
    ];
    let shown: Vec<String> = options
        .iter()
        .filter(|(name, _, _)| ratings || !matches!(*name, "sigma2" | "center"))
        .map(|(name, value, default)| format!("{name} {value}{}", mark(*default)))
        .collect();
    eprintln!("options: {}", shown.join(", "));
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

    fn update(&mut self, iter: usize, message: &str) {
        if let Some(bar) = &self.bar {
            bar.set_message(message.to_owned());
            bar.set_position(iter as u64);
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
