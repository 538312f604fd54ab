//! Halo families behind one trait, and their registry.
//!
//! A [`HaloFamily`] says which parameters describe a halo ([`ParamId`]s, in the order a sampler
//! sees them), builds the [`HaloProfile`] from their values and reports its derived quantities
//! ([`HaloDerived`]: V200, c200, M200, r₋₂, ... as `Option`s). [`HaloModel`] is the registry:
//! one variant per family and one line in [`HaloModel::family`].
//!
//! Adding a family: write `families/<name>.rs` with a unit struct implementing [`HaloFamily`],
//! add a [`HaloModel`] variant and its line in [`HaloModel::family`]. Fits, the live curve, the
//! command line (`caldera fit --model`, `caldera curve`) and the app find it from there.
//!
//! ```
//! use caldera_physics::{HaloContext, HaloModel, NoBaryons, ParamId, ParamValues};
//!
//! let family = HaloModel::Nfw.family();
//! assert_eq!(family.parameters(), &[ParamId::V200, ParamId::C200]);
//! let values = ParamValues::from_pairs([(ParamId::V200, 60.0), (ParamId::C200, 12.0)]);
//! let halo = family.build(&values, &HaloContext::without_baryons())?;
//! assert!((halo.derived.v200_kms.unwrap() - 60.0).abs() < 1e-9);
//! # Ok::<(), caldera_physics::PhysicsError>(())
//! ```

mod burkert;
mod einasto;
mod nfw;
mod pseudo_iso;
mod sidm;

use serde::{Deserialize, Serialize};

use crate::PhysicsError;
use crate::baryons::{EnclosedMass, NoBaryons};
use crate::cosmology::Cosmology;
use crate::halo::{HaloProfile, VirialQuantities};
use crate::params::{ParamId, ParamValues};
use crate::units::DEFAULT_HALO_AGE_GYR;

pub use burkert::BurkertFamily;
pub use einasto::EinastoFamily;
pub use nfw::NfwFamily;
pub use pseudo_iso::PseudoIsothermalFamily;
pub use sidm::SidmFamily;

/// What a family may need besides its parameters to build a halo.
#[derive(Clone, Copy)]
pub struct HaloContext<'a> {
    pub cosmology: Cosmology,
    /// The baryonic enclosed mass (the SIDM Jeans equation sees it; other families ignore it).
    pub baryons: &'a dyn EnclosedMass,
    /// Halo age over which each particle has scattered about once, Gyr (SIDM).
    pub age_gyr: f64,
}

impl HaloContext<'static> {
    /// The default cosmology and age, no baryons.
    #[must_use]
    pub fn without_baryons() -> Self {
        Self {
            cosmology: Cosmology::default(),
            baryons: &NoBaryons,
            age_gyr: DEFAULT_HALO_AGE_GYR,
        }
    }
}

impl std::fmt::Debug for HaloContext<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("HaloContext")
            .field("cosmology", &self.cosmology)
            .field("age_gyr", &self.age_gyr)
            .finish_non_exhaustive()
    }
}

/// Quantities derived from a built halo; `None` where the family has no such quantity (a
/// pseudo-isothermal halo has no radius of log-slope −2, hence no c200).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct HaloDerived {
    pub v200_kms: Option<f64>,
    pub c200: Option<f64>,
    pub m200_msun: Option<f64>,
    pub r_minus2_kpc: Option<f64>,
    /// Core radius (Burkert r0, pseudo-isothermal r_c, the SIDM core's King radius), kpc.
    pub core_radius_kpc: Option<f64>,
    /// SIDM: the radius where each particle has scattered once, kpc.
    pub r1_kpc: Option<f64>,
    /// SIDM: ⟨v_rel⟩ = 4σ0/√π, km/s.
    pub v_rel_kms: Option<f64>,
    /// SIDM: σ/m, cm²/g.
    pub sigma_m_cm2_g: Option<f64>,
    /// SIDM: the core's central density (Msun/kpc³) and dispersion (km/s).
    pub rho0_msun_kpc3: Option<f64>,
    pub sigma0_kms: Option<f64>,
    /// SIDM: ln(ρ0/ρ1), the core's density contrast from its centre to r1.
    pub core_contrast_ln: Option<f64>,
    /// det ∂(ln M200, ln c200)/∂(ln a, ln b) over the family's
    /// [`HaloFamily::outer_halo_parameters`] (a, b), when the build computes it in closed form
    /// (SIDM: [`crate::sidm::core_first_with_outer_jacobian`]); None leaves it to differences.
    pub outer_jacobian_det: Option<f64>,
}

impl HaloDerived {
    /// V200, c200 and M200 from virial quantities (c200 only where r₋₂ exists).
    fn with_virial(mut self, virial: &VirialQuantities, r_minus2_kpc: Option<f64>) -> Self {
        self.v200_kms = Some(virial.v200_kms);
        self.m200_msun = Some(virial.m200_msun);
        self.r_minus2_kpc = r_minus2_kpc;
        self.c200 = r_minus2_kpc.map(|_| virial.c200);
        self
    }
}

/// A built halo and its derived quantities.
pub struct BuiltHalo {
    pub profile: Box<dyn HaloProfile>,
    pub derived: HaloDerived,
}

impl std::fmt::Debug for BuiltHalo {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("BuiltHalo")
            .field("derived", &self.derived)
            .finish_non_exhaustive()
    }
}

/// One family of halo profiles.
pub trait HaloFamily: Sync {
    /// The registry entry of this family.
    fn model(&self) -> HaloModel;

    /// The name on the command line and in result tables ("sidm", "nfw", ...).
    fn name(&self) -> &'static str;

    /// The name for people ("SIDM (isothermal Jeans)").
    fn label(&self) -> &'static str;

    /// The parameters that describe a halo, in the order a sampler sees them.
    fn parameters(&self) -> &'static [ParamId];

    /// Whether building needs the baryons of [`HaloContext`].
    fn uses_baryons(&self) -> bool {
        false
    }

    /// Builds the halo from the physical values of [`HaloFamily::parameters`].
    fn build(&self, values: &ParamValues, context: &HaloContext)
    -> Result<BuiltHalo, PhysicsError>;

    /// The two parameters that set the outer halo's (M200, c200) at fixed others, in the order
    /// the Jacobian of that map is taken, for a family that is not parameterised by (V200, c200)
    /// itself and has a c200. A fit carries the outer halo's prior over to these coordinates.
    fn outer_halo_parameters(&self) -> Option<[ParamId; 2]> {
        None
    }

    /// The parameters a person sets by hand (the app's sliders); the same as
    /// [`HaloFamily::parameters`] unless the family says otherwise.
    fn controls(&self) -> &'static [ParamId] {
        self.parameters()
    }

    /// Like [`HaloFamily::parameters_from_controls`], but only when the answer is quick: `None`
    /// when a family that solves for its parameters cannot follow `near` and would need a full
    /// search (the app then searches off its UI thread). Families whose parameters are their
    /// controls always answer.
    fn follow_controls(
        &self,
        controls: &ParamValues,
        context: &HaloContext,
        near: Option<&ParamValues>,
    ) -> Option<Result<ParamValues, PhysicsError>> {
        Some(self.parameters_from_controls(controls, context, near))
    }

    /// The values of [`HaloFamily::parameters`] for hand-set `controls`; `near` (values of a
    /// moment ago) lets a family that solves for its parameters follow the same solution.
    fn parameters_from_controls(
        &self,
        controls: &ParamValues,
        _context: &HaloContext,
        _near: Option<&ParamValues>,
    ) -> Result<ParamValues, PhysicsError> {
        Ok(*controls)
    }

    /// The controls that reproduce the halo of `values` (the inverse of
    /// [`HaloFamily::parameters_from_controls`]).
    fn controls_from_parameters(
        &self,
        values: &ParamValues,
        _context: &HaloContext,
    ) -> Result<ParamValues, PhysicsError> {
        Ok(*values)
    }
}

/// The registry of halo families: the models a user can choose.
#[derive(
    Debug, Clone, Copy, Default, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize,
)]
pub enum HaloModel {
    #[default]
    Sidm,
    Nfw,
    Burkert,
    PseudoIsothermal,
    Einasto,
}

impl HaloModel {
    /// Every model, in the order tables list them.
    pub const ALL: [Self; 5] = [
        Self::Sidm,
        Self::Nfw,
        Self::Burkert,
        Self::PseudoIsothermal,
        Self::Einasto,
    ];

    /// The family behind this model.
    #[must_use]
    pub fn family(self) -> &'static dyn HaloFamily {
        match self {
            Self::Sidm => &SidmFamily,
            Self::Nfw => &NfwFamily,
            Self::Burkert => &BurkertFamily,
            Self::PseudoIsothermal => &PseudoIsothermalFamily,
            Self::Einasto => &EinastoFamily,
        }
    }

    /// The name used on the command line and in result tables.
    #[must_use]
    pub fn name(self) -> &'static str {
        self.family().name()
    }

    /// The name for people.
    #[must_use]
    pub fn label(self) -> &'static str {
        self.family().label()
    }

    /// The model called `name` (as [`HaloModel::name`] writes it).
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL
            .into_iter()
            .find(|m| m.name().eq_ignore_ascii_case(name.trim()))
    }
}

impl std::fmt::Display for HaloModel {
    /// Writes the command-line name.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_family_is_registered_under_its_own_model() {
        for model in HaloModel::ALL {
            let family = model.family();
            assert_eq!(family.model(), model);
            assert_eq!(HaloModel::from_name(family.name()), Some(model));
            assert!(!family.parameters().is_empty());
            assert!(!family.controls().is_empty());
        }
    }

    #[test]
    fn controls_round_trip_through_parameters() {
        let context = HaloContext::without_baryons();
        let controls = |model: HaloModel| {
            let pairs = model.family().controls().iter().map(|&id| {
                let value = match id {
                    ParamId::V200 => 70.0,
                    ParamId::C200 => 11.0,
                    ParamId::SigmaM => 2.0,
                    ParamId::EinastoAlpha => 0.18,
                    ParamId::Rho0 => 3e7,
                    _ => 1.5,
                };
                (id, value)
            });
            ParamValues::from_pairs(pairs)
        };
        for model in HaloModel::ALL {
            let family = model.family();
            let set = controls(model);
            let parameters = family
                .parameters_from_controls(&set, &context, None)
                .expect("parameters");
            let back = family
                .controls_from_parameters(&parameters, &context)
                .expect("controls");
            for &id in family.controls() {
                let (a, b) = (set.get(id).expect("set"), back.get(id).expect("back"));
                assert!(
                    (a - b).abs() <= 1e-7 * a.abs(),
                    "{model:?} {id:?}: {a} vs {b}"
                );
            }
        }
    }
}
