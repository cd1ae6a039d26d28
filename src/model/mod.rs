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
pub mod fit;
pub mod kernels;
pub mod manifest;
pub mod notes;
pub mod solve;
pub mod store;

pub use build::Provenance;
pub use dir::{load_model, save_model};
pub use fit::{Center, FitOptions, FitResult, Fitter, IterationRecord, fit};
pub use solve::RidgeWorkspace;
pub use store::Model;

/// Fitted (or imported) vectors: one row per user and per item, row-major.
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

    /// The raw prediction `μ + u_i·v_j`.
    pub fn predict(&self, user: u32, item: u32) -> f64 {
        self.predict_for(self.user(user), item)
    }

    /// The raw prediction `μ + u·v_j` for any member vector `u` (a what-if profile's).
    pub fn predict_for(&self, u: &[f64], item: u32) -> f64 {
        self.mu + dot(u, self.item(item))
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
