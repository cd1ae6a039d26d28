//! Why a model predicts what it predicts for one member and one item: the prediction taken
//! apart by factor, its uncertainty, the member's own ratings that support it, and how much
//! data stands behind the member and the item.
//!
//! An explanation describes the model's arithmetic, not a person's motives or traits.

use nalgebra::{Cholesky, DMatrix, DVector};

use crate::index::squared_distance;
use crate::model::implicit::Confidence;
use crate::model::{Model, dot};

/// The training ratings of one member: (item, rating) pairs; in an implicit-feedback
/// model, (item, count) for the items they interacted with (a count of 0 is no
/// interaction).
pub fn training_ratings(model: &Model, user: u32) -> Vec<(u32, f64)> {
    let entries = &model.ratings.entries;
    let start = entries.partition_point(|r| r.user < user);
    let implicit = model.implicit().is_some();
    entries[start..]
        .iter()
        .take_while(|r| r.user == user)
        .filter(|r| !r.holdout && (!implicit || r.value > 0.0))
        .map(|r| (r.item, r.value))
        .collect()
}

/// How many of the member's ratings are held out of the fit.
pub fn held_out_count(model: &Model, user: u32) -> usize {
    let entries = &model.ratings.entries;
    let start = entries.partition_point(|r| r.user < user);
    entries[start..]
        .iter()
        .take_while(|r| r.user == user)
        .filter(|r| r.holdout)
        .count()
}

/// The member's rating of an item, if any (training or held out).
pub fn actual_rating(model: &Model, user: u32, item: u32) -> Option<f64> {
    let entries = &model.ratings.entries;
    entries
        .binary_search_by(|r| (r.user, r.item).cmp(&(user, item)))
        .ok()
        .map(|k| entries[k].value)
}

/// The member's conditional posterior given the item vectors.
///
/// With the item vectors fixed, the member's update is a Bayesian linear regression: the
/// posterior of `u_i` is Gaussian with covariance `S_i = σ² (λσ² I + Σ_{j∈Ω_i} v_j v_jᵀ)⁻¹`
/// (Bishop, Pattern Recognition and Machine Learning, 2006, §3.3.2). In a model with
/// biases the regression is on features `x_j = [v_j, 1]` for `(u_i, b_i)` jointly, with
/// `λ_bσ²` in the last place of the ridge diagonal. It ignores the uncertainty of the item
/// vectors and offsets themselves.
///
/// In an implicit-feedback model the member's solve is the weighted regression
/// `A = YᵀY + λI + Σ_j (c_j − 1) y_j y_jᵀ` over their interactions (Hu, Koren & Volinsky
/// 2008): [`Self::implicit`]. Its scores are not ratings, so it has no predictive SD.
#[derive(Debug, Clone)]
pub struct Posterior {
    sigma2: f64,
    factor: Option<Cholesky<f64, nalgebra::Dyn>>,
    biased: bool,
    /// The confidence rule of an implicit-feedback member's regression.
    confidence: Option<Confidence>,
}

impl Posterior {
    /// The posterior of a member who rated `rated` (training ratings).
    pub fn for_items(model: &Model, rated: impl IntoIterator<Item = u32>) -> Self {
        let m = &model.manifest;
        let f = &model.factors;
        Self::new(
            &f.items,
            f.rank,
            rated,
            (m.lambda, f.biases.as_ref().map(|b| b.lambda)),
            m.sigma2,
        )
    }

    /// The regression of a member of `model` from their training ratings or interactions
    /// `rated` ((item, rating) or (item, count) pairs).
    pub fn for_profile(model: &Model, rated: &[(u32, f64)]) -> Self {
        match model.implicit() {
            Some(confidence) => {
                let f = &model.factors;
                Self::implicit(
                    (&f.items, model.item_gram()),
                    f.rank,
                    (model.manifest.lambda, confidence),
                    rated,
                )
            }
            None => Self::for_items(model, rated.iter().map(|&(j, _)| j)),
        }
    }

    /// The regression of an implicit-feedback member who interacted with `rated` ((item,
    /// count) pairs), given the item vectors `items` (width `d`) and their Gram matrix
    /// `YᵀY` (row-major `d × d`), λ and the confidence rule.
    pub fn implicit(
        (items, gram): (&[f64], &[f64]),
        d: usize,
        (lambda, confidence): (f64, Confidence),
        rated: &[(u32, f64)],
    ) -> Self {
        let mut a = DMatrix::from_row_slice(d, d, gram);
        for k in 0..d {
            a[(k, k)] += lambda;
        }
        for &(j, count) in rated {
            let y = features(items, d, j, false);
            a += (&y * y.transpose()) * (confidence.of(count) - 1.0);
        }
        Self {
            sigma2: 1.0,
            factor: Cholesky::new(a),
            biased: false,
            confidence: Some(confidence),
        }
    }

    /// The posterior given item vectors `items` (row-major, width `d`), the rows rated, the
    /// prior precisions λ and, for a model with biases, λ_b, and the noise variance σ².
    pub fn new(
        items: &[f64],
        d: usize,
        rated: impl IntoIterator<Item = u32>,
        (lambda, lambda_bias): (f64, Option<f64>),
        sigma2: f64,
    ) -> Self {
        Self {
            sigma2,
            factor: Cholesky::new(normal_matrix(
                items,
                d,
                rated,
                (lambda, lambda_bias),
                sigma2,
            )),
            biased: lambda_bias.is_some(),
            confidence: None,
        }
    }

    /// The posterior of member `user` from their training ratings.
    pub fn for_user(model: &Model, user: u32) -> Self {
        Self::for_items(
            model,
            training_ratings(model, user).into_iter().map(|(j, _)| j),
        )
    }

    /// Predictive standard deviation of a new rating of an item with vector `v`:
    /// `√(σ² + vᵀ S v)` (Bishop 2006, eq. 3.59). `None` when the posterior is improper
    /// (λ = 0 and too few ratings).
    /// With biases the features are `[v, 1]`. `None` in an implicit-feedback model.
    pub fn predictive_sd(&self, v: &[f64]) -> Option<f64> {
        if self.confidence.is_some() {
            return None;
        }
        let factor = self.factor.as_ref()?;
        let mut features = v.to_vec();
        if self.biased {
            features.push(1.0);
        }
        let x = factor.solve(&DVector::from_column_slice(&features));
        let quadratic = self.sigma2 * dot(&features, x.as_slice());
        Some((self.sigma2 + quadratic).sqrt())
    }
}

/// The member's features for item `j`: `v_j`, or `[v_j, 1]` with an offset.
fn features(items: &[f64], d: usize, j: u32, offset: bool) -> DVector<f64> {
    let v = &items[j as usize * d..(j as usize + 1) * d];
    if offset {
        DVector::from_iterator(d + 1, v.iter().copied().chain([1.0]))
    } else {
        DVector::from_column_slice(v)
    }
}

/// The matrix of a member's ridge regression, `A = diag(λσ², …, λσ²[, λ_bσ²]) + Σ_j x_j x_jᵀ`
/// over the rated items' features (see [`Posterior`]).
fn normal_matrix(
    items: &[f64],
    d: usize,
    rated: impl IntoIterator<Item = u32>,
    (lambda, lambda_bias): (f64, Option<f64>),
    sigma2: f64,
) -> DMatrix<f64> {
    let width = d + usize::from(lambda_bias.is_some());
    let mut a = DMatrix::<f64>::identity(width, width) * (lambda * sigma2);
    if let Some(lambda_bias) = lambda_bias {
        a[(d, d)] = lambda_bias * sigma2;
    }
    for j in rated {
        let x = features(items, d, j, lambda_bias.is_some());
        a += &x * x.transpose();
    }
    a
}

/// One of the member's own ratings (or interactions) and its part in a prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatingShare {
    /// The rated item.
    pub item: u32,
    /// The member's rating of it (in an implicit-feedback model, the count).
    pub rating: f64,
    /// Its smoother weight `s_jk = [v_k, 0]ᵀ A⁻¹ x_j`: how much one more point on this
    /// rating (above μ and the item's offset) moves the prediction. In an
    /// implicit-feedback model, the paper's similarity `y_kᵀ W_u y_j`.
    pub weight: f64,
    /// `weight × (rating − μ − c_j)`; implicit: `weight × confidence`.
    pub share: f64,
}

/// A prediction taken apart by the member's own ratings.
///
/// A member's vector (and offset) is a ridge solution, linear in their ratings:
/// `w = A⁻¹ Σ_j x_j (r_j − μ − c_j)` with `A` as in [`Posterior`]. So the vector's part of a
/// prediction, `v_k·u`, is exactly `Σ_j s_jk (r_j − μ − c_j)` with `s_jk = [v_k, 0]ᵀ A⁻¹ x_j`
/// (ridge regression as a linear smoother; Hu, Koren & Volinsky 2008, §5, derive the same
/// for implicit feedback). The member's offset is kept whole, as an offset.
///
/// This holds for the vector that is the exact optimum given the current item vectors. A
/// fitted member's stored vector is one step behind the last item step, so the
/// decomposition is of the member re-solved against the current items, and
/// [`Self::difference`] says how far that prediction is from the stored one.
#[derive(Debug, Clone, PartialEq)]
pub struct ByRating {
    /// One entry per rated item, largest |share| first.
    pub shares: Vec<RatingShare>,
    /// The re-solved prediction: `μ + b + c_k + Σ shares`.
    pub predicted: f64,
    /// The re-solved member offset `b` (`None` without biases).
    pub user_bias: Option<f64>,
    /// `predicted` minus the prediction from the stored vector.
    pub difference: f64,
}

/// The smoother decomposition of the prediction of item `k` from item vectors `items`
/// (width `d`), item offsets (with their prior precision) when the model has biases, the
/// offset `mu`, λ and σ², for a member who rated `rated`: each rating's weight and share
/// in the order given, and the re-solved vector and offset `w`. `None` when `A` is not
/// positive definite (λ = 0 and too few ratings).
pub fn smoother_shares(
    (items, offsets): (&[f64], Option<(&[f64], f64)>),
    d: usize,
    (mu, lambda, sigma2): (f64, f64, f64),
    rated: &[(u32, f64)],
    k: u32,
) -> Option<(Vec<RatingShare>, Vec<f64>)> {
    let posterior = Posterior::new(
        items,
        d,
        rated.iter().map(|&(j, _)| j),
        (lambda, offsets.map(|(_, l)| l)),
        sigma2,
    );
    posterior.shares((items, offsets.map(|(c, _)| c)), d, mu, rated, k)
}

/// The implicit-feedback analogue of [`smoother_shares`] (Hu, Koren & Volinsky 2008, §5):
/// the member's solve is `x = W Σ_j c_j y_j` with `W = (YᵀY + λI + Σ_j (c_j − 1) y_j
/// y_jᵀ)⁻¹` over their interactions `rated` ((item, count) pairs), so the score of item `k`
/// is `Σ_j (y_kᵀ W y_j) c_j`: each interaction's weight and share (`weight × c_j`) in the
/// order given, and the re-solved vector. `None` when the system is not positive definite
/// (λ = 0 and too few items).
pub fn implicit_shares(
    items: &[f64],
    d: usize,
    (lambda, confidence): (f64, Confidence),
    rated: &[(u32, f64)],
    k: u32,
) -> Option<(Vec<RatingShare>, Vec<f64>)> {
    let gram = crate::model::implicit::gram(items, d);
    Posterior::implicit((items, &gram), d, (lambda, confidence), rated).shares(
        (items, None),
        d,
        0.0,
        rated,
        k,
    )
}

impl Posterior {
    /// [`smoother_shares`] from this posterior's factorization of `A` (the member's
    /// regression matrix: the same one), so an explanation factors it once.
    fn shares(
        &self,
        (items, offsets): (&[f64], Option<&[f64]>),
        d: usize,
        mu: f64,
        rated: &[(u32, f64)],
        k: u32,
    ) -> Option<(Vec<RatingShare>, Vec<f64>)> {
        let factor = self.factor.as_ref()?;
        let biased = self.biased;
        let mut query = features(items, d, k, biased);
        if biased {
            query[d] = 0.0;
        }
        let z = factor.solve(&query);
        let offset = |j: u32| offsets.map_or(0.0, |c| c[j as usize]);
        let mut gradient = DVector::<f64>::zeros(d + usize::from(biased));
        let shares = rated
            .iter()
            .map(|&(j, rating)| {
                let x = features(items, d, j, biased);
                // An interaction enters an implicit member's solve as c_j · p_j · y_j.
                let target = match self.confidence {
                    Some(confidence) => confidence.of(rating),
                    None => rating - mu - offset(j),
                };
                gradient += &x * target;
                let weight = z.dot(&x);
                RatingShare {
                    item: j,
                    rating,
                    weight,
                    share: weight * target,
                }
            })
            .collect();
        let w = factor.solve(&gradient);
        Some((shares, w.as_slice().to_vec()))
    }
}

/// One factor's share of a prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Contribution {
    /// Factor number, from 1.
    pub factor: usize,
    /// `u_d · v_d`.
    pub value: f64,
}

/// One of the member's own ratings offered as evidence.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Evidence {
    /// The rated item.
    pub item: u32,
    /// The member's rating of it.
    pub actual: f64,
    /// The model's prediction for it.
    pub predicted: f64,
    /// Euclidean distance between its vector and the explained item's.
    pub distance: f64,
}

/// How much data stands behind the member and the item.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Support {
    /// The member's training ratings.
    pub user_ratings: usize,
    /// The member's ratings held out of the fit to measure its accuracy (0 for a profile).
    pub user_held_out: usize,
    /// The item's training ratings.
    pub item_ratings: usize,
    /// Fewer member ratings than the rank: the vector is dominated by the prior.
    pub user_low_support: bool,
    /// Fewer item ratings than the rank.
    pub item_low_support: bool,
}

/// A prediction taken apart.
#[derive(Debug, Clone, PartialEq)]
pub struct Explanation {
    /// Member (`None` for a what-if profile that belongs to nobody).
    pub user: Option<u32>,
    /// Item.
    pub item: u32,
    /// The global offset μ.
    pub mu: f64,
    /// The member's offset `b_i` (`None` in a model without biases).
    pub user_bias: Option<f64>,
    /// The item's offset `c_j` (`None` in a model without biases).
    pub item_bias: Option<f64>,
    /// `μ + b_i + c_j + Σ contributions` (implicit feedback: the score `Σ contributions`).
    pub predicted: f64,
    /// The prediction rounded onto the rating scale (`None` for implicit feedback).
    pub rounded: Option<f64>,
    /// Predictive standard deviation of a new rating (see [`Posterior`]).
    pub predictive_sd: Option<f64>,
    /// The member's actual rating, if they rated the item.
    pub actual: Option<f64>,
    /// Per-factor contributions, largest magnitude first.
    pub contributions: Vec<Contribution>,
    /// The member's own rated items nearest to this one.
    pub evidence: Vec<Evidence>,
    /// Rating counts and low-support flags.
    pub support: Support,
    /// The prediction by the member's own ratings (`None` when their regression is not
    /// determined: λ = 0 and too few ratings).
    pub by_rating: Option<ByRating>,
}

/// Training ratings per item.
pub fn item_support(model: &Model) -> Vec<u32> {
    model.ratings.train_support().1
}

/// Explains the prediction of `item` for `user`, with up to `evidence` supporting ratings.
pub fn explain(
    model: &Model,
    user: u32,
    item: u32,
    evidence: usize,
    item_counts: &[u32],
) -> Explanation {
    let rated = training_ratings(model, user);
    let profile = Profile {
        vector: model.factors.user(user),
        bias: model.factors.user_bias(user),
        rated: &rated,
    };
    let mut e = explain_profile(model, &profile, item, evidence, item_counts);
    e.user = Some(user);
    e.actual = actual_rating(model, user, item);
    e.support.user_held_out = held_out_count(model, user);
    e
}

/// A member's vector and the ratings it was fitted from: a fitted member's, or a what-if
/// profile folded in against the item vectors.
#[derive(Debug, Clone, Copy)]
pub struct Profile<'a> {
    /// The member vector.
    pub vector: &'a [f64],
    /// The member's offset (0 in a model without biases).
    pub bias: f64,
    /// The (item, rating) pairs behind it.
    pub rated: &'a [(u32, f64)],
}

/// Explains the prediction of `item` for any profile. `actual` is the profile's rating of
/// the item when it has one.
pub fn explain_profile(
    model: &Model,
    profile: &Profile<'_>,
    item: u32,
    evidence: usize,
    item_counts: &[u32],
) -> Explanation {
    let f = &model.factors;
    let (u, v) = (profile.vector, f.item(item));
    let mut contributions: Vec<Contribution> = u
        .iter()
        .zip(v)
        .enumerate()
        .map(|(d, (a, b))| Contribution {
            factor: d + 1,
            value: a * b,
        })
        .collect();
    contributions.sort_by(|a, b| {
        b.value
            .abs()
            .total_cmp(&a.value.abs())
            .then(a.factor.cmp(&b.factor))
    });
    let predicted = f.predict_for(u, profile.bias, item);
    let rated = profile.rated;
    let mut nearest: Vec<Evidence> = rated
        .iter()
        .filter(|&&(j, _)| j != item)
        .map(|&(j, actual)| Evidence {
            item: j,
            actual,
            predicted: f.predict_for(u, profile.bias, j),
            distance: squared_distance(f.item(j), v).sqrt(),
        })
        .collect();
    nearest.sort_by(|a, b| a.distance.total_cmp(&b.distance).then(a.item.cmp(&b.item)));
    nearest.truncate(evidence);
    let rank = f.rank;
    let item_ratings = item_counts[item as usize] as usize;
    let posterior = Posterior::for_profile(model, rated);
    let by_rating = posterior
        .shares(
            (&f.items, f.biases.as_ref().map(|b| &b.item[..])),
            rank,
            f.mu,
            rated,
            item,
        )
        .map(|(mut shares, w)| {
            shares.sort_by(|a, b| {
                b.share
                    .abs()
                    .total_cmp(&a.share.abs())
                    .then(a.item.cmp(&b.item))
            });
            let user_bias = f.biases.as_ref().map(|_| w[rank]);
            let refreshed = f.mu
                + user_bias.unwrap_or(0.0)
                + f.item_bias(item)
                + shares.iter().map(|s| s.share).sum::<f64>();
            ByRating {
                shares,
                predicted: refreshed,
                user_bias,
                difference: refreshed - predicted,
            }
        });
    Explanation {
        user: None,
        item,
        mu: f.mu,
        user_bias: f.biases.as_ref().map(|_| profile.bias),
        item_bias: f.biases.as_ref().map(|b| b.item[item as usize]),
        predicted,
        rounded: model.round(predicted),
        predictive_sd: posterior.predictive_sd(v),
        actual: rated.iter().find(|&&(j, _)| j == item).map(|&(_, r)| r),
        contributions,
        evidence: nearest,
        support: Support {
            user_ratings: rated.len(),
            user_held_out: 0,
            item_ratings,
            user_low_support: rated.len() < rank,
            item_low_support: item_ratings < rank,
        },
        by_rating,
    }
}

/// How close two vectors are, by both measures neighbour lists show.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Closeness {
    /// Euclidean distance.
    pub distance: f64,
    /// Cosine similarity (`None` when either vector is zero).
    pub cosine: Option<f64>,
}

/// The distance and cosine between `a` and `b`.
pub fn closeness(a: &[f64], b: &[f64]) -> Closeness {
    Closeness {
        distance: crate::index::squared_distance(a, b).sqrt(),
        cosine: cosine(a, b),
    }
}

/// Cosine similarity of two vectors; `None` when either is zero.
pub fn cosine(a: &[f64], b: &[f64]) -> Option<f64> {
    let norms = (dot(a, a) * dot(b, b)).sqrt();
    (norms > 0.0).then(|| dot(a, b) / norms)
}
