//! Ranking quality on held-out ratings: precision@k, recall@k and NDCG@k; and, for
//! implicit feedback, the expected percentile rank of held-out interactions.
//!
//! Protocol (one of several in use; Herlocker et al., ACM TOIS 22(1), 2004, survey them):
//! for every member with at least one *relevant* held-out rating (value ≥ a threshold),
//! every item the member did not rate in training is a candidate; candidates are ranked by
//! predicted rating and the top k compared with the relevant held-out items. NDCG uses
//! binary relevance with the linear gain `Σ relᵢ / log₂(i + 1)` (Järvelin & Kekäläinen,
//! ACM TOIS 20(4), 2002), normalised by the ideal ordering; with 0/1 relevance the
//! exponential-gain variant gives the same value. A random ranking's expected values are
//! reported beside each figure, exactly (by linearity of expectation).

use rayon::prelude::*;

use crate::model::Model;

/// Precision@k of a ranked list of hit flags: hits in the first k over k.
pub fn precision_at(hits: &[bool], k: usize) -> f64 {
    if k == 0 {
        return 0.0;
    }
    hits.iter().take(k).filter(|&&h| h).count() as f64 / k as f64
}

/// Recall@k: hits in the first k over all relevant items.
pub fn recall_at(hits: &[bool], relevant: usize, k: usize) -> f64 {
    if relevant == 0 {
        return 0.0;
    }
    hits.iter().take(k).filter(|&&h| h).count() as f64 / relevant as f64
}

/// Discounted cumulative gain of the first k gains, linear gain: `Σ gᵢ / log₂(i + 1)`.
pub fn dcg_at(gains: &[f64], k: usize) -> f64 {
    gains
        .iter()
        .take(k)
        .enumerate()
        .map(|(i, g)| g / ((i + 2) as f64).log2())
        .sum()
}

/// NDCG@k with linear gain: the DCG of `gains` (in ranked order) over the DCG of the same
/// gains sorted in decreasing order. 0 when every gain is 0.
pub fn ndcg_at(gains: &[f64], k: usize) -> f64 {
    let mut ideal = gains.to_vec();
    ideal.sort_by(|a, b| b.total_cmp(a));
    let best = dcg_at(&ideal, k);
    if best > 0.0 {
        dcg_at(gains, k) / best
    } else {
        0.0
    }
}

/// Ranking quality over the members that have relevant held-out ratings.
#[derive(Debug, Clone, PartialEq)]
pub struct RankingQuality {
    /// Cut-off.
    pub k: usize,
    /// Held-out ratings at or above this value count as relevant.
    pub threshold: f64,
    /// Members evaluated.
    pub users: usize,
    /// Mean precision@k.
    pub precision: f64,
    /// Mean recall@k.
    pub recall: f64,
    /// Mean NDCG@k (binary relevance, linear gain).
    pub ndcg: f64,
    /// The same three for a random ranking of the same candidates (expected values).
    pub random: (f64, f64, f64),
}

/// The default relevance threshold: three quarters of the way up the rating scale (4 on a
/// 1–5 scale) (common practice); in an implicit-feedback model every held-out interaction
/// (any positive count) is relevant.
pub fn default_threshold(model: &Model) -> f64 {
    if model.implicit().is_some() {
        return f64::MIN_POSITIVE;
    }
    let s = &model.manifest.scale;
    s.min() + 0.75 * (s.max() - s.min())
}

/// Per member with at least one entry that `wanted` accepts: the member and the range of
/// their entries in `entries` (sorted by member).
fn member_spans(
    entries: &[crate::data::Rating],
    wanted: impl Fn(&crate::data::Rating) -> bool,
) -> Vec<(u32, usize, usize)> {
    let mut spans = Vec::new();
    let mut start = 0;
    while start < entries.len() {
        let user = entries[start].user;
        let end = start + entries[start..].partition_point(|r| r.user == user);
        if entries[start..end].iter().any(&wanted) {
            spans.push((user, start, end));
        }
        start = end;
    }
    spans
}

/// Ranking quality at cut-off `k`; `None` when no member has a relevant held-out rating.
pub fn ranking_quality(model: &Model, k: usize, threshold: f64) -> Option<RankingQuality> {
    let entries = &model.ratings.entries;
    let items = model.factors.item_count();
    let spans = member_spans(entries, |r| r.holdout && r.value >= threshold);
    if spans.is_empty() || k == 0 {
        return None;
    }
    let index = super::suggest::ranking_index(model);
    let per_user: Vec<[f64; 6]> = spans
        .par_iter()
        .map(|&(user, start, end)| {
            let mine = &entries[start..end];
            // Sorted by item within a member.
            let trained: Vec<u32> = mine.iter().filter(|r| !r.holdout).map(|r| r.item).collect();
            let relevant: Vec<u32> = mine
                .iter()
                .filter(|r| r.holdout && r.value >= threshold)
                .map(|r| r.item)
                .collect();
            let keep = |j: u32| trained.binary_search(&j).is_err();
            let query = model.factors.ranking_query(model.factors.user(user));
            let top = index.top(&query, k, keep, trained.len());
            let hits: Vec<bool> = top
                .iter()
                .map(|s| relevant.binary_search(&s.row).is_ok())
                .collect();
            let gains: Vec<f64> = hits.iter().map(|&h| f64::from(u8::from(h))).collect();
            let ideal: Vec<f64> = vec![1.0; relevant.len().min(k)];
            let best = dcg_at(&ideal, k);
            let candidates = (items - trained.len()) as f64;
            let shown = (k as f64).min(candidates);
            let r = relevant.len() as f64;
            let random_dcg = r / candidates * dcg_at(&vec![1.0; shown as usize], k);
            [
                precision_at(&hits, k),
                recall_at(&hits, relevant.len(), k),
                dcg_at(&gains, k) / best,
                r / candidates * shown / k as f64,
                shown / candidates,
                random_dcg / best,
            ]
        })
        .collect();
    let n = per_user.len() as f64;
    let mean = |c: usize| per_user.iter().map(|v| v[c]).sum::<f64>() / n;
    Some(RankingQuality {
        k,
        threshold,
        users: per_user.len(),
        precision: mean(0),
        recall: mean(1),
        ndcg: mean(2),
        random: (mean(3), mean(4), mean(5)),
    })
}

/// Expected percentile rank of held-out interactions (Hu, Koren & Volinsky, ICDM 2008,
/// §6): for each member, every item without a training interaction is a candidate, ranked
/// by score `x_u·y_i` (highest first); a held-out item's percentile is the share of the
/// other candidates ranked above it (ties count half), 0% at the top and 100% at the
/// bottom; the figure is the mean percentile weighted by the held-out counts
/// `Σ r·rank / Σ r`. A random ranking scores 50% in expectation; lower is better.
/// `counts` holds counts (or weights) with their split; `None` when no member has a
/// held-out interaction with a positive count and another candidate to rank it against.
pub fn expected_percentile_rank(
    factors: &crate::model::FactorModel,
    counts: &crate::data::Ratings,
) -> Option<f64> {
    let entries = &counts.entries;
    let items = factors.item_count();
    let spans = member_spans(entries, |r| r.holdout && r.value > 0.0);
    let per_user: Vec<(f64, f64)> = spans
        .par_iter()
        .map(|&(user, start, end)| {
            let mine = &entries[start..end];
            let trained: Vec<u32> = mine
                .iter()
                .filter(|r| !r.holdout && r.value > 0.0)
                .map(|r| r.item)
                .collect();
            let x = factors.user(user);
            let mut scores: Vec<f64> = (0..items as u32)
                .filter(|j| trained.binary_search(j).is_err())
                .map(|j| crate::model::dot(x, factors.item(j)))
                .collect();
            if scores.len() < 2 {
                return (0.0, 0.0);
            }
            scores.sort_by(f64::total_cmp);
            let others = (scores.len() - 1) as f64;
            mine.iter()
                .filter(|r| r.holdout && r.value > 0.0 && trained.binary_search(&r.item).is_err())
                .fold((0.0, 0.0), |(sum, weight), r| {
                    let s = crate::model::dot(x, factors.item(r.item));
                    let below = scores.partition_point(|&t| t < s);
                    let not_above = scores.partition_point(|&t| t <= s);
                    let above = scores.len() - not_above;
                    // The item itself is one of the ties.
                    let ties = (not_above - below - 1) as f64;
                    let rank = (above as f64 + 0.5 * ties) / others;
                    (r.value.mul_add(rank, sum), weight + r.value)
                })
        })
        .collect();
    let (sum, weight) = per_user
        .iter()
        .fold((0.0, 0.0), |(s, w), &(a, b)| (s + a, w + b));
    (weight > 0.0).then(|| sum / weight)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn precision_and_recall_worked_example() {
        // REFERENCES.md: ranking [10,3,7,1,9], relevant {3,9,4}: P@3 = 1/3, R@3 = 1/3,
        // P@5 = 0.4, R@5 = 2/3 [checked].
        let ranking = [10, 3, 7, 1, 9];
        let relevant = [3, 9, 4];
        let hits: Vec<bool> = ranking.iter().map(|x| relevant.contains(x)).collect();
        assert!((precision_at(&hits, 3) - 1.0 / 3.0).abs() < 1e-15);
        assert!((recall_at(&hits, 3, 3) - 1.0 / 3.0).abs() < 1e-15);
        assert!((precision_at(&hits, 5) - 0.4).abs() < 1e-15);
        assert!((recall_at(&hits, 3, 5) - 2.0 / 3.0).abs() < 1e-15);
    }

    #[test]
    fn ndcg_worked_example() {
        // Järvelin & Kekäläinen 2002, linear gain; values from REFERENCES.md, equal to
        // sklearn.metrics.ndcg_score [checked].
        let gains = [3.0, 2.0, 3.0, 0.0, 1.0, 2.0];
        assert!((ndcg_at(&gains, 6) - 0.960_808_194_336_062).abs() < 1e-12);
        assert!((ndcg_at(&gains, 3) - 0.977_781_361_630_505).abs() < 1e-12);
        // Exponential gain 2^rel − 1 through the same function: 0.948810748567899.
        let exponential: Vec<f64> = gains.iter().map(|g| 2f64.powf(*g) - 1.0).collect();
        assert!((ndcg_at(&exponential, 6) - 0.948_810_748_567_899).abs() < 1e-12);
        assert_eq!(ndcg_at(&[0.0, 0.0], 2), 0.0);
    }
}
