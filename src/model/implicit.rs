//! Implicit feedback: plays, purchases, clicks — counts with no star to predict.
//!
//! The method is Hu, Koren & Volinsky, "Collaborative Filtering for Implicit Feedback
//! Datasets" (ICDM 2008). Each member–item pair has a preference `p_ui = [count > 0]` and a
//! confidence `c_ui = 1 + α·count` (or `1 + α·log(1 + count/ε)`), and the vectors minimise,
//! over *all* pairs,
//!
//! ```text
//! loss = Σ_{u,i} c_ui (p_ui − x_u·y_i)² + λ (Σ_u ‖x_u‖² + Σ_i ‖y_i‖²)
//! ```
//!
//! by alternating exact solves. A member's solve is
//! `x_u = (YᵀY + λI + Yᵀ(C_u − I)Y)⁻¹ Yᵀ C_u p_u`: `YᵀY` is shared by every member and
//! formed once per half-step, and `C_u − I` is zero off the member's own interactions, so
//! each solve costs their interactions, not the catalogue ([`RidgeWorkspace::
//! solve_batch_weighted`]). Each half-step minimises the loss exactly over one side, so
//! the loss never increases. Scores `x_u·y_i` are preferences, not ratings: there is no μ,
//! no rounding and no RMSE.

use rayon::prelude::*;

use super::FactorModel;
use super::fit::{
    Compressed, check_run, items_from_table, iterate_until, random_items, solve_rows,
};
use super::kernels::BATCH;
use super::solve::{RidgeWorkspace, WeightedProblem, confidence_weights};
use crate::data::{FactorTable, Ratings};
use crate::error::FitError;

/// How a count becomes a confidence.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Confidence {
    /// `1 + α·count` (the paper's default form; α = 40 there).
    Linear {
        /// α.
        alpha: f64,
    },
    /// `1 + α·log(1 + count/ε)` (the paper's alternative for counts that vary widely).
    Log {
        /// α.
        alpha: f64,
        /// ε.
        epsilon: f64,
    },
}

impl Confidence {
    /// The confidence of a pair with this count.
    pub fn of(self, count: f64) -> f64 {
        match self {
            Self::Linear { alpha } => alpha.mul_add(count, 1.0),
            Self::Log { alpha, epsilon } => alpha.mul_add((count / epsilon).ln_1p(), 1.0),
        }
    }
}

impl Confidence {
    /// Checks α (finite, ≥ 0) and ε (finite, > 0), naming the flags.
    pub fn validate(self) -> Result<(), String> {
        let (alpha, epsilon) = match self {
            Self::Linear { alpha } => (alpha, 1.0),
            Self::Log { alpha, epsilon } => (alpha, epsilon),
        };
        if !(alpha.is_finite() && alpha >= 0.0) {
            return Err(format!("--alpha must be a finite number ≥ 0, not {alpha}"));
        }
        if !(epsilon.is_finite() && epsilon > 0.0) {
            return Err(format!(
                "--epsilon must be a finite number > 0, not {epsilon}"
            ));
        }
        Ok(())
    }

    /// The confidence rule in words, e.g. `1 + 40·count`.
    pub fn describe(self) -> String {
        match self {
            Self::Linear { alpha } => format!("1 + {alpha}·count"),
            Self::Log { alpha, epsilon } => format!("1 + {alpha}·log(1 + count/{epsilon})"),
        }
    }
}

/// The published method's α (its experiments found 40 worked well).
pub const DEFAULT_ALPHA: f64 = 40.0;

/// ε of the log form when none is given (our choice: counts then start to flatten at 1).
pub const DEFAULT_EPSILON: f64 = 1.0;

impl Default for Confidence {
    fn default() -> Self {
        Self::Linear {
            alpha: DEFAULT_ALPHA,
        }
    }
}

/// Options of an implicit-feedback fit.
#[derive(Debug, Clone, PartialEq)]
pub struct ImplicitOptions {
    /// Rank D.
    pub rank: usize,
    /// Regularization λ.
    pub lambda: f64,
    /// Counts to confidences.
    pub confidence: Confidence,
    /// Largest number of iterations.
    pub max_iters: usize,
    /// Stop when the loss changes by at most `tol` times its size.
    pub tol: f64,
    /// Seed of the initial item vectors.
    pub seed: u64,
}

impl Default for ImplicitOptions {
    fn default() -> Self {
        Self {
            rank: 10,
            lambda: 1.0,
            confidence: Confidence::default(),
            max_iters: 100,
            tol: 1e-6,
            seed: 0,
        }
    }
}

impl ImplicitOptions {
    /// Checks that the options can work at all.
    pub fn validate(&self) -> Result<(), FitError> {
        check_run(self.rank, self.lambda, self.tol, self.max_iters)?;
        self.confidence.validate().map_err(FitError::Option)
    }
}

/// The state after one implicit iteration.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct ImplicitRecord {
    /// Iteration number, from 1.
    pub iter: usize,
    /// The loss (never increases).
    pub loss: f64,
}

/// What an implicit fit produces.
#[derive(Debug, Clone, PartialEq)]
pub struct ImplicitResult {
    /// The vectors (μ = 0, no offsets).
    pub factors: FactorModel,
    /// One record per iteration.
    pub trace: Vec<ImplicitRecord>,
    /// True when the tolerance was reached before the iteration limit.
    pub converged: bool,
}

/// An implicit-feedback fit in progress: exposes the half-steps so callers (and tests) can
/// watch the loss.
pub struct ImplicitFitter {
    options: ImplicitOptions,
    /// Per member: the items interacted with and their confidences.
    by_user: Compressed,
    /// Per item: the members and their confidences.
    by_item: Compressed,
    /// The scales and scaled targets of `by_user`'s and `by_item`'s confidences (see
    /// [`confidence_weights`]), laid out like them: fixed for the whole fit.
    user_weights: (Vec<f64>, Vec<f64>),
    item_weights: (Vec<f64>, Vec<f64>),
    model: FactorModel,
}

impl ImplicitFitter {
    /// Prepares a fit on the training entries of `counts` (their values are counts or any
    /// non-negative weights; a zero is no interaction), starting from random item vectors
    /// or from `init_items` (a factor table and its path, for messages). Refuses negative
    /// or non-finite counts, naming the member and item.
    pub fn new(
        counts: &Ratings,
        options: &ImplicitOptions,
        init_items: Option<(&FactorTable, &std::path::Path)>,
    ) -> Result<Self, FitError> {
        options.validate()?;
        if let Some(r) = counts
            .entries
            .iter()
            .find(|r| !(r.value.is_finite() && r.value >= 0.0))
        {
            return Err(FitError::Option(format!(
                "implicit feedback needs counts ≥ 0, but member '{}' has {} for item '{}'",
                counts.users.name(r.user),
                r.value,
                counts.items.name(r.item)
            )));
        }
        let confidence = options.confidence;
        let train = || {
            counts
                .entries
                .iter()
                .filter(|r| !r.holdout && r.value > 0.0)
        };
        let by_user = Compressed::build(
            counts.users.len(),
            train().map(|r| (r.user, r.item, confidence.of(r.value))),
        );
        let by_item = Compressed::build(
            counts.items.len(),
            train().map(|r| (r.item, r.user, confidence.of(r.value))),
        );
        let d = options.rank;
        let items = match init_items {
            Some((table, path)) => items_from_table(counts, table, path, d)?,
            None => random_items(counts.items.len(), d, options.lambda, options.seed),
        };
        Ok(Self::starting_from(options, by_user, by_item, items))
    }

    fn starting_from(
        options: &ImplicitOptions,
        by_user: Compressed,
        by_item: Compressed,
        items: Vec<f64>,
    ) -> Self {
        let d = options.rank;
        Self {
            options: options.clone(),
            user_weights: confidence_weights(&by_user.targets),
            item_weights: confidence_weights(&by_item.targets),
            model: FactorModel {
                rank: d,
                mu: 0.0,
                users: vec![0.0; by_user.rows() * d],
                items,
                biases: None,
            },
            by_user,
            by_item,
        }
    }

    /// Starts from the given item vectors instead of random ones (row-major, `rank` wide).
    #[must_use]
    pub fn with_items(mut self, items: Vec<f64>) -> Self {
        assert_eq!(items.len(), self.model.items.len(), "one vector per item");
        self.model.items = items;
        self
    }

    /// The current vectors.
    pub fn model(&self) -> &FactorModel {
        &self.model
    }

    /// Solves every member's vector for the current item vectors.
    pub fn update_users(&mut self) -> Result<(), FitError> {
        let m = &mut self.model;
        half_step(
            &mut m.users,
            &m.items,
            (&self.by_user, &self.user_weights),
            m.rank,
            self.options.lambda,
        )
        .map_or(Ok(()), |i| Err(not_solvable("member", i)))
    }

    /// Solves every item's vector for the current member vectors.
    pub fn update_items(&mut self) -> Result<(), FitError> {
        let m = &mut self.model;
        half_step(
            &mut m.items,
            &m.users,
            (&self.by_item, &self.item_weights),
            m.rank,
            self.options.lambda,
        )
        .map_or(Ok(()), |j| Err(not_solvable("item", j)))
    }

    /// The loss of the current vectors.
    pub fn loss(&self) -> f64 {
        let m = &self.model;
        let d = m.rank;
        // Σ over all pairs of (x·y)² is ⟨XᵀX, YᵀY⟩ (Frobenius inner product).
        let (xx, yy) = (gram(&m.users, d), gram(&m.items, d));
        let everywhere: f64 = xx.iter().zip(&yy).map(|(a, b)| a * b).sum();
        // On the interactions, c(1 − s)² replaces the s² counted above.
        let per_user: Vec<f64> = (0..self.by_user.rows())
            .into_par_iter()
            .with_min_len(256)
            .map(|u| {
                let (items, confidences) = self.by_user.row(u);
                let x = m.user(u as u32);
                items
                    .iter()
                    .zip(confidences)
                    .map(|(&i, &c)| {
                        let s = super::dot(x, m.item(i));
                        c * (1.0 - s) * (1.0 - s) - s * s
                    })
                    .sum::<f64>()
            })
            .collect();
        let norms = super::squared_norm(&m.users) + super::squared_norm(&m.items);
        everywhere + per_user.iter().sum::<f64>() + self.options.lambda * norms
    }

    /// One full iteration (members, then items) and its record.
    pub fn iterate(&mut self, iter: usize) -> Result<ImplicitRecord, FitError> {
        self.update_users()?;
        self.update_items()?;
        Ok(ImplicitRecord {
            iter,
            loss: self.loss(),
        })
    }

    /// Iterates until `|Δloss| ≤ tol·loss` or the iteration limit, reporting each iteration.
    pub fn run(
        mut self,
        mut progress: impl FnMut(&ImplicitRecord),
    ) -> Result<ImplicitResult, FitError> {
        let (max_iters, tol) = (self.options.max_iters, self.options.tol);
        let (trace, converged) = iterate_until(
            (max_iters, tol),
            |iter| self.iterate(iter),
            |r| r.loss,
            &mut progress,
        )?;
        Ok(ImplicitResult {
            factors: self.model,
            trace,
            converged,
        })
    }
}

fn not_solvable(kind: &'static str, index: u32) -> FitError {
    FitError::Option(format!(
        "the implicit {kind} solve for row {index} is not positive definite: use --lambda > 0"
    ))
}

/// Rows per partial Gram sum: fixed, so the sum's order (and bits) do not depend on the
/// number of threads.
const GRAM_CHUNK: usize = 1024;

/// `VᵀV` of row-major vectors `v` (width `d`), as a full `d × d` row-major matrix, summed
/// in an order that does not depend on the number of threads.
pub fn gram(v: &[f64], d: usize) -> Vec<f64> {
    let partials: Vec<Vec<f64>> = v
        .par_chunks(d * GRAM_CHUNK)
        .map(|chunk| {
            let mut g = vec![0.0; d * d];
            for x in chunk.chunks_exact(d) {
                for i in 0..d {
                    let row = &mut g[i * d + i..i * d + d];
                    for (a, &xj) in row.iter_mut().zip(&x[i..]) {
                        *a = x[i].mul_add(xj, *a);
                    }
                }
            }
            g
        })
        .collect();
    let mut g = vec![0.0; d * d];
    for p in &partials {
        for (a, b) in g.iter_mut().zip(p) {
            *a += b;
        }
    }
    for i in 0..d {
        for j in 0..i {
            g[i * d + j] = g[j * d + i];
        }
    }
    g
}

/// Solves every row of one side for the other side's vectors `other`.
fn half_step(
    out: &mut [f64],
    other: &[f64],
    (rows, (scales, scaled)): (&Compressed, &(Vec<f64>, Vec<f64>)),
    d: usize,
    lambda: f64,
) -> Option<u32> {
    let mut base = gram(other, d);
    for k in 0..d {
        base[k * d + k] += lambda;
    }
    let zero_ridge = lambda == 0.0;
    solve_rows(
        out,
        None,
        rows,
        d,
        |ws: &mut RidgeWorkspace, (first, problems), vectors, _| {
            debug_assert!(problems.len() <= BATCH);
            let empty: WeightedProblem<'_> = (&[], &[], (&[], &[]));
            let mut weighted = [empty; BATCH];
            for (k, (slot, &(columns, confidences))) in
                weighted.iter_mut().zip(problems).enumerate()
            {
                let span = rows.span(first + k);
                *slot = (columns, confidences, (&scales[span.clone()], &scaled[span]));
            }
            ws.solve_batch_weighted(
                other,
                &weighted[..problems.len()],
                &base,
                zero_ridge,
                vectors,
            )
        },
    )
}
