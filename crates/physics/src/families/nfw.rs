//! The NFW family: V200 and c200 (Navarro, Frenk & White 1996, 1997).

use super::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
use crate::PhysicsError;
use crate::halo::Nfw;
use crate::params::{ParamId, ParamValues};

/// Collisionless NFW halos, described by (V200, c200).
#[derive(Debug, Clone, Copy)]
pub struct NfwFamily;

impl HaloFamily for NfwFamily {
    fn model(&self) -> HaloModel {
        HaloModel::Nfw
    }
    fn name(&self) -> &'static str {
        "nfw"
    }
    fn label(&self) -> &'static str {
        "NFW"
    }
    fn parameters(&self) -> &'static [ParamId] {
        &[ParamId::V200, ParamId::C200]
    }
    fn build(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<BuiltHalo, PhysicsError> {
        let nfw = Nfw::from_v200_c200(
            values.require(ParamId::V200)?,
            values.require(ParamId::C200)?,
            &context.cosmology,
        )?;
        let virial = nfw.virial(&context.cosmology)?;
        Ok(BuiltHalo {
            derived: HaloDerived::default().with_virial(&virial, Some(nfw.r_s_kpc)),
            profile: Box::new(nfw),
        })
    }
}
