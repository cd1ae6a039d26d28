//! `sextant import`: a model directory from factor tables fitted elsewhere.

use std::path::{Path, PathBuf};

use anyhow::Context;
use clap::Args;
use sextant::data::{BiasColumn, read_factor_table_with};
use sextant::error::DataError;
use sextant::model::{Biases, Center, FactorModel, Model, Provenance};

use super::UsageError;
use super::args::{
    CatalogueArg, CenterArgs, FeedbackArgs, LambdaBiasArg, OutputArgs, PriorArgs, warn_if_spelled,
};
use super::inputs::{self, RatingsArgs};
use super::summary;

/// Build a model directory from user and item factor tables (id,f1,…,fD) and the ratings
/// they were fitted on. A `split` column (train/holdout) in the ratings is used when present;
/// otherwise every rating counts as training.
#[derive(Debug, Args)]
#[command(mut_arg("catalogue", |a| a.alias("items-meta")))]
#[command(mut_arg("lambda_bias", |a| a.requires("user_bias_col")))]
pub struct ImportArgs {
    /// Ratings CSV; every user and item in it must have a vector.
    #[arg(long, value_name = "FILE")]
    ratings: PathBuf,
    /// User factor table: CSV id,f1,…,fD, or Parquet (a file ending in .parquet).
    #[arg(long, value_name = "FILE", alias = "users")]
    user_vectors: PathBuf,
    /// Item factor table: CSV id,f1,…,fD, or Parquet (a file ending in .parquet).
    #[arg(long, value_name = "FILE", alias = "items")]
    item_vectors: PathBuf,
    /// Parquet tables: the id column (default: id, else the first text column).
    #[arg(long, value_name = "NAME")]
    id_col: Option<String>,
    /// Parquet tables: the list-of-floats vector column (default: the only list column,
    /// else every float column in order).
    #[arg(long, value_name = "NAME")]
    vector_col: Option<String>,
    /// The column of the user table holding each member's offset, for a model with biases
    /// (prediction = μ + b_member + c_item + u·v); needs --item-bias-col too.
    #[arg(long, value_name = "NAME", requires = "item_bias_col")]
    user_bias_col: Option<String>,
    /// The column of the item table holding each item's offset; needs --user-bias-col too.
    #[arg(long, value_name = "NAME", requires = "user_bias_col")]
    item_bias_col: Option<String>,
    /// Model directory to write.
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// The global offset μ the vectors were fitted around (prediction = μ + u·v).
    #[arg(long, conflicts_with = "center", allow_hyphen_values = true)]
    mu: Option<f64>,
    #[command(flatten)]
    center: CenterArgs,
    #[command(flatten)]
    prior: PriorArgs,
    #[command(flatten)]
    bias_prior: LambdaBiasArg,
    #[command(flatten)]
    feedback: FeedbackArgs,
    #[command(flatten)]
    catalogue: CatalogueArg,
    #[command(flatten)]
    input: RatingsArgs,
    #[command(flatten)]
    output: OutputArgs,
}

/// The three files an import reads besides the ratings, under their current spellings.
struct Tables<'a> {
    users: &'a Path,
    items: &'a Path,
    catalogue: Option<&'a Path>,
}

impl ImportArgs {
    /// The tables, with a warning for each given under its deprecated spelling.
    fn tables(&self) -> Tables<'_> {
        warn_if_spelled(&["--users"], "--user-vectors");
        warn_if_spelled(&["--items"], "--item-vectors");
        warn_if_spelled(&["--items-meta"], "--catalogue");
        Tables {
            users: &self.user_vectors,
            items: &self.item_vectors,
            catalogue: self.catalogue.catalogue.as_deref(),
        }
    }
}

pub fn run(args: &ImportArgs) -> anyhow::Result<()> {
    let (lambda, sigma2) = (args.prior.lambda, args.prior.noise.sigma2);
    if !(lambda.is_finite() && lambda >= 0.0 && sigma2.is_finite() && sigma2 > 0.0) {
        return Err(UsageError("--lambda must be ≥ 0 and --sigma2 > 0".into()).into());
    }
    let lambda_bias = args.bias_prior.or(lambda);
    if !(lambda_bias.is_finite() && lambda_bias >= 0.0) {
        return Err(UsageError(format!(
            "--lambda-bias must be a finite number ≥ 0, not {lambda_bias}"
        ))
        .into());
    }
    let implicit = args.feedback.implicit()?;
    if implicit.is_some() {
        // What vectors fitted to implicit feedback do not have.
        let refused = [
            ("--mu", args.mu.is_some()),
            ("--center", args.center.center.is_some()),
            ("--user-bias-col", args.user_bias_col.is_some()),
        ];
        if let Some((flag, _)) = refused.iter().find(|(_, given)| *given) {
            return Err(UsageError(format!(
                "{flag} is a setting of a model of ratings; vectors fitted to implicit feedback \
                 score preferences as plain dot products: leave it out, or drop --feedback implicit"
            ))
            .into());
        }
    }
    if args.mu.is_some_and(|mu| !mu.is_finite()) {
        return Err(UsageError("--mu must be a finite number".into()).into());
    }
    if implicit.is_none() && args.mu.is_none() && args.center.center.is_none() {
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
    let tables = args.tables();
    let (users, users_input) = read_table(
        tables.users,
        "users",
        &columns,
        bias("--user-bias-col", args.user_bias_col.as_deref()),
    )?;
    let (items, items_input) = read_table(
        tables.items,
        "items",
        &columns,
        bias("--item-bias-col", args.item_bias_col.as_deref()),
    )?;
    if users.rank != items.rank {
        return Err(DataError::at_line(
            tables.items,
            1,
            format!(
                "the item table has {} factors but the user table ({}) has {}",
                items.rank,
                tables.users.display(),
                users.rank
            ),
        )
        .into());
    }
    let split = inputs::has_column(&args.ratings, "split", args.input.delimiter()?)?
        .then(|| "split".to_owned());
    let options = args
        .input
        .options(scale.clone(), split, (true, implicit.is_some()))?;
    let (ratings, ratings_input) = inputs::load_ratings(
        &args.ratings,
        &options,
        users.ids.clone(),
        items.ids.clone(),
    )?;
    let scale = inputs::scale_of(scale, &ratings, &args.ratings, implicit.is_some());
    let mut prints = vec![ratings_input, users_input, items_input];
    let meta = match tables.catalogue {
        Some(path) => {
            let (meta, print) = inputs::read_meta(path, &args.input, &ratings.items)?;
            prints.push(print);
            inputs::note_unknown_items(&meta, "without a vector");
            Some(meta)
        }
        None => None,
    };
    let center = match (args.mu, args.center.center) {
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
    let biases = match (users.bias, items.bias) {
        (Some(user), Some(item)) => Some(Biases {
            user,
            item,
            lambda: lambda_bias,
        }),
        _ => None,
    };
    let factors = FactorModel {
        rank: users.rank,
        mu,
        users: users.values,
        items: items.values,
        biases,
    };
    let provenance = Provenance {
        scale,
        inputs: prints,
        meta,
    };
    let model = Model::from_import(
        ratings,
        factors,
        (lambda, sigma2),
        center,
        implicit,
        provenance,
    )
    .with_context(|| {
        format!(
            "{}: no training ratings (every row is marked holdout)",
            args.ratings.display()
        )
    })
    .map_err(|e| UsageError(format!("{e:#}")))?;
    summary::save_and_print(&model, &args.out, false, args.output.format)
}

/// The offsets column named by `flag`, when it was given.
fn bias<'a>(flag: &'a str, col: Option<&'a str>) -> BiasColumn<'a> {
    col.map_or(BiasColumn::Absent, |c| BiasColumn::Named(c, flag))
}

fn read_table(
    path: &std::path::Path,
    role: &str,
    columns: &sextant::data::parquet::ParquetColumns,
    bias: BiasColumn<'_>,
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
        sextant::data::parquet::read_factor_parquet(path, columns, bias)?
    } else {
        read_factor_table_with(&mut reader, path, bias)?
    };
    Ok((table, inputs::input(role, path, &reader)))
}
