//! sextant: take bearings in the latent space of a rating-based recommender.
//!
//! The pipeline: a ratings CSV is read into [`data::Ratings`] (string ids interned to dense
//! indices, a seeded per-user held-out split), a probabilistic matrix factorization is
//! fitted by coordinate ascent ([`model::fit()`]: alternating exact ridge solves that never
//! decrease the log joint likelihood), or vectors fitted elsewhere are imported, and the
//! result is kept as a self-contained, validated, atomically written model directory
//! ([`model::save_model`], [`model::load_model`]). [`analysis`] computes what people look
//! at: accuracy metrics today, neighbours and explanations next.
//!
//! The library does no terminal or argument handling and prints nothing.

pub mod analysis;
pub mod data;
pub mod error;
pub mod files;
pub mod index;
pub mod limits;
pub mod model;
pub mod report;
pub mod rng;
#[doc(hidden)]
pub mod robustness;
pub mod synthetic;
pub mod text;

pub use error::{DataError, FitError};
