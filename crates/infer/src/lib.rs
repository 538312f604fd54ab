//! Caldera's inference: priors, likelihood, maximum a posteriori, the affine-invariant ensemble
//! sampler, chain diagnostics and summaries.

pub mod diagnostics;
mod error;
pub mod sampler;

pub use error::InferError;
