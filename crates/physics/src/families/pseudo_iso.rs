//! The pseudo-isothermal family: central density ρ0 and core radius r_c.

use super::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
use crate::PhysicsError;
use crate::halo::{PseudoIsothermal, virial_quantities};
use crate::params::{ParamId, ParamValues};

/// Pseudo-isothermal spheres, described by (ρ0, r_c). The log-slope never reaches −2 at a finite
/// radius, so there is no r₋₂ and no c200.
#[derive(Debug, Clone, Copy)]
pub struct PseudoIsothermalFamily;

impl HaloFamily for PseudoIsothermalFamily {
    fn model(&self) -> HaloModel {
        HaloModel::PseudoIsothermal
    }
    fn name(&self) -> &'static str {
        "pseudo-iso"
    }
    fn label(&self) -> &'static str {
        "Pseudo-isothermal"
    }
    fn parameters(&self) -> &'static [ParamId] {
        &[ParamId::Rho0, ParamId::Rc]
    }
    fn build(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<BuiltHalo, PhysicsError> {
        let rc = values.require(ParamId::Rc)?;
        let iso = PseudoIsothermal::new(values.require(ParamId::Rho0)?, rc)?;
        let virial = virial_quantities(&iso, f64::NAN, &context.cosmology)?;
        let mut derived = HaloDerived::default().with_virial(&virial, None);
        derived.core_radius_kpc = Some(rc);
        Ok(BuiltHalo {
            derived,
            profile: Box::new(iso),
        })
    }
}
