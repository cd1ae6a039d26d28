//! The model summary shared by `info`, `fit`, `import` and the bare `sextant` command, in
//! the three output formats. Field names of the JSON and CSV forms are fixed (DESIGN.md,
//! "Machine-readable output"): fields may be added, never renamed or removed.

use std::fmt::Write as _;

use serde::Serialize;
use sextant::analysis::ErrorMetrics;
use sextant::data::RatingScale;
use sextant::model::Model;
use sextant::model::fit::IterationRecord;
use sextant::model::implicit::{Confidence, ImplicitRecord};
use sextant::model::manifest::{ImplicitFit, Origin};

use super::output::{Format, fixed, group};

#[derive(Serialize)]
struct ScaleJson {
    kind: &'static str,
    #[serde(skip_serializing_if = "Option::is_none")]
    levels: Option<Vec<f64>>,
    min: f64,
    max: f64,
}

#[derive(Serialize)]
struct MetricsJson {
    rmse: f64,
    mae: f64,
    rmse_rounded: f64,
    mae_rounded: f64,
    exact_rate: f64,
    count: usize,
}

impl From<&ErrorMetrics> for MetricsJson {
    fn from(m: &ErrorMetrics) -> Self {
        Self {
            rmse: m.rmse,
            mae: m.mae,
            rmse_rounded: m.rmse_rounded,
            mae_rounded: m.mae_rounded,
            exact_rate: m.exact_rate,
            count: m.count,
        }
    }
}

#[derive(Serialize)]
struct InfoJson<'a> {
    rank: usize,
    lambda: f64,
    sigma2: f64,
    mu: f64,
    center: &'static str,
    scale: ScaleJson,
    users: usize,
    items: usize,
    ratings: usize,
    train_ratings: usize,
    holdout_ratings: usize,
    seed: u64,
    converged: bool,
    iterations: &'a [IterationRecord],
    /// Null in an implicit-feedback model (its scores are not ratings).
    train: Option<MetricsJson>,
    holdout: Option<MetricsJson>,
    low_support_users: Option<usize>,
    low_support_items: Option<usize>,
    origin: &'static str,
    final_log_joint: Option<f64>,
    described_items: usize,
    /// Whether the model has member and item offsets.
    biases: bool,
    /// Their prior precision λ_b, null without biases.
    lambda_bias: Option<f64>,
    /// `ratings` or `implicit`.
    feedback: &'static str,
    /// How counts became confidences, null for a model of ratings.
    confidence: Option<ConfidenceJson>,
    /// The loss after each iteration of an implicit fit (empty otherwise).
    loss_trace: &'a [ImplicitRecord],
    /// The last of them.
    final_loss: Option<f64>,
    /// Expected percentile rank of the held-out interactions (0 best, 0.5 random).
    holdout_percentile_rank: Option<f64>,
}

#[derive(Serialize)]
struct ConfidenceJson {
    /// `linear` (1 + α·count) or `log` (1 + α·log(1 + count/ε)).
    form: &'static str,
    alpha: f64,
    /// Null for the linear form.
    epsilon: Option<f64>,
}

impl From<Confidence> for ConfidenceJson {
    fn from(c: Confidence) -> Self {
        match c {
            Confidence::Linear { alpha } => Self {
                form: "linear",
                alpha,
                epsilon: None,
            },
            Confidence::Log { alpha, epsilon } => Self {
                form: "log",
                alpha,
                epsilon: Some(epsilon),
            },
        }
    }
}

/// Renders the summary of `model` (called `label` in the table form).
pub fn render(model: &Model, label: &str, format: Format) -> anyhow::Result<String> {
    Ok(match format {
        Format::Table => table(model, label),
        Format::Json => {
            let mut text = serde_json::to_string_pretty(&json(model))?;
            text.push('\n');
            text
        }
        Format::Csv => match &model.manifest.implicit {
            Some(implicit) => loss_csv(&implicit.trace),
            None => trace_csv(&model.manifest.trace),
        },
    })
}

fn json(model: &Model) -> InfoJson<'_> {
    let m = &model.manifest;
    let scale = match &m.scale {
        RatingScale::Levels(levels) => ScaleJson {
            kind: "levels",
            levels: Some(levels.clone()),
            min: m.scale.min(),
            max: m.scale.max(),
        },
        RatingScale::Continuous { min, max } => ScaleJson {
            kind: "continuous",
            levels: None,
            min: *min,
            max: *max,
        },
    };
    InfoJson {
        rank: m.rank,
        lambda: m.lambda,
        sigma2: m.sigma2,
        mu: m.mu,
        center: m.center.name(),
        scale,
        users: m.counts.users,
        items: m.counts.items,
        ratings: m.counts.ratings,
        train_ratings: m.counts.train_ratings,
        holdout_ratings: m.counts.holdout_ratings,
        seed: m.seed,
        converged: m.converged,
        iterations: &m.trace,
        train: m.metrics.as_ref().map(|f| (&f.train).into()),
        holdout: m
            .metrics
            .as_ref()
            .and_then(|f| f.holdout.as_ref())
            .map(Into::into),
        low_support_users: m.metrics.as_ref().map(|f| f.low_support_users),
        low_support_items: m.metrics.as_ref().map(|f| f.low_support_items),
        origin: origin_name(m.origin),
        final_log_joint: m.trace.last().map(|r| r.log_joint),
        described_items: model
            .meta
            .as_ref()
            .map_or(0, sextant::data::ItemsMeta::described),
        biases: m.lambda_bias.is_some(),
        lambda_bias: m.lambda_bias,
        feedback: if m.implicit.is_some() {
            "implicit"
        } else {
            "ratings"
        },
        confidence: m.implicit.as_ref().map(|i| i.confidence.into()),
        loss_trace: m.implicit.as_ref().map_or(&[], |i| &i.trace),
        final_loss: m
            .implicit
            .as_ref()
            .and_then(|i| i.trace.last())
            .map(|r| r.loss),
        holdout_percentile_rank: m.implicit.as_ref().and_then(|i| i.holdout_percentile_rank),
    }
}

fn loss_csv(trace: &[ImplicitRecord]) -> String {
    let mut out = String::from("iter,loss\n");
    for r in trace {
        let _ = writeln!(out, "{},{}", r.iter, r.loss);
    }
    out
}

fn origin_name(origin: Origin) -> &'static str {
    match origin {
        Origin::Fit => "fit",
        Origin::Import => "import",
    }
}

fn trace_csv(trace: &[IterationRecord]) -> String {
    let mut out = String::from("iter,log_joint,train_rmse,holdout_rmse\n");
    for r in trace {
        let holdout = r.holdout_rmse.map(|v| v.to_string()).unwrap_or_default();
        let _ = writeln!(out, "{},{},{},{holdout}", r.iter, r.log_joint, r.train_rmse);
    }
    out
}

fn table(model: &Model, label: &str) -> String {
    let m = &model.manifest;
    let c = &m.counts;
    let mut out = String::new();
    let mut line = |key: &str, value: String| {
        let _ = writeln!(out, "{key:<12} {value}");
    };
    let origin = match m.origin {
        Origin::Fit => "fitted by sextant",
        Origin::Import => "imported from factor tables",
    };
    line("model", format!("{label} ({origin})"));
    let center = match m.center {
        sextant::model::Center::Global => "global mean of the training ratings",
        sextant::model::Center::None => "no centring",
        sextant::model::Center::Given => "given with --mu when imported",
    };
    if let Some(implicit) = &m.implicit {
        line("rank", format!("{}    lambda {}", m.rank, m.lambda));
        line(
            "feedback",
            format!(
                "implicit: counts, confidence {}; scores are preferences, not ratings",
                implicit.confidence.describe()
            ),
        );
        return implicit_table(model, implicit, out);
    }
    // A model of ratings always has its metrics (the loader checks).
    let Some(metrics) = &m.metrics else {
        return out;
    };
    line(
        "rank",
        format!("{}    lambda {}    sigma2 {}", m.rank, m.lambda, m.sigma2),
    );
    line("mu", format!("{:.4} ({center})", m.mu));
    if let (Some(lambda_bias), Some(b)) = (m.lambda_bias, &model.factors.biases) {
        let spread = |v: &[f64]| {
            let (lo, hi) = v
                .iter()
                .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
                    (lo.min(x), hi.max(x))
                });
            format!("{lo:+.3} to {hi:+.3}")
        };
        line(
            "biases",
            format!(
                "member and item offsets, lambda-bias {lambda_bias}; members {}, items {}",
                spread(&b.user),
                spread(&b.item)
            ),
        );
    }
    line("scale", m.scale.describe());
    line(
        "ratings",
        format!(
            "{} ({} train, {} held out)",
            group(c.ratings),
            group(c.train_ratings),
            group(c.holdout_ratings)
        ),
    );
    let support = |n: usize, what: &str| {
        if n == 0 {
            format!("all have at least {} training ratings", m.rank)
        } else {
            format!(
                "{} with fewer than {} training ratings ({what} dominated by the prior)",
                group(n),
                m.rank
            )
        }
    };
    line(
        "users",
        format!(
            "{}; {}",
            group(c.users),
            support(metrics.low_support_users, "vectors")
        ),
    );
    line(
        "items",
        format!(
            "{}; {}",
            group(c.items),
            support(metrics.low_support_items, "vectors")
        ),
    );
    let objective = m
        .trace
        .last()
        .map(|last| ("log joint", format!("{:.4} (final)", last.log_joint)));
    for (key, value) in run_lines(model, m.trace.len(), objective) {
        line(key, value);
    }
    let _ = writeln!(out);
    let _ = writeln!(
        out,
        "{:<12} {:>9} {:>9} {:>14} {:>13} {:>8}",
        "accuracy", "RMSE", "MAE", "RMSE rounded", "MAE rounded", "exact"
    );
    let mut row = |name: &str, metrics: Option<&ErrorMetrics>| {
        let v = |f: fn(&ErrorMetrics) -> f64| fixed(metrics.map(f), 4);
        let exact = metrics.map_or_else(
            || "–".to_owned(),
            |m| format!("{:.1}%", 100.0 * m.exact_rate),
        );
        let _ = writeln!(
            out,
            "{name:<12} {:>9} {:>9} {:>14} {:>13} {exact:>8}",
            v(|m| m.rmse),
            v(|m| m.mae),
            v(|m| m.rmse_rounded),
            v(|m| m.mae_rounded)
        );
    };
    row("train", Some(&metrics.train));
    row("held out", metrics.holdout.as_ref());
    out
}

/// The lines both kinds of model show after their counts: the catalogue, and for a fit
/// how it ended after `iterations` and its final `objective` (name, text).
fn run_lines(
    model: &Model,
    iterations: usize,
    objective: Option<(&'static str, String)>,
) -> Vec<(&'static str, String)> {
    let m = &model.manifest;
    let mut lines = Vec::new();
    if let Some(meta) = &model.meta {
        lines.push((
            "metadata",
            format!("{} items described", group(meta.described())),
        ));
    }
    if let (Origin::Fit, Some(options)) = (m.origin, &m.options) {
        let state = if m.converged {
            "converged"
        } else {
            "stopped without converging"
        };
        lines.push((
            "fit",
            format!(
                "{state} after {iterations} of at most {} iterations (tol {:e}), seed {}",
                options.max_iters, options.tol, m.seed
            ),
        ));
        lines.extend(objective);
    }
    lines
}

/// The rest of the table of an implicit-feedback model: interactions, the loss and the
/// held-out ranking in place of rating accuracy.
fn implicit_table(model: &Model, implicit: &ImplicitFit, mut out: String) -> String {
    let m = &model.manifest;
    let c = &m.counts;
    let mut line = |key: &str, value: String| {
        let _ = writeln!(out, "{key:<12} {value}");
    };
    line(
        "interactions",
        format!(
            "{} ({} train, {} held out); counts {}",
            group(c.ratings),
            group(c.train_ratings),
            group(c.holdout_ratings),
            m.scale.describe()
        ),
    );
    line("users", group(c.users));
    line("items", group(c.items));
    let objective = implicit
        .trace
        .last()
        .map(|last| ("loss", format!("{:.6e} (final)", last.loss)));
    for (key, value) in run_lines(model, implicit.trace.len(), objective) {
        line(key, value);
    }
    line(
        "held out",
        implicit.holdout_percentile_rank.map_or_else(
            || "no held-out interactions to rank".to_owned(),
            |p| {
                format!(
                    "expected percentile rank {:.2}% (0% is every held-out item first, 50% a random order)",
                    100.0 * p
                )
            },
        ),
    );
    out
}

/// Saves `model` to `out` and prints its summary (the last step of `fit` and `import`).
pub fn save_and_print(
    model: &Model,
    out: &std::path::Path,
    quiet: bool,
    format: Format,
) -> anyhow::Result<()> {
    sextant::model::save_model(out, model)?;
    if !quiet {
        eprintln!("wrote model directory {}", out.display());
    }
    // Curator notes carried over from the model this one replaced.
    match sextant::model::notes::read_notes(out) {
        Ok(_) if quiet => {}
        Ok(notes) if !notes.is_empty() => {
            let orphans = notes.orphans(&model.ratings.items, model.factors.rank);
            eprintln!(
                "kept {} curator note(s) from the previous model; factor labels may no longer fit the refitted factors",
                notes.len()
            );
            if !orphans.is_empty() {
                eprintln!("note: {}", orphans.describe());
            }
        }
        Ok(_) => {}
        Err(e) => eprintln!("warning: the carried-over curator notes cannot be read: {e}"),
    }
    super::output::print(&render(model, &out.display().to_string(), format)?, format)
}
