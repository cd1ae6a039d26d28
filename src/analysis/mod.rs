//! Analyses of a fitted model: accuracy metrics, explanations of single predictions,
//! suggestions, and subspace comparison.

pub mod audit;
pub mod coherence;
pub mod diagnostics;
pub mod explain;
pub mod foldin;
pub mod loadings;
pub mod metrics;
pub mod plain;
pub mod projection;
pub mod ranking;
pub mod stats;
pub mod subspace;
pub mod suggest;

pub use explain::{Closeness, Explanation, Posterior, closeness, cosine, explain};
pub use metrics::{ErrorMetrics, FitMetrics, error_metrics, fit_metrics};
pub use projection::{Projection, pca_2d};
pub use subspace::principal_angles;
pub use suggest::{Suggestion, suggest};
