//! Analyses of a fitted model: accuracy metrics and subspace comparison.

pub mod metrics;
pub mod subspace;

pub use metrics::{ErrorMetrics, FitMetrics, error_metrics, fit_metrics};
pub use subspace::principal_angles;
