//! `sextant neighbours`: the items (or members) nearest to one in the latent space.

use std::fmt::Write as _;
use std::path::PathBuf;

use clap::Args;
use serde::Serialize;
use sextant::analysis::closeness;
use sextant::index::{NeighbourIndex, Path};
use sextant::model::load_model;

use super::UsageError;
use super::args::{MetricArgs, ModelArg, NeighbourCount, OutputArgs, metric_name};
use super::lookup::{csv_number, item_label, item_title, resolve, resolve_item};
use super::output::{self, Format};

/// The k nearest items to an item, or members to a member, in the latent space.
///
/// Both the Euclidean distance and the cosine similarity are shown whatever the ranking.
#[derive(Debug, Args)]
pub struct NeighboursArgs {
    #[command(flatten)]
    model: ModelArg,
    /// The item whose neighbours to list.
    #[arg(
        value_name = "ITEM",
        required_unless_present_any = ["user", "all"],
        conflicts_with_all = ["user", "all"]
    )]
    item: Option<String>,
    /// Every item's neighbours at once, as CSV rows query,rank,id,distance,cosine,title,
    /// category (or one
    /// JSON object with --format json): blocked matrix products, or at low ranks one k-d
    /// tree query per item, whichever is faster; the lists equal the single-item ones.
    #[arg(long, conflicts_with = "user")]
    all: bool,
    /// With --all: write to this file instead of stdout (an existing file is replaced
    /// whole; a device or pipe is written in place).
    #[arg(long, value_name = "FILE", requires = "all")]
    out: Option<PathBuf>,
    /// List the members nearest to this member instead.
    #[arg(long, value_name = "USER")]
    user: Option<String>,
    #[command(flatten)]
    count: NeighbourCount,
    #[command(flatten)]
    metric: MetricArgs,
    #[command(flatten)]
    output: OutputArgs,
}

/// One neighbour as printed: the fields DESIGN.md fixes, plus the item's title and
/// category (null for members and for items the catalogue does not describe).
#[derive(Serialize)]
struct Row<'a> {
    rank: usize,
    id: &'a str,
    distance: f64,
    cosine: Option<f64>,
    title: Option<&'a str>,
    category: Option<&'a str>,
}

impl Row<'_> {
    /// The CSV fields after the query column: `rank,id,distance,cosine,title,category`.
    fn csv_fields(&self) -> [String; 6] {
        [
            self.rank.to_string(),
            self.id.to_owned(),
            csv_number(Some(self.distance)),
            csv_number(self.cosine),
            self.title.unwrap_or_default().to_owned(),
            self.category.unwrap_or_default().to_owned(),
        ]
    }
}

/// The CSV header of a neighbour list.
const CSV_HEADER: &str = "rank,id,distance,cosine,title,category";

#[derive(Serialize)]
struct Report<'a> {
    query: &'a str,
    kind: &'static str,
    metric: &'static str,
    k: usize,
    neighbours: Vec<Row<'a>>,
}

pub fn run(args: &NeighboursArgs) -> anyhow::Result<()> {
    let model = load_model(&args.model.model)?;
    if args.all {
        return run_all(args, &model);
    }
    let (kind, ids, vectors, query) = match (&args.item, &args.user) {
        (Some(item), _) => (
            "item",
            &model.ratings.items,
            &model.factors.items,
            item.as_str(),
        ),
        (None, Some(user)) => (
            "user",
            &model.ratings.users,
            &model.factors.users,
            user.as_str(),
        ),
        (None, None) => {
            return Err(UsageError("name an ITEM, or a member with --user".into()).into());
        }
    };
    let row = if kind == "item" {
        resolve_item(&model, query)?
    } else {
        resolve(ids, query, "member")?
    };
    let metric = args.metric.or_euclidean();
    let d = model.factors.rank;
    let index = NeighbourIndex::build(vectors, d, metric, Path::Auto);
    let found = index
        .nearest_to_row(row, args.count.k)
        .map_err(|e| UsageError(format!("{kind} '{query}': {e}")))?;
    let vector = |r: u32| &vectors[r as usize * d..(r as usize + 1) * d];
    let rows: Vec<Row<'_>> = found
        .iter()
        .enumerate()
        .map(|(k, n)| {
            let (title, category) = if kind == "item" {
                item_title(&model, n.row)
            } else {
                (None, None)
            };
            let near = closeness(vector(row), vector(n.row));
            Row {
                rank: k + 1,
                id: ids.name(n.row),
                distance: near.distance,
                cosine: near.cosine,
                title,
                category,
            }
        })
        .collect();
    let metric_name = metric_name(metric);
    let report = Report {
        query: ids.name(row),
        kind,
        metric: metric_name,
        k: args.count.k,
        neighbours: rows,
    };
    let text = match args.output.format {
        Format::Json => serde_json::to_string_pretty(&report)? + "\n",
        Format::Csv => {
            let mut out = format!("{CSV_HEADER}\n");
            for r in &report.neighbours {
                output::csv_row(&mut out, &r.csv_fields().each_ref().map(String::as_str));
            }
            out
        }
        Format::Table => {
            let mut out = String::new();
            let label = if kind == "item" {
                item_label(&model, row)
            } else {
                query.to_owned()
            };
            let _ = writeln!(
                out,
                "{} nearest {}s to {label} by {metric_name} distance",
                report.neighbours.len(),
                if kind == "item" { "item" } else { "member" }
            );
            let _ = writeln!(
                out,
                "{:>4}  {:>9}  {:>7}  {}",
                "rank", "distance", "cosine", kind
            );
            for r in &report.neighbours {
                let label = if kind == "item" {
                    item_label(&model, ids.get(r.id).expect("listed ids exist"))
                } else {
                    r.id.to_owned()
                };
                let cos = r
                    .cosine
                    .map_or_else(|| "–".to_owned(), |c| format!("{c:.3}"));
                let _ = writeln!(out, "{:>4}  {:>9.4}  {cos:>7}  {label}", r.rank, r.distance);
            }
            out
        }
    };
    output::print(&text, args.output.format)
}

#[derive(Serialize)]
struct List<'a> {
    query: &'a str,
    neighbours: Vec<Row<'a>>,
}

#[derive(Serialize)]
struct AllReport<'a> {
    kind: &'static str,
    metric: &'static str,
    k: usize,
    lists: Vec<List<'a>>,
}

/// `--all`: every item's neighbour list, computed in bulk.
fn run_all(args: &NeighboursArgs, model: &sextant::model::Model) -> anyhow::Result<()> {
    let metric = args.metric.or_euclidean();
    let d = model.factors.rank;
    let vectors = &model.factors.items;
    let ids = &model.ratings.items;
    let lists = sextant::index::bulk::all_neighbours_auto(vectors, d, metric, args.count.k);
    let vector = |r: usize| &vectors[r * d..(r + 1) * d];
    let row_of = |query: usize, k: usize, n: &sextant::index::Neighbour| {
        let near = closeness(vector(query), vector(n.row as usize));
        let (title, category) = item_title(model, n.row);
        Row {
            rank: k + 1,
            id: ids.name(n.row),
            distance: near.distance,
            cosine: near.cosine,
            title,
            category,
        }
    };
    let text = match args.output.format {
        Format::Json => {
            let report = AllReport {
                kind: "item",
                metric: metric_name(metric),
                k: args.count.k,
                lists: lists
                    .iter()
                    .enumerate()
                    .map(|(q, list)| List {
                        query: ids.name(q as u32),
                        neighbours: list
                            .iter()
                            .enumerate()
                            .map(|(k, n)| row_of(q, k, n))
                            .collect(),
                    })
                    .collect(),
            };
            serde_json::to_string(&report)? + "\n"
        }
        Format::Csv | Format::Table => {
            let mut out = format!("query,{CSV_HEADER}\n");
            for (q, list) in lists.iter().enumerate() {
                for (k, n) in list.iter().enumerate() {
                    let [a, b, c, d, e, f] = row_of(q, k, n).csv_fields();
                    output::csv_row(&mut out, &[ids.name(q as u32), &a, &b, &c, &d, &e, &f]);
                }
            }
            out
        }
    };
    match &args.out {
        Some(path) => {
            sextant::files::output::write_file(path, text.as_bytes())?;
            eprintln!(
                "wrote {} neighbour lists to {}",
                lists.len(),
                path.display()
            );
            Ok(())
        }
        None => output::print(&text, args.output.format),
    }
}
