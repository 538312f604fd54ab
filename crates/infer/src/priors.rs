//! Priors, all user-editable and saved with a session.
//!
//! - Halo parameters: uniform within [`HaloBounds`] in the sampled coordinates (logarithms of
//!   densities, radii, dispersions, V200 and c200).
//! - Concentration–mass: the Dutton & Macciò (2014) relation, log10 c200 ~ N(μ(M200), 0.11 dex),
//!   applied to the derived (M200, c200) of every halo model that has them: the NFW halo itself,
//!   the SIDM halo's matched outer NFW halo, and the Burkert halo (c200 = r200 / r_−2). It is
//!   applied as a *weight* on the sampled coordinates, without the Jacobian of the map from the
//!   sampled (ρ0, σ0) to (M200, c200); for NFW, sampled in (log V200, log c200), the weight is an
//!   exact conditional prior. The pseudo-isothermal profile has no radius where its log-slope is
//!   −2, hence no c200 and no concentration prior.
//! - Υ_disk, Υ_bulge: log-normal, medians 0.5 and 0.7, 0.1 dex (common practice at 3.6 μm).
//! - Distance and inclination: Gaussian around the table's values with its errors (when the table
//!   gives them), truncated to D > 0 and 5° < i ≤ 90°.
//! - σ/m: uniform in log10 σ/m (default) or in σ/m, within user bounds.
//! - Einasto α: uniform in log10 α within bounds, or held fixed at a user value.
//!
//! Which coordinates carry these priors is decided in one place, the galaxy's
//! [`crate::layout::Layout`] (built in [`crate::model::GalaxyModel::new`]).

use caldera_physics::ParamId;
use serde::{Deserialize, Serialize};

/// How σ/m is sampled and bounded.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct CrossSectionPrior {
    /// Sample log10(σ/m) (uniform in the logarithm) instead of σ/m itself.
    pub logarithmic: bool,
    pub min_cm2_g: f64,
    pub max_cm2_g: f64,
}

impl Default for CrossSectionPrior {
    fn default() -> Self {
        Self {
            logarithmic: true,
            min_cm2_g: 0.01,
            max_cm2_g: 100.0,
        }
    }
}

/// Bounds of the uniform priors on the halo parameters (base-10 logarithms).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct HaloBounds {
    /// log10 of central densities ρ0, Msun/kpc³ (SIDM, Burkert, pseudo-isothermal).
    pub log10_rho0: (f64, f64),
    /// log10 of the SIDM core dispersion σ0, km/s.
    pub log10_sigma0: (f64, f64),
    /// log10 of V200, km/s (NFW).
    pub log10_v200: (f64, f64),
    /// log10 of c200 (NFW).
    pub log10_c200: (f64, f64),
    /// log10 of core radii r0 or r_c, kpc (Burkert, pseudo-isothermal).
    pub log10_core_radius: (f64, f64),
    /// log10 of the Einasto shape α (when it is sampled).
    #[serde(default = "default_log10_einasto_alpha")]
    pub log10_einasto_alpha: (f64, f64),
}

fn default_log10_einasto_alpha() -> (f64, f64) {
    // α from 0.05 to 1: cusps as steep as NFW's to nearly flat cores (common practice).
    (-1.3, 0.0)
}

impl HaloBounds {
    /// Bounds of the log10 coordinate of a halo parameter (σ/m has its own prior:
    /// [`CrossSectionPrior`]); None for a parameter that is not a halo parameter.
    #[must_use]
    pub fn log10_bounds(&self, id: ParamId) -> Option<(f64, f64)> {
        match id {
            ParamId::Rho0 => Some(self.log10_rho0),
            ParamId::Sigma0 => Some(self.log10_sigma0),
            ParamId::V200 => Some(self.log10_v200),
            ParamId::C200 => Some(self.log10_c200),
            ParamId::R0 | ParamId::Rc => Some(self.log10_core_radius),
            ParamId::EinastoAlpha => Some(self.log10_einasto_alpha),
            _ => None,
        }
    }
}

impl Default for HaloBounds {
    fn default() -> Self {
        Self {
            log10_rho0: (5.0, 11.0),
            log10_sigma0: (0.5, 2.7),
            log10_v200: (1.0, 2.7),
            log10_c200: (0.0, 1.7),
            log10_core_radius: (-1.5, 2.0),
            log10_einasto_alpha: default_log10_einasto_alpha(),
        }
    }
}

/// Every prior of a fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Priors {
    pub halo: HaloBounds,
    pub cross_section: CrossSectionPrior,
    /// Apply the Dutton–Macciò concentration–mass prior.
    pub concentration_mass: bool,
    pub concentration_scatter_dex: f64,
    pub upsilon_disk_median: f64,
    pub upsilon_bulge_median: f64,
    pub upsilon_scatter_dex: f64,
    /// Let distance and inclination vary around the table's values.
    pub vary_distance: bool,
    pub vary_inclination: bool,
    /// Added in quadrature to every velocity error, km/s.
    pub error_floor_kms: f64,
    /// Hold the Einasto α at this value instead of sampling it.
    #[serde(default)]
    pub einasto_alpha_fixed: Option<f64>,
}

impl Default for Priors {
    fn default() -> Self {
        Self {
            halo: HaloBounds::default(),
            cross_section: CrossSectionPrior::default(),
            concentration_mass: true,
            concentration_scatter_dex: caldera_physics::cosmology::DUTTON_MACCIO_SCATTER_DEX,
            upsilon_disk_median: 0.5,
            upsilon_bulge_median: 0.7,
            upsilon_scatter_dex: 0.1,
            vary_distance: true,
            vary_inclination: true,
            error_floor_kms: 0.0,
            einasto_alpha_fixed: None,
        }
    }
}

/// ln of a normal density, for a value `x` with mean `mu` and standard deviation `sd`.
#[must_use]
pub fn ln_normal(x: f64, mu: f64, sd: f64) -> f64 {
    use statrs::distribution::{Continuous, Normal};
    Normal::new(mu, sd).map_or(f64::NEG_INFINITY, |n| n.ln_pdf(x))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_normal_matches_the_formula() {
        // Reference: ln N(x; μ, σ) = −ln(σ√(2π)) − (x−μ)²/(2σ²).
        let (x, mu, sd) = (0.3, -0.1, 0.7);
        let expected = -(sd * (2.0 * std::f64::consts::PI).sqrt()).ln()
            - (x - mu) * (x - mu) / (2.0 * sd * sd);
        assert!((ln_normal(x, mu, sd) - expected).abs() < 1e-14);
        assert!(ln_normal(0.0, 0.0, -1.0).is_infinite());
    }
}
