//! `sextant export`: a model's factor tables, its predictions for the held-out ratings and
//! every item's neighbour list, as Parquet or CSV files, for a data lake or a notebook.

use std::path::PathBuf;
use std::sync::Arc;

use std::io::Write as _;

use clap::{Args, ValueEnum};
use sextant::files::export::{ExportFolder, FolderKind};
use sextant::model::load_model;

use super::args::{MetricArgs, ModelArg, NeighbourCount, warn_if_spelled};
use super::output;

/// File format of an export.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ExportFormat {
    /// Apache Parquet.
    Parquet,
    /// CSV.
    Csv,
}

/// Write a model's factor tables (users, items), its predictions for held-out ratings and
/// every item's nearest neighbours into a directory, as Parquet or CSV.
#[derive(Debug, Args)]
pub struct ExportArgs {
    #[command(flatten)]
    model: ModelArg,
    /// Format of the files written.
    #[arg(long, value_enum, default_value_t = ExportFormat::Parquet, alias = "format")]
    file_format: ExportFormat,
    /// Folder to write into: a new or empty one, or one an earlier export wrote (it holds
    /// sextant-export.ron). A folder of other files is refused, so nothing of yours is
    /// overwritten.
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    #[command(flatten)]
    count: NeighbourCount,
    #[command(flatten)]
    metric: MetricArgs,
}

/// One row of the neighbour lists: query row, rank from 1, neighbour row, both measures.
struct ListRow {
    query: u32,
    rank: u32,
    id: u32,
    distance: f64,
    cosine: Option<f64>,
}

/// The files an export writes, in the order written.
fn file_names(format: ExportFormat) -> [&'static str; 4] {
    match format {
        ExportFormat::Parquet => [
            "users.parquet",
            "items.parquet",
            "holdout-predictions.parquet",
            "neighbours.parquet",
        ],
        ExportFormat::Csv => [
            "users.csv",
            "items.csv",
            "holdout-predictions.csv",
            "neighbours.csv",
        ],
    }
}

pub fn run(args: &ExportArgs) -> anyhow::Result<()> {
    if args.count.k == 0 {
        return Err(super::UsageError("-k must be at least 1".into()).into());
    }
    let model = load_model(&args.model.model)?;
    warn_if_spelled(&["--format"], "--file-format");
    let format = args.file_format;
    let names = file_names(format);
    // Refuses a folder of someone else's files before any work is done.
    let mut folder = ExportFolder::open(&args.out, FolderKind::Export, &names)?;
    let f = &model.factors;
    let r = &model.ratings;
    let held: Vec<_> = r.entries.iter().filter(|e| e.holdout).collect();
    let k = args.count.k.min(r.items.len().saturating_sub(1));
    let lists =
        sextant::index::bulk::all_neighbours_auto(&f.items, f.rank, args.metric.or_euclidean(), k);
    let vector = |r: u32| &f.items[r as usize * f.rank..(r as usize + 1) * f.rank];
    let list_rows: Vec<ListRow> = lists
        .iter()
        .enumerate()
        .flat_map(|(q, l)| {
            l.iter().enumerate().map(move |(k, n)| {
                let near = sextant::analysis::closeness(vector(q as u32), vector(n.row));
                ListRow {
                    query: q as u32,
                    rank: k as u32 + 1,
                    id: n.row,
                    distance: near.distance,
                    cosine: near.cosine,
                }
            })
        })
        .collect();
    let [users_file, items_file, held_file, lists_file] = names;
    let (user_bias, item_bias) = match &f.biases {
        Some(b) => (Some(&b.user[..]), Some(&b.item[..])),
        None => (None, None),
    };
    match format {
        ExportFormat::Parquet => {
            use arrow_array::{ArrayRef, Float64Array, RecordBatch, StringArray, UInt32Array};
            use arrow_schema::{DataType, Field, Schema};
            let batch_to = |batch: RecordBatch| {
                move |w: &mut std::fs::File| -> std::io::Result<()> {
                    let mut writer = parquet::arrow::ArrowWriter::try_new(w, batch.schema(), None)
                        .map_err(std::io::Error::other)?;
                    writer.write(&batch).map_err(std::io::Error::other)?;
                    writer.close().map_err(std::io::Error::other)?;
                    Ok(())
                }
            };
            folder.write(users_file, |w| {
                sextant::data::parquet::write_factor_parquet(
                    w, &r.users, &f.users, f.rank, user_bias,
                )
            })?;
            folder.write(items_file, |w| {
                sextant::data::parquet::write_factor_parquet(
                    w, &r.items, &f.items, f.rank, item_bias,
                )
            })?;
            let schema = Arc::new(Schema::new(vec![
                Field::new("user", DataType::Utf8, false),
                Field::new("item", DataType::Utf8, false),
                Field::new("rating", DataType::Float64, false),
                Field::new("predicted", DataType::Float64, false),
            ]));
            let cols: Vec<ArrayRef> = vec![
                Arc::new(StringArray::from_iter_values(
                    held.iter().map(|e| r.users.name(e.user)),
                )),
                Arc::new(StringArray::from_iter_values(
                    held.iter().map(|e| r.items.name(e.item)),
                )),
                Arc::new(Float64Array::from_iter_values(held.iter().map(|e| e.value))),
                Arc::new(Float64Array::from_iter_values(
                    held.iter().map(|e| f.predict(e.user, e.item)),
                )),
            ];
            folder.write(held_file, batch_to(RecordBatch::try_new(schema, cols)?))?;
            let rows = &list_rows;
            let schema = Arc::new(Schema::new(vec![
                Field::new("query", DataType::Utf8, false),
                Field::new("rank", DataType::UInt32, false),
                Field::new("id", DataType::Utf8, false),
                Field::new("distance", DataType::Float64, false),
                Field::new("cosine", DataType::Float64, true),
            ]));
            let cols: Vec<ArrayRef> = vec![
                Arc::new(StringArray::from_iter_values(
                    rows.iter().map(|x| r.items.name(x.query)),
                )),
                Arc::new(UInt32Array::from_iter_values(rows.iter().map(|x| x.rank))),
                Arc::new(StringArray::from_iter_values(
                    rows.iter().map(|x| r.items.name(x.id)),
                )),
                Arc::new(Float64Array::from_iter_values(
                    rows.iter().map(|x| x.distance),
                )),
                Arc::new(rows.iter().map(|x| x.cosine).collect::<Float64Array>()),
            ];
            folder.write(lists_file, batch_to(RecordBatch::try_new(schema, cols)?))?;
        }
        ExportFormat::Csv => {
            let num = sextant::data::factors::format_float;
            let text = |out: String| move |w: &mut std::fs::File| w.write_all(out.as_bytes());
            folder.write(users_file, |w| {
                sextant::data::write_factor_table(w, &r.users, f.rank, &f.users, user_bias)
            })?;
            folder.write(items_file, |w| {
                sextant::data::write_factor_table(w, &r.items, f.rank, &f.items, item_bias)
            })?;
            let mut out = String::from("user,item,rating,predicted\n");
            for e in &held {
                let fields = [
                    r.users.name(e.user).to_owned(),
                    r.items.name(e.item).to_owned(),
                    num(e.value),
                    num(f.predict(e.user, e.item)),
                ];
                output::csv_row(&mut out, &fields.each_ref().map(String::as_str));
            }
            folder.write(held_file, text(out))?;
            let mut out = String::from("query,rank,id,distance,cosine\n");
            for x in &list_rows {
                let fields = [
                    r.items.name(x.query).to_owned(),
                    x.rank.to_string(),
                    r.items.name(x.id).to_owned(),
                    num(x.distance),
                    x.cosine.map(num).unwrap_or_default(),
                ];
                output::csv_row(&mut out, &fields.each_ref().map(String::as_str));
            }
            folder.write(lists_file, text(out))?;
        }
    }
    let removed = folder.finish()?;
    if !removed.is_empty() {
        eprintln!(
            "removed {} file(s) an earlier export wrote and this one replaces",
            removed.len()
        );
    }
    eprintln!(
        "wrote the factor tables, {} held-out predictions and {} neighbour lists to {}",
        held.len(),
        lists.len(),
        args.out.display()
    );
    Ok(())
}
