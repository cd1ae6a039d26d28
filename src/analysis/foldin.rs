//! What-if profiles: a member vector for any set of ratings, computed as one user step
//! against the fixed item vectors, and the suggestions and explanations that follow.
//!
//! Folding in is exactly the fitter's user update: `u = (λσ² I + Σ_j v_j v_jᵀ)⁻¹ Σ_j (r_j −
//! μ) v_j` over the profile's rated items (Hoerl & Kennard 1970), solved by the same
//! Cholesky code, so folding in a fitted member's training ratings reproduces the vector
//! the fit's last user step gave them. In a model with biases the step solves the
//! profile's vector and offset `(u, b)` jointly, against targets `r_j − μ − c_j`. In a
//! model of implicit feedback it is the fitter's weighted member step over the profile's
//! counts.

use super::explain::Profile;
use super::suggest::{Suggestion, top_unrated};
use crate::index::InnerProductIndex;
use crate::model::{Model, RidgeWorkspace};

/// Why a profile has no vector.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum FoldInError {
    /// Without the prior (λ = 0) the profile needs as many independent ratings as the rank.
    #[error(
        "the model has λ = 0, so a profile needs at least {rank} ratings of items whose vectors are independent; it has {ratings}"
    )]
    Underdetermined {
        /// Ratings in the profile.
        ratings: usize,
        /// The model's rank.
        rank: usize,
    },
}

/// A profile folded in: its member vector and, in a model with biases, its offset.
#[derive(Debug, Clone, PartialEq)]
pub struct Folded {
    /// The member vector `u`.
    pub vector: Vec<f64>,
    /// The member offset `b` (0 in a model without biases).
    pub bias: f64,
}

impl Folded {
    /// The profile of these ratings.
    pub fn profile<'a>(&'a self, rated: &'a [(u32, f64)]) -> Profile<'a> {
        Profile {
            vector: &self.vector,
            bias: self.bias,
            rated,
        }
    }
}

/// The member vector (and offset) of a profile (pairs of item and rating; the order does
/// not matter). An empty profile gives the zero vector when λ > 0 (everything predicted at
/// μ, plus the item's offset).
pub fn fold_in(model: &Model, rated: &[(u32, f64)]) -> Result<Folded, FoldInError> {
    let m = &model.manifest;
    let f = &model.factors;
    if let Some(confidence) = model.implicit() {
        let vector = implicit_step(
            (&f.items, model.item_gram()),
            f.rank,
            (m.lambda, confidence),
            rated,
        )?;
        return Ok(Folded { vector, bias: 0.0 });
    }
    let ridge = m.lambda * m.sigma2;
    match &f.biases {
        None => {
            let vector = fold_in_vectors(&f.items, f.rank, f.mu, ridge, rated)?;
            Ok(Folded { vector, bias: 0.0 })
        }
        Some(biases) => fold_in_with_offsets(
            (&f.items, &biases.item),
            f.rank,
            f.mu,
            (ridge, biases.lambda * m.sigma2),
            rated,
        ),
    }
}

/// [`fold_in`] for a model with biases, on bare item vectors (row-major, width `d`) and
/// item offsets, offset `mu` and ridge terms `(λσ², λ_bσ²)`: the profile's `(u, b)` is one
/// ridge regression on features `[v_j, 1]` against targets `r_j − μ − c_j`.
pub fn fold_in_with_offsets(
    (items, item_offsets): (&[f64], &[f64]),
    d: usize,
    mu: f64,
    (ridge, offset_ridge): (f64, f64),
    rated: &[(u32, f64)],
) -> Result<Folded, FoldInError> {
    let mut sorted = rated.to_vec();
    sorted.sort_by_key(|&(j, _)| j);
    let rows: Vec<u32> = sorted.iter().map(|&(j, _)| j).collect();
    // The solver takes the item offsets off these targets, as in the fit.
    let targets: Vec<f64> = sorted.iter().map(|&(_, r)| r - mu).collect();
    let mut vector = vec![0.0; d];
    let mut bias = [0.0];
    let ok = RidgeWorkspace::new(d).solve_batch_with_offsets(
        items,
        item_offsets,
        &[(&rows, &targets)],
        ridge,
        offset_ridge,
        &mut vector,
        &mut bias,
    );
    if !ok[0] {
        return Err(FoldInError::Underdetermined {
            ratings: rated.len(),
            rank: d,
        });
    }
    Ok(Folded {
        vector,
        bias: bias[0],
    })
}

/// [`fold_in`] on bare item vectors (row-major, width `d`), offset `mu` and ridge term
/// `λσ²`.
pub fn fold_in_vectors(
    items: &[f64],
    d: usize,
    mu: f64,
    ridge: f64,
    rated: &[(u32, f64)],
) -> Result<Vec<f64>, FoldInError> {
    let mut sorted = rated.to_vec();
    sorted.sort_by_key(|&(j, _)| j);
    let rows: Vec<u32> = sorted.iter().map(|&(j, _)| j).collect();
    let targets: Vec<f64> = sorted.iter().map(|&(_, r)| r - mu).collect();
    let mut vector = vec![0.0; d];
    RidgeWorkspace::new(d)
        .solve(items, &rows, &targets, ridge, &mut vector)
        .map_err(|_| FoldInError::Underdetermined {
            ratings: rated.len(),
            rank: d,
        })?;
    Ok(vector)
}

/// [`fold_in`] for a model of implicit feedback, on bare item vectors (row-major, width
/// `d`) and their `YᵀY` (row-major `d × d`), λ and the confidence rule:
/// `x = (YᵀY + λI + Σ_j (c_j − 1) y_j y_jᵀ)⁻¹ Σ_j c_j y_j` over the profile's (item,
/// count) pairs, by the fitter's own solver (a count of 0 is no interaction).
fn implicit_step(
    (items, gram): (&[f64], &[f64]),
    d: usize,
    (lambda, confidence): (f64, crate::model::implicit::Confidence),
    rated: &[(u32, f64)],
) -> Result<Vec<f64>, FoldInError> {
    let mut sorted: Vec<(u32, f64)> = rated.iter().copied().filter(|&(_, c)| c > 0.0).collect();
    sorted.sort_by_key(|&(j, _)| j);
    let rows: Vec<u32> = sorted.iter().map(|&(j, _)| j).collect();
    let confidences: Vec<f64> = sorted.iter().map(|&(_, c)| confidence.of(c)).collect();
    let mut base = gram.to_vec();
    for k in 0..d {
        base[k * d + k] += lambda;
    }
    let mut vector = vec![0.0; d];
    let (scales, scaled) = crate::model::solve::confidence_weights(&confidences);
    let ok = RidgeWorkspace::new(d).solve_batch_weighted(
        items,
        &[(&rows, &confidences, (&scales, &scaled))],
        &base,
        lambda == 0.0,
        &mut vector,
    );
    if !ok[0] {
        return Err(FoldInError::Underdetermined {
            ratings: rated.len(),
            rank: d,
        });
    }
    Ok(vector)
}

/// The top `n` items for a profile by predicted rating, leaving out the items it rated,
/// each with its predictive standard deviation.
pub fn suggest_profile(
    model: &Model,
    index: &InnerProductIndex,
    profile: &Profile<'_>,
    n: usize,
) -> Vec<Suggestion> {
    let mut excluded: Vec<u32> = profile.rated.iter().map(|&(j, _)| j).collect();
    excluded.sort_unstable();
    excluded.dedup();
    top_unrated(model, index, profile, &excluded, n)
}
