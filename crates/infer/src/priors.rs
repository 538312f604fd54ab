//! Priors, all user-editable and saved with a session.
//!
//! - The outer halo, for every model with a c200 (NFW, Einasto, the SIDM halo's matched NFW
//!   halo, Burkert with c200 = r200 / r_−2): log10 V200 uniform within [`HaloBounds`] (so log
//!   M200 = 3 log V200 + const is uniform too) and log10 c200 normal around the Dutton & Macciò
//!   (2014) relation with 0.11 dex scatter, truncated to the c200 bounds (uniform in log c200
//!   when the concentration–mass relation is switched off). NFW and Einasto sample (log V200,
//!   log c200) directly. SIDM and Burkert sample their own coordinates (ρ0, σ0 or ρ0, r0), whose
//!   bounds only truncate; the prior density there is the outer halo's times the Jacobian
//!   |∂(log M200, log c200)/∂(log ρ0, log σ0)| (see [`crate::model`]). For SIDM,
//!   [`SidmBranches`] says which of several cores matching one halo are admitted.
//! - Other halo parameters: uniform within [`HaloBounds`] in their sampled coordinates. The
//!   pseudo-isothermal profile has no radius where its log-slope is −2, hence no c200: it is
//!   uniform in log ρ0 and log r_c.
//! - Υ_disk, Υ_bulge: log-normal, medians 0.5 and 0.7, 0.1 dex (common practice at 3.6 μm).
//! - Distance and inclination: Gaussian around the table's values with its errors (when the table
//!   gives them), truncated to D > 0 and 5° < i ≤ 90°.
//! - σ/m: uniform in log10 σ/m (default) or in σ/m, within user bounds.
//! - Einasto α: uniform in log10 α within bounds, or held fixed at a user value.
//!
//! Which coordinates carry these priors is decided in one place, the galaxy's
//! [`crate::layout::Layout`] (built in [`crate::model::GalaxyModel::new`]).

use caldera_physics::{Cosmology, ParamId};
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

/// Which cores the SIDM prior admits when several match one outer halo (the halo-first
/// problem's branches; see [`caldera_physics::sidm::baryon_free_fold_contrasts_ln`]).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum SidmBranches {
    /// Only the lowest-density core of each outer halo: the core-expansion solution, the usual
    /// physical choice. The derived (M200, c200, σ/m) then follow the stated prior exactly,
    /// restricted to the halos whose core exists and lies within the sampled bounds.
    #[default]
    LowestDensity,
    /// Every matching core, each with the full prior weight of its outer halo: a halo with n
    /// matching cores counts n times, so the derived (M200, c200, σ/m) follow the stated prior
    /// times n. The high-density cores are the gravothermal-collapse side of the solution.
    All,
}

impl SidmBranches {
    /// The name on the command line and in saved settings.
    #[must_use]
    pub fn key(self) -> &'static str {
        match self {
            Self::LowestDensity => "lowest",
            Self::All => "all",
        }
    }
}

/// The mean concentration–mass relation of the outer-halo prior,
/// log10 c200 = intercept + slope · log10(M200 / (10¹² h⁻¹ Msun)). The default is Dutton &
/// Macciò (2014) for Δ = 200c at z = 0.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ConcentrationRelation {
    pub intercept: f64,
    pub slope: f64,
}

impl Default for ConcentrationRelation {
    fn default() -> Self {
        Self {
            intercept: caldera_physics::cosmology::DUTTON_MACCIO_INTERCEPT,
            slope: caldera_physics::cosmology::DUTTON_MACCIO_SLOPE,
        }
    }
}

impl ConcentrationRelation {
    /// The relation's median log10 c200 at `m200_msun`.
    #[must_use]
    pub fn log10_c200(&self, m200_msun: f64, cosmology: &Cosmology) -> f64 {
        cosmology.log10_c200_power_law(m200_msun, self.intercept, self.slope)
    }
}

/// The coordinates the sampler moves in for an SIDM fit. The prior and the posterior are the
/// same in both; only the geometry the sampler sees, and the cost of an evaluation, differ.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum SidmCoordinates {
    /// (log ρ0, log σ0, σ/m): one core-first solve per evaluation plus two for the Jacobian
    /// that carries the outer halo's prior over. Cheap per evaluation, but baryon-dominated
    /// galaxies give curved posteriors that mix slowly (τ ≈ 500–850 steps on the demo spirals).
    #[default]
    Core,
    /// (log V200, log c200, σ/m): the outer halo the data and the prior speak of directly, so
    /// the posterior is nearly uncorrelated (τ ≈ 80 steps on demo dwarfs and spirals alike);
    /// each evaluation finds the lowest-density core by Newton's method from the last core found,
    /// or by the full halo-first search when that fails — about 1.5 ms per evaluation on
    /// average today, 20 to 50 times the core-first cost, because outer halos without a core
    /// need the full search to say so. Only with [`SidmBranches::LowestDensity`].
    Halo,
}

/// Every prior of a fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Priors {
    pub halo: HaloBounds,
    pub cross_section: CrossSectionPrior,
    /// Apply the concentration–mass prior (else log c200 is uniform within its bounds).
    pub concentration_mass: bool,
    /// Its mean relation (Dutton & Macciò 2014 by default) and scatter in log10 c200, dex.
    #[serde(default)]
    pub concentration_relation: ConcentrationRelation,
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
    /// Which SIDM cores the prior admits when several match one outer halo.
    #[serde(default)]
    pub sidm_branches: SidmBranches,
    /// The coordinates an SIDM fit samples in (the prior is the same in both).
    #[serde(default)]
    pub sidm_coordinates: SidmCoordinates,
    /// The stellar-to-halo mass prior: log10 of the stellar mass at the sampled Υ's normal
    /// around the Moster, Naab & White (2013) relation at the halo's M200, with its 0.15 dex
    /// scatter ([`caldera_physics::scaling::MOSTER_2013`]). Off by default.
    #[serde(default)]
    pub stellar_mass_halo: bool,
}

impl Default for Priors {
    fn default() -> Self {
        Self {
            halo: HaloBounds::default(),
            cross_section: CrossSectionPrior::default(),
            concentration_mass: true,
            concentration_relation: ConcentrationRelation::default(),
            concentration_scatter_dex: caldera_physics::cosmology::DUTTON_MACCIO_SCATTER_DEX,
            upsilon_disk_median: 0.5,
            upsilon_bulge_median: 0.7,
            upsilon_scatter_dex: 0.1,
            vary_distance: true,
            vary_inclination: true,
            error_floor_kms: 0.0,
            einasto_alpha_fixed: None,
            sidm_branches: SidmBranches::default(),
            sidm_coordinates: SidmCoordinates::default(),
            stellar_mass_halo: false,
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
