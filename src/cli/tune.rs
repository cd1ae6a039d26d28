//! `sextant tune`: fit a grid of ranks × λ on one held-out split and compare held-out RMSE.

use std::fmt::Write as _;
use std::io::IsTerminal;
use std::path::PathBuf;
use std::time::Instant;

use anyhow::Context as _;
use clap::Args;
use serde::Serialize;
use sextant::data::assign_holdout;
use sextant::model::{FitOptions, FitResult, Fitter, Model, Provenance};

use super::UsageError;
use super::args::{BiasArgs, FitInputs, NoiseArgs, OutputArgs, RunArgs, SolverArgs};
use super::fit::{Prepared, prepare};
use super::output::{self, Format};

/// Fit every combination of the given ranks and λ values on the same held-out split and
/// compare them by held-out RMSE (lower is better). The fits run one after the other, each
/// on all worker threads, so the times shown are comparable.
#[derive(Debug, Args)]
pub struct TuneArgs {
    /// Write the best model to this directory (with the catalogue, when one is given).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Ranks to try, comma-separated.
    #[arg(
        long,
        value_delimiter = ',',
        default_value = "5,10,20",
        value_name = "LIST",
        help_heading = "Model and fit"
    )]
    ranks: Vec<usize>,
    /// Values of λ to try, comma-separated.
    #[arg(
        long,
        value_delimiter = ',',
        default_value = "0.1,1,10",
        value_name = "LIST",
        help_heading = "Model and fit"
    )]
    lambdas: Vec<f64>,
    #[command(flatten)]
    noise: NoiseArgs,
    #[command(flatten)]
    biases: BiasArgs,
    #[command(flatten)]
    solver: SolverArgs,
    #[command(flatten)]
    inputs: FitInputs,
    #[command(flatten)]
    run: RunArgs,
    #[command(flatten)]
    output: OutputArgs,
}

/// One fit of the grid.
#[derive(Debug, Clone, Serialize)]
struct Point {
    rank: usize,
    lambda: f64,
    holdout_rmse: Option<f64>,
    train_rmse: Option<f64>,
    iterations: usize,
    converged: bool,
    seconds: f64,
    /// Why the fit failed, when it did (e.g. λ = 0 with too few ratings).
    error: Option<String>,
}

#[derive(Serialize)]
struct Report<'a> {
    holdout: f64,
    holdout_ratings: usize,
    /// Every fit's λ_b when the grid has member and item offsets (λ_b defaults to each
    /// fit's λ, then this is null and `biases` true).
    lambda_bias: Option<f64>,
    /// Whether every fit of the grid has member and item offsets.
    biases: bool,
    grid: &'a [Point],
    best: Option<&'a Point>,
}

pub fn run(args: &TuneArgs) -> anyhow::Result<()> {
    if let Some(out) = &args.out {
        sextant::model::dir::check_target(out)?;
    }
    if args.ranks.is_empty() || args.lambdas.is_empty() {
        return Err(UsageError("--ranks and --lambdas need at least one value each".into()).into());
    }
    let holdout = args.solver.holdout;
    if !(holdout > 0.0 && holdout < 1.0) {
        return Err(UsageError(format!(
            "--holdout must be above 0 and below 1 to compare fits, not {holdout}"
        ))
        .into());
    }
    // The lists are checked here so the messages name --ranks and --lambdas; the rest
    // (σ², tolerance, iterations) is named the same in fit and tune.
    for &rank in &args.ranks {
        sextant::limits::check_rank(rank)
            .map_err(|why| UsageError(format!("--ranks: every rank {why}")))?;
    }
    if let Some(bad) = args.lambdas.iter().find(|l| !(l.is_finite() && **l >= 0.0)) {
        return Err(UsageError(format!(
            "--lambdas: every λ must be a finite number ≥ 0, not {bad}"
        ))
        .into());
    }
    options(args, args.ranks[0], args.lambdas[0]).validate()?;
    let scale = args.inputs.columns.scale()?;
    let pool = args.run.pool()?;
    pool.install(|| tune(args, scale))
}

fn options(args: &TuneArgs, rank: usize, lambda: f64) -> FitOptions {
    FitOptions {
        lambda_bias: args.biases.lambda_bias(lambda),
        ..args.solver.options(rank, lambda, args.noise.sigma2)
    }
}

fn tune(args: &TuneArgs, scale: Option<sextant::data::RatingScale>) -> anyhow::Result<()> {
    let Prepared {
        mut ratings,
        scale,
        inputs,
        meta,
    } = prepare(&args.inputs, scale, false)?;
    assign_holdout(&mut ratings, args.solver.holdout, args.solver.seed);
    let held = ratings.holdout_count();
    if held == 0 {
        return Err(UsageError(format!(
            "{}: no rating could be held out (every member has a single rating); tune needs held-out ratings",
            args.inputs.ratings.display()
        ))
        .into());
    }
    let grid: Vec<(usize, f64)> = args
        .ranks
        .iter()
        .flat_map(|&r| args.lambdas.iter().map(move |&l| (r, l)))
        .collect();
    let bar = (!args.run.quiet && std::io::stderr().is_terminal()).then(|| {
        let bar = indicatif::ProgressBar::new(grid.len() as u64);
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{elapsed:>4} [{bar:30}] fit {pos}/{len}  {msg}",
            )
            .expect("the template is valid")
            .progress_chars("=> "),
        );
        bar
    });
    if !args.run.quiet && bar.is_none() {
        eprintln!(
            "tuning on {} ratings ({} held out): {} fits",
            output::group(ratings.entries.len()),
            output::group(held),
            grid.len()
        );
    }
    let mut points = Vec::with_capacity(grid.len());
    let mut best: Option<(usize, FitResult)> = None;
    for (k, &(rank, lambda)) in grid.iter().enumerate() {
        if let Some(bar) = &bar {
            bar.set_message(format!("rank {rank}, λ {lambda}"));
        }
        let started = Instant::now();
        let outcome =
            Fitter::new(&ratings, &options(args, rank, lambda), None).and_then(|f| f.run(|_| {}));
        let seconds = started.elapsed().as_secs_f64();
        let point = match outcome {
            Ok(result) => {
                let last = result.trace.last();
                let point = Point {
                    rank,
                    lambda,
                    holdout_rmse: last.and_then(|r| r.holdout_rmse),
                    train_rmse: last.map(|r| r.train_rmse),
                    iterations: result.trace.len(),
                    converged: result.converged,
                    seconds,
                    error: None,
                };
                let better = match (&best, point.holdout_rmse) {
                    (_, None) => false,
                    (None, Some(_)) => true,
                    (Some((b, _)), Some(v)) => points
                        .get(*b)
                        .and_then(|p: &Point| p.holdout_rmse)
                        .is_none_or(|bv| v < bv),
                };
                if better && args.out.is_some() {
                    best = Some((k, result));
                } else if better {
                    best = Some((
                        k,
                        FitResult {
                            trace: Vec::new(),
                            ..result
                        },
                    ));
                }
                point
            }
            Err(e) => Point {
                rank,
                lambda,
                holdout_rmse: None,
                train_rmse: None,
                iterations: 0,
                converged: false,
                seconds,
                error: Some(point_error(&e)),
            },
        };
        if let Some(bar) = &bar {
            bar.inc(1);
        } else if !args.run.quiet {
            eprintln!(
                "fit {}/{}: rank {rank}, λ {lambda}: {} in {seconds:.2} s",
                k + 1,
                grid.len(),
                point.holdout_rmse.map_or_else(
                    || point.error.clone().unwrap_or_default(),
                    |v| format!("held-out RMSE {v:.4}")
                )
            );
        }
        points.push(point);
    }
    if let Some(bar) = bar {
        bar.finish_and_clear();
    }
    let best_index = best.as_ref().map(|(k, _)| *k);
    let report = Report {
        holdout: args.solver.holdout,
        holdout_ratings: held,
        lambda_bias: args.biases.prior.lambda_bias.filter(|_| args.biases.biases),
        biases: args.biases.biases,
        grid: &points,
        best: best_index.map(|k| &points[k]),
    };
    let text = render(&report, best_index, args.output.format)?;
    if let (Some(out), Some((k, result))) = (&args.out, best) {
        let (rank, lambda) = grid[k];
        let run = args.solver.run_options(&args.inputs.columns, None);
        let provenance = Provenance {
            scale,
            inputs,
            meta,
        };
        let model = Model::from_fit(
            ratings,
            &options(args, rank, lambda),
            run,
            result,
            provenance,
        )
        .context("the best fit has no training ratings to evaluate")?;
        sextant::model::save_model(out, &model)?;
        if !args.run.quiet {
            eprintln!(
                "wrote the best model (rank {rank}, λ {lambda}) to {}",
                out.display()
            );
        }
    } else if args.out.is_some() {
        return Err(
            UsageError("no fit of the grid succeeded, so no model was written".into()).into(),
        );
    }
    output::print(&text, args.output.format)
}

/// Why one fit of the grid failed, in tune's terms (the grid is given with --ranks and
/// --lambdas, so the advice the fit command gives for --rank and --lambda does not apply).
fn point_error(e: &sextant::error::FitError) -> String {
    match e {
        sextant::error::FitError::Underdetermined {
            rank,
            free_offset,
            short_users,
            short_items,
            ..
        } => format!(
            "λ = 0 needs at least {} training ratings per member and item, and \
             {short_users} member(s) and {short_items} item(s) have fewer; include a λ above 0 \
             in --lambdas",
            rank + usize::from(*free_offset)
        ),
        other => other.to_string(),
    }
}

fn render(report: &Report<'_>, best: Option<usize>, format: Format) -> anyhow::Result<String> {
    Ok(match format {
        Format::Json => serde_json::to_string_pretty(report)? + "\n",
        Format::Csv => {
            let mut out = String::from(
                "rank,lambda,holdout_rmse,train_rmse,iterations,converged,seconds,best\n",
            );
            for (k, p) in report.grid.iter().enumerate() {
                let num = |v: Option<f64>| {
                    v.map(sextant::data::factors::format_float)
                        .unwrap_or_default()
                };
                let fields = [
                    p.rank.to_string(),
                    sextant::data::factors::format_float(p.lambda),
                    num(p.holdout_rmse),
                    num(p.train_rmse),
                    p.iterations.to_string(),
                    p.converged.to_string(),
                    format!("{:.3}", p.seconds),
                    (Some(k) == best).to_string(),
                ];
                output::csv_row(&mut out, &fields.each_ref().map(String::as_str));
            }
            out
        }
        Format::Table => chart(report, best),
    })
}

/// The grid as a table with a bar per fit: bar length grows with held-out RMSE above the
/// best one, so the shortest bar is the best fit.
fn chart(report: &Report<'_>, best: Option<usize>) -> String {
    const WIDTH: usize = 32;
    let values: Vec<f64> = report.grid.iter().filter_map(|p| p.holdout_rmse).collect();
    let low = values.iter().copied().fold(f64::INFINITY, f64::min);
    let high = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "held-out RMSE on {} ratings ({}% of each member's); shorter bar = better\n",
        output::group(report.holdout_ratings),
        report.holdout * 100.0
    );
    let _ = writeln!(
        out,
        "{:>5} {:>8}  {:>8}  {:>8}  {:>5}  {:>7}",
        "rank", "λ", "held-out", "train", "iters", "seconds"
    );
    for (k, p) in report.grid.iter().enumerate() {
        let line = match p.holdout_rmse {
            Some(v) => {
                let share = if high > low {
                    (v - low) / (high - low)
                } else {
                    0.0
                };
                let bar = "▇".repeat(1 + (share * (WIDTH - 1) as f64).round() as usize);
                format!(
                    "{:>8.4}  {:>8.4}  {:>5}  {:>7.2}  {bar:<w$}{}{}",
                    v,
                    p.train_rmse.unwrap_or(f64::NAN),
                    p.iterations,
                    p.seconds,
                    if p.converged { "" } else { " (not converged)" },
                    if Some(k) == best { "  ◀ best" } else { "" },
                    w = WIDTH
                )
            }
            None => format!(
                "failed: {}",
                p.error.as_deref().unwrap_or("no held-out ratings")
            ),
        };
        let row = format!("{:>5} {:>8}  {line}", p.rank, p.lambda);
        let _ = writeln!(out, "{}", row.trim_end());
    }
    out
}
