//! Suggestions: the items a member has not rated with the highest predicted rating, found
//! exactly through the inner-product index, each with its predictive uncertainty.

use super::explain::{Posterior, Profile, training_ratings};
use crate::index::InnerProductIndex;
use crate::model::Model;

/// One suggested item.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Suggestion {
    /// Position, from 1.
    pub rank: usize,
    /// The item.
    pub item: u32,
    /// Raw predicted rating `μ + b_i + c_j + u·v` (no offsets without biases).
    pub predicted: f64,
    /// Prediction rounded onto the rating scale (`None` for implicit feedback, whose
    /// predictions are scores).
    pub rounded: Option<f64>,
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
    let trained = training_ratings(model, user);
    let profile = Profile {
        vector: model.factors.user(user),
        bias: model.factors.user_bias(user),
        rated: &trained,
    };
    top_unrated(model, index, &profile, excluded, n)
}

/// The index for exact top-N by predicted rating over a model's items: on the item vectors,
/// or with biases on `[v_j, c_j]` (see [`crate::model::FactorModel::ranking_rows`]).
pub fn ranking_index(model: &Model) -> InnerProductIndex {
    let (rows, width) = model.factors.ranking_rows();
    InnerProductIndex::build(&rows, width, crate::index::Path::Auto)
}

/// The top `n` items for a profile by predicted rating, leaving out the sorted item list
/// `excluded`; the predictive uncertainty comes from the profile's rated items. `index` is
/// [`ranking_index`] of the model.
pub fn top_unrated(
    model: &Model,
    index: &InnerProductIndex,
    profile: &Profile<'_>,
    excluded: &[u32],
    n: usize,
) -> Vec<Suggestion> {
    let keep = |j: u32| excluded.binary_search(&j).is_err();
    let posterior = Posterior::for_profile(model, profile.rated);
    let f = &model.factors;
    index
        .top(&f.ranking_query(profile.vector), n, keep, excluded.len())
        .into_iter()
        .enumerate()
        .map(|(k, scored)| {
            let predicted = if f.biases.is_some() {
                f.predict_for(profile.vector, profile.bias, scored.row)
            } else {
                f.mu - scored.score
            };
            Suggestion {
                rank: k + 1,
                item: scored.row,
                predicted,
                rounded: model.round(predicted),
                predictive_sd: posterior.predictive_sd(model.factors.item(scored.row)),
            }
        })
        .collect()
}
