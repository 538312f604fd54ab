//! A galaxy's posterior: parameters, likelihood and priors for one halo model.
//!
//! Likelihood: Gaussian in the velocity residuals,
//! ln L = −½ Σ ((V_obs,i − V_model,i)/σ_i)² − Σ ln σ_i − (N/2) ln 2π,
//! with σ_i² = err_i² + floor². Nuisance parameters rescale the data (tests/reference/check_values.md):
//! distance D scales radii (r ∝ D) and baryonic velocities (V_b ∝ √D); inclination i scales the
//! observed velocities and their errors by sin(i_table)/sin(i). The model is
//! V_model² = V_halo²(r) + V_b²(r), with V_b² signed. A model that cannot be built (no isothermal
//! core, no NFW match) has likelihood zero: ln p = −∞, and the reason is counted.

use std::sync::atomic::{AtomicU64, Ordering};

use caldera_data::GalaxyTable;
use caldera_data::session::HaloModel;
use caldera_physics::units::DEFAULT_HALO_AGE_GYR;
use caldera_physics::{
    BaryonComponent, BaryonRows, BaryonTable, BuiltHalo, Cosmology, CrossSection, HaloContext,
    HaloDerived, Nfw, NoBaryons, ParamId, ParamValues, PhysicsError, SidmSetup, Transform,
};
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::layout::{Layout, ParamSpec};
use crate::priors::{Priors, SidmBranches, SidmCoordinates, ln_normal};
use crate::sampler::LogDensity;

/// Names of the derived quantities recorded with every sample, with units.
pub const DERIVED_NAMES: [&str; 13] = [
    "sigma_m_cm2_g",
    "v_rel_kms",
    "r1_kpc",
    "core_radius_kpc",
    "v200_kms",
    "c200",
    "m200_msun",
    "upsilon_disk",
    "upsilon_bulge",
    "distance_mpc",
    "inclination_deg",
    "chi2",
    "log_likelihood",
];

/// Index of a derived quantity in [`DERIVED_NAMES`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[repr(usize)]
pub enum Derived {
    SigmaM = 0,
    VRel,
    R1,
    CoreRadius,
    V200,
    C200,
    M200,
    UpsilonDisk,
    UpsilonBulge,
    Distance,
    Inclination,
    Chi2,
    LogLikelihood,
}

/// Counts of model evaluations that failed, by reason.
#[derive(Debug, Default)]
pub struct FailureCounts {
    pub no_core: AtomicU64,
    pub no_nfw_match: AtomicU64,
    pub other: AtomicU64,
    pub evaluations: AtomicU64,
}

/// Snapshot of [`FailureCounts`].
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct FailureSummary {
    pub no_core: u64,
    pub no_nfw_match: u64,
    pub other: u64,
    pub evaluations: u64,
}

/// A galaxy's posterior for one halo model.
#[derive(Debug)]
pub struct GalaxyModel {
    pub model: HaloModel,
    pub priors: Priors,
    pub cosmology: Cosmology,
    pub age_gyr: f64,
    layout: Layout,
    radius_kpc: Vec<f64>,
    v_obs_kms: Vec<f64>,
    v_err_kms: Vec<f64>,
    /// The table's baryonic rows (the one baryonic mass model).
    rows: BaryonRows,
    has_bulge: bool,
    /// θ indices of the two coordinates that set the outer halo's (M200, c200), when the family
    /// is not sampled in (log V200, log c200) itself (see [`GalaxyModel::outer_halo_log_prior`]).
    outer_halo: Option<[usize; 2]>,
    /// Whether both of those coordinates are log10 of their parameters, so that a build's
    /// closed-form determinant in ln coordinates serves unchanged.
    outer_halo_in_log10: bool,
    /// SIDM sampled in its outer halo: each evaluation finds the lowest-density core by a
    /// halo-first solve. The solve starts from the inputs alone, not from the last core found
    /// (which would hardly save time and would make the core, to Newton's tolerance, depend on
    /// the order in which parallel walkers were evaluated: chains would not repeat bit for bit).
    samples_outer_halo: bool,
    distance_mpc: Option<(f64, f64)>,
    inclination_deg: Option<(f64, f64)>,
    pub failures: FailureCounts,
    /// Sample the prior alone: the data's likelihood is left out of the density (it is still
    /// computed and reported). The support stays where the halo exists.
    pub prior_only: bool,
    /// The disk's and bulge's stellar masses at Υ = 1 at the table's distance, Msun, when the
    /// stellar-to-halo mass prior is on ([`StellarMassUnit`]).
    stellar_mass_unit: Option<StellarMassUnit>,
}

/// The stellar mass of a table's disk and bulge at Υ = 1 and the table's distance, Msun, and
/// where it comes from.
///
/// From the table's `luminosity_lsun` metadata when given (the stellar mass at Υ = 1 Msun/Lsun;
/// shared between disk and bulge in the proportion of the curves' estimate, all disk without
/// one); otherwise from the curves
/// themselves: V²r/G of the disk (and bulge) column at the last radius. That estimate is the
/// spherical one: for a thin exponential disk it is 0.85 of the disk's whole mass when the
/// curve stops at 2.2 scale lengths, 1.19 at 4 and 1.17 at 6 (a disk pulls harder than a sphere
/// of the same enclosed mass; `tests/stellar_mass_prior.rs` measures this on the disk's exact
/// curve). So the prior's stellar mass is good to ~20% for curves reaching past 2 scale lengths,
/// small beside the relation's 0.15 dex (41%) scatter, and low for curves stopping well inside.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StellarMassUnit {
    pub disk_msun: f64,
    pub bulge_msun: f64,
    pub from_metadata: bool,
}

impl StellarMassUnit {
    /// The stellar mass at Υ = 1 of `table` (see the type's docs); None when its disk and bulge
    /// columns hold no mass and no metadata gives one.
    #[must_use]
    pub fn of_table(table: &GalaxyTable) -> Option<Self> {
        let last = table
            .radius_kpc
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.total_cmp(b.1))
            .map(|(i, &r)| (i, r))?;
        let spherical = |v: f64| v * v * last.1 / caldera_physics::units::G_KPC_KMS2_PER_MSUN;
        let disk = spherical(table.v_disk_kms[last.0]);
        let bulge = table
            .v_bulge_kms
            .as_ref()
            .map_or(0.0, |b| spherical(b[last.0]));
        let curves = disk + bulge;
        match table.meta.luminosity_lsun {
            Some(total) if total > 0.0 && total.is_finite() => {
                let disk_share = if curves > 0.0 { disk / curves } else { 1.0 };
                Some(Self {
                    disk_msun: total * disk_share,
                    bulge_msun: total * (1.0 - disk_share),
                    from_metadata: true,
                })
            }
            _ => (curves > 0.0 && curves.is_finite()).then_some(Self {
                disk_msun: disk,
                bulge_msun: bulge,
                from_metadata: false,
            }),
        }
    }
}

/// Everything a model evaluation produces.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    pub radius_kpc: Vec<f64>,
    pub v_obs_kms: Vec<f64>,
    pub v_err_kms: Vec<f64>,
    pub v_model_kms: Vec<f64>,
    pub v_halo_kms: Vec<f64>,
    pub v_baryon2_kms2: Vec<f64>,
    pub log_likelihood: f64,
    pub chi2: f64,
}

/// The layout of a galaxy's posterior under `model`: the family's halo parameters (σ/m by its
/// own prior, the Einasto α fixed when the user says so), then Υ_disk, Υ_bulge (when the table
/// has a bulge), distance and inclination (when the user lets them vary and the table gives their
/// errors). Also returns the table's (distance, error) and (inclination, error).
#[allow(clippy::type_complexity)]
fn galaxy_layout(
    table: &GalaxyTable,
    model: HaloModel,
    priors: &Priors,
) -> Result<(Layout, Option<(f64, f64)>, Option<(f64, f64)>), InferError> {
    let mut specs = Vec::new();
    let mut fixed = ParamValues::default();
    let sampled: &[ParamId] = if samples_outer_halo(model, priors) {
        &[ParamId::V200, ParamId::C200, ParamId::SigmaM]
    } else {
        model.family().parameters()
    };
    for &id in sampled {
        match id {
            ParamId::SigmaM => {
                let xs = priors.cross_section;
                if !(xs.min_cm2_g > 0.0 && xs.max_cm2_g > xs.min_cm2_g) {
                    return Err(InferError::Config(format!(
                        "sigma/m bounds must satisfy 0 < min < max, got {} and {}",
                        xs.min_cm2_g, xs.max_cm2_g
                    )));
                }
                let transform = if xs.logarithmic {
                    Transform::Log10
                } else {
                    Transform::Linear
                };
                let bounds = (
                    transform.to_coordinate(xs.min_cm2_g),
                    transform.to_coordinate(xs.max_cm2_g),
                );
                specs.push(ParamSpec::uniform(id, transform, bounds));
            }
            ParamId::EinastoAlpha if priors.einasto_alpha_fixed.is_some() => {
                let alpha = priors.einasto_alpha_fixed.unwrap_or_default();
                if !(alpha.is_finite() && alpha > 0.0) {
                    return Err(InferError::Config(format!(
                        "the fixed Einasto alpha must be positive, got {alpha}"
                    )));
                }
                fixed.set(id, alpha);
            }
            _ => {
                let bounds = priors.halo.log10_bounds(id).ok_or_else(|| {
                    InferError::Config(format!(
                        "no prior bounds for the halo parameter {}",
                        id.key()
                    ))
                })?;
                specs.push(ParamSpec::uniform(id, Transform::Log10, bounds));
            }
        }
    }
    let halo_len = specs.len();
    let spread = 5.0 * priors.upsilon_scatter_dex;
    let upsilon = |id: ParamId, median: f64| {
        let centre = median.log10();
        ParamSpec::normal(
            id,
            Transform::Log10,
            (centre - spread, centre + spread),
            centre,
            priors.upsilon_scatter_dex,
        )
    };
    specs.push(upsilon(ParamId::UpsilonDisk, priors.upsilon_disk_median));
    if table.v_bulge_kms.is_some() {
        specs.push(upsilon(ParamId::UpsilonBulge, priors.upsilon_bulge_median));
    }
    let distance_mpc = table
        .meta
        .distance_mpc
        .filter(|d| *d > 0.0)
        .map(|d| (d, table.meta.distance_err_mpc.unwrap_or(0.0)));
    let inclination_deg = table
        .meta
        .inclination_deg
        .filter(|i| *i > 0.0)
        .map(|i| (i, table.meta.inclination_err_deg.unwrap_or(0.0)));
    // A nuisance is sampled only when the user lets it vary and the table gives its error.
    let with_error = |(_, e): &(f64, f64)| e.is_finite() && *e > 0.0;
    if let Some((d, e)) = distance_mpc.filter(|pair| priors.vary_distance && with_error(pair)) {
        let bounds = ((d - 5.0 * e).max(1e-3 * d), d + 5.0 * e);
        specs.push(ParamSpec::normal(
            ParamId::Distance,
            Transform::Linear,
            bounds,
            d,
            e,
        ));
    }
    if let Some((i, e)) = inclination_deg.filter(|pair| priors.vary_inclination && with_error(pair))
    {
        let bounds = ((i - 5.0 * e).max(5.0), (i + 5.0 * e).min(90.0));
        specs.push(ParamSpec::normal(
            ParamId::Inclination,
            Transform::Linear,
            bounds,
            i,
            e,
        ));
    }
    Ok((
        Layout::new(specs, halo_len, fixed),
        distance_mpc,
        inclination_deg,
    ))
}

/// Whether the SIDM fit samples its outer halo (log V200, log c200) and σ/m, finding the core
/// for each ([`SidmCoordinates::Halo`]); only for the lowest-density branch, which makes the core
/// a function of the outer halo.
fn samples_outer_halo(model: HaloModel, priors: &Priors) -> bool {
    model == HaloModel::Sidm
        && priors.sidm_coordinates == SidmCoordinates::Halo
        && priors.sidm_branches == SidmBranches::LowestDensity
}

impl GalaxyModel {
    /// Sets up the posterior of `model` for `table`.
    pub fn new(
        table: &GalaxyTable,
        model: HaloModel,
        priors: Priors,
        cosmology: Cosmology,
        age_gyr: Option<f64>,
    ) -> Result<Self, InferError> {
        let (layout, distance_mpc, inclination_deg) = galaxy_layout(table, model, &priors)?;
        if layout.index_of(ParamId::UpsilonDisk).is_none() {
            return Err(InferError::Config(
                "the layout lacks the disk mass-to-light ratio".into(),
            ));
        }
        let rows = table.baryon_rows()?;
        let outer_halo = model
            .family()
            .outer_halo_parameters()
            .and_then(|[a, b]| Some([layout.index_of(a)?, layout.index_of(b)?]));
        let outer_halo_in_log10 = outer_halo.is_some_and(|indices| {
            indices
                .iter()
                .all(|&i| layout.specs()[i].transform == Transform::Log10)
        });
        Ok(Self {
            model,
            priors,
            cosmology,
            age_gyr: age_gyr
                .or(table.meta.age_gyr)
                .unwrap_or(DEFAULT_HALO_AGE_GYR),
            layout,
            radius_kpc: table.radius_kpc.clone(),
            v_obs_kms: table.v_obs_kms.clone(),
            v_err_kms: table.v_err_kms.clone(),
            rows,
            has_bulge: table.v_bulge_kms.is_some(),
            outer_halo,
            outer_halo_in_log10,
            samples_outer_halo: samples_outer_halo(model, &priors),
            distance_mpc,
            inclination_deg,
            failures: FailureCounts::default(),
            prior_only: false,
            stellar_mass_unit: if priors.stellar_mass_halo {
                Some(StellarMassUnit::of_table(table).ok_or_else(|| {
                    InferError::Config(format!(
                        "{}: the stellar-to-halo mass prior needs a stellar mass, but the table's disk and bulge columns hold none and it gives no luminosity_lsun",
                        table.meta.name
                    ))
                })?)
            } else {
                None
            },
        })
    }

    /// The stellar mass at Υ = 1 the stellar-to-halo mass prior uses, when it is on.
    #[must_use]
    pub fn stellar_mass_unit(&self) -> Option<StellarMassUnit> {
        self.stellar_mass_unit
    }

    /// The stellar-to-halo mass prior's ln density at the nuisances of `values` and a halo of
    /// `m200_msun`, up to a constant: −½ z² with z the offset of log10 M* from the
    /// Moster et al. (2013) relation in units of its scatter; M* = Υ_disk M_disk + Υ_bulge
    /// M_bulge at Υ = 1, scaled by (D / D_table)² (a luminosity). 0 when the prior is off or the
    /// halo has no M200.
    #[must_use]
    pub fn stellar_mass_log_prior(&self, values: &ParamValues, m200_msun: f64) -> f64 {
        let Some(unit) = self.stellar_mass_unit else {
            return 0.0;
        };
        if !(m200_msun > 0.0 && m200_msun.is_finite()) {
            return 0.0;
        }
        let relation = caldera_physics::scaling::MOSTER_2013;
        let (upsilon_disk, upsilon_bulge, distance_factor, _) = self.nuisances(values);
        let stellar_mass = (upsilon_disk * unit.disk_msun + upsilon_bulge * unit.bulge_msun)
            * distance_factor
            * distance_factor;
        match relation.stellar_mass_msun(m200_msun) {
            Ok(median) if stellar_mass > 0.0 => {
                let z = (stellar_mass / median).log10() / relation.scatter_dex;
                -0.5 * z * z
            }
            _ => f64::NEG_INFINITY,
        }
    }

    /// The sampled parameters, in order.
    #[must_use]
    pub fn parameters(&self) -> &[ParamSpec] {
        self.layout.specs()
    }

    /// The layout of θ: parameters, bounds, priors, fixed values.
    #[must_use]
    pub fn layout(&self) -> &Layout {
        &self.layout
    }

    /// Number of data points.
    #[must_use]
    pub fn n_points(&self) -> usize {
        self.radius_kpc.len()
    }

    /// A snapshot of the failure counters.
    #[must_use]
    pub fn failure_summary(&self) -> FailureSummary {
        FailureSummary {
            no_core: self.failures.no_core.load(Ordering::Relaxed),
            no_nfw_match: self.failures.no_nfw_match.load(Ordering::Relaxed),
            other: self.failures.other.load(Ordering::Relaxed),
            evaluations: self.failures.evaluations.load(Ordering::Relaxed),
        }
    }

    /// True when every coordinate lies within its bounds.
    #[must_use]
    pub fn in_bounds(&self, theta: &[f64]) -> bool {
        self.layout.in_bounds(theta)
    }

    /// A central starting point: mid-bounds for the halo, prior medians for the nuisances.
    #[must_use]
    pub fn centre(&self) -> Vec<f64> {
        self.layout.centre()
    }

    /// θ for physical `values` (a fit's best fit, the app's controls); parameters without a value
    /// sit at their prior's centre.
    #[must_use]
    pub fn theta_from_values(&self, values: &ParamValues) -> Vec<f64> {
        self.layout.theta_from_values(values)
    }

    /// The physical values at θ (fixed parameters included).
    #[must_use]
    pub fn values(&self, theta: &[f64]) -> ParamValues {
        self.layout.values(theta)
    }

    /// The context the halo family builds in at θ's nuisances: cosmology, age and (when the
    /// family uses them) the baryons, which `baryons` must outlive.
    pub fn halo_context<'a>(&self, baryons: &'a BaryonTable) -> HaloContext<'a> {
        HaloContext {
            cosmology: self.cosmology,
            baryons,
            age_gyr: self.age_gyr,
        }
    }

    /// (Υ_disk, Υ_bulge, distance factor D/D_table, inclination factor sin i_table / sin i) at
    /// `values`; a nuisance without a value takes its prior median or the table's value.
    fn nuisances(&self, values: &ParamValues) -> (f64, f64, f64, f64) {
        let upsilon_disk = values
            .get(ParamId::UpsilonDisk)
            .unwrap_or(self.priors.upsilon_disk_median);
        let upsilon_bulge = values
            .get(ParamId::UpsilonBulge)
            .unwrap_or(self.priors.upsilon_bulge_median);
        let distance_factor = match (values.get(ParamId::Distance), self.distance_mpc) {
            (Some(distance), Some((d, _))) => distance / d,
            _ => 1.0,
        };
        let inclination_factor = match (values.get(ParamId::Inclination), self.inclination_deg) {
            (Some(inclination), Some((i, _))) => {
                i.to_radians().sin() / inclination.to_radians().sin()
            }
            _ => 1.0,
        };
        (
            upsilon_disk,
            upsilon_bulge,
            distance_factor,
            inclination_factor,
        )
    }

    /// Evaluates the model at `theta` (in bounds). Errors are the physics' refusals.
    pub fn evaluate(
        &self,
        theta: &[f64],
    ) -> Result<(Evaluation, [f64; DERIVED_NAMES.len()]), PhysicsError> {
        self.evaluate_with_halo(&self.layout.values(theta))
            .map(|(evaluation, derived, _)| (evaluation, derived))
    }

    /// Evaluates the model at physical `values` (halo parameters and nuisances by
    /// [`ParamId`]; a nuisance without a value takes its prior median or the table's value),
    /// also returning the built halo.
    fn evaluate_with_halo(
        &self,
        values: &ParamValues,
    ) -> Result<(Evaluation, [f64; DERIVED_NAMES.len()], BuiltHalo), PhysicsError> {
        let (upsilon_disk, upsilon_bulge, distance_factor, inclination_factor) =
            self.nuisances(values);
        let n = self.n_points();
        let radius_kpc: Vec<f64> = self
            .radius_kpc
            .iter()
            .map(|r| r * distance_factor)
            .collect();
        let v_baryon2_kms2 = self
            .rows
            .v2_rows_kms2(upsilon_disk, upsilon_bulge, distance_factor);
        let mut derived = [f64::NAN; DERIVED_NAMES.len()];
        derived[Derived::UpsilonDisk as usize] = upsilon_disk;
        derived[Derived::UpsilonBulge as usize] = if self.has_bulge {
            upsilon_bulge
        } else {
            f64::NAN
        };
        derived[Derived::Distance as usize] = self
            .distance_mpc
            .map_or(f64::NAN, |(d, _)| d * distance_factor);
        derived[Derived::Inclination as usize] = values
            .get(ParamId::Inclination)
            .or(self.inclination_deg.map(|(i, _)| i))
            .unwrap_or(f64::NAN);
        let halo = self.build_halo(values, distance_factor, &v_baryon2_kms2, &mut derived)?;
        let floor2 = self.priors.error_floor_kms * self.priors.error_floor_kms;
        let mut chi2 = 0.0;
        let mut log_norm = 0.0;
        let mut v_obs_kms = Vec::with_capacity(n);
        let mut v_err_kms = Vec::with_capacity(n);
        let mut v_model_kms = Vec::with_capacity(n);
        let mut v_halo_kms = Vec::with_capacity(n);
        for i in 0..n {
            let v_halo = halo.profile.v_circ_kms(radius_kpc[i]);
            let v_model = (v_halo * v_halo + v_baryon2_kms2[i]).max(0.0).sqrt();
            let v_obs = self.v_obs_kms[i] * inclination_factor;
            let scaled_err = self.v_err_kms[i] * inclination_factor;
            let err = (scaled_err * scaled_err + floor2).sqrt();
            chi2 += ((v_obs - v_model) / err).powi(2);
            log_norm += err.ln();
            v_obs_kms.push(v_obs);
            v_err_kms.push(err);
            v_model_kms.push(v_model);
            v_halo_kms.push(v_halo);
        }
        let log_likelihood =
            -0.5 * chi2 - log_norm - 0.5 * n as f64 * (2.0 * std::f64::consts::PI).ln();
        derived[Derived::Chi2 as usize] = chi2;
        derived[Derived::LogLikelihood as usize] = log_likelihood;
        Ok((
            Evaluation {
                radius_kpc,
                v_obs_kms,
                v_err_kms,
                v_model_kms,
                v_halo_kms,
                v_baryon2_kms2,
                log_likelihood,
                chi2,
            },
            derived,
            halo,
        ))
    }

    /// The baryonic enclosed mass the Jeans equation sees at the nuisance parameters of `theta`
    /// (its halo coordinates are ignored), e.g. for a halo-first solve at the same Υ, D and i.
    pub fn baryons_at(&self, theta: &[f64]) -> Result<BaryonTable, PhysicsError> {
        self.baryons_at_values(&self.layout.values(theta))
    }

    /// The baryonic enclosed mass at the nuisances of `values` (see [`GalaxyModel::evaluate_values`]).
    pub fn baryons_at_values(&self, values: &ParamValues) -> Result<BaryonTable, PhysicsError> {
        let (upsilon_disk, upsilon_bulge, distance_factor, _) = self.nuisances(values);
        self.rows
            .mass_model_at(upsilon_disk, upsilon_bulge, distance_factor)
    }

    /// Builds the halo at `values` for data rescaled by `distance_factor` (with baryonic V² per
    /// row `v_baryon2_kms2`), filling the halo's derived quantities into `derived`.
    fn build_halo(
        &self,
        values: &ParamValues,
        distance_factor: f64,
        v_baryon2_kms2: &[f64],
        derived: &mut [f64; DERIVED_NAMES.len()],
    ) -> Result<BuiltHalo, PhysicsError> {
        let family = self.model.family();
        let built = if family.uses_baryons() {
            let baryons = self.rows.mass_model(distance_factor, v_baryon2_kms2)?;
            let context = self.halo_context(&baryons);
            if self.samples_outer_halo && values.get(ParamId::Rho0).is_none() {
                family.build(&self.with_lowest_density_core(values, &context)?, &context)?
            } else {
                family.build(values, &context)?
            }
        } else {
            let context = HaloContext {
                cosmology: self.cosmology,
                baryons: &NoBaryons,
                age_gyr: self.age_gyr,
            };
            family.build(values, &context)?
        };
        let d = built.derived;
        let mut put = |slot: Derived, value: Option<f64>| {
            derived[slot as usize] = value.unwrap_or(f64::NAN);
        };
        put(Derived::SigmaM, d.sigma_m_cm2_g);
        put(Derived::VRel, d.v_rel_kms);
        put(Derived::R1, d.r1_kpc);
        put(Derived::CoreRadius, d.core_radius_kpc);
        put(Derived::V200, d.v200_kms);
        put(Derived::C200, d.c200);
        put(Derived::M200, d.m200_msun);
        Ok(built)
    }

    /// `values` (σ/m and the outer halo's V200, c200) completed with the lowest-density SIDM core
    /// that matches them.
    fn with_lowest_density_core(
        &self,
        values: &ParamValues,
        context: &HaloContext,
    ) -> Result<ParamValues, PhysicsError> {
        let setup = SidmSetup {
            cross_section: CrossSection::constant(values.require(ParamId::SigmaM)?)?,
            age_gyr: context.age_gyr,
            baryons: context.baryons,
            cosmology: context.cosmology,
        };
        let nfw = Nfw::from_v200_c200(
            values.require(ParamId::V200)?,
            values.require(ParamId::C200)?,
            &context.cosmology,
        )?;
        let core = caldera_physics::sidm::halo_first(
            &setup,
            &nfw,
            caldera_physics::Branch::LowestDensity,
        )?;
        let mut completed = *values;
        completed.set(ParamId::Rho0, core.rho0_msun_kpc3());
        completed.set(ParamId::Sigma0, core.sigma0_kms());
        Ok(completed)
    }

    /// ln prior at θ (constants dropped): the layout's priors on the sampled coordinates plus
    /// the outer halo's ([`GalaxyModel::outer_halo_log_prior`]). `halo` is the halo built at θ.
    fn log_prior(&self, theta: &[f64], derived: &[f64], halo: &HaloDerived) -> f64 {
        if self.samples_outer_halo && !self.core_within_bounds(halo) {
            return f64::NEG_INFINITY;
        }
        let stellar = if self.stellar_mass_unit.is_some() {
            self.stellar_mass_log_prior(&self.layout.values(theta), derived[Derived::M200 as usize])
        } else {
            0.0
        };
        self.layout.ln_prior(theta) + self.outer_halo_log_prior(theta, derived, halo) + stellar
    }

    /// The physical values at θ ([`GalaxyModel::values`]), completed with the SIDM core
    /// (ρ0, σ0) that the outer halo's coordinates imply when those are sampled
    /// ([`SidmCoordinates::Halo`]), so that a fit's best values name the core in either
    /// coordinates (the app's "Use best fit" rebuilds the halo from them).
    #[must_use]
    pub fn values_with_core(&self, theta: &[f64]) -> ParamValues {
        let mut values = self.layout.values(theta);
        if self.samples_outer_halo
            && values.get(ParamId::Rho0).is_none()
            && let Ok((_, _, built)) = self.evaluate_with_halo(&values)
            && let (Some(rho0), Some(sigma0)) =
                (built.derived.rho0_msun_kpc3, built.derived.sigma0_kms)
        {
            values.set(ParamId::Rho0, rho0);
            values.set(ParamId::Sigma0, sigma0);
        }
        values
    }

    /// For an SIDM fit: how many SIDM cores match the outer halo at θ within the sampled
    /// (ρ0, σ0) bounds — every halo-first solution at θ's σ/m and nuisances, counted when its
    /// core lies within the bounds. More than one means the posterior admits separated branches
    /// when [`SidmBranches::All`] is chosen (in core coordinates the branches meet only where
    /// the prior's Jacobian vanishes). None for other models or when the outer halo at θ cannot
    /// be built or solved.
    #[must_use]
    pub fn sidm_branches_within_bounds(&self, theta: &[f64]) -> Option<usize> {
        if self.model != HaloModel::Sidm {
            return None;
        }
        let (_, derived) = self.evaluate(theta).ok()?;
        let values = self.layout.values(theta);
        let baryons = self.baryons_at_values(&values).ok()?;
        let setup = SidmSetup {
            cross_section: CrossSection::constant(values.get(ParamId::SigmaM)?).ok()?,
            age_gyr: self.age_gyr,
            baryons: &baryons,
            cosmology: self.cosmology,
        };
        let nfw = Nfw::from_m200_c200(
            derived[Derived::M200 as usize],
            derived[Derived::C200 as usize],
            &self.cosmology,
        )
        .ok()?;
        let cores = caldera_physics::sidm::halo_first_all(&setup, &nfw).ok()?;
        Some(
            cores
                .iter()
                .filter(|core| {
                    self.core_values_within_bounds(
                        Some(core.rho0_msun_kpc3()),
                        Some(core.sigma0_kms()),
                    )
                })
                .count(),
        )
    }

    /// Whether an SIDM core lies within the (ρ0, σ0) bounds. Sampling the outer halo, these
    /// bounds still truncate the prior, so that it is the same whichever coordinates are sampled.
    fn core_within_bounds(&self, halo: &HaloDerived) -> bool {
        self.core_values_within_bounds(halo.rho0_msun_kpc3, halo.sigma0_kms)
    }

    /// Whether a core (ρ0 Msun/kpc³, σ0 km/s), both known, lies within the (ρ0, σ0) bounds.
    fn core_values_within_bounds(
        &self,
        rho0_msun_kpc3: Option<f64>,
        sigma0_kms: Option<f64>,
    ) -> bool {
        let bounds = &self.priors.halo;
        let inside =
            |value: Option<f64>, range| value.is_some_and(|v| v > 0.0 && log10_within(v, range));
        inside(rho0_msun_kpc3, bounds.log10_rho0) && inside(sigma0_kms, bounds.log10_sigma0)
    }

    /// The outer halo's prior (log V200 uniform within bounds, log c200 normal around the
    /// Dutton–Macciò relation or uniform, both within bounds) as a density on θ.
    ///
    /// NFW and Einasto sample (log V200, log c200): the layout holds the bounds and this adds
    /// the concentration term. SIDM and Burkert sample other coordinates u = (log ρ0, log σ0)
    /// or (log ρ0, log r0), mapped to w = (log M200, log c200); the density on u is p(w) |∂w/∂u|,
    /// so the derived w follow p(w) wherever the map is one-to-one. The Jacobian comes with the
    /// build where the family computes it (SIDM: variational equations of the Jeans
    /// integration), else from forward differences of the family's build (two extra builds).
    ///
    /// Why core-first coordinates with a Jacobian rather than sampling the outer halo and
    /// solving halo-first: a core-first SIDM solve costs ≈ 10 µs and is smooth in its inputs;
    /// a halo-first solve with tabulated baryons is a global search for every branch (≈ 2 ms,
    /// issue benchmarks) and jumps when a branch appears or vanishes. The branch choice is a
    /// test on the core: the matching map's sheets alternate in orientation (the sign of the
    /// Jacobian) and are ordered by the core contrast ln(ρ0/ρ1), so whether a core is its halo's
    /// lowest-density one is mostly read off the core itself, the halo-first search deciding only
    /// beyond the baryon-free second fold
    /// ([`caldera_physics::sidm::is_lowest_density_core`]). `tests/outer_halo_prior.rs` checks this rule against the halo-first
    /// search over halos drawn from the prior with every demo galaxy's baryons.
    fn outer_halo_log_prior(&self, theta: &[f64], derived: &[f64], halo: &HaloDerived) -> f64 {
        let (m200, c200) = (
            derived[Derived::M200 as usize],
            derived[Derived::C200 as usize],
        );
        if !(m200 > 0.0 && c200 > 0.0) {
            // No c200 (pseudo-isothermal): uniform in the sampled coordinates.
            return 0.0;
        }
        let concentration = if self.priors.concentration_mass {
            let mu = self
                .priors
                .concentration_relation
                .log10_c200(m200, &self.cosmology);
            ln_normal(c200.log10(), mu, self.priors.concentration_scatter_dex)
        } else {
            0.0
        };
        let Some(indices) = self.outer_halo else {
            return concentration;
        };
        let bounds = &self.priors.halo;
        if !(log10_within(derived[Derived::V200 as usize], bounds.log10_v200)
            && log10_within(c200, bounds.log10_c200))
        {
            return f64::NEG_INFINITY;
        }
        // One baryonic mass model at θ's nuisances for nudged builds and the branch test, built
        // only when one of them needs it.
        let values = self.layout.values(theta);
        let uses_baryons = self.model.family().uses_baryons();
        let table = std::cell::OnceCell::new();
        let (table, values_ref) = (&table, &values);
        let context = move || -> Option<HaloContext<'_>> {
            if !uses_baryons {
                return Some(HaloContext {
                    cosmology: self.cosmology,
                    baryons: &NoBaryons,
                    age_gyr: self.age_gyr,
                });
            }
            let table = table
                .get_or_init(|| self.baryons_at_values(values_ref).ok())
                .as_ref()?;
            Some(self.halo_context(table))
        };
        // The build's closed-form determinant is in ln coordinates, the same as in log10 ones.
        let det = match halo.outer_jacobian_det.filter(|_| self.outer_halo_in_log10) {
            Some(det) => Some(det),
            None => context().and_then(|context| {
                self.outer_halo_jacobian(theta, indices, (m200, c200), &context)
            }),
        };
        let Some(det) = det else {
            return f64::NEG_INFINITY;
        };
        if let Some(contrast) = halo.core_contrast_ln
            && self.priors.sidm_branches == SidmBranches::LowestDensity
            && !caldera_physics::sidm::lowest_density_by_sheet(contrast, det).unwrap_or_else(|| {
                context().is_some_and(|context| {
                    Self::is_lowest_density_core(&values, contrast, det, &context)
                })
            })
        {
            return f64::NEG_INFINITY;
        }
        concentration + det.abs().ln()
    }

    /// [`caldera_physics::sidm::is_lowest_density_core`] for the SIDM core of `values`.
    fn is_lowest_density_core(
        values: &ParamValues,
        contrast: f64,
        det: f64,
        context: &HaloContext,
    ) -> bool {
        let (Some(rho0), Some(sigma0), Some(Ok(cross_section))) = (
            values.get(ParamId::Rho0),
            values.get(ParamId::Sigma0),
            values.get(ParamId::SigmaM).map(CrossSection::constant),
        ) else {
            return false;
        };
        let setup = SidmSetup {
            cross_section,
            age_gyr: context.age_gyr,
            baryons: context.baryons,
            cosmology: context.cosmology,
        };
        caldera_physics::sidm::is_lowest_density_core(&setup, (rho0, sigma0), contrast, det)
    }

    /// det ∂(log10 M200, log10 c200)/∂(θ[i], θ[j]) at θ (both coordinates are base-10
    /// logarithms), by forward differences of the family's build in `context`, from the halo's
    /// own (M200 Msun, c200); None when a nudged halo cannot be built.
    fn outer_halo_jacobian(
        &self,
        theta: &[f64],
        [i, j]: [usize; 2],
        (m200, c200): (f64, f64),
        context: &HaloContext,
    ) -> Option<f64> {
        const STEP: f64 = 1e-5;
        let nudged = |k: usize| -> Option<(f64, f64)> {
            let mut moved = theta.to_vec();
            moved[k] += STEP;
            let built = self
                .model
                .family()
                .build(&self.layout.values(&moved), context)
                .ok()?;
            let d = built.derived;
            Some((
                (d.m200_msun? / m200).log10() / STEP,
                (d.c200? / c200).log10() / STEP,
            ))
        };
        let (dm_di, dc_di) = nudged(i)?;
        let (dm_dj, dc_dj) = nudged(j)?;
        Some(dm_di * dc_dj - dm_dj * dc_di)
    }
}

/// Whether log10 `value` lies within the (lower, upper) bounds `range`.
fn log10_within(value: f64, (lower, upper): (f64, f64)) -> bool {
    (lower..=upper).contains(&value.log10())
}

/// The model's pieces for a figure: data and baryonic components at the (rescaled) data radii,
/// and the halo and total curves on a fine grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Components {
    pub radius_kpc: Vec<f64>,
    pub v_obs_kms: Vec<f64>,
    pub v_err_kms: Vec<f64>,
    /// Signed velocities: V|V| = the component's contribution to V².
    pub v_gas_kms: Vec<f64>,
    pub v_disk_kms: Vec<f64>,
    pub v_bulge_kms: Option<Vec<f64>>,
    pub v_model_kms: Vec<f64>,
    pub fine_radius_kpc: Vec<f64>,
    pub v_halo_fine_kms: Vec<f64>,
    pub v_total_fine_kms: Vec<f64>,
    pub r1_kpc: Option<f64>,
    pub core_radius_kpc: Option<f64>,
    /// χ² of the model against the (rescaled) data.
    pub chi2: f64,
    /// The halo's derived quantities (V200, c200, the SIDM core, ...).
    pub halo: HaloDerived,
    /// The physical values of every parameter at this θ (fixed ones included).
    pub parameters: ParamValues,
}

impl GalaxyModel {
    /// The pieces of the model at `theta` for plotting (see [`Components`]).
    pub fn components(&self, theta: &[f64]) -> Result<Components, PhysicsError> {
        self.components_at_values(&self.layout.values(theta))
    }

    /// Evaluates the model at physical `values`: the halo family's parameters and any of the
    /// nuisances by [`ParamId`], whether or not the layout samples them (a nuisance without a
    /// value takes its prior median, or the table's distance and inclination). This is how a
    /// curve for given parameters is computed outside a fit (`caldera curve --table`, the app).
    pub fn evaluate_values(
        &self,
        values: &ParamValues,
    ) -> Result<(Evaluation, [f64; DERIVED_NAMES.len()]), PhysicsError> {
        self.evaluate_with_halo(values)
            .map(|(evaluation, derived, _)| (evaluation, derived))
    }

    /// The pieces of the model at physical `values` (see [`GalaxyModel::evaluate_values`]).
    pub fn components_at_values(&self, values: &ParamValues) -> Result<Components, PhysicsError> {
        let (evaluation, derived, built) = self.evaluate_with_halo(values)?;
        let (upsilon_disk, upsilon_bulge, distance_factor, _) = self.nuisances(values);
        let halo = &built.profile;
        let component =
            |c: BaryonComponent, upsilon: f64| self.rows.component_kms(c, upsilon, distance_factor);
        let r_max = evaluation.radius_kpc.iter().copied().fold(0.0, f64::max) * 1.05;
        let fine_radius_kpc: Vec<f64> = (1..=200).map(|i| r_max * f64::from(i) / 200.0).collect();
        let baryons = self
            .rows
            .mass_model(distance_factor, &evaluation.v_baryon2_kms2)?;
        let v_halo_fine_kms: Vec<f64> = fine_radius_kpc
            .iter()
            .map(|&r| halo.v_circ_kms(r))
            .collect();
        let v_total_fine_kms = fine_radius_kpc
            .iter()
            .zip(&v_halo_fine_kms)
            .map(|(&r, vh)| (vh * vh + baryons.v_squared_kms2(r)).max(0.0).sqrt())
            .collect();
        let finite = |x: f64| x.is_finite().then_some(x);
        Ok(Components {
            v_gas_kms: component(BaryonComponent::Gas, 1.0),
            v_disk_kms: component(BaryonComponent::Disk, upsilon_disk),
            v_bulge_kms: self
                .has_bulge
                .then(|| component(BaryonComponent::Bulge, upsilon_bulge)),
            radius_kpc: evaluation.radius_kpc,
            v_obs_kms: evaluation.v_obs_kms,
            v_err_kms: evaluation.v_err_kms,
            v_model_kms: evaluation.v_model_kms,
            fine_radius_kpc,
            v_halo_fine_kms,
            v_total_fine_kms,
            r1_kpc: finite(derived[Derived::R1 as usize]),
            core_radius_kpc: finite(derived[Derived::CoreRadius as usize]),
            chi2: evaluation.chi2,
            halo: built.derived,
            parameters: *values,
        })
    }
}

/// The posterior split for tempering: the prior (layout and concentration–mass terms, support
/// where the halo exists) and the normalised Gaussian likelihood.
impl crate::tempering::SplitDensity for GalaxyModel {
    fn dim(&self) -> usize {
        self.layout.len()
    }

    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        let mut derived = [f64::NAN; DERIVED_NAMES.len()];
        let log_density = self.log_density(theta, &mut derived);
        if !log_density.is_finite() {
            return (f64::NEG_INFINITY, f64::NEG_INFINITY);
        }
        let log_likelihood = if self.prior_only {
            0.0
        } else {
            derived[Derived::LogLikelihood as usize]
        };
        (log_density - log_likelihood, log_likelihood)
    }
}

impl LogDensity for GalaxyModel {
    fn dim(&self) -> usize {
        self.layout.len()
    }

    fn n_derived(&self) -> usize {
        DERIVED_NAMES.len()
    }

    fn log_density(&self, theta: &[f64], derived: &mut [f64]) -> f64 {
        self.failures.evaluations.fetch_add(1, Ordering::Relaxed);
        if !self.in_bounds(theta) {
            return f64::NEG_INFINITY;
        }
        match self.evaluate_with_halo(&self.layout.values(theta)) {
            Ok((evaluation, values, halo)) => {
                derived.copy_from_slice(&values);
                let log_prior = self.log_prior(theta, &values, &halo.derived);
                if !log_prior.is_finite() {
                    return f64::NEG_INFINITY;
                }
                let log_likelihood = if self.prior_only {
                    0.0
                } else {
                    evaluation.log_likelihood
                };
                log_likelihood + log_prior
            }
            Err(error) => {
                let counter = match error {
                    PhysicsError::NoCore { .. } => &self.failures.no_core,
                    PhysicsError::NoNfwMatch { .. } => &self.failures.no_nfw_match,
                    _ => &self.failures.other,
                };
                counter.fetch_add(1, Ordering::Relaxed);
                f64::NEG_INFINITY
            }
        }
    }
}
