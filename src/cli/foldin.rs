//! `sextant fold-in`: a member vector and suggestions for a set of ratings that is not in
//! the model (a new member, or an existing one with ratings added, changed or removed).

use std::fmt::Write as _;
use std::path::PathBuf;

use clap::Args;
use serde::Serialize;
use sextant::analysis::foldin::{fold_in, suggest_profile};
use sextant::analysis::suggest::ranking_index;
use sextant::data::profile::{Values, load_profile};
use sextant::model::load_model;

use super::args::{ModelArg, OutputArgs, SuggestionCount};
use super::output::{self, Format};

/// Fold a profile (an `item,rating` CSV; `item,count` for a model of implicit feedback) into
/// a model: one member step against the fixed item vectors gives its vector; suggestions
/// and their uncertainty follow.
///
/// Items the model does not know are skipped and named on stderr.
#[derive(Debug, Args)]
pub struct FoldInArgs {
    #[command(flatten)]
    model: ModelArg,
    /// The profile: CSV with columns item,rating (item,count for implicit feedback).
    #[arg(value_name = "RATINGS.csv")]
    ratings: PathBuf,
    #[command(flatten)]
    count: SuggestionCount,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Serialize)]
struct Report<'a> {
    vector: &'a [f64],
    /// The profile's offset `b` (null in a model without biases).
    bias: Option<f64>,
    ratings_used: usize,
    skipped: Vec<&'a str>,
    suggestions: Vec<super::suggest::Row<'a>>,
}

pub fn run(args: &FoldInArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model.model)?;
    let values = if model.implicit().is_some() {
        Values::Counts
    } else {
        Values::Ratings(&model.manifest.scale)
    };
    let profile = load_profile(&args.ratings, &model.ratings.items, values)?;
    if !profile.unknown.is_empty() {
        let named: Vec<String> = profile
            .unknown
            .iter()
            .take(5)
            .map(|(id, line)| format!("'{id}' (line {line})"))
            .collect();
        eprintln!(
            "skipped {} rating(s) of items the model does not have: {}{}",
            profile.unknown.len(),
            named.join(", "),
            if profile.unknown.len() > 5 {
                ", …"
            } else {
                ""
            }
        );
    }
    let folded = fold_in(&model, &profile.ratings)
        .map_err(|e| super::UsageError(format!("{}: {e}", args.ratings.display())))?;
    let index = ranking_index(&model);
    let found = suggest_profile(
        &model,
        &index,
        &folded.profile(&profile.ratings),
        args.count.n,
    );
    let vector = &folded.vector;
    let report = Report {
        vector,
        bias: model.factors.biases.as_ref().map(|_| folded.bias),
        ratings_used: profile.ratings.len(),
        skipped: profile.unknown.iter().map(|(id, _)| id.as_str()).collect(),
        suggestions: super::suggest::rows(&model, &found),
    };
    let text = match args.output.format {
        Format::Json => serde_json::to_string_pretty(&report)? + "\n",
        Format::Csv => super::suggest::csv(&report.suggestions),
        Format::Table => {
            let mut out = String::new();
            match model.implicit() {
                Some(confidence) => {
                    let _ = writeln!(
                        out,
                        "profile of {} count(s) folded in (rank {}, λ = {}, confidence {})",
                        report.ratings_used,
                        model.factors.rank,
                        model.manifest.lambda,
                        confidence.describe()
                    );
                }
                None => {
                    let _ = writeln!(
                        out,
                        "profile of {} rating(s) folded in (rank {}, λ = {}, σ² = {})",
                        report.ratings_used,
                        model.factors.rank,
                        model.manifest.lambda,
                        model.manifest.sigma2
                    );
                }
            }
            if let Some(b) = report.bias {
                let _ = writeln!(out, "  offset {b:>+8.3}");
            }
            let peak = vector.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-12);
            for (d, v) in vector.iter().enumerate() {
                let width = (v.abs() / peak * 20.0).round() as usize;
                let bar = "█".repeat(width);
                let (left, right) = if *v < 0.0 {
                    (format!("{bar:>20}"), String::new())
                } else {
                    (" ".repeat(20), bar)
                };
                let _ = writeln!(out, "  f{:<3} {v:>+8.3} {left}│{right}", d + 1);
            }
            out.push('\n');
            out.push_str(&super::suggest::table(&model, &found));
            out
        }
    };
    output::print(&text, args.output.format)
}
