//! The inference crate's error type.

use thiserror::Error;

/// What can stop a fit.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum InferError {
    /// The starting walkers or optimiser starts do not all have a finite posterior.
    #[error("no valid starting point: {0}")]
    NoValidStart(String),
    /// The configuration is inconsistent.
    #[error("invalid fit configuration: {0}")]
    Config(String),
    /// The table cannot be fitted (too few points, ...).
    #[error(transparent)]
    Data(#[from] caldera_data::DataError),
    /// The physics refused the inputs.
    #[error(transparent)]
    Physics(#[from] caldera_physics::PhysicsError),
    /// The user stopped the work.
    #[error("cancelled")]
    Cancelled,
}
