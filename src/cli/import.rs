//! `sextant import`: a model directory from factor tables fitted elsewhere.

use std::path::PathBuf;

use anyhow::Context;
use clap::Args;
use sextant::data::{RatingScale, read_factor_table};
use sextant::error::DataError;
use sextant::model::{Center, FactorModel, Model, Provenance};

use super::UsageError;
use super::fit::CenterArg;
use super::inputs::{self, RatingsArgs};
use super::output::Format;
use super::summary;

/// Build a model directory from user and item factor tables (id,f1,…,fD) and the ratings
/// they were fitted on. A `split` column (train/holdout) in the ratings is used when present;
/// otherwise every rating counts as training.
#[derive(Debug, Args)]
pub struct ImportArgs {
    /// Ratings CSV; every user and item in it must have a vector.
    #[arg(long, value_name = "FILE")]
    ratings: PathBuf,
    /// User factor table: CSV id,f1,…,fD, or Parquet (a file ending in .parquet).
    #[arg(long, value_name = "FILE")]
    users: PathBuf,
    /// Item factor table: CSV id,f1,…,fD, or Parquet (a file ending in .parquet).
    #[arg(long, value_name = "FILE")]
    items: PathBuf,
    /// Parquet tables: the id column (default: id, else the first text column).
    #[arg(long, value_name = "NAME")]
    id_col: Option<String>,
    /// Parquet tables: the list-of-floats vector column (default: the only list column,
    /// else every float column in order).
    #[arg(long, value_name = "NAME")]
    vector_col: Option<String>,
    /// Items metadata CSV: item plus optional title, category and other columns.
    #[arg(long, value_name = "FILE")]
    items_meta: Option<PathBuf>,
    /// Model directory to write.
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// The global offset μ the vectors were fitted around (prediction = μ + u·v).
    #[arg(long, conflicts_with = "center", allow_hyphen_values = true)]
    mu: Option<f64>,
    /// Or: μ = mean of the training ratings (global) or 0 (none). One of --mu and --center
    /// is required: a wrong μ shifts every prediction.
    #[arg(long, value_enum)]
    center: Option<CenterArg>,
    /// Prior precision λ the vectors were fitted with (used for uncertainty and fold-in).
    #[arg(long, default_value_t = 1.0)]
    lambda: f64,
    /// Noise variance σ² the vectors were fitted with.
    #[arg(long, default_value_t = 1.0)]
    sigma2: f64,
    /// Output format of the summary printed after the import.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    format: Format,
    #[command(flatten)]
    input: RatingsArgs,
}

pub fn run(args: &ImportArgs) -> anyhow::Result<()> {
    if !(args.lambda.is_finite()
        && args.lambda >= 0.0
        && args.sigma2.is_finite()
        && args.sigma2 > 0.0)
    {
        return Err(UsageError("--lambda must be ≥ 0 and --sigma2 > 0".into()).into());
    }
    if args.mu.is_some_and(|mu| !mu.is_finite()) {
        return Err(UsageError("--mu must be a finite number".into()).into());
    }
    if args.mu.is_none() && args.center.is_none() {
        return Err(UsageError(
            "say which global offset μ the vectors were fitted around: --mu VALUE if you \
             know it, --center global if it was the mean of the training ratings, or \
             --center none if predictions are plain dot products (a wrong μ shifts every \
             prediction)"
                .into(),
        )
        .into());
    }
    let scale = args.input.scale()?;
    sextant::model::dir::check_target(&args.out)?;
    let columns = sextant::data::parquet::ParquetColumns {
        id: args.id_col.clone(),
        vector: args.vector_col.clone(),
    };
    let (users, users_input) = read_table(&args.users, "users", &columns)?;
    let (items, items_input) = read_table(&args.items, "items", &columns)?;
    if users.rank != items.rank {
        return Err(DataError::at_line(
            &args.items,
            1,
            format!(
                "the item table has {} factors but the user table ({}) has {}",
                items.rank,
                args.users.display(),
                users.rank
            ),
        )
        .into());
    }
    let split = inputs::has_column(&args.ratings, "split", args.input.delimiter()?)?
        .then(|| "split".to_owned());
    let options = args.input.options(scale.clone(), split, true)?;
    let (ratings, ratings_input) = inputs::load_ratings(
        &args.ratings,
        &options,
        users.ids.clone(),
        items.ids.clone(),
    )?;
    let scale =
        scale.unwrap_or_else(|| RatingScale::infer(ratings.entries.iter().map(|r| r.value)));
    let mut prints = vec![ratings_input, users_input, items_input];
    let meta = match &args.items_meta {
        Some(path) => {
            let (meta, print) = inputs::read_meta(path, &args.input, &ratings.items)?;
            prints.push(print);
            inputs::note_unknown_items(&meta, "without a vector");
            Some(meta)
        }
        None => None,
    };
    let center = match (args.mu, args.center) {
        (Some(_), _) => Center::Given,
        (None, c) => c.map_or(Center::None, Center::from),
    };
    let mu = match (args.mu, center) {
        (Some(mu), _) => mu,
        (None, Center::Global) => {
            let train: Vec<f64> = ratings
                .entries
                .iter()
                .filter(|r| !r.holdout)
                .map(|r| r.value)
                .collect();
            train.iter().sum::<f64>() / train.len().max(1) as f64
        }
        (None, Center::None | Center::Given) => 0.0,
    };
    let factors = FactorModel {
        rank: users.rank,
        mu,
        users: users.values,
        items: items.values,
    };
    let provenance = Provenance {
        scale,
        inputs: prints,
        meta,
    };
    let model = Model::from_import(
        ratings,
        factors,
        args.lambda,
        args.sigma2,
        center,
        provenance,
    )
    .with_context(|| {
        format!(
            "{}: no training ratings (every row is marked holdout)",
            args.ratings.display()
        )
    })
    .map_err(|e| UsageError(format!("{e:#}")))?;
    summary::save_and_print(&model, &args.out, false, args.format)
}

fn read_table(
    path: &std::path::Path,
    role: &str,
    columns: &sextant::data::parquet::ParquetColumns,
) -> Result<(sextant::data::FactorTable, sextant::model::manifest::Input), DataError> {
    let parquet = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("parquet"));
    // Parquet is read by seeking, so it must be a regular file: a device or pipe would be
    // streamed for its fingerprint without end (and a FIFO would block the open).
    if parquet && std::fs::metadata(path).is_ok_and(|m| !m.is_file()) {
        return Err(DataError::in_file(
            path,
            "is not a regular file; a Parquet table is read by seeking, so give a file",
        ));
    }
    let mut reader = inputs::open(path)?;
    let table = if parquet {
        // Fingerprint the bytes, then read the columns.
        std::io::copy(&mut reader, &mut std::io::sink()).map_err(|e| DataError::read(path, e))?;
        sextant::data::parquet::read_factor_parquet(path, columns)?
    } else {
        read_factor_table(&mut reader, path)?
    };
    Ok((table, inputs::input(role, path, &reader)))
}
