//! The SIDM isothermal-Jeans family: the core's (ρ0, σ0) and σ/m, matched to an outer NFW halo.

use super::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
use crate::PhysicsError;
use crate::cross_section::CrossSection;
use crate::halo::Nfw;
use crate::params::{ParamId, ParamValues};
use crate::sidm::{self, Branch, SidmHalo, SidmSetup};

/// SIDM halos: an isothermal core (with the baryons in the Jeans equation) inside r1, NFW
/// outside. Sampled core-first in (ρ0, σ0, σ/m); set by hand halo-first in (σ/m, V200, c200),
/// the core found by the halo-first solve.
#[derive(Debug, Clone, Copy)]
pub struct SidmFamily;

fn setup<'a>(sigma_m_cm2_g: f64, context: &HaloContext<'a>) -> Result<SidmSetup<'a>, PhysicsError> {
    Ok(SidmSetup {
        cross_section: CrossSection::constant(sigma_m_cm2_g)?,
        age_gyr: context.age_gyr,
        baryons: context.baryons,
        cosmology: context.cosmology,
    })
}

fn derived(halo: &SidmHalo, sigma_m_cm2_g: f64, outer_jacobian_det: Option<f64>) -> HaloDerived {
    let s = halo.summary();
    HaloDerived {
        v200_kms: Some(s.v200_kms),
        c200: Some(s.c200),
        m200_msun: Some(s.m200_msun),
        r_minus2_kpc: Some(halo.nfw().r_s_kpc),
        core_radius_kpc: Some(s.core_radius_kpc),
        r1_kpc: Some(s.r1_kpc),
        v_rel_kms: Some(s.v_rel_kms),
        sigma_m_cm2_g: Some(sigma_m_cm2_g),
        rho0_msun_kpc3: Some(halo.rho0_msun_kpc3()),
        sigma0_kms: Some(halo.sigma0_kms()),
        core_contrast_ln: Some(halo.core_contrast_ln()),
        outer_jacobian_det,
    }
}

impl HaloFamily for SidmFamily {
    fn model(&self) -> HaloModel {
        HaloModel::Sidm
    }
    fn name(&self) -> &'static str {
        "sidm"
    }
    fn label(&self) -> &'static str {
        "SIDM (isothermal Jeans)"
    }
    fn parameters(&self) -> &'static [ParamId] {
        &[ParamId::Rho0, ParamId::Sigma0, ParamId::SigmaM]
    }
    fn outer_halo_parameters(&self) -> Option<[ParamId; 2]> {
        Some([ParamId::Rho0, ParamId::Sigma0])
    }
    fn uses_baryons(&self) -> bool {
        true
    }
    fn build(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<BuiltHalo, PhysicsError> {
        let sigma_m = values.require(ParamId::SigmaM)?;
        // The Jacobian comes with the solve (≈ 1.4× one plain solve): a fit's prior needs it.
        let (halo, jacobian) = sidm::core_first_with_outer_jacobian(
            &setup(sigma_m, context)?,
            values.require(ParamId::Rho0)?,
            values.require(ParamId::Sigma0)?,
        )?;
        Ok(BuiltHalo {
            derived: derived(&halo, sigma_m, Some(sidm::outer_jacobian_det(&jacobian))),
            profile: Box::new(halo),
        })
    }
    fn controls(&self) -> &'static [ParamId] {
        &[ParamId::SigmaM, ParamId::V200, ParamId::C200]
    }
    /// Halo-first: the core matching the NFW halo (V200, c200) at σ/m. With `near`, Newton from
    /// that core first (following one solution while dragging), else the lowest-density core.
    fn parameters_from_controls(
        &self,
        controls: &ParamValues,
        context: &HaloContext,
        near: Option<&ParamValues>,
    ) -> Result<ParamValues, PhysicsError> {
        if let Some(Ok(followed)) = self.follow_controls(controls, context, near) {
            return Ok(followed);
        }
        let sigma_m = controls.require(ParamId::SigmaM)?;
        let setup = setup(sigma_m, context)?;
        let nfw = Nfw::from_v200_c200(
            controls.require(ParamId::V200)?,
            controls.require(ParamId::C200)?,
            &context.cosmology,
        )?;
        let halo = sidm::halo_first(&setup, &nfw, Branch::LowestDensity)?;
        let mut values = *controls;
        values.set(ParamId::Rho0, halo.rho0_msun_kpc3());
        values.set(ParamId::Sigma0, halo.sigma0_kms());
        Ok(values)
    }
    fn follow_controls(
        &self,
        controls: &ParamValues,
        context: &HaloContext,
        near: Option<&ParamValues>,
    ) -> Option<Result<ParamValues, PhysicsError>> {
        // Newton's method from the previous core only (a few integrations); no global search.
        let guess = near.and_then(|v| Some((v.get(ParamId::Rho0)?, v.get(ParamId::Sigma0)?)))?;
        let followed = (|| {
            let setup = setup(controls.require(ParamId::SigmaM)?, context)?;
            let nfw = Nfw::from_v200_c200(
                controls.require(ParamId::V200)?,
                controls.require(ParamId::C200)?,
                &context.cosmology,
            )?;
            sidm::halo_first_near(&setup, &nfw, guess)
        })();
        let halo = followed.ok()?;
        let mut values = *controls;
        values.set(ParamId::Rho0, halo.rho0_msun_kpc3());
        values.set(ParamId::Sigma0, halo.sigma0_kms());
        Some(Ok(values))
    }

    fn controls_from_parameters(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<ParamValues, PhysicsError> {
        let built = self.build(values, context)?;
        let mut controls = *values;
        let d = built.derived;
        for (id, value) in [(ParamId::V200, d.v200_kms), (ParamId::C200, d.c200)] {
            if let Some(v) = value {
                controls.set(id, v);
            }
        }
        Ok(controls)
    }
}
