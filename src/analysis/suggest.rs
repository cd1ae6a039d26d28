//! Suggestions: the items a member has not rated with the highest predicted rating, found
//! exactly through the inner-product index, each with its predictive uncertainty.

use super::explain::{Posterior, training_ratings};
use crate::index::InnerProductIndex;
use crate::model::Model;

/// One suggested item.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Suggestion {
    /// Position, from 1.
    pub rank: usize,
    /// The item.
    pub item: u32,
    /// Raw predicted rating `μ + u·v`.
    pub predicted: f64,
    /// Prediction rounded onto the rating scale.
    pub rounded: f64,
    /// Predictive standard deviation of the rating (see [`Posterior`]).
    pub predictive_sd: Option<f64>,
}

/// The top `n` items for `user` by predicted rating, leaving out items the member rated
/// (training or held out) unless `include_rated`.
pub fn suggest(
    model: &Model,
    index: &InnerProductIndex,
    user: u32,
    n: usize,
    include_rated: bool,
) -> Vec<Suggestion> {
    let entries = &model.ratings.entries;
    let start = entries.partition_point(|r| r.user < user);
    let rated: Vec<u32> = entries[start..]
        .iter()
        .take_while(|r| r.user == user)
        .map(|r| r.item)
        .collect();
    let excluded: &[u32] = if include_rated { &[] } else { &rated };
    let trained: Vec<u32> = training_ratings(model, user)
        .into_iter()
        .map(|(j, _)| j)
        .collect();
    top_unrated(
        model,
        index,
        model.factors.user(user),
        excluded,
        &trained,
        n,
    )
}

/// The top `n` items for member vector `vector` by predicted rating, leaving out the
/// sorted item list `excluded`; the predictive uncertainty comes from a member who rated
/// `rated`.
pub fn top_unrated(
    model: &Model,
    index: &InnerProductIndex,
    vector: &[f64],
    excluded: &[u32],
    rated: &[u32],
    n: usize,
) -> Vec<Suggestion> {
    let keep = |j: u32| excluded.binary_search(&j).is_err();
    let posterior = Posterior::for_items(model, rated.iter().copied());
    index
        .top(vector, n, keep, excluded.len())
        .into_iter()
        .enumerate()
        .map(|(k, scored)| {
            let predicted = model.factors.mu - scored.score;
            Suggestion {
                rank: k + 1,
                item: scored.row,
                predicted,
                rounded: model.manifest.scale.round(predicted),
                predictive_sd: posterior.predictive_sd(model.factors.item(scored.row)),
            }
        })
        .collect()
}
