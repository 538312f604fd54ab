//! The σ(v)/m models a population is fitted with, and their sampled coordinates.

use caldera_physics::{CrossSection, PhysicsError};

/// A population model of the cross-section's velocity dependence: the physics crate's
/// cross-section kinds, described once there (parameters, units, bounds, constructor).
pub use caldera_physics::CrossSectionKind as VelocityModel;

/// One sampled coordinate of a population model: the base-10 logarithm of a physical parameter,
/// with a uniform prior between `lower` and `upper`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PopulationParameter {
    /// The physical parameter's key (the coordinate is its log10).
    pub name: &'static str,
    pub unit: &'static str,
    pub lower: f64,
    pub upper: f64,
}

/// What a population fit needs of a cross-section kind.
pub trait PopulationModel {
    /// The sampled coordinates (log10 of each parameter not held fixed), in the kind's order.
    fn population_parameters(self) -> Vec<PopulationParameter>;

    /// The cross-section at sampled coordinates `theta` (log10 values). The Yukawa model keeps
    /// the dark-matter mass fixed at `yukawa_dm_mass_gev`: in the Born regime σ_T/m depends on
    /// (α, m_χ, m_φ) only through two combinations (the amplitude α² m_χ / m_φ⁴ · m_χ⁻¹ and the
    /// speed m_φ c / m_χ), so a third free parameter would be unconstrained.
    fn cross_section(
        self,
        theta: &[f64],
        yukawa_dm_mass_gev: f64,
    ) -> Result<CrossSection, PhysicsError>;
}

impl PopulationModel for VelocityModel {
    fn population_parameters(self) -> Vec<PopulationParameter> {
        self.parameters()
            .iter()
            .filter(|p| !p.held_in_population_fits)
            .map(|p| PopulationParameter {
                name: p.key,
                unit: p.unit,
                lower: p.log10_bounds.0,
                upper: p.log10_bounds.1,
            })
            .collect()
    }

    fn cross_section(
        self,
        theta: &[f64],
        yukawa_dm_mass_gev: f64,
    ) -> Result<CrossSection, PhysicsError> {
        let mut sampled = theta.iter();
        let mut values = Vec::with_capacity(self.parameters().len());
        for p in self.parameters() {
            if p.held_in_population_fits {
                values.push(yukawa_dm_mass_gev);
            } else {
                let coordinate = sampled.next().copied().unwrap_or(f64::NAN);
                values.push(10f64.powf(coordinate));
            }
        }
        self.build(&values)
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
                .population_parameters()
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
