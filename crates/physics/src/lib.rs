//! Caldera's physics engine: units, baryonic mass components, halo profiles and the
//! isothermal-Jeans SIDM halo. No I/O, no UI.
//!
//! Main types: the model description — [`ParamId`] (what a parameter is: key, label, unit) and
//! [`ParamValues`], halo families behind [`HaloFamily`] with the registry [`HaloModel`],
//! cross-section kinds described once ([`CrossSectionKind`]); [`Nfw`], [`Burkert`],
//! [`PseudoIsothermal`], [`Einasto`] and [`SidmHalo`] behind the [`HaloProfile`] trait;
//! [`BaryonRows`] (a table's one baryonic mass model), [`BaryonTable`], [`Hernquist`] and
//! [`ExponentialDisk`] behind [`EnclosedMass`]; [`CrossSection`]; [`Cosmology`]. Constants live
//! in [`units`].
//!
//! ```
//! use caldera_physics::{CrossSection, Cosmology, HaloProfile, NoBaryons, SidmSetup, sidm};
//!
//! let setup = SidmSetup {
//!     cross_section: CrossSection::constant(3.0)?,
//!     age_gyr: 10.0,
//!     baryons: &NoBaryons,
//!     cosmology: Cosmology::default(),
//! };
//! let halo = sidm::core_first(&setup, 1e8, 40.0)?;
//! let summary = halo.summary();
//! assert!((summary.r1_kpc - 6.1868).abs() < 1e-3);
//! assert!(halo.v_circ_kms(2.0) > 0.0);
//! # Ok::<(), caldera_physics::PhysicsError>(())
//! ```

pub mod baryons;
pub mod cosmology;
pub mod cross_section;
mod error;
pub mod families;
pub mod halo;
pub mod ode;
pub mod params;
mod roots;
pub mod scaling;
pub mod sidm;
mod special;
pub mod units;

pub use baryons::{
    BaryonComponent, BaryonRows, BaryonTable, BaryonVelocities, EnclosedMass, ExponentialDisk,
    Hernquist, NoBaryons,
};
pub use cosmology::Cosmology;
pub use cross_section::{CrossSection, CrossSectionKind, CrossSectionParam};
pub use error::PhysicsError;
pub use families::{BuiltHalo, HaloContext, HaloDerived, HaloFamily, HaloModel};
pub use halo::{
    Burkert, Einasto, HaloProfile, Nfw, PseudoIsothermal, VirialQuantities, virial_quantities,
    virial_radius_kpc,
};
pub use params::{ParamId, ParamValues, Transform};
pub use sidm::{Branch, Search, SidmHalo, SidmSetup, SidmSummary};
