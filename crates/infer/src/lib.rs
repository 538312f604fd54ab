//! Caldera's inference: priors, likelihood, maximum a posteriori, the affine-invariant ensemble
//! sampler, chain diagnostics and summaries.

pub mod calibration;
pub mod chain;
pub mod diagnostics;
mod error;
pub mod fit;
pub mod layout;
pub mod model;
pub mod optimize;
pub mod pipeline;
pub mod population;
pub mod priors;
pub mod run_folder;
pub mod sampler;
pub mod session;
pub mod summary;

pub use error::InferError;
pub use fit::{FitConfig, FitResult, FitSummary, fit_galaxy};
