//! `sextant suggest`: a member's top items by predicted rating (by score in an
//! implicit-feedback model).

use std::fmt::Write as _;

use clap::Args;
use serde::Serialize;
use sextant::analysis::{Suggestion, suggest};
use sextant::model::{Model, load_model};

use super::args::{ModelArg, OutputArgs, SuggestionCount};
use super::lookup::{csv_number, item_label, item_title, resolve};
use super::output::{self, Format};

/// The items a member has not rated with the highest predicted ratings (exact), each with
/// the predictive standard deviation of the rating.
#[derive(Debug, Args)]
pub struct SuggestArgs {
    #[command(flatten)]
    model: ModelArg,
    /// The member.
    #[arg(value_name = "USER")]
    user: String,
    #[command(flatten)]
    count: SuggestionCount,
    /// Also consider items the member already rated.
    #[arg(long)]
    include_rated: bool,
    #[command(flatten)]
    output: OutputArgs,
}

/// One suggestion as printed (JSON fields fixed by DESIGN.md, plus the predictive
/// standard deviation, title and category: null when the model has none). An
/// implicit-feedback model has a `score` and no predicted rating, rounding or SD (null).
#[derive(Serialize)]
pub struct Row<'a> {
    rank: usize,
    item: &'a str,
    predicted: Option<f64>,
    rounded: Option<f64>,
    predictive_sd: Option<f64>,
    title: Option<&'a str>,
    category: Option<&'a str>,
    score: Option<f64>,
}

#[derive(Serialize)]
struct Report<'a> {
    user: &'a str,
    n: usize,
    suggestions: Vec<Row<'a>>,
}

pub fn run(args: &SuggestArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model.model)?;
    let user = resolve(&model.ratings.users, &args.user, "member")?;
    let index = sextant::analysis::suggest::ranking_index(&model);
    let found = suggest(&model, &index, user, args.count.n, args.include_rated);
    let rows = rows(&model, &found);
    let report = Report {
        user: &args.user,
        n: args.count.n,
        suggestions: rows,
    };
    let text = match args.output.format {
        Format::Json => serde_json::to_string_pretty(&report)? + "\n",
        Format::Csv => csv(&report.suggestions),
        Format::Table => {
            let mut out = String::new();
            let implicit = model.implicit().is_some();
            let _ = writeln!(
                out,
                "top {} suggestions for member {} (items they have not {})",
                report.suggestions.len(),
                args.user,
                if implicit { "chosen" } else { "rated" }
            );
            out.push_str(&table(&model, &found));
            if implicit {
                let _ = writeln!(
                    out,
                    "score: the model's preference, near 1 for a likely interest and near 0 for none (not a rating)"
                );
            } else {
                let _ = writeln!(
                    out,
                    "± sd: predictive standard deviation of the rating given the item vectors (their own uncertainty is not included)"
                );
            }
            out
        }
    };
    output::print(&text, args.output.format)
}

/// The printed rows of a list of suggestions.
pub fn rows<'a>(model: &'a Model, found: &[Suggestion]) -> Vec<Row<'a>> {
    found
        .iter()
        .map(|s| {
            let (title, category) = item_title(model, s.item);
            let implicit = model.implicit().is_some();
            Row {
                rank: s.rank,
                item: model.ratings.items.name(s.item),
                predicted: (!implicit).then_some(s.predicted),
                score: implicit.then_some(s.predicted),
                rounded: s.rounded,
                predictive_sd: s.predictive_sd,
                title,
                category,
            }
        })
        .collect()
}

/// Suggestions as CSV (`rank,item,predicted,rounded,predictive_sd,title,category,score`;
/// title and category empty when the model has no catalogue, the figures that do not
/// apply empty).
pub fn csv(rows: &[Row<'_>]) -> String {
    let mut out = String::from("rank,item,predicted,rounded,predictive_sd,title,category,score\n");
    for r in rows {
        let fields = [
            r.rank.to_string(),
            r.item.to_owned(),
            csv_number(r.predicted),
            csv_number(r.rounded),
            csv_number(r.predictive_sd),
            r.title.unwrap_or_default().to_owned(),
            r.category.unwrap_or_default().to_owned(),
            csv_number(r.score),
        ];
        output::csv_row(&mut out, &fields.each_ref().map(String::as_str));
    }
    out
}

/// Suggestions as a readable table with a header line.
pub fn table(model: &Model, found: &[Suggestion]) -> String {
    let mut out = String::new();
    if model.implicit().is_some() {
        let _ = writeln!(out, "{:>4}  {:>7}  item", "rank", "score");
        for s in found {
            let _ = writeln!(
                out,
                "{:>4}  {:>7.3}  {}",
                s.rank,
                s.predicted,
                item_label(model, s.item)
            );
        }
        return out;
    }
    let _ = writeln!(
        out,
        "{:>4}  {:>9}  {:>7}  {:>6}  item",
        "rank", "predicted", "rounded", "± sd"
    );
    for s in found {
        let _ = writeln!(
            out,
            "{:>4}  {:>9.3}  {:>7}  {:>6}  {}",
            s.rank,
            s.predicted,
            s.rounded.map_or_else(|| "–".to_owned(), |r| r.to_string()),
            output::fixed(s.predictive_sd, 2),
            item_label(model, s.item)
        );
    }
    out
}
