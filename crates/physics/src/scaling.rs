//! Galaxy–halo scaling relations: what stellar mass, disk size and gas mass a halo of given
//! mass typically holds. Used to design invented catalogues (forecasts) and, for the stellar
//! mass, as a prior linking a galaxy's stars to its halo.

use crate::error::PhysicsError;

/// The stellar-to-halo mass relation of Moster, Naab & White (2013, MNRAS 428, 3121), eq. 2 at
/// z = 0: M*/M = 2N [(M/M1)^(−β) + (M/M1)^γ]^(−1), with their best-fitting z = 0 parameters
/// (Table 1: log10 M1 = 11.590, N = 0.0351, β = 1.376, γ = 0.608) and its 0.15 dex intrinsic
/// scatter in log10 M* at fixed halo mass (their section 3; values from memory). Their halo mass
/// is the one of an overdensity 200 times the critical density, as M200 here.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StellarHaloRelation {
    pub log10_m1_msun: f64,
    pub normalisation: f64,
    pub beta: f64,
    pub gamma: f64,
    /// Intrinsic scatter of log10 M* at fixed M200, dex.
    pub scatter_dex: f64,
}

/// [`StellarHaloRelation`] with the Moster, Naab & White (2013) z = 0 values.
pub const MOSTER_2013: StellarHaloRelation = StellarHaloRelation {
    log10_m1_msun: 11.590,
    normalisation: 0.0351,
    beta: 1.376,
    gamma: 0.608,
    scatter_dex: 0.15,
};

impl StellarHaloRelation {
    /// The relation's median stellar mass for a halo of `m200_msun`, Msun.
    pub fn stellar_mass_msun(&self, m200_msun: f64) -> Result<f64, PhysicsError> {
        let m200_msun = crate::error::require_positive("halo mass M200 [Msun]", m200_msun)?;
        let x = m200_msun / 10f64.powf(self.log10_m1_msun);
        Ok(m200_msun * 2.0 * self.normalisation / (x.powf(-self.beta) + x.powf(self.gamma)))
    }
}

/// The half-mass radius of a galaxy's stars as a fraction of its halo's R200: r½ ≈ 0.015 R200
/// (Kravtsov 2013, ApJ 764, L31, from abundance matching; value from memory).
pub const HALF_MASS_RADIUS_PER_R200: f64 = 0.015;

/// An exponential disk's half-mass radius in scale lengths: the root of
/// 1 − (1 + x) e^(−x) = 1/2, x ≈ 1.678 (a textbook result).
pub const EXPONENTIAL_HALF_MASS_SCALE_LENGTHS: f64 = 1.678_346_990_016_661;

/// The stellar disk's scale length for a halo of radius `r200_kpc`, kpc, from
/// [`HALF_MASS_RADIUS_PER_R200`].
#[must_use]
pub fn stellar_scale_length_kpc(r200_kpc: f64) -> f64 {
    HALF_MASS_RADIUS_PER_R200 * r200_kpc / EXPONENTIAL_HALF_MASS_SCALE_LENGTHS
}

/// A cold-gas mass for a stellar mass: M_gas / M* = (M* / 10⁹ Msun)^(−1/2), so dwarfs are gas
/// rich and large spirals hold a few tens of per cent of their stellar mass in gas. A design
/// assumption of ours (the trend is the observed one; the numbers are common practice, not a fit).
#[must_use]
pub fn gas_mass_msun(stellar_mass_msun: f64) -> f64 {
    stellar_mass_msun * (stellar_mass_msun / 1e9).powf(-0.5)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn moster_relation_peaks_near_its_characteristic_mass() {
        // At M = M1 the formula gives M*/M = N exactly (2N / (1 + 1)).
        let m1 = 10f64.powf(MOSTER_2013.log10_m1_msun);
        let ratio = MOSTER_2013.stellar_mass_msun(m1).expect("valid") / m1;
        assert!((ratio - MOSTER_2013.normalisation).abs() < 1e-12);
        // A Milky-Way-mass halo of 10¹² Msun holds ≈ 3.4·10¹⁰ Msun of stars (worked by hand
        // from eq. 2: x = 10^0.41, x^−β + x^γ = 0.272 + 1.775); the relation falls steeply to
        // dwarfs (≈ 4.6·10⁶ Msun at 10¹⁰ Msun).
        let mw = MOSTER_2013.stellar_mass_msun(1e12).expect("valid");
        assert!((mw / 3.43e10 - 1.0).abs() < 0.01, "{mw}");
        let dwarf = MOSTER_2013.stellar_mass_msun(1e10).expect("valid");
        assert!((dwarf / 4.55e6 - 1.0).abs() < 0.02, "{dwarf}");
        assert!(MOSTER_2013.stellar_mass_msun(-1.0).is_err());
    }

    #[test]
    fn exponential_half_mass_radius_solves_its_equation() {
        let x = EXPONENTIAL_HALF_MASS_SCALE_LENGTHS;
        assert!((1.0 - (1.0 + x) * (-x).exp() - 0.5).abs() < 1e-12);
    }
}
