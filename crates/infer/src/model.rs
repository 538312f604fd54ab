//! A galaxy's posterior: parameters, likelihood and priors for one halo model.
//!
//! Likelihood: Gaussian in the velocity residuals,
//! ln L = −½ Σ ((V_obs,i − V_model,i)/σ_i)² − Σ ln σ_i − (N/2) ln 2π,
//! with σ_i² = err_i² + floor². Nuisance parameters rescale the data (physics reference):
//! distance D scales radii (r ∝ D) and baryonic velocities (V_b ∝ √D); inclination i scales the
//! observed velocities and their errors by sin(i_table)/sin(i). The model is
//! V_model² = V_halo²(r) + V_b²(r), with V_b² signed. A model that cannot be built (no isothermal
//! core, no NFW match) has likelihood zero: ln p = −∞, and the reason is counted.

use std::sync::atomic::{AtomicU64, Ordering};

use caldera_data::GalaxyTable;
use caldera_data::session::HaloModel;
use caldera_physics::units::DEFAULT_HALO_AGE_GYR;
use caldera_physics::{
    BaryonTable, Burkert, Cosmology, CrossSection, HaloProfile, Nfw, PhysicsError,
    PseudoIsothermal, SidmSetup, sidm, units::G_KPC_KMS2_PER_MSUN, virial_quantities,
};
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::priors::{Priors, ln_normal};
use crate::sampler::LogDensity;

/// One sampled parameter: its name (with unit), bounds in the sampled coordinate, and whether
/// the coordinate is a base-10 logarithm of the physical value.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Parameter {
    pub name: String,
    pub lower: f64,
    pub upper: f64,
    pub log10: bool,
}

impl Parameter {
    fn new(name: &str, (lower, upper): (f64, f64), log10: bool) -> Self {
        Self {
            name: name.into(),
            lower,
            upper,
            log10,
        }
    }

    /// The physical value of a sampled coordinate.
    #[must_use]
    pub fn physical(&self, coordinate: f64) -> f64 {
        if self.log10 {
            10f64.powf(coordinate)
        } else {
            coordinate
        }
    }
}

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

/// Where each kind of parameter sits in the vector.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Layout {
    halo: usize,
    upsilon_disk: usize,
    upsilon_bulge: Option<usize>,
    distance: Option<usize>,
    inclination: Option<usize>,
}

/// A galaxy's posterior for one halo model.
#[derive(Debug)]
pub struct GalaxyModel {
    pub model: HaloModel,
    pub priors: Priors,
    pub cosmology: Cosmology,
    pub age_gyr: f64,
    parameters: Vec<Parameter>,
    layout: Layout,
    radius_kpc: Vec<f64>,
    v_obs_kms: Vec<f64>,
    v_err_kms: Vec<f64>,
    /// Signed squares V|V| of gas, disk and bulge at each row, (km/s)².
    gas2: Vec<f64>,
    disk2: Vec<f64>,
    bulge2: Vec<f64>,
    /// Rows grouped by unique radius for the baryonic mass model: (radius, first row, count).
    unique: Vec<(f64, usize, usize)>,
    distance_mpc: Option<(f64, f64)>,
    inclination_deg: Option<(f64, f64)>,
    pub failures: FailureCounts,
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

fn signed_square(v: f64) -> f64 {
    v * v.abs()
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
        let b = priors.halo;
        let mut parameters = match model {
            HaloModel::Sidm => {
                let xs = priors.cross_section;
                if !(xs.min_cm2_g > 0.0 && xs.max_cm2_g > xs.min_cm2_g) {
                    return Err(InferError::Config(format!(
                        "sigma/m bounds must satisfy 0 < min < max, got {} and {}",
                        xs.min_cm2_g, xs.max_cm2_g
                    )));
                }
                let sigma = if xs.logarithmic {
                    Parameter::new(
                        "log10_sigma_m_cm2_g",
                        (xs.min_cm2_g.log10(), xs.max_cm2_g.log10()),
                        true,
                    )
                } else {
                    Parameter::new("sigma_m_cm2_g", (xs.min_cm2_g, xs.max_cm2_g), false)
                };
                vec![
                    Parameter::new("log10_rho0_msun_kpc3", b.log10_rho0, true),
                    Parameter::new("log10_sigma0_kms", b.log10_sigma0, true),
                    sigma,
                ]
            }
            HaloModel::Nfw => vec![
                Parameter::new("log10_v200_kms", b.log10_v200, true),
                Parameter::new("log10_c200", b.log10_c200, true),
            ],
            HaloModel::Burkert => vec![
                Parameter::new("log10_rho0_msun_kpc3", b.log10_rho0, true),
                Parameter::new("log10_r0_kpc", b.log10_core_radius, true),
            ],
            HaloModel::PseudoIsothermal => vec![
                Parameter::new("log10_rho0_msun_kpc3", b.log10_rho0, true),
                Parameter::new("log10_rc_kpc", b.log10_core_radius, true),
            ],
        };
        let halo = 0;
        let upsilon_disk = parameters.len();
        let spread = 5.0 * priors.upsilon_scatter_dex;
        let around = |median: f64| (median.log10() - spread, median.log10() + spread);
        parameters.push(Parameter::new(
            "log10_upsilon_disk",
            around(priors.upsilon_disk_median),
            true,
        ));
        let upsilon_bulge = table.v_bulge_kms.as_ref().map(|_| {
            parameters.push(Parameter::new(
                "log10_upsilon_bulge",
                around(priors.upsilon_bulge_median),
                true,
            ));
            parameters.len() - 1
        });
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
        let distance = distance_mpc
            .filter(|pair| priors.vary_distance && with_error(pair))
            .map(|(d, e)| {
                parameters.push(Parameter::new(
                    "distance_mpc",
                    ((d - 5.0 * e).max(1e-3 * d), d + 5.0 * e),
                    false,
                ));
                parameters.len() - 1
            });
        let inclination = inclination_deg
            .filter(|pair| priors.vary_inclination && with_error(pair))
            .map(|(i, e)| {
                parameters.push(Parameter::new(
                    "inclination_deg",
                    ((i - 5.0 * e).max(5.0), (i + 5.0 * e).min(90.0)),
                    false,
                ));
                parameters.len() - 1
            });
        table.check_enough_points(parameters.len())?;

        let n = table.len();
        let mut unique: Vec<(f64, usize, usize)> = Vec::new();
        for (row, &r) in table.radius_kpc.iter().enumerate() {
            match unique.last_mut() {
                Some(last) if last.0 >= r => last.2 += 1,
                _ => unique.push((r, row, 1)),
            }
        }
        if unique.first().is_some_and(|u| u.0 <= 0.0) {
            // A point at r = 0 carries no rotation; the baryon model starts at the first r > 0.
            unique.remove(0);
        }
        let bulge = table.v_bulge_kms.clone().unwrap_or_else(|| vec![0.0; n]);
        Ok(Self {
            model,
            priors,
            cosmology,
            age_gyr: age_gyr
                .or(table.meta.age_gyr)
                .unwrap_or(DEFAULT_HALO_AGE_GYR),
            parameters,
            layout: Layout {
                halo,
                upsilon_disk,
                upsilon_bulge,
                distance,
                inclination,
            },
            radius_kpc: table.radius_kpc.clone(),
            v_obs_kms: table.v_obs_kms.clone(),
            v_err_kms: table.v_err_kms.clone(),
            gas2: table.v_gas_kms.iter().copied().map(signed_square).collect(),
            disk2: table
                .v_disk_kms
                .iter()
                .copied()
                .map(signed_square)
                .collect(),
            bulge2: bulge.into_iter().map(signed_square).collect(),
            unique,
            distance_mpc,
            inclination_deg,
            failures: FailureCounts::default(),
        })
    }

    /// The sampled parameters, in order.
    #[must_use]
    pub fn parameters(&self) -> &[Parameter] {
        &self.parameters
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
        theta.len() == self.parameters.len()
            && theta
                .iter()
                .zip(&self.parameters)
                .all(|(x, p)| x.is_finite() && *x >= p.lower && *x <= p.upper)
    }

    /// A central starting point: mid-bounds for the halo, prior medians for the nuisances.
    #[must_use]
    pub fn centre(&self) -> Vec<f64> {
        let mut theta: Vec<f64> = self
            .parameters
            .iter()
            .map(|p| 0.5 * (p.lower + p.upper))
            .collect();
        theta[self.layout.upsilon_disk] = self.priors.upsilon_disk_median.log10();
        if let Some(k) = self.layout.upsilon_bulge {
            theta[k] = self.priors.upsilon_bulge_median.log10();
        }
        if let (Some(k), Some((d, _))) = (self.layout.distance, self.distance_mpc) {
            theta[k] = d;
        }
        if let (Some(k), Some((i, _))) = (self.layout.inclination, self.inclination_deg) {
            theta[k] = i;
        }
        theta
    }

    fn nuisances(&self, theta: &[f64]) -> (f64, f64, f64, f64) {
        let upsilon_disk = 10f64.powf(theta[self.layout.upsilon_disk]);
        let upsilon_bulge = self
            .layout
            .upsilon_bulge
            .map_or(self.priors.upsilon_bulge_median, |k| 10f64.powf(theta[k]));
        let distance_factor = match (self.layout.distance, self.distance_mpc) {
            (Some(k), Some((d, _))) => theta[k] / d,
            _ => 1.0,
        };
        let inclination_factor = match (self.layout.inclination, self.inclination_deg) {
            (Some(k), Some((i, _))) => i.to_radians().sin() / theta[k].to_radians().sin(),
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
        let (upsilon_disk, upsilon_bulge, distance_factor, inclination_factor) =
            self.nuisances(theta);
        let n = self.n_points();
        let radius_kpc: Vec<f64> = self
            .radius_kpc
            .iter()
            .map(|r| r * distance_factor)
            .collect();
        let v_baryon2_kms2 = self.baryon_v2_rows(upsilon_disk, upsilon_bulge, distance_factor);
        let mut derived = [f64::NAN; DERIVED_NAMES.len()];
        derived[Derived::UpsilonDisk as usize] = upsilon_disk;
        derived[Derived::UpsilonBulge as usize] = self
            .layout
            .upsilon_bulge
            .map_or(f64::NAN, |_| upsilon_bulge);
        derived[Derived::Distance as usize] = self
            .distance_mpc
            .map_or(f64::NAN, |(d, _)| d * distance_factor);
        derived[Derived::Inclination as usize] =
            match (self.layout.inclination, self.inclination_deg) {
                (Some(k), _) => theta[k],
                (None, Some((i, _))) => i,
                _ => f64::NAN,
            };
        let halo = self.build_halo(theta, distance_factor, &v_baryon2_kms2, &mut derived)?;
        let floor2 = self.priors.error_floor_kms * self.priors.error_floor_kms;
        let mut chi2 = 0.0;
        let mut log_norm = 0.0;
        let mut v_obs_kms = Vec::with_capacity(n);
        let mut v_err_kms = Vec::with_capacity(n);
        let mut v_model_kms = Vec::with_capacity(n);
        let mut v_halo_kms = Vec::with_capacity(n);
        for i in 0..n {
            let v_halo = halo.v_circ_kms(radius_kpc[i]);
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
        ))
    }

    /// The baryonic enclosed mass for the Jeans equation, from the rows' V_b² at radii rescaled by
    /// `distance_factor` (rows at one radius averaged).
    fn baryon_mass_model(
        &self,
        distance_factor: f64,
        v_baryon2_kms2: &[f64],
    ) -> Result<BaryonTable, PhysicsError> {
        let (radii, masses): (Vec<f64>, Vec<f64>) = self
            .unique
            .iter()
            .map(|&(r, first, count)| {
                let mean_v2 =
                    v_baryon2_kms2[first..first + count].iter().sum::<f64>() / count as f64;
                let r_scaled = r * distance_factor;
                (r_scaled, r_scaled * mean_v2 / G_KPC_KMS2_PER_MSUN)
            })
            .unzip();
        BaryonTable::from_signed_mass(radii, masses)
    }

    /// Signed baryonic V_b² at each row, (km/s)²: gas + Υ_disk·disk + Υ_bulge·bulge, scaled by the
    /// distance factor (V_b² ∝ D).
    fn baryon_v2_rows(
        &self,
        upsilon_disk: f64,
        upsilon_bulge: f64,
        distance_factor: f64,
    ) -> Vec<f64> {
        (0..self.n_points())
            .map(|i| {
                distance_factor
                    * (self.gas2[i] + upsilon_disk * self.disk2[i] + upsilon_bulge * self.bulge2[i])
            })
            .collect()
    }

    /// The baryonic enclosed mass the Jeans equation sees at the nuisance parameters of `theta`
    /// (its halo coordinates are ignored), e.g. for a halo-first solve at the same Υ, D and i.
    pub fn baryons_at(&self, theta: &[f64]) -> Result<BaryonTable, PhysicsError> {
        let (upsilon_disk, upsilon_bulge, distance_factor, _) = self.nuisances(theta);
        let v_baryon2_kms2 = self.baryon_v2_rows(upsilon_disk, upsilon_bulge, distance_factor);
        self.baryon_mass_model(distance_factor, &v_baryon2_kms2)
    }

    /// Builds the halo at `theta` for data rescaled by `distance_factor` (with baryonic V² per
    /// row `v_baryon2_kms2`), filling the halo's derived quantities into `derived`.
    fn build_halo(
        &self,
        theta: &[f64],
        distance_factor: f64,
        v_baryon2_kms2: &[f64],
        derived: &mut [f64; DERIVED_NAMES.len()],
    ) -> Result<Box<dyn HaloProfile>, PhysicsError> {
        let h = self.layout.halo;
        let p = |k: usize| self.parameters[h + k].physical(theta[h + k]);
        let halo: Box<dyn HaloProfile> = match self.model {
            HaloModel::Sidm => {
                let baryons = self.baryon_mass_model(distance_factor, v_baryon2_kms2)?;
                let setup = SidmSetup {
                    cross_section: CrossSection::constant(p(2))?,
                    age_gyr: self.age_gyr,
                    baryons: &baryons,
                    cosmology: self.cosmology,
                };
                let halo = sidm::core_first(&setup, p(0), p(1))?;
                let s = halo.summary();
                derived[Derived::SigmaM as usize] = p(2);
                derived[Derived::VRel as usize] = s.v_rel_kms;
                derived[Derived::R1 as usize] = s.r1_kpc;
                derived[Derived::CoreRadius as usize] = s.core_radius_kpc;
                derived[Derived::V200 as usize] = s.v200_kms;
                derived[Derived::C200 as usize] = s.c200;
                derived[Derived::M200 as usize] = s.m200_msun;
                Box::new(halo)
            }
            HaloModel::Nfw => {
                let nfw = Nfw::from_v200_c200(p(0), p(1), &self.cosmology)?;
                let v = nfw.virial(&self.cosmology)?;
                derived[Derived::V200 as usize] = v.v200_kms;
                derived[Derived::C200 as usize] = v.c200;
                derived[Derived::M200 as usize] = v.m200_msun;
                Box::new(nfw)
            }
            HaloModel::Burkert => {
                let burkert = Burkert::new(p(0), p(1))?;
                let v = virial_quantities(
                    &burkert,
                    Burkert::r_minus2_over_r0() * p(1),
                    &self.cosmology,
                )?;
                derived[Derived::CoreRadius as usize] = p(1);
                derived[Derived::V200 as usize] = v.v200_kms;
                derived[Derived::C200 as usize] = v.c200;
                derived[Derived::M200 as usize] = v.m200_msun;
                Box::new(burkert)
            }
            HaloModel::PseudoIsothermal => {
                let iso = PseudoIsothermal::new(p(0), p(1))?;
                let v = virial_quantities(&iso, f64::NAN, &self.cosmology)?;
                derived[Derived::CoreRadius as usize] = p(1);
                derived[Derived::V200 as usize] = v.v200_kms;
                derived[Derived::M200 as usize] = v.m200_msun;
                Box::new(iso)
            }
        };
        Ok(halo)
    }

    /// ln prior of the nuisances and the concentration–mass relation (the halo parameters'
    /// uniform priors contribute a constant inside the bounds).
    fn log_prior(&self, theta: &[f64], derived: &[f64]) -> f64 {
        let mut lp = 0.0;
        let scatter = self.priors.upsilon_scatter_dex;
        lp += ln_normal(
            theta[self.layout.upsilon_disk],
            self.priors.upsilon_disk_median.log10(),
            scatter,
        );
        if let Some(k) = self.layout.upsilon_bulge {
            lp += ln_normal(theta[k], self.priors.upsilon_bulge_median.log10(), scatter);
        }
        if let (Some(k), Some((d, e))) = (self.layout.distance, self.distance_mpc) {
            lp += ln_normal(theta[k], d, e);
        }
        if let (Some(k), Some((i, e))) = (self.layout.inclination, self.inclination_deg) {
            lp += ln_normal(theta[k], i, e);
        }
        let (m200, c200) = (
            derived[Derived::M200 as usize],
            derived[Derived::C200 as usize],
        );
        if self.priors.concentration_mass && m200 > 0.0 && c200 > 0.0 {
            let mu = self.cosmology.dutton_maccio_c200(m200).log10();
            lp += ln_normal(c200.log10(), mu, self.priors.concentration_scatter_dex);
        }
        lp
    }
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
}

fn signed_root(v2: f64) -> f64 {
    v2.signum() * v2.abs().sqrt()
}

impl GalaxyModel {
    /// The pieces of the model at `theta` for plotting (see [`Components`]).
    pub fn components(&self, theta: &[f64]) -> Result<Components, PhysicsError> {
        let (evaluation, derived) = self.evaluate(theta)?;
        let (upsilon_disk, upsilon_bulge, distance_factor, _) = self.nuisances(theta);
        let mut scratch = derived;
        let halo = self.build_halo(
            theta,
            distance_factor,
            &evaluation.v_baryon2_kms2,
            &mut scratch,
        )?;
        let n = self.n_points();
        let scaled = |v2: &[f64], factor: f64| -> Vec<f64> {
            v2.iter()
                .map(|x| signed_root(distance_factor * factor * x))
                .collect()
        };
        let r_max = evaluation.radius_kpc.iter().copied().fold(0.0, f64::max) * 1.05;
        let fine_radius_kpc: Vec<f64> = (1..=200).map(|i| r_max * f64::from(i) / 200.0).collect();
        // Signed r·V_b² at the data radii, interpolated linearly between them (the table's
        // enclosed-mass rule: ∝ r³ inside the first radius, constant beyond the last).
        let radii = &evaluation.radius_kpc;
        let m: Vec<f64> = radii
            .iter()
            .zip(&evaluation.v_baryon2_kms2)
            .map(|(r, v2)| r * v2)
            .collect();
        let baryon_mass = |r: f64| -> f64 {
            if r <= radii[0] {
                return m[0] * (r / radii[0]).powi(3);
            }
            if r >= radii[n - 1] {
                return m[n - 1];
            }
            let upper = radii.partition_point(|&x| x < r);
            let lower = upper - 1;
            let w = (r - radii[lower]) / (radii[upper] - radii[lower]).max(f64::MIN_POSITIVE);
            m[lower] + w * (m[upper] - m[lower])
        };
        let v_halo_fine_kms: Vec<f64> = fine_radius_kpc
            .iter()
            .map(|&r| halo.v_circ_kms(r))
            .collect();
        let v_total_fine_kms = fine_radius_kpc
            .iter()
            .zip(&v_halo_fine_kms)
            .map(|(&r, vh)| (vh * vh + baryon_mass(r) / r).max(0.0).sqrt())
            .collect();
        let finite = |x: f64| x.is_finite().then_some(x);
        Ok(Components {
            v_gas_kms: scaled(&self.gas2, 1.0),
            v_disk_kms: scaled(&self.disk2, upsilon_disk),
            v_bulge_kms: self
                .layout
                .upsilon_bulge
                .map(|_| scaled(&self.bulge2, upsilon_bulge)),
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
        })
    }
}

impl LogDensity for GalaxyModel {
    fn dim(&self) -> usize {
        self.parameters.len()
    }

    fn n_derived(&self) -> usize {
        DERIVED_NAMES.len()
    }

    fn log_density(&self, theta: &[f64], derived: &mut [f64]) -> f64 {
        self.failures.evaluations.fetch_add(1, Ordering::Relaxed);
        if !self.in_bounds(theta) {
            return f64::NEG_INFINITY;
        }
        match self.evaluate(theta) {
            Ok((evaluation, values)) => {
                derived.copy_from_slice(&values);
                evaluation.log_likelihood + self.log_prior(theta, &values)
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
