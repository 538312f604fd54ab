//! The Einasto (1965) family: V200, c200 = r200 / r₋₂ and the shape α.

use super::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
use crate::PhysicsError;
use crate::halo::Einasto;
use crate::params::{ParamId, ParamValues};

/// Einasto halos, described by (V200, c200, α); c200 = r200 / r₋₂ is the analogue of NFW's
/// r200 / r_s. α may be held fixed by the caller (a fit's layout), e.g. at ≈ 0.17, the value
/// typical of simulated collisionless halos (Gao et al. 2008, from memory).
#[derive(Debug, Clone, Copy)]
pub struct EinastoFamily;

impl HaloFamily for EinastoFamily {
    fn model(&self) -> HaloModel {
        HaloModel::Einasto
    }
    fn name(&self) -> &'static str {
        "einasto"
    }
    fn label(&self) -> &'static str {
        "Einasto"
    }
    fn parameters(&self) -> &'static [ParamId] {
        &[ParamId::V200, ParamId::C200, ParamId::EinastoAlpha]
    }
    fn build(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<BuiltHalo, PhysicsError> {
        let (halo, virial) = Einasto::with_virial(
            values.require(ParamId::V200)?,
            values.require(ParamId::C200)?,
            values.require(ParamId::EinastoAlpha)?,
            &context.cosmology,
        )?;
        Ok(BuiltHalo {
            derived: HaloDerived::default().with_virial(&virial, Some(halo.r_minus2_kpc)),
            profile: Box::new(halo),
        })
    }
}
