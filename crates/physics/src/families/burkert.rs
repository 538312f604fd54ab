//! The Burkert (1995) family: central density ρ0 and core radius r0.

use super::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
use crate::PhysicsError;
use crate::halo::{Burkert, virial_quantities};
use crate::params::{ParamId, ParamValues};

/// Burkert cored halos, described by (ρ0, r0); c200 = r200 / r₋₂.
#[derive(Debug, Clone, Copy)]
pub struct BurkertFamily;

impl HaloFamily for BurkertFamily {
    fn model(&self) -> HaloModel {
        HaloModel::Burkert
    }
    fn name(&self) -> &'static str {
        "burkert"
    }
    fn label(&self) -> &'static str {
        "Burkert"
    }
    fn parameters(&self) -> &'static [ParamId] {
        &[ParamId::Rho0, ParamId::R0]
    }
    fn outer_halo_parameters(&self) -> Option<[ParamId; 2]> {
        Some([ParamId::Rho0, ParamId::R0])
    }
    fn build(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<BuiltHalo, PhysicsError> {
        let r0 = values.require(ParamId::R0)?;
        let burkert = Burkert::new(values.require(ParamId::Rho0)?, r0)?;
        let r_minus2 = Burkert::r_minus2_over_r0() * r0;
        let virial = virial_quantities(&burkert, r_minus2, &context.cosmology)?;
        let mut derived = HaloDerived::default().with_virial(&virial, Some(r_minus2));
        derived.core_radius_kpc = Some(r0);
        Ok(BuiltHalo {
            derived,
            profile: Box::new(burkert),
        })
    }
}
