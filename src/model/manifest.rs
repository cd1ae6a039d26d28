//! The manifest of a model directory (`manifest.ron`): what the model is, how it was made,
//! how well it fits, and which files hold its tables.

use serde::{Deserialize, Serialize};

use super::fit::{Center, IterationRecord};
use super::implicit::{Confidence, ImplicitRecord};
use crate::analysis::FitMetrics;
use crate::data::{Duplicates, RatingScale};

/// The `format` tag every manifest carries.
pub const FORMAT_TAG: &str = "sextant-model";
/// The newest manifest version this build writes and reads: 3 for an implicit-feedback
/// model (counts, not ratings; an `implicit` record instead of rating metrics), 2 for a
/// model with biases (its factor tables carry a `bias` column), 1 for a plain model of
/// ratings (written so, byte for byte as before, so that older builds keep reading the
/// models they can and refuse the rest by version).
pub const FORMAT_VERSION: u32 = 3;

/// The version a model is written with.
pub fn version_for(biased: bool, implicit: bool) -> u32 {
    match (implicit, biased) {
        (true, _) => 3,
        (false, true) => 2,
        (false, false) => 1,
    }
}

/// The name of the value column of a model's `ratings.csv`: `rating`, or `count` in an
/// implicit-feedback model.
pub fn value_column(implicit: bool) -> &'static str {
    if implicit { "count" } else { "rating" }
}

/// What an implicit-feedback model records in place of rating metrics and the likelihood
/// trace.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ImplicitFit {
    /// How counts became confidences.
    pub confidence: Confidence,
    /// The loss after each iteration (empty for imported vectors).
    pub trace: Vec<ImplicitRecord>,
    /// Expected percentile rank of the held-out interactions (0 is perfect, 0.5 is a
    /// random ranking), when there are any.
    pub holdout_percentile_rank: Option<f64>,
}

/// How the vectors came to be.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Origin {
    /// Fitted by `sextant fit`.
    Fit,
    /// Read from factor tables fitted elsewhere (`sextant import`).
    Import,
}

/// Counts the loader checks against the files.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Counts {
    /// Rows of `users.csv`.
    pub users: usize,
    /// Rows of `items.csv`.
    pub items: usize,
    /// Rows of `ratings.csv`.
    pub ratings: usize,
    /// Ratings marked `train`.
    pub train_ratings: usize,
    /// Ratings marked `holdout`.
    pub holdout_ratings: usize,
}

/// Options of the run that produced the model (fits only).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RunOptions {
    /// Iteration limit.
    pub max_iters: usize,
    /// Convergence tolerance.
    pub tol: f64,
    /// Held-out fraction.
    pub holdout: f64,
    /// Duplicate policy used when reading the ratings.
    pub duplicates: Duplicates,
    /// Name of the initial item table, when one was given.
    pub init_items: Option<String>,
}

/// A fingerprint of one input file.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Input {
    /// What the file was (`ratings`, `items-meta`, `init-items`, `users`, `items`).
    pub role: String,
    /// The file's name (without its directory, which may move).
    pub name: String,
    /// Size in bytes.
    pub bytes: u64,
    /// FNV-1a 64 hash of the content, hex.
    pub fnv1a64: String,
}

/// Names of the files of a model directory, relative to it.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct Files {
    /// User factor table.
    pub users: String,
    /// Item factor table.
    pub items: String,
    /// Ratings with their split.
    pub ratings: String,
    /// Items metadata, when the model has some.
    pub items_meta: Option<String>,
    /// Binary copy of the user table (a cache for fast opening; see `data::binary`).
    #[serde(default)]
    pub users_bin: Option<String>,
    /// Binary copy of the item table.
    #[serde(default)]
    pub items_bin: Option<String>,
    /// Binary copy of the ratings.
    #[serde(default)]
    pub ratings_bin: Option<String>,
}

impl Default for Files {
    fn default() -> Self {
        Self {
            users: "users.csv".into(),
            items: "items.csv".into(),
            ratings: "ratings.csv".into(),
            items_meta: None,
            users_bin: Some("users.bin".into()),
            items_bin: Some("items.bin".into()),
            ratings_bin: Some("ratings.bin".into()),
        }
    }
}

/// Everything `manifest.ron` holds.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Manifest {
    /// Always [`FORMAT_TAG`].
    pub format: String,
    /// Format version, [`FORMAT_VERSION`].
    pub version: u32,
    /// Fitted here or imported.
    pub origin: Origin,
    /// Rank D.
    pub rank: usize,
    /// Prior precision λ.
    pub lambda: f64,
    /// Prior precision λ_b of the member and item offsets, for a model with biases (whose
    /// factor tables then carry a `bias` column); absent otherwise.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lambda_bias: Option<f64>,
    /// Noise variance σ².
    pub sigma2: f64,
    /// Global offset μ.
    pub mu: f64,
    /// How μ was chosen.
    pub center: Center,
    /// The rating scale.
    pub scale: RatingScale,
    /// Row counts.
    pub counts: Counts,
    /// Seed of the initialisation and split.
    pub seed: u64,
    /// Options of the fit (None for imports).
    pub options: Option<RunOptions>,
    /// Whether the fit reached its tolerance.
    pub converged: bool,
    /// Per-iteration trace (empty for an implicit-feedback model, whose loss is in
    /// `implicit`).
    pub trace: Vec<IterationRecord>,
    /// Accuracy and support of a model of ratings; absent in an implicit-feedback model,
    /// whose scores are not ratings.
    #[serde(default, skip_serializing_if = "Option::is_none", with = "present")]
    pub metrics: Option<FitMetrics>,
    /// The record of an implicit-feedback model (format version 3); absent for a model of
    /// ratings.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub implicit: Option<ImplicitFit>,
    /// Fingerprints of the inputs.
    pub inputs: Vec<Input>,
    /// The table files.
    pub files: Files,
}

/// An optional field written as its value when present and left out when absent (instead
/// of RON's `Some(…)`), so that the manifests of models of ratings keep their bytes.
mod present {
    use serde::{Deserialize, Deserializer, Serialize, Serializer};

    #[expect(clippy::ref_option, reason = "the signature serde's `with` expects")]
    pub fn serialize<T: Serialize, S: Serializer>(
        value: &Option<T>,
        serializer: S,
    ) -> Result<S::Ok, S::Error> {
        match value {
            Some(v) => v.serialize(serializer),
            None => serializer.serialize_none(),
        }
    }

    pub fn deserialize<'de, T: Deserialize<'de>, D: Deserializer<'de>>(
        deserializer: D,
    ) -> Result<Option<T>, D::Error> {
        T::deserialize(deserializer).map(Some)
    }
}
