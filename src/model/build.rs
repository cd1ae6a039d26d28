//! Assembling a [`Model`] from a finished fit or from imported vectors.

use super::FactorModel;
use super::fit::{Center, FitOptions, FitResult};
use super::implicit::{Confidence, ImplicitOptions, ImplicitResult};
use super::manifest::{
    Counts, FORMAT_TAG, ImplicitFit, Input, Manifest, Origin, RunOptions, version_for,
};
use super::store::{Model, default_files};
use crate::analysis::fit_metrics;
use crate::analysis::ranking::expected_percentile_rank;
use crate::data::{ItemsMeta, RatingScale, Ratings};

fn counts(ratings: &Ratings) -> Counts {
    Counts {
        users: ratings.users.len(),
        items: ratings.items.len(),
        ratings: ratings.entries.len(),
        train_ratings: ratings.train_count(),
        holdout_ratings: ratings.holdout_count(),
    }
}

/// Everything recorded about a model besides its vectors and ratings.
#[derive(Debug, Clone)]
pub struct Provenance {
    /// The rating scale.
    pub scale: RatingScale,
    /// Fingerprints of the input files.
    pub inputs: Vec<Input>,
    /// Items metadata, if given.
    pub meta: Option<ItemsMeta>,
}

/// What differs between a fitted and an imported model's manifest.
struct Record {
    implicit: Option<ImplicitFit>,
    origin: Origin,
    lambda: f64,
    sigma2: f64,
    center: Center,
    seed: u64,
    options: Option<RunOptions>,
    converged: bool,
    trace: Vec<crate::model::IterationRecord>,
}

fn assemble(
    ratings: Ratings,
    factors: FactorModel,
    record: Record,
    provenance: Provenance,
) -> Option<Model> {
    if ratings.train_count() == 0 {
        return None;
    }
    let mut implicit = record.implicit;
    let metrics = match &mut implicit {
        None => Some(fit_metrics(&factors, &ratings, &provenance.scale)?),
        Some(fit) => {
            fit.holdout_percentile_rank = expected_percentile_rank(&factors, &ratings);
            None
        }
    };
    let manifest = Manifest {
        format: FORMAT_TAG.into(),
        version: version_for(factors.biases.is_some(), implicit.is_some()),
        origin: record.origin,
        rank: factors.rank,
        lambda: record.lambda,
        lambda_bias: factors.biases.as_ref().map(|b| b.lambda),
        sigma2: record.sigma2,
        mu: factors.mu,
        center: record.center,
        scale: provenance.scale,
        counts: counts(&ratings),
        seed: record.seed,
        options: record.options,
        converged: record.converged,
        trace: record.trace,
        metrics,
        implicit,
        inputs: provenance.inputs,
        files: default_files(provenance.meta.is_some()),
    };
    Some(Model {
        manifest,
        ratings,
        factors,
        meta: provenance.meta,
        item_gram: super::store::GramCache::default(),
    })
}

impl Model {
    /// A model from a finished fit. Returns `None` if there are no training ratings.
    pub fn from_fit(
        ratings: Ratings,
        options: &FitOptions,
        run: RunOptions,
        result: FitResult,
        provenance: Provenance,
    ) -> Option<Self> {
        let record = Record {
            implicit: None,
            origin: Origin::Fit,
            lambda: options.lambda,
            sigma2: options.sigma2,
            center: options.center,
            seed: options.seed,
            options: Some(run),
            converged: result.converged,
            trace: result.trace,
        };
        assemble(ratings, result.factors, record, provenance)
    }

    /// A model from a finished implicit-feedback fit of the counts in `counts`. Returns
    /// `None` if there are no training interactions.
    pub fn from_implicit_fit(
        counts: Ratings,
        options: &ImplicitOptions,
        run: RunOptions,
        result: ImplicitResult,
        provenance: Provenance,
    ) -> Option<Self> {
        let record = Record {
            implicit: Some(ImplicitFit {
                confidence: options.confidence,
                trace: result.trace,
                holdout_percentile_rank: None,
            }),
            origin: Origin::Fit,
            lambda: options.lambda,
            sigma2: 1.0,
            center: Center::None,
            seed: options.seed,
            options: Some(run),
            converged: result.converged,
            trace: Vec::new(),
        };
        assemble(counts, result.factors, record, provenance)
    }

    /// A model from vectors fitted elsewhere. `lambda` and `sigma2` describe the prior the
    /// vectors were fitted with (used for uncertainty and fold-in); `implicit` is the
    /// confidence rule of vectors fitted to implicit feedback (the ratings then hold
    /// counts). Returns `None` if there are no training ratings.
    pub fn from_import(
        ratings: Ratings,
        factors: FactorModel,
        (lambda, sigma2): (f64, f64),
        center: Center,
        implicit: Option<Confidence>,
        provenance: Provenance,
    ) -> Option<Self> {
        let record = Record {
            implicit: implicit.map(|confidence| ImplicitFit {
                confidence,
                trace: Vec::new(),
                holdout_percentile_rank: None,
            }),
            origin: Origin::Import,
            lambda,
            sigma2,
            center,
            seed: 0,
            options: None,
            converged: false,
            trace: Vec::new(),
        };
        assemble(ratings, factors, record, provenance)
    }
}
