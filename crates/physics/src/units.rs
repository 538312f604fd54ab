//! Units and physical constants: the one place they are defined.
//!
//! Internal system: radius in kpc, velocity in km/s, mass in Msun, density in Msun/kpc³, time in
//! Gyr at the edges and kpc/(km/s) inside the solver. Cross-section per mass enters and leaves in
//! cm²/g and is converted to kpc²/Msun here only.

/// Newton's constant in kpc (km/s)² / Msun.
///
/// Source: astropy.constants (CODATA 2018 G, IAU 2015 nominal solar mass), as tabulated in
/// tests/reference/check_values.md.
pub const G_KPC_KMS2_PER_MSUN: f64 = 4.300917270e-6;

/// One cm²/g expressed in kpc²/Msun.
///
/// Source: astropy.units conversion `(1 * u.cm**2 / u.g).to(u.kpc**2 / u.Msun)`.
pub const KPC2_PER_MSUN_PER_CM2_PER_G: f64 = 2.088357373e-10;

/// One cm²/g expressed in barn/GeV.
///
/// Source: astropy.units conversion (1 cm²/g = 1.78266 barn/GeV).
pub const BARN_PER_GEV_PER_CM2_PER_G: f64 = 1.78266;

/// One kpc/(km/s) expressed in Gyr.
///
/// Source: astropy.units conversion `(1 * u.kpc / (u.km / u.s)).to(u.Gyr)`.
pub const GYR_PER_KPC_PER_KMS: f64 = 0.9777922217;

/// Kilometres per second per kiloparsec in one km/s/Mpc (1 Mpc = 1000 kpc, exact).
pub const KMS_PER_KPC_PER_KMS_PER_MPC: f64 = 1.0e-3;

/// Kiloparsecs subtended by one arcsecond at a distance of one megaparsec:
/// 1000 kpc × π / (180 × 3600) (exact from the definitions).
pub const KPC_PER_ARCSEC_PER_MPC: f64 = 1000.0 * std::f64::consts::PI / 648_000.0;

/// (ħc)² in mb·GeV², converting a cross-section in natural units (GeV⁻²) to millibarn.
///
/// Source: Particle Data Group, "Physical constants" table ((ħc)² = 0.389 379 372 1 GeV² mbarn;
/// astropy.constants (CODATA 2018) gives 0.389 379 372 17).
pub const HBAR_C_SQUARED_MB_GEV2: f64 = 0.389_379_372_2;

/// One GeV/c² in grams.
///
/// Source: Particle Data Group / CODATA 2018 (1 GeV/c² = 1.782 661 92 × 10⁻²⁴ g).
pub const GRAM_PER_GEV: f64 = 1.782_661_92e-24;

/// One millibarn in cm² (exact: 1 b = 10⁻²⁴ cm²).
pub const CM2_PER_MB: f64 = 1e-27;

/// The speed of light in km/s (exact, SI definition).
pub const SPEED_OF_LIGHT_KMS: f64 = 299_792.458;

/// Halo age used when the user gives none, in Gyr (common practice for galaxies; published
/// Bayesian fits of rotation-curve samples used 10 Gyr).
pub const DEFAULT_HALO_AGE_GYR: f64 = 10.0;

/// Converts a cross-section per mass from cm²/g to kpc²/Msun.
#[must_use]
pub fn cm2_per_g_to_kpc2_per_msun(sigma_m_cm2_g: f64) -> f64 {
    sigma_m_cm2_g * KPC2_PER_MSUN_PER_CM2_PER_G
}

/// Converts a time from Gyr to the solver's kpc/(km/s).
#[must_use]
pub fn gyr_to_kpc_per_kms(time_gyr: f64) -> f64 {
    time_gyr / GYR_PER_KPC_PER_KMS
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constants_match_the_physics_reference() {
        // Reference: astropy.constants / astropy.units values as tabulated in tests/reference/check_values.md.
        approx::assert_relative_eq!(G_KPC_KMS2_PER_MSUN, 4.300917270e-6, max_relative = 1e-12);
        approx::assert_relative_eq!(cm2_per_g_to_kpc2_per_msun(1.0), 2.088357373e-10);
        approx::assert_relative_eq!(gyr_to_kpc_per_kms(0.9777922217), 1.0);
        // The barn/GeV factor agrees with the PDG GeV-to-gram factor and the barn's definition.
        approx::assert_relative_eq!(
            BARN_PER_GEV_PER_CM2_PER_G,
            GRAM_PER_GEV / (CM2_PER_MB * 1e3),
            max_relative = 1e-5
        );
    }
}
