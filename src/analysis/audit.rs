//! Everything an audit looks at, computed in one place so the report, the CSV files and
//! the explorer agree.

use super::coherence::{Categories, Coherence, coherence_sample};
use super::diagnostics::{Miss, NormReport, Side, Thin, low_support, norm_report, worst_fits};
use super::loadings::{FactorMeaning, factor_meanings};
use super::ranking::{RankingQuality, default_threshold, ranking_quality};
use crate::index::Metric;
use crate::model::Model;

/// What to compute and how much of it to list.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AuditOptions {
    /// Neighbours per item for coherence.
    pub neighbours: usize,
    /// Metric for coherence neighbours.
    pub metric: Metric,
    /// Length of every "worst" list.
    pub top: usize,
    /// Items shown at each end of a factor.
    pub ends: usize,
    /// Cut-off of the ranking metrics.
    pub k: usize,
    /// Relevance threshold of the ranking metrics (`None`: [`default_threshold`]).
    pub threshold: Option<f64>,
    /// Most items examined for coherence (an even sample of a larger catalogue).
    pub sample: usize,
}

impl Default for AuditOptions {
    fn default() -> Self {
        Self {
            neighbours: 10,
            metric: Metric::Cosine,
            top: 20,
            ends: 8,
            k: 10,
            threshold: None,
            sample: usize::MAX,
        }
    }
}

/// The results of an audit.
#[derive(Debug, Clone, PartialEq)]
pub struct Audit {
    /// The options used.
    pub options: AuditOptions,
    /// The items' categories.
    pub categories: Categories,
    /// Neighbour coherence (None without at least two categories).
    pub coherence: Option<Coherence>,
    /// Largest misses on training ratings (implicit feedback: the interactions scored
    /// lowest).
    pub worst_train: Vec<Miss>,
    /// Largest misses on held-out ratings (implicit feedback: interactions scored lowest).
    pub worst_holdout: Vec<Miss>,
    /// Members and items with fewer training ratings than the rank.
    pub low_support: Vec<Thin>,
    /// Vector lengths of members, then items.
    pub norms: Vec<NormReport>,
    /// Every factor's ends.
    pub meanings: Vec<FactorMeaning>,
    /// Ranking quality on held-out ratings (None without relevant held-out ratings).
    pub ranking: Option<RankingQuality>,
    /// The relevance threshold used.
    pub threshold: f64,
    /// An implicit-feedback model's expected percentile rank of the held-out interactions
    /// (None for a model of ratings, or without held-out interactions).
    pub percentile_rank: Option<f64>,
}

/// Runs every check of an audit on `model`. In an implicit-feedback model the misses are
/// the interactions scored lowest, every held-out interaction is relevant, and the
/// expected percentile rank is reported beside the ranking measures.
pub fn audit(model: &Model, options: AuditOptions) -> Audit {
    let categories = Categories::from_meta(model.meta.as_ref(), model.factors.item_count());
    let threshold = options
        .threshold
        .unwrap_or_else(|| default_threshold(model));
    let implicit = model.manifest.implicit.as_ref();
    Audit {
        coherence: coherence_sample(
            &model.factors,
            &categories,
            options.neighbours,
            options.metric,
            options.sample,
        ),
        worst_train: worst_fits(model, false, options.top),
        worst_holdout: worst_fits(model, true, options.top),
        low_support: low_support(model),
        norms: [Side::User, Side::Item]
            .into_iter()
            .filter_map(|s| norm_report(model, s))
            .collect(),
        meanings: factor_meanings(
            &model.factors.items,
            model.factors.rank,
            &categories,
            options.ends,
        ),
        ranking: ranking_quality(model, options.k, threshold),
        threshold,
        percentile_rank: implicit.and_then(|i| i.holdout_percentile_rank),
        categories,
        options,
    }
}
