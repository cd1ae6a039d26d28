//! Error metrics of predictions against actual ratings: RMSE and MAE, raw and rounded onto
//! the rating scale, and the exact-match rate of rounded predictions (Herlocker et al.,
//! ACM TOIS 22(1), 2004).

use serde::{Deserialize, Serialize};

use crate::data::{RatingScale, Ratings};
use crate::model::FactorModel;

/// Accuracy of a set of predictions.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ErrorMetrics {
    /// Number of (actual, predicted) pairs.
    pub count: usize,
    /// Root mean squared error of the raw predictions.
    pub rmse: f64,
    /// Mean absolute error of the raw predictions.
    pub mae: f64,
    /// RMSE after rounding predictions onto the scale.
    pub rmse_rounded: f64,
    /// MAE after rounding predictions onto the scale.
    pub mae_rounded: f64,
    /// Share of rounded predictions equal to the actual rating.
    pub exact_rate: f64,
}

/// Metrics over `(actual, predicted)` pairs; `None` when there are none.
pub fn error_metrics(
    pairs: impl IntoIterator<Item = (f64, f64)>,
    scale: &RatingScale,
) -> Option<ErrorMetrics> {
    let (mut count, mut se, mut ae, mut se_r, mut ae_r, mut exact) =
        (0usize, 0.0, 0.0, 0.0, 0.0, 0usize);
    for (actual, predicted) in pairs {
        let rounded = scale.round(predicted);
        count += 1;
        se += (actual - predicted).powi(2);
        ae += (actual - predicted).abs();
        se_r += (actual - rounded).powi(2);
        ae_r += (actual - rounded).abs();
        exact += usize::from((actual - rounded).abs() <= 1e-9);
    }
    (count > 0).then(|| {
        let n = count as f64;
        ErrorMetrics {
            count,
            rmse: (se / n).sqrt(),
            mae: ae / n,
            rmse_rounded: (se_r / n).sqrt(),
            mae_rounded: ae_r / n,
            exact_rate: exact as f64 / n,
        }
    })
}

/// Train and held-out metrics of a model on its ratings, plus low-support counts.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitMetrics {
    /// Metrics on the training ratings.
    pub train: ErrorMetrics,
    /// Metrics on the held-out ratings, when there are any.
    pub holdout: Option<ErrorMetrics>,
    /// Users with fewer training ratings than the rank (their vectors are prior-dominated).
    pub low_support_users: usize,
    /// Items with fewer training ratings than the rank.
    pub low_support_items: usize,
}

/// Computes [`FitMetrics`] for `model` on `ratings`. `None` if there are no training ratings.
pub fn fit_metrics(
    model: &FactorModel,
    ratings: &Ratings,
    scale: &RatingScale,
) -> Option<FitMetrics> {
    let pairs = |holdout: bool| {
        ratings
            .entries
            .iter()
            .filter(move |r| r.holdout == holdout)
            .map(|r| (r.value, model.predict(r.user, r.item)))
    };
    let (users, items) = ratings.train_support();
    let low = |counts: &[u32]| {
        counts
            .iter()
            .filter(|&&c| (c as usize) < model.rank)
            .count()
    };
    Some(FitMetrics {
        train: error_metrics(pairs(false), scale)?,
        holdout: error_metrics(pairs(true), scale),
        low_support_users: low(&users),
        low_support_items: low(&items),
    })
}

/// Counts of training residuals `actual − predicted` in `bins` equal bins over
/// `[-limit, limit]`; residuals outside go to the end bins. Returns (bin centre, count).
/// With `preferences` (implicit feedback) the residuals are those of the training
/// interactions' preference 1: `1 − score`.
pub fn residual_histogram(
    model: &FactorModel,
    ratings: &Ratings,
    preferences: bool,
    (bins, limit): (usize, f64),
) -> Vec<(f64, u64)> {
    let bins = bins.max(1);
    let width = 2.0 * limit / bins as f64;
    let mut counts = vec![0u64; bins];
    for r in ratings
        .entries
        .iter()
        .filter(|r| !r.holdout && (!preferences || r.value > 0.0))
    {
        let actual = if preferences { 1.0 } else { r.value };
        let residual = actual - model.predict(r.user, r.item);
        let at = ((residual + limit) / width)
            .floor()
            .clamp(0.0, (bins - 1) as f64) as usize;
        counts[at] += 1;
    }
    counts
        .into_iter()
        .enumerate()
        .map(|(k, c)| (-limit + (k as f64 + 0.5) * width, c))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn worked_example_from_references() {
        // REFERENCES.md "Metrics", checked with numpy: y = [4,3,5,2,1],
        // ŷ = [3.4,3.6,4.4,2.6,1.4] → RMSE 0.565685424949238, MAE 0.56,
        // rounded RMSE 0.894427190999916.
        let scale = RatingScale::Levels(vec![1.0, 2.0, 3.0, 4.0, 5.0]);
        let pairs = [(4.0, 3.4), (3.0, 3.6), (5.0, 4.4), (2.0, 2.6), (1.0, 1.4)];
        let m = error_metrics(pairs, &scale).unwrap();
        assert!((m.rmse - 0.565_685_424_949_238).abs() < 1e-12);
        assert!((m.mae - 0.56).abs() < 1e-12);
        assert!((m.rmse_rounded - 0.894_427_190_999_916).abs() < 1e-12);
        assert!((m.exact_rate - 0.2).abs() < 1e-12);
    }

    #[test]
    fn clamping_never_increases_error() {
        // REFERENCES.md: clipping predictions to the scale never increases any error.
        let scale = RatingScale::Continuous { min: 1.0, max: 5.0 };
        let mut rng = crate::rng::Rng::new(11);
        for _ in 0..2000 {
            let actual = 1.0 + 4.0 * rng.uniform();
            let predicted = 8.0 * rng.normal();
            let raw = (actual - predicted).abs();
            let clamped = (actual - scale.round(predicted)).abs();
            assert!(clamped <= raw + 1e-15);
        }
    }

    #[test]
    fn empty_gives_none() {
        assert!(error_metrics([], &RatingScale::Continuous { min: 0.0, max: 1.0 }).is_none());
    }
}
