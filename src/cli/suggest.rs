//! `sextant suggest`: a member's top items by predicted rating.

use std::fmt::Write as _;
use std::path::PathBuf;

use clap::Args;
use serde::Serialize;
use sextant::analysis::{Suggestion, suggest};
use sextant::index::{InnerProductIndex, Path};
use sextant::model::{Model, load_model};

use super::lookup::{csv_number, item_label, item_title, resolve};
use super::output::{self, Format};

/// The items a member has not rated with the highest predicted ratings (exact), each with
/// the predictive standard deviation of the rating.
#[derive(Debug, Args)]
pub struct SuggestArgs {
    /// The model directory.
    #[arg(value_name = "MODEL")]
    model: PathBuf,
    /// The member.
    #[arg(value_name = "USER")]
    user: String,
    /// How many suggestions.
    #[arg(short, long, default_value_t = 10)]
    n: usize,
    /// Also consider items the member already rated.
    #[arg(long)]
    include_rated: bool,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
}

/// One suggestion as printed (JSON fields fixed by DESIGN.md, plus title and category).
#[derive(Serialize)]
pub struct Row<'a> {
    rank: usize,
    item: &'a str,
    predicted: f64,
    rounded: f64,
    predictive_sd: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    title: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    category: Option<&'a str>,
}

#[derive(Serialize)]
struct Report<'a> {
    user: &'a str,
    n: usize,
    suggestions: Vec<Row<'a>>,
}

pub fn run(args: &SuggestArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model)?;
    let user = resolve(&model.ratings.users, &args.user, "member")?;
    let index = InnerProductIndex::build(&model.factors.items, model.factors.rank, Path::Auto);
    let found = suggest(&model, &index, user, args.n, args.include_rated);
    let rows = rows(&model, &found);
    let report = Report {
        user: &args.user,
        n: args.n,
        suggestions: rows,
    };
    let text = match args.format {
        Format::Json => serde_json::to_string_pretty(&report)? + "\n",
        Format::Csv => csv(&report.suggestions),
        Format::Table => {
            let mut out = String::new();
            let _ = writeln!(
                out,
                "top {} suggestions for member {} (items they have not rated)",
                report.suggestions.len(),
                args.user
            );
            out.push_str(&table(&model, &found));
            let _ = writeln!(
                out,
                "± sd: predictive standard deviation of the rating given the item vectors (their own uncertainty is not included)"
            );
            out
        }
    };
    output::print(&text, args.format)
}

/// The printed rows of a list of suggestions.
pub fn rows<'a>(model: &'a Model, found: &[Suggestion]) -> Vec<Row<'a>> {
    found
        .iter()
        .map(|s| {
            let (title, category) = item_title(model, s.item);
            Row {
                rank: s.rank,
                item: model.ratings.items.name(s.item),
                predicted: s.predicted,
                rounded: s.rounded,
                predictive_sd: s.predictive_sd,
                title,
                category,
            }
        })
        .collect()
}

/// Suggestions as CSV (`rank,item,predicted,rounded,predictive_sd`).
pub fn csv(rows: &[Row<'_>]) -> String {
    let mut out = String::from("rank,item,predicted,rounded,predictive_sd\n");
    for r in rows {
        let fields = [
            r.rank.to_string(),
            r.item.to_owned(),
            csv_number(Some(r.predicted)),
            csv_number(Some(r.rounded)),
            csv_number(r.predictive_sd),
        ];
        output::csv_row(&mut out, &fields.each_ref().map(String::as_str));
    }
    out
}

/// Suggestions as a readable table with a header line.
pub fn table(model: &Model, found: &[Suggestion]) -> String {
    let mut out = String::new();
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
            s.rounded,
            output::fixed(s.predictive_sd, 2),
            item_label(model, s.item)
        );
    }
    out
}
