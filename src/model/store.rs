//! The model format: what a model holds and how it is validated when loaded.
//!
//! A model holds `manifest.ron`, `users.csv`, `items.csv`, `ratings.csv`
//! (`user,item,rating,split`), `items-meta.csv` when metadata was given, and
//! `annotations.ron` once curators save notes. It is read from a [`ModelSource`]: one
//! locked generation of a model directory ([`super::dir::ModelDir`], which also writes
//! them) or the files compiled into the binary. Loading checks everything and names the
//! file, line and reason of the first problem.

use std::path::{Component, Path, PathBuf};

use super::FactorModel;
use super::manifest::{Counts, FORMAT_TAG, FORMAT_VERSION, Files, Manifest, value_column};
use crate::data::factors::BIAS;
use crate::data::ratings::{RatingColumns, RatingsOptions, read_ratings_with_ids};
use crate::data::{BiasColumn, ItemsMeta, Ratings, read_factor_table_with, read_items_meta};
use crate::error::DataError;

pub use super::dir::{
    ANNOTATIONS, ITEMS_META, MANIFEST, MAX_MANIFEST_BYTES, SaveError, save_model,
};

/// A complete model: manifest, ratings with their split, vectors and optional metadata.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// The manifest (options, trace, metrics, counts).
    pub manifest: Manifest,
    /// Ratings (ids in the same order as the vectors).
    pub ratings: Ratings,
    /// The vectors.
    pub factors: FactorModel,
    /// Items metadata, indexed like the items.
    pub meta: Option<ItemsMeta>,
    /// `YᵀY` of the item vectors, computed on first use (implicit-feedback solves).
    pub(super) item_gram: GramCache,
}

/// A computed-once `YᵀY`: a cache, so it never makes two models unequal.
#[derive(Debug, Clone, Default)]
pub struct GramCache(std::sync::OnceLock<Vec<f64>>);

impl PartialEq for GramCache {
    fn eq(&self, _: &Self) -> bool {
        true
    }
}

impl Model {
    /// The confidence rule of an implicit-feedback model (whose values are counts and whose
    /// predictions are preference scores); `None` for a model of ratings.
    pub fn implicit(&self) -> Option<super::implicit::Confidence> {
        self.manifest.implicit.as_ref().map(|i| i.confidence)
    }

    /// `YᵀY` of the item vectors (row-major `D × D`), computed once: what every
    /// implicit-feedback member solve starts from. The vectors must not change after the
    /// first call.
    pub fn item_gram(&self) -> &[f64] {
        self.item_gram
            .0
            .get_or_init(|| super::implicit::gram(&self.factors.items, self.factors.rank))
    }

    /// A prediction rounded onto the rating scale; `None` in an implicit-feedback model,
    /// whose scores are not ratings.
    pub fn round(&self, predicted: f64) -> Option<f64> {
        self.manifest
            .implicit
            .is_none()
            .then(|| self.manifest.scale.round(predicted))
    }
}

/// The manifest as RON text.
pub fn manifest_text(manifest: &Manifest) -> String {
    let config = ron::ser::PrettyConfig::new()
        .depth_limit(2)
        .struct_names(false);
    let mut text =
        ron::ser::to_string_pretty(manifest, config).expect("a manifest always serialises");
    text.push('\n');
    text
}

/// Where a model's files come from: a directory, or files embedded in the binary.
pub trait ModelSource {
    /// Reads one file of the model.
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError>;
    /// The path to show in messages for `name`.
    fn path(&self, name: &str) -> PathBuf;
    /// The size of a file in bytes, if it exists.
    fn size(&self, name: &str) -> Option<u64>;
    /// The [`crate::data::binary::checksum`] of a file, streamed (no copy in memory).
    fn checksum(&self, name: &str) -> Option<u64>;
}

/// Model files compiled into the binary (the bundled demo).
#[derive(Debug, Clone, Copy)]
pub struct EmbeddedSource {
    /// The label shown in messages, e.g. `<bundled demo>`.
    pub label: &'static str,
    /// (name, content) pairs.
    pub files: &'static [(&'static str, &'static [u8])],
}

impl ModelSource for EmbeddedSource {
    fn read(&self, name: &str) -> Result<Vec<u8>, DataError> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| bytes.to_vec())
            .ok_or_else(|| {
                DataError::read(
                    &self.path(name),
                    std::io::Error::from(std::io::ErrorKind::NotFound),
                )
            })
    }

    fn path(&self, name: &str) -> PathBuf {
        Path::new(self.label).join(name)
    }

    fn size(&self, name: &str) -> Option<u64> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| bytes.len() as u64)
    }

    fn checksum(&self, name: &str) -> Option<u64> {
        self.files
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, bytes)| crate::data::binary::checksum(bytes))
    }
}

/// Loads and validates a model from any source.
pub fn load_model_from(source: &dyn ModelSource) -> Result<Model, DataError> {
    let manifest_path = source.path(MANIFEST);
    // A manifest holds options, a trace and fingerprints: a few hundred kilobytes at most.
    if let Some(size) = source.size(MANIFEST)
        && size > MAX_MANIFEST_BYTES
    {
        return Err(DataError::in_file(
            &manifest_path,
            format!(
                "is {size} bytes; a manifest is at most {MAX_MANIFEST_BYTES} bytes, so this is not one"
            ),
        ));
    }
    let manifest = parse_manifest(&source.read(MANIFEST)?, &manifest_path)?;
    let files = &manifest.files;
    for name in [
        Some(&files.users),
        Some(&files.items),
        Some(&files.ratings),
        files.items_meta.as_ref(),
        files.users_bin.as_ref(),
        files.items_bin.as_ref(),
        files.ratings_bin.as_ref(),
    ]
    .into_iter()
    .flatten()
    {
        check_file_name(name, &manifest_path)?;
    }
    let shape = (manifest.rank, manifest.lambda_bias.is_some());
    let users = load_table(
        source,
        files.users_bin.as_deref(),
        &files.users,
        shape,
        manifest.counts.users,
        "users",
    )?;
    let items = load_table(
        source,
        files.items_bin.as_deref(),
        &files.items,
        shape,
        manifest.counts.items,
        "items",
    )?;
    let ratings_path = source.path(&files.ratings);
    let options = RatingsOptions {
        columns: RatingColumns {
            rating: value_column(manifest.implicit.is_some()).into(),
            split: Some("split".into()),
            ..RatingColumns::default()
        },
        known_ids_only: true,
        model_file: true,
        counts: manifest.implicit.is_some(),
        ..RatingsOptions::default()
    };
    let fast = files.ratings_bin.as_deref().and_then(|bin| {
        let csv_bytes = source.size(&files.ratings)?;
        let bytes = source.read(bin).ok()?;
        crate::data::binary::decode_ratings(
            &bytes,
            users.ids.clone(),
            items.ids.clone(),
            manifest.counts.ratings,
            csv_bytes,
            || source.checksum(&files.ratings),
        )
        .ok()
    });
    let ratings = if let Some(ratings) = fast {
        ratings
    } else {
        let bytes = source.read(&files.ratings)?;
        read_ratings_with_ids(
            bytes.as_slice(),
            &ratings_path,
            &options,
            users.ids.clone(),
            items.ids.clone(),
        )?
    };
    let found = Counts {
        users: ratings.users.len(),
        items: ratings.items.len(),
        ratings: ratings.entries.len(),
        train_ratings: ratings.train_count(),
        holdout_ratings: ratings.holdout_count(),
    };
    if found != manifest.counts {
        return Err(DataError::in_file(
            &manifest_path,
            format!(
                "counts do not match the files: the manifest says {:?}, the files hold {found:?}",
                manifest.counts
            ),
        ));
    }
    let meta = match &files.items_meta {
        Some(name) => {
            let path = source.path(name);
            let meta = read_items_meta(
                source.read(name)?.as_slice(),
                &path,
                &crate::data::meta::MetaColumns::default(),
                &ratings.items,
            )?;
            if let Some(id) = meta.unknown.first() {
                return Err(DataError::in_file(
                    &path,
                    format!("describes item '{id}', which the model does not have"),
                ));
            }
            Some(meta)
        }
        None => None,
    };
    let biases = match (manifest.lambda_bias, users.bias, items.bias) {
        (Some(lambda), Some(user), Some(item)) => Some(super::Biases { user, item, lambda }),
        _ => None,
    };
    let factors = FactorModel {
        rank: manifest.rank,
        mu: manifest.mu,
        users: users.values,
        items: items.values,
        biases,
    };
    Ok(Model {
        manifest,
        ratings,
        factors,
        meta,
        item_gram: GramCache::default(),
    })
}

/// The binary copy of a table when it exists and checks out; `None` sends the caller to
/// the CSV, which stays the source of truth.
fn fast_table(
    source: &dyn ModelSource,
    bin: Option<&str>,
    csv: &str,
    shape: (usize, bool),
    rows: usize,
) -> Option<crate::data::FactorTable> {
    let bin = bin?;
    let csv_bytes = source.size(csv)?;
    let bytes = source.read(bin).ok()?;
    crate::data::binary::decode(&bytes, shape, rows, csv_bytes, || source.checksum(csv)).ok()
}

/// A factor table from its binary twin when that checks out, else from the CSV. `shape` is
/// the rank and whether the model has biases (a `bias` column).
fn load_table(
    source: &dyn ModelSource,
    bin: Option<&str>,
    csv: &str,
    shape: (usize, bool),
    rows: usize,
    what: &str,
) -> Result<crate::data::FactorTable, DataError> {
    match fast_table(source, bin, csv, shape, rows) {
        Some(table) => Ok(table),
        None => read_table(source, csv, shape, rows, what),
    }
}

fn read_table(
    source: &dyn ModelSource,
    name: &str,
    (rank, biased): (usize, bool),
    expected: usize,
    what: &str,
) -> Result<crate::data::FactorTable, DataError> {
    let path = source.path(name);
    let column = if biased {
        BiasColumn::Named(
            BIAS,
            "the manifest records biases (lambda_bias), so each factor table needs a bias column after its id",
        )
    } else {
        BiasColumn::Absent
    };
    let table = read_factor_table_with(source.read(name)?.as_slice(), &path, column)?;
    if table.rank != rank {
        return Err(DataError::at_line(
            &path,
            1,
            format!(
                "the table has {} factor columns but the manifest says rank {rank}",
                table.rank
            ),
        ));
    }
    if table.ids.len() != expected {
        return Err(DataError::in_file(
            &path,
            format!(
                "the table has {} {what} but the manifest says {expected}",
                table.ids.len()
            ),
        ));
    }
    Ok(table)
}

fn check_file_name(name: &str, manifest: &Path) -> Result<(), DataError> {
    let path = Path::new(name);
    let plain = path.components().count() == 1
        && matches!(path.components().next(), Some(Component::Normal(_)));
    if plain && !name.is_empty() {
        Ok(())
    } else {
        Err(DataError::in_file(
            manifest,
            format!(
                "file name '{name}' would leave the model directory; only plain file names are allowed"
            ),
        ))
    }
}

/// Parses and checks `manifest.ron`.
pub fn parse_manifest(bytes: &[u8], path: &Path) -> Result<Manifest, DataError> {
    let text = std::str::from_utf8(bytes)
        .map_err(|_| DataError::in_file(path, "is not valid UTF-8 text"))?;
    let manifest: Manifest = ron::from_str(text).map_err(|e| {
        DataError::at_line(
            path,
            e.span.start.line as u64,
            format!("not a valid manifest: {}", e.code),
        )
    })?;
    let bad = |reason: String| Err(DataError::in_file(path, reason));
    if manifest.format != FORMAT_TAG {
        return bad(format!(
            "format '{}' is not '{FORMAT_TAG}'",
            manifest.format
        ));
    }
    if manifest.version == 0 || manifest.version > FORMAT_VERSION {
        return bad(format!(
            "format version {} is not supported by this sextant, which reads versions 1 to {FORMAT_VERSION}",
            manifest.version
        ));
    }
    if let Some(lambda_bias) = manifest.lambda_bias {
        if manifest.version < 2 {
            return bad(format!(
                "lambda_bias makes this a model with biases, which is format version 2, not {}",
                manifest.version
            ));
        }
        if !(lambda_bias.is_finite() && lambda_bias >= 0.0) {
            return bad(format!(
                "lambda_bias is {lambda_bias}, not a finite number ≥ 0"
            ));
        }
    }
    if let Err(why) = crate::limits::check_rank(manifest.rank) {
        return bad(format!("the rank {why}"));
    }
    let finite = [
        ("lambda", manifest.lambda),
        ("sigma2", manifest.sigma2),
        ("mu", manifest.mu),
    ];
    if let Some((name, value)) = finite.iter().find(|(_, v)| !v.is_finite()) {
        return bad(format!("{name} is {value}, not a finite number"));
    }
    if manifest.lambda < 0.0 || manifest.sigma2 <= 0.0 {
        return bad("lambda must be ≥ 0 and sigma2 > 0".into());
    }
    let scale_ok = match &manifest.scale {
        crate::data::RatingScale::Levels(levels) => {
            !levels.is_empty()
                && levels.iter().all(|v| v.is_finite())
                && levels.windows(2).all(|w| w[0] < w[1])
        }
        crate::data::RatingScale::Continuous { min, max } => {
            min.is_finite() && max.is_finite() && min <= max
        }
    };
    if !scale_ok {
        return bad("the rating scale is empty, unsorted or not finite".into());
    }
    let numbers_ok = manifest
        .trace
        .iter()
        .all(|r| r.log_joint.is_finite() && r.train_rmse.is_finite());
    if !numbers_ok {
        return bad("the trace holds values that are not finite numbers".into());
    }
    match &manifest.implicit {
        Some(implicit) => {
            if let Err(why) = check_implicit(&manifest, implicit) {
                return bad(why);
            }
        }
        None if manifest.metrics.is_none() => {
            return bad("a model of ratings needs its metrics, and this manifest has none".into());
        }
        None => {}
    }
    Ok(manifest)
}

/// The promises of an implicit-feedback manifest: version 3, no rating metrics, trace or
/// offsets, μ = 0, a valid confidence rule and finite figures.
fn check_implicit(
    manifest: &Manifest,
    implicit: &super::manifest::ImplicitFit,
) -> Result<(), String> {
    if manifest.version < 3 {
        return Err(format!(
            "an implicit-feedback model is format version 3, not {}",
            manifest.version
        ));
    }
    if manifest.metrics.is_some() || !manifest.trace.is_empty() {
        return Err("an implicit-feedback model has no rating metrics or likelihood trace".into());
    }
    if manifest.lambda_bias.is_some() {
        return Err("an implicit-feedback model has no offsets (lambda_bias)".into());
    }
    if manifest.mu != 0.0 {
        return Err(format!(
            "an implicit-feedback model has mu 0, not {}",
            manifest.mu
        ));
    }
    implicit
        .confidence
        .validate()
        .map_err(|e| format!("the confidence rule is not valid: {}", e.replace("--", "")))?;
    if !implicit.trace.iter().all(|r| r.loss.is_finite()) {
        return Err("the implicit trace holds values that are not finite numbers".into());
    }
    if let Some(p) = implicit.holdout_percentile_rank
        && !(0.0..=1.0).contains(&p)
    {
        return Err(format!(
            "holdout_percentile_rank is {p}, not a share between 0 and 1"
        ));
    }
    Ok(())
}

/// The default file set, with items metadata when `has_meta`.
pub fn default_files(has_meta: bool) -> Files {
    Files {
        items_meta: has_meta.then(|| ITEMS_META.to_owned()),
        ..Files::default()
    }
}
