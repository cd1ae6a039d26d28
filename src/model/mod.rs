//! The probabilistic matrix factorization: parameters, fitting, prediction, storage.
//!
//! # The objective
//!
//! Ratings `M_ij`, observed on the index set Ω, are modelled as
//! `M_ij ~ N(μ + u_i·v_j, σ²)` with Gaussian priors `u_i, v_j ~ N(0, λ⁻¹ I)`. Fitting
//! maximises the log joint likelihood (MAP estimate), up to a constant
//!
//! ```text
//! L = −1/(2σ²) Σ_Ω (M_ij − μ − u_i·v_j)² − λ/2 Σ_i ‖u_i‖² − λ/2 Σ_j ‖v_j‖²
//! ```
//!
//! which is the same as minimising squared error plus `λσ²/2` times the squared norms of
//! all vectors. The regularization pulls vectors towards zero, so that a user or item with
//! few ratings stays near the origin instead of being fitted to noise; with `λ = 0` there is
//! no pull and every user and item needs at least `D` ratings to be determined at all.
//! Maximisation is by coordinate ascent: all users, then all items, each a ridge regression
//! solved exactly, so `L` never decreases (see [`fit()`]).

pub mod build;
pub mod dir;
pub mod extrapolate;
pub mod fit;
pub mod implicit;
pub mod kernels;
pub mod manifest;
pub mod notes;
pub mod solve;
pub mod store;

pub use build::Provenance;
pub use dir::{load_model, save_model};
pub use fit::{Accel, Center, FitOptions, FitResult, Fitter, IterationRecord, fit};
pub use solve::RidgeWorkspace;
pub use store::Model;

/// Fitted (or imported) vectors: one row per user and per item, row-major, and the
/// per-member and per-item offsets of a model with biases.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorModel {
    /// The rank D (width of every vector).
    pub rank: usize,
    /// The global offset μ added to every prediction (0 when not centred).
    pub mu: f64,
    /// User vectors, `users[i * rank + d]`.
    pub users: Vec<f64>,
    /// Item vectors, `items[j * rank + d]`.
    pub items: Vec<f64>,
    /// Member and item offsets, when the model has them.
    pub biases: Option<Biases>,
}

/// Per-member and per-item offsets fitted beside the vectors: the model becomes
/// `M_ij ~ N(μ + b_i + c_j + u_i·v_j, σ²)` with `b, c ~ N(0, λ_b⁻¹)`.
#[derive(Debug, Clone, PartialEq)]
pub struct Biases {
    /// `b_i`, one per member.
    pub user: Vec<f64>,
    /// `c_j`, one per item.
    pub item: Vec<f64>,
    /// Their prior precision λ_b.
    pub lambda: f64,
}

impl FactorModel {
    /// Vector of user `i`.
    pub fn user(&self, i: u32) -> &[f64] {
        let start = i as usize * self.rank;
        &self.users[start..start + self.rank]
    }

    /// Vector of item `j`.
    pub fn item(&self, j: u32) -> &[f64] {
        let start = j as usize * self.rank;
        &self.items[start..start + self.rank]
    }

    /// Number of users.
    pub fn user_count(&self) -> usize {
        self.users.len() / self.rank.max(1)
    }

    /// Number of items.
    pub fn item_count(&self) -> usize {
        self.items.len() / self.rank.max(1)
    }

    /// The offset `b_i` of member `i` (0 without biases).
    pub fn user_bias(&self, i: u32) -> f64 {
        self.biases.as_ref().map_or(0.0, |b| b.user[i as usize])
    }

    /// The offset `c_j` of item `j` (0 without biases).
    pub fn item_bias(&self, j: u32) -> f64 {
        self.biases.as_ref().map_or(0.0, |b| b.item[j as usize])
    }

    /// `b_i + c_j` (exactly 0 without biases).
    pub fn offset(&self, i: u32, j: u32) -> f64 {
        self.biases
            .as_ref()
            .map_or(0.0, |b| b.user[i as usize] + b.item[j as usize])
    }

    /// The raw prediction `μ + b_i + c_j + u_i·v_j`.
    pub fn predict(&self, user: u32, item: u32) -> f64 {
        self.predict_for(self.user(user), self.user_bias(user), item)
    }

    /// The raw prediction `μ + b + c_j + u·v_j` for any member vector `u` and offset `b`
    /// (a what-if profile's; `b` is 0 without biases).
    pub fn predict_for(&self, u: &[f64], b: f64, item: u32) -> f64 {
        match &self.biases {
            Some(biases) => self.mu + b + biases.item[item as usize] + dot(u, self.item(item)),
            None => self.mu + dot(u, self.item(item)),
        }
    }

    /// The item rows an exact top-N search by predicted rating runs on: the item vectors,
    /// each followed by its offset `c_j` when the model has biases (so that `[u, 1]·[v_j,
    /// c_j] = c_j + u·v_j`), and the width of those rows.
    pub fn ranking_rows(&self) -> (std::borrow::Cow<'_, [f64]>, usize) {
        match &self.biases {
            None => (std::borrow::Cow::Borrowed(&self.items[..]), self.rank),
            Some(b) => {
                let mut rows = Vec::with_capacity(self.items.len() + b.item.len());
                for (v, c) in self.items.chunks_exact(self.rank).zip(&b.item) {
                    rows.extend_from_slice(v);
                    rows.push(*c);
                }
                (std::borrow::Cow::Owned(rows), self.rank + 1)
            }
        }
    }

    /// The query for [`Self::ranking_rows`] of member vector `u`: `u`, or `[u, 1]` with
    /// biases.
    pub fn ranking_query(&self, u: &[f64]) -> Vec<f64> {
        let mut q = u.to_vec();
        if self.biases.is_some() {
            q.push(1.0);
        }
        q
    }
}

/// Dot product in a fixed summation order (left to right), so results are reproducible.
pub fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Squared Euclidean norm, summed left to right.
pub fn squared_norm(a: &[f64]) -> f64 {
    dot(a, a)
}
