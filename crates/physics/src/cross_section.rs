//! Self-interaction cross-sections per mass and their Maxwellian averages.

use crate::PhysicsError;
use crate::error::{require_non_negative, require_positive};
use crate::units::{cm2_per_g_to_kpc2_per_msun, gyr_to_kpc_per_kms};

/// Mean relative speed of two particles drawn from a Maxwellian with 1D dispersion σ0:
/// ⟨v_rel⟩ = 4σ0/√π, km/s.
#[must_use]
pub fn mean_relative_speed_kms(sigma0_kms: f64) -> f64 {
    4.0 * sigma0_kms / std::f64::consts::PI.sqrt()
}

/// A dark-matter self-interaction cross-section per unit mass.
///
/// Only the velocity-independent case exists so far; velocity-dependent models enter here as
/// further variants, and every caller goes through [`CrossSection::sigma_v_over_m`].
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[non_exhaustive]
pub enum CrossSection {
    /// σ/m independent of velocity, cm²/g.
    Constant { sigma_m_cm2_g: f64 },
}

impl CrossSection {
    /// A velocity-independent cross-section per mass (cm²/g, ≥ 0).
    pub fn constant(sigma_m_cm2_g: f64) -> Result<Self, PhysicsError> {
        Ok(Self::Constant {
            sigma_m_cm2_g: require_non_negative("sigma/m [cm2/g]", sigma_m_cm2_g)?,
        })
    }

    /// ⟨σ v_rel⟩/m averaged over a Maxwellian with 1D dispersion `sigma0_kms`,
    /// in cm²/g · km/s. For a constant σ/m this is (σ/m) · 4σ0/√π.
    #[must_use]
    pub fn sigma_v_over_m_cm2_g_kms(&self, sigma0_kms: f64) -> f64 {
        match *self {
            Self::Constant { sigma_m_cm2_g } => sigma_m_cm2_g * mean_relative_speed_kms(sigma0_kms),
        }
    }

    /// ⟨σ v_rel⟩/m in the solver's units, kpc²/Msun · km/s.
    #[must_use]
    pub fn sigma_v_over_m(&self, sigma0_kms: f64) -> f64 {
        cm2_per_g_to_kpc2_per_msun(self.sigma_v_over_m_cm2_g_kms(sigma0_kms))
    }

    /// The density at which each particle has scattered once over `age_gyr`:
    /// ρ1 = 1 / (⟨σv⟩/m · t_age), Msun/kpc³ (Kaplinghat, Tulin & Yu 2016).
    #[must_use]
    pub fn rate_density_msun_kpc3(&self, sigma0_kms: f64, age_gyr: f64) -> f64 {
        1.0 / (self.sigma_v_over_m(sigma0_kms) * gyr_to_kpc_per_kms(age_gyr))
    }

    /// The dispersion σ0 at which the rate condition puts ρ1 = `rho1_msun_kpc3`, km/s.
    pub fn sigma0_for_rate_density_kms(
        &self,
        rho1_msun_kpc3: f64,
        age_gyr: f64,
    ) -> Result<f64, PhysicsError> {
        match *self {
            Self::Constant { sigma_m_cm2_g } => {
                require_positive("sigma/m [cm2/g]", sigma_m_cm2_g)?;
                let per_sigma0 = cm2_per_g_to_kpc2_per_msun(sigma_m_cm2_g)
                    * mean_relative_speed_kms(1.0)
                    * gyr_to_kpc_per_kms(age_gyr);
                Ok(1.0 / (per_sigma0 * rho1_msun_kpc3))
            }
        }
    }

    /// True when the cross-section vanishes at every velocity (the collisionless limit).
    #[must_use]
    pub fn is_zero(&self) -> bool {
        match *self {
            Self::Constant { sigma_m_cm2_g } => sigma_m_cm2_g == 0.0,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn constant_average_matches_scipy() {
        // Reference: physics reference (scipy): σ/m = 3 cm²/g, σ0 = 50 km/s →
        // ⟨v⟩ = 112.837917 km/s, ⟨σv⟩/m = 338.51375 cm²/g·km/s.
        let xs = CrossSection::constant(3.0).expect("valid");
        assert_relative_eq!(
            mean_relative_speed_kms(50.0),
            112.837917,
            max_relative = 1e-8
        );
        assert_relative_eq!(
            xs.sigma_v_over_m_cm2_g_kms(50.0),
            338.51375,
            max_relative = 1e-7
        );
    }

    #[test]
    fn rate_density_inverts() {
        let xs = CrossSection::constant(2.0).expect("valid");
        let rho1 = xs.rate_density_msun_kpc3(37.0, 10.0);
        let sigma0 = xs
            .sigma0_for_rate_density_kms(rho1, 10.0)
            .expect("invertible");
        assert_relative_eq!(sigma0, 37.0, max_relative = 1e-12);
    }
}
