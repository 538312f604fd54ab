//! The virial definition used to quote V200, c200 and M200, and the concentration–mass relation.

use crate::PhysicsError;
use crate::error::require_positive;
use crate::units::{G_KPC_KMS2_PER_MSUN, KMS_PER_KPC_PER_KMS_PER_MPC};

/// Hubble constant used when the user gives none, km/s/Mpc (common practice).
pub const DEFAULT_HUBBLE_KMS_MPC: f64 = 70.0;

/// Overdensity of the virial definition: Δ = 200 × ρ_crit (common practice).
pub const VIRIAL_OVERDENSITY: f64 = 200.0;

/// The cosmology that turns a halo's density profile into V200, c200 and M200.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Cosmology {
    /// Hubble constant H0, km/s/Mpc.
    pub hubble_kms_mpc: f64,
}

impl Default for Cosmology {
    fn default() -> Self {
        Self {
            hubble_kms_mpc: DEFAULT_HUBBLE_KMS_MPC,
        }
    }
}

impl Cosmology {
    /// A cosmology with Hubble constant `hubble_kms_mpc` (km/s/Mpc).
    pub fn with_hubble(hubble_kms_mpc: f64) -> Result<Self, PhysicsError> {
        Ok(Self {
            hubble_kms_mpc: require_positive("Hubble constant [km/s/Mpc]", hubble_kms_mpc)?,
        })
    }

    /// H0 in km/s/kpc.
    #[must_use]
    pub fn hubble_kms_kpc(&self) -> f64 {
        self.hubble_kms_mpc * KMS_PER_KPC_PER_KMS_PER_MPC
    }

    /// Dimensionless h = H0 / (100 km/s/Mpc).
    #[must_use]
    pub fn little_h(&self) -> f64 {
        self.hubble_kms_mpc / 100.0
    }

    /// Critical density 3H0² / (8πG), Msun/kpc³.
    #[must_use]
    pub fn critical_density_msun_kpc3(&self) -> f64 {
        let h = self.hubble_kms_kpc();
        3.0 * h * h / (8.0 * std::f64::consts::PI * G_KPC_KMS2_PER_MSUN)
    }

    /// r200 = V200 / (10 H0), kpc (from M200 = (4π/3) 200 ρ_crit r200³ and V200² = G M200/r200).
    #[must_use]
    pub fn r200_kpc_from_v200(&self, v200_kms: f64) -> f64 {
        v200_kms / (10.0 * self.hubble_kms_kpc())
    }

    /// V200 = 10 H0 r200, km/s.
    #[must_use]
    pub fn v200_kms_from_r200(&self, r200_kpc: f64) -> f64 {
        10.0 * self.hubble_kms_kpc() * r200_kpc
    }

    /// r200 from M200: M200 = (4π/3) Δ ρ_crit r200³, kpc.
    #[must_use]
    pub fn r200_kpc_from_m200(&self, m200_msun: f64) -> f64 {
        let rho = VIRIAL_OVERDENSITY * self.critical_density_msun_kpc3();
        (3.0 * m200_msun / (4.0 * std::f64::consts::PI * rho)).cbrt()
    }

    /// Median concentration of the Dutton & Macciò (2014) relation for Δ = 200c at z = 0:
    /// log10 c200 = 0.905 − 0.101 log10(M200 / (10¹² h⁻¹ Msun)); its scatter is
    /// [`DUTTON_MACCIO_SCATTER_DEX`].
    #[must_use]
    pub fn dutton_maccio_c200(&self, m200_msun: f64) -> f64 {
        10f64.powf(self.log10_c200_power_law(
            m200_msun,
            DUTTON_MACCIO_INTERCEPT,
            DUTTON_MACCIO_SLOPE,
        ))
    }

    /// log10 c200 of a power-law concentration–mass relation,
    /// log10 c200 = `intercept` + `slope` · log10(M200 / (10¹² h⁻¹ Msun)).
    #[must_use]
    pub fn log10_c200_power_law(&self, m200_msun: f64, intercept: f64, slope: f64) -> f64 {
        let pivot = 1e12 / self.little_h();
        intercept + slope * (m200_msun / pivot).log10()
    }
}

/// Intercept and slope of the Dutton & Macciò (2014) relation for Δ = 200c at z = 0 (see
/// [`Cosmology::dutton_maccio_c200`]).
pub const DUTTON_MACCIO_INTERCEPT: f64 = 0.905;
pub const DUTTON_MACCIO_SLOPE: f64 = -0.101;

/// Scatter of log10 c200 about the Dutton & Macciò (2014) relation, dex.
pub const DUTTON_MACCIO_SCATTER_DEX: f64 = 0.11;

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn critical_density_matches_astropy() {
        // Reference: 3H0²/(8πG) for H0 = 70 km/s/Mpc, astropy (tests/reference/check_values.md).
        assert_relative_eq!(
            Cosmology::default().critical_density_msun_kpc3(),
            135.99295,
            max_relative = 1e-6
        );
    }

    #[test]
    fn dutton_maccio_matches_published_check_values() {
        // Reference: Dutton & Macciò (2014) with h = 0.7: c200 = 13.263 at 1e10 Msun, 8.330 at
        // 1e12 Msun (tests/reference/check_values.md).
        let cosmo = Cosmology::default();
        assert_relative_eq!(cosmo.dutton_maccio_c200(1e10), 13.263, max_relative = 1e-4);
        assert_relative_eq!(cosmo.dutton_maccio_c200(1e12), 8.330, max_relative = 1e-4);
    }
}
