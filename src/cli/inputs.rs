//! Options shared by the commands that read a ratings CSV, and loading with fingerprints.

use std::fs::File;
use std::io::Read;
use std::path::Path;

use clap::{Args, ValueEnum};
use sextant::data::fingerprint::HashingReader;
use sextant::data::meta::MetaColumns;
use sextant::data::ratings::{Delimiter, RatingColumns, read_ratings_with_ids};
use sextant::data::{
    Duplicates, IdMap, ItemsMeta, RatingScale, Ratings, RatingsOptions, read_items_meta,
};
use sextant::error::DataError;
use sextant::model::manifest::Input;

use super::UsageError;

/// What to do with repeated (user, item) pairs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DuplicatePolicy {
    /// Refuse the file, naming both lines.
    Error,
    /// Keep the rating that comes last.
    Last,
    /// Keep the mean of the ratings.
    Mean,
}

impl From<DuplicatePolicy> for Duplicates {
    fn from(p: DuplicatePolicy) -> Self {
        match p {
            DuplicatePolicy::Error => Self::Error,
            DuplicatePolicy::Last => Self::Last,
            DuplicatePolicy::Mean => Self::Mean,
        }
    }
}

/// How to read the input CSVs: the ratings and the items metadata.
#[derive(Debug, Clone, Args)]
#[command(next_help_heading = "Reading the CSV files")]
pub struct RatingsArgs {
    /// The field separator of the input CSVs: , ; | or tab. Read off each file's header
    /// line when absent.
    #[arg(long, value_name = "SEP")]
    pub delimiter: Option<String>,
    /// Name of the column holding user ids.
    #[arg(long, value_name = "NAME", default_value = "user")]
    pub user_col: String,
    /// Name of the column holding item ids (also tried in the catalogue).
    #[arg(long, value_name = "NAME", default_value = "item")]
    pub item_col: String,
    /// Name of the column holding ratings (default: rating; count with --feedback
    /// implicit).
    #[arg(long, value_name = "NAME")]
    pub rating_col: Option<String>,
    /// The rating scale, MIN:MAX:STEP (STEP 0 for continuous); ratings off it are refused.
    /// Inferred from the data when absent.
    #[arg(long, value_name = "MIN:MAX:STEP")]
    pub scale: Option<String>,
    /// What to do when a (user, item) pair is rated more than once.
    #[arg(long, value_enum, default_value_t = DuplicatePolicy::Error)]
    pub duplicates: DuplicatePolicy,
    /// Catalogue: the column holding item ids, when it is not named like the
    /// ratings' item column (id, item and item_id are also tried).
    #[arg(long, value_name = "NAME")]
    pub meta_id_col: Option<String>,
    /// Catalogue: the column holding titles (else the first of title, name,
    /// item_name, product_name, display_name, label, headline, in any case).
    #[arg(long, value_name = "NAME")]
    pub title_col: Option<String>,
    /// Catalogue: the column holding categories (else the first of category, genre,
    /// section, department, group, class, type, in any case).
    #[arg(long, value_name = "NAME")]
    pub category_col: Option<String>,
}

impl RatingsArgs {
    /// The scale given with --scale, if any.
    pub fn scale(&self) -> Result<Option<RatingScale>, UsageError> {
        self.scale
            .as_deref()
            .map(RatingScale::parse)
            .transpose()
            .map_err(|e| UsageError(format!("--scale: {e}")))
    }

    /// The separator given with --delimiter (else read off each file).
    pub fn delimiter(&self) -> Result<Delimiter, UsageError> {
        self.delimiter.as_deref().map_or(Ok(Delimiter::Auto), |d| {
            Delimiter::parse(d).map_err(|e| UsageError(format!("--delimiter: {e}")))
        })
    }

    /// Where the items metadata keeps what.
    pub fn meta_columns(&self) -> Result<MetaColumns, UsageError> {
        Ok(MetaColumns {
            id: self.meta_id_col.clone(),
            ratings_item: self.item_col.clone(),
            title: self.title_col.clone(),
            category: self.category_col.clone(),
            delimiter: self.delimiter()?,
        })
    }

    /// Reader options for these arguments; `counts` for implicit feedback (the value
    /// column is then `count` unless renamed, and its values must be ≥ 0).
    pub fn options(
        &self,
        scale: Option<RatingScale>,
        split: Option<String>,
        (known_ids_only, counts): (bool, bool),
    ) -> Result<RatingsOptions, UsageError> {
        if counts && scale.is_some() {
            return Err(UsageError(
                "--scale is a setting of ratings; implicit feedback reads counts, which have no scale"
                    .into(),
            ));
        }
        let value = self
            .rating_col
            .clone()
            .unwrap_or_else(|| sextant::model::manifest::value_column(counts).to_owned());
        Ok(RatingsOptions {
            columns: RatingColumns {
                user: self.user_col.clone(),
                item: self.item_col.clone(),
                rating: value,
                split,
            },
            counts,
            delimiter: self.delimiter()?,
            scale,
            duplicates: self.duplicates.into(),
            known_ids_only,
            // Files named on the command line: their columns are renamed with flags.
            model_file: false,
        })
    }
}

/// Reads the items metadata at `path` for the items of `ratings` with fingerprint, and
/// warns once when it has no title column.
pub fn read_meta(
    path: &Path,
    args: &RatingsArgs,
    items: &IdMap,
) -> anyhow::Result<(ItemsMeta, Input)> {
    let mut reader = open(path)?;
    let meta = read_items_meta(&mut reader, path, &args.meta_columns()?, items)?;
    std::io::copy(&mut reader, &mut std::io::sink()).map_err(|e| DataError::read(path, e))?;
    if let Some(columns) = &meta.untitled {
        eprintln!(
            "warning: {}: no title column among {}; items will show by id. Name it with --title-col",
            path.display(),
            sextant::text::escaped(&columns.join(", "))
        );
    }
    Ok((meta, input("items-meta", path, &reader)))
}

/// The rating scale: the one given with --scale, else inferred from the ratings at `path`,
/// with a warning when they use fewer than three values (a small or filtered file can hide
/// the real scale, and every rounded prediction is clamped to the inferred one).
///
/// The counts of implicit feedback have no scale: theirs records the values seen, with no
/// warning (counts of 1 alone are common).
pub fn scale_of(
    given: Option<RatingScale>,
    ratings: &Ratings,
    path: &Path,
    counts: bool,
) -> RatingScale {
    if let Some(scale) = given {
        return scale;
    }
    let scale = RatingScale::infer(ratings.entries.iter().map(|r| r.value));
    if let RatingScale::Levels(levels) = &scale
        && levels.len() < 3
        && !counts
    {
        eprintln!(
            "warning: {}: the ratings use only {} value(s) ({}), so the rating scale is taken to \
             be just that; if it is wider, give it with --scale MIN:MAX:STEP (for example \
             --scale 1:5:1)",
            path.display(),
            levels.len(),
            scale.describe()
        );
    }
    scale
}

/// Opens `path` for reading through a fingerprinting reader.
pub fn open(path: &Path) -> Result<HashingReader<File>, DataError> {
    let file = File::open(path).map_err(|e| DataError::read(path, e))?;
    if file.metadata().is_ok_and(|m| m.is_dir()) {
        return Err(DataError::in_file(path, "is a directory, not a file"));
    }
    Ok(HashingReader::new(file))
}

/// The fingerprint record of a file read through `reader`.
pub fn input<R: Read>(role: &str, path: &Path, reader: &HashingReader<R>) -> Input {
    let (bytes, fnv1a64) = reader.summary();
    let name = path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    );
    Input {
        role: role.into(),
        name,
        bytes,
        fnv1a64,
    }
}

/// Loads a ratings CSV with fingerprint; ids may be restricted to pre-filled maps.
pub fn load_ratings(
    path: &Path,
    options: &RatingsOptions,
    users: IdMap,
    items: IdMap,
) -> anyhow::Result<(Ratings, Input)> {
    let mut reader = open(path)?;
    let ratings = read_ratings_with_ids(&mut reader, path, options, users, items)?;
    // Hash whatever the CSV reader left unread (nothing, normally) so the print is complete.
    std::io::copy(&mut reader, &mut std::io::sink()).map_err(|e| DataError::read(path, e))?;
    let input = input("ratings", path, &reader);
    Ok((ratings, input))
}

/// True when the CSV at `path` has a header column named `name` (any case).
pub fn has_column(path: &Path, name: &str, delimiter: Delimiter) -> Result<bool, DataError> {
    let header = sextant::data::ratings::read_csv_header(open(path)?, path, delimiter)?;
    Ok(header.iter().any(|h| h.eq_ignore_ascii_case(name)))
}

/// Tells the user (stderr) which described items are not in the model.
pub fn note_unknown_items(meta: &sextant::data::ItemsMeta, why: &str) {
    if !meta.unknown.is_empty() {
        eprintln!(
            "note: the items metadata describes {} item(s) {why}; they are left out{}",
            meta.unknown.len(),
            sextant::data::ids::first_few(meta.unknown.iter().map(String::as_str), 5)
        );
    }
}
