//! The physics crate's error type: every numerical failure is a value, never a panic.

use thiserror::Error;

/// What can go wrong when a mass model is built or evaluated.
#[derive(Debug, Clone, PartialEq, Error)]
#[non_exhaustive]
pub enum PhysicsError {
    /// An input was NaN or infinite.
    #[error("{what} must be a finite number, got {value}")]
    NonFinite { what: &'static str, value: f64 },
    /// An input that must be positive was zero or negative.
    #[error("{what} must be positive, got {value}")]
    NonPositive { what: &'static str, value: f64 },
    /// The density at which each particle has scattered once is not below the central density,
    /// so no thermalised core forms: raise ρ0 or σ/m, or lower σ0.
    #[error(
        "no thermalised core: the scattering-rate density {rho1_msun_kpc3:.4e} Msun/kpc3 is not below the central density {rho0_msun_kpc3:.4e} Msun/kpc3"
    )]
    NoCore {
        rho0_msun_kpc3: f64,
        rho1_msun_kpc3: f64,
    },
    /// The isothermal core's mass at r1 is too small for any NFW halo to continue it
    /// (M1 / (4π r1³ ρ1) must exceed 1/2).
    #[error(
        "no NFW halo matches this core: M1/(4 pi r1^3 rho1) = {mass_ratio:.5} but must exceed 0.5"
    )]
    NoNfwMatch { mass_ratio: f64 },
    /// No isothermal core matches the given NFW halo for this cross-section, age and baryons.
    #[error("no isothermal core matches this NFW halo: {reason}")]
    NoSolution { reason: String },
    /// The caller asked for a solution branch that does not exist.
    #[error("solution branch {requested} was requested but only {found} solution(s) exist")]
    BranchUnavailable { requested: usize, found: usize },
    /// Tabulated input is inconsistent (lengths differ, radii unsorted, ...).
    #[error("invalid tabulated input: {0}")]
    InvalidTable(String),
    /// A model was asked to build itself without one of its parameters.
    #[error("the parameter {what} is missing")]
    MissingParameter { what: &'static str },
    /// A numerical solve did not converge.
    #[error("{what} did not converge")]
    NoConvergence { what: &'static str },
}

/// Checks that `value` is finite and positive.
pub(crate) fn require_positive(what: &'static str, value: f64) -> Result<f64, PhysicsError> {
    if !value.is_finite() {
        return Err(PhysicsError::NonFinite { what, value });
    }
    if value <= 0.0 {
        return Err(PhysicsError::NonPositive { what, value });
    }
    Ok(value)
}

/// Checks that `value` is finite and not negative.
pub(crate) fn require_non_negative(what: &'static str, value: f64) -> Result<f64, PhysicsError> {
    if !value.is_finite() {
        return Err(PhysicsError::NonFinite { what, value });
    }
    if value < 0.0 {
        return Err(PhysicsError::NonPositive { what, value });
    }
    Ok(value)
}
