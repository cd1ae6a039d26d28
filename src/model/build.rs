//! Assembling a [`Model`] from a finished fit or from imported vectors.

use super::FactorModel;
use super::fit::{Center, FitOptions, FitResult};
use super::manifest::{Counts, FORMAT_TAG, Input, Manifest, Origin, RunOptions, version_for};
use super::store::{Model, default_files};
use crate::analysis::fit_metrics;
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
    let metrics = fit_metrics(&factors, &ratings, &provenance.scale)?;
    let manifest = Manifest {
        format: FORMAT_TAG.into(),
        version: version_for(factors.biases.is_some()),
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
        inputs: provenance.inputs,
        files: default_files(provenance.meta.is_some()),
    };
    Some(Model {
        manifest,
        ratings,
        factors,
        meta: provenance.meta,
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

    /// A model from vectors fitted elsewhere. `lambda` and `sigma2` describe the prior the
    /// vectors were fitted with (used for uncertainty and fold-in). Returns `None` if there
    /// are no training ratings.
    pub fn from_import(
        ratings: Ratings,
        factors: FactorModel,
        lambda: f64,
        sigma2: f64,
        center: Center,
        provenance: Provenance,
    ) -> Option<Self> {
        let record = Record {
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
