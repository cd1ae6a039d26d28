//! Analyses of a fitted model: accuracy metrics (more to come: neighbours, loadings).

pub mod metrics;

pub use metrics::{ErrorMetrics, FitMetrics, error_metrics, fit_metrics};
