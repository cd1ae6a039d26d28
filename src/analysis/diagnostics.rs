//! Where the fit is weakest: the ratings it misses most, the members and items it can
//! barely place, and vectors whose length stands out.

use super::stats::{OUTLIER_Z, modified_z_scores};
use crate::model::{Model, squared_norm};

/// One rating and the model's prediction of it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Miss {
    /// The member.
    pub user: u32,
    /// The item.
    pub item: u32,
    /// The rating given.
    pub actual: f64,
    /// The raw prediction.
    pub predicted: f64,
}

impl Miss {
    /// `actual − predicted`.
    pub fn residual(&self) -> f64 {
        self.actual - self.predicted
    }
}

/// The `n` ratings with the largest `|actual − predicted|`, held-out ones (`holdout`) or
/// training ones; ties go to the earlier rating (by member, then item). In a model of
/// implicit feedback, the `n` interactions (positive counts) with the lowest scores: the
/// furthest from their preference 1 (`actual` is then the count).
pub fn worst_fits(model: &Model, holdout: bool, n: usize) -> Vec<Miss> {
    let implicit = model.implicit().is_some();
    let mut all: Vec<Miss> = model
        .ratings
        .entries
        .iter()
        .filter(|r| r.holdout == holdout && (!implicit || r.value > 0.0))
        .map(|r| Miss {
            user: r.user,
            item: r.item,
            actual: r.value,
            predicted: model.factors.predict(r.user, r.item),
        })
        .collect();
    let order = |a: &Miss, b: &Miss| {
        let by_size = if implicit {
            a.predicted.total_cmp(&b.predicted)
        } else {
            b.residual().abs().total_cmp(&a.residual().abs())
        };
        by_size.then(a.user.cmp(&b.user)).then(a.item.cmp(&b.item))
    };
    if all.len() > n {
        all.select_nth_unstable_by(n, order);
        all.truncate(n);
    }
    all.sort_by(order);
    all
}

/// Whether a vector belongs to a member or an item.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    /// A member (user) vector.
    User,
    /// An item vector.
    Item,
}

impl Side {
    /// "member" or "item".
    pub fn noun(self) -> &'static str {
        match self {
            Side::User => "member",
            Side::Item => "item",
        }
    }
}

/// A member or item with fewer training ratings than the rank: the data alone cannot place
/// its vector, so the prior dominates it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Thin {
    /// Member or item.
    pub side: Side,
    /// Its index.
    pub row: u32,
    /// Its training ratings.
    pub ratings: u32,
}

/// Every member and item with fewer training ratings than the rank, fewest first.
pub fn low_support(model: &Model) -> Vec<Thin> {
    let rank = model.factors.rank as u32;
    let (users, items) = model.ratings.train_support();
    let mut out: Vec<Thin> = users
        .iter()
        .enumerate()
        .map(|(i, &c)| (Side::User, i, c))
        .chain(items.iter().enumerate().map(|(j, &c)| (Side::Item, j, c)))
        .filter(|&(_, _, c)| c < rank)
        .map(|(side, row, ratings)| Thin {
            side,
            row: row as u32,
            ratings,
        })
        .collect();
    out.sort_by_key(|t| (t.ratings, t.side == Side::Item, t.row));
    out
}

/// A vector whose length is an outlier among its side's vectors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NormOutlier {
    /// Member or item.
    pub side: Side,
    /// Its index.
    pub row: u32,
    /// Its Euclidean norm.
    pub norm: f64,
    /// Its modified z-score (negative: unusually short).
    pub score: f64,
    /// Its training ratings.
    pub ratings: u32,
}

/// Summary of the vector lengths on one side and the outliers among them.
#[derive(Debug, Clone, PartialEq)]
pub struct NormReport {
    /// Member or item vectors.
    pub side: Side,
    /// Median norm.
    pub median: f64,
    /// Smallest and largest norm.
    pub range: (f64, f64),
    /// Vectors whose modified z-score exceeds [`OUTLIER_Z`] in size, most extreme first.
    /// Empty when the scores are undefined (more than half the norms equal).
    pub outliers: Vec<NormOutlier>,
    /// Vectors of length exactly 0 (no direction; left out of cosine neighbours).
    pub zero: usize,
}

/// Norm summary and outliers for one side's vectors.
pub fn norm_report(model: &Model, side: Side) -> Option<NormReport> {
    let f = &model.factors;
    let (users, items) = model.ratings.train_support();
    let (count, support) = match side {
        Side::User => (f.user_count(), users),
        Side::Item => (f.item_count(), items),
    };
    let norms: Vec<f64> = (0..count as u32)
        .map(|r| {
            let v = match side {
                Side::User => f.user(r),
                Side::Item => f.item(r),
            };
            squared_norm(v).sqrt()
        })
        .collect();
    let median = super::stats::median(&norms)?;
    let low = norms.iter().copied().fold(f64::INFINITY, f64::min);
    let high = norms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut outliers: Vec<NormOutlier> = modified_z_scores(&norms)
        .map(|scores| {
            scores
                .iter()
                .enumerate()
                .filter(|(_, s)| s.abs() > OUTLIER_Z)
                .map(|(r, &score)| NormOutlier {
                    side,
                    row: r as u32,
                    norm: norms[r],
                    score,
                    ratings: support[r],
                })
                .collect()
        })
        .unwrap_or_default();
    outliers.sort_by(|a, b| {
        b.score
            .abs()
            .total_cmp(&a.score.abs())
            .then(a.row.cmp(&b.row))
    });
    Some(NormReport {
        side,
        median,
        range: (low, high),
        outliers,
        zero: norms.iter().filter(|&&n| n == 0.0).count(),
    })
}
