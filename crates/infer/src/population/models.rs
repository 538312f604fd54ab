//! The σ(v)/m models a population is fitted with, and their sampled coordinates.

use caldera_physics::{CrossSection, PhysicsError};
use serde::{Deserialize, Serialize};

/// A population model of the cross-section's velocity dependence.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum VelocityModel {
    /// σ/m independent of velocity.
    Constant,
    /// σ0/m · (1 + v²/w²)⁻².
    FallOff,
    /// Born-regime Yukawa transfer cross-section at a fixed dark-matter mass.
    Yukawa,
    /// s-wave Breit–Wigner resonance plus a constant background.
    Resonance,
}

/// One sampled coordinate of a population model: the base-10 logarithm of a physical parameter,
/// with a uniform prior between `lower` and `upper`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PopulationParameter {
    /// The physical parameter's name (the coordinate is its log10).
    pub name: &'static str,
    pub unit: &'static str,
    pub lower: f64,
    pub upper: f64,
}

const fn parameter(
    name: &'static str,
    unit: &'static str,
    lower: f64,
    upper: f64,
) -> PopulationParameter {
    PopulationParameter {
        name,
        unit,
        lower,
        upper,
    }
}

// Prior ranges (log10) wide enough to span dwarfs to clusters (common practice: chosen here,
// not taken from a publication).
const CONSTANT: [PopulationParameter; 1] = [parameter("sigma_m", "cm2/g", -3.0, 3.0)];
const FALL_OFF: [PopulationParameter; 2] = [
    parameter("sigma0_m", "cm2/g", -2.0, 4.0),
    parameter("w", "km/s", 0.5, 4.0),
];
const YUKAWA: [PopulationParameter; 2] = [
    parameter("alpha", "", -9.0, -1.0),
    parameter("mediator_mass", "MeV", -2.0, 3.0),
];
const RESONANCE: [PopulationParameter; 4] = [
    parameter("dm_mass", "GeV", -1.0, 3.0),
    parameter("delta", "", -10.0, -5.0),
    parameter("gamma", "", -7.0, -1.0),
    parameter("background", "cm2/g", -3.0, 2.0),
];

impl VelocityModel {
    pub const ALL: [Self; 4] = [Self::Constant, Self::FallOff, Self::Yukawa, Self::Resonance];

    /// The name used on the command line and in outputs.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::Constant => "constant",
            Self::FallOff => "fall-off",
            Self::Yukawa => "yukawa",
            Self::Resonance => "resonance",
        }
    }

    /// The model with this name.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|m| m.name() == name)
    }

    /// A one-line formula for legends and reports.
    #[must_use]
    pub fn formula(self) -> &'static str {
        match self {
            Self::Constant => "σ/m",
            Self::FallOff => "σ0/m (1 + v²/w²)⁻²",
            Self::Yukawa => "Yukawa Born σ_T/m (α, m_φ; m_χ fixed)",
            Self::Resonance => "s-wave resonance (m_χ, δ, γ) + background",
        }
    }

    /// The sampled coordinates (log10 of each physical parameter).
    #[must_use]
    pub fn parameters(self) -> &'static [PopulationParameter] {
        match self {
            Self::Constant => &CONSTANT,
            Self::FallOff => &FALL_OFF,
            Self::Yukawa => &YUKAWA,
            Self::Resonance => &RESONANCE,
        }
    }

    /// The cross-section at sampled coordinates `theta` (log10 values). The Yukawa model keeps
    /// the dark-matter mass fixed at `yukawa_dm_mass_gev`: in the Born regime σ_T/m depends on
    /// (α, m_χ, m_φ) only through two combinations (the amplitude α² m_χ / m_φ⁴ · m_χ⁻¹ and the
    /// speed m_φ c / m_χ), so a third free parameter would be unconstrained.
    pub fn cross_section(
        self,
        theta: &[f64],
        yukawa_dm_mass_gev: f64,
    ) -> Result<CrossSection, PhysicsError> {
        let p = |k: usize| 10f64.powf(theta[k]);
        match self {
            Self::Constant => CrossSection::constant(p(0)),
            Self::FallOff => CrossSection::fall_off(p(0), p(1)),
            Self::Yukawa => CrossSection::yukawa(yukawa_dm_mass_gev, p(1), p(0)),
            Self::Resonance => CrossSection::resonance(p(0), p(1), p(2), p(3)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_coordinates_map_to_cross_sections() {
        for model in VelocityModel::ALL {
            assert_eq!(VelocityModel::from_name(model.name()), Some(model));
            let centre: Vec<f64> = model
                .parameters()
                .iter()
                .map(|p| 0.5 * (p.lower + p.upper))
                .collect();
            let cross_section = model.cross_section(&centre, 10.0).expect("valid");
            assert!(cross_section.sigma_m_cm2_g(50.0) > 0.0);
        }
        let fall_off = VelocityModel::FallOff
            .cross_section(&[1.0, 2.0], 10.0)
            .expect("valid");
        // σ(w)/m = σ0/m / 4 by the definition.
        assert!((fall_off.sigma_m_cm2_g(100.0) - 2.5).abs() < 1e-12);
    }
}
