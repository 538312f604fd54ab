//! The live curve: what the app draws while the user drags the halo's parameters. No UI here, so
//! tests and the benchmark call exactly what the app calls.
//!
//! The SIDM halo follows the controls through the halo-first solve: the user sets the outer NFW
//! halo (V200, c200) and σ/m, and the isothermal core that matches it (with the galaxy's baryons
//! in the Jeans equation, lowest-density solution) is found; the curve is then drawn by the same
//! model the fits use.

use caldera_data::GalaxyTable;
use caldera_data::session::GalaxySettings;
use caldera_infer::model::{Components, GalaxyModel};
use caldera_infer::priors::{CrossSectionPrior, HaloBounds, Priors};
use caldera_infer::{FitSummary, InferError};
use caldera_physics::{Cosmology, ParamId, ParamValues, PhysicsError};

/// Why no live curve exists for the controls' values.
#[derive(Debug, thiserror::Error)]
pub enum LiveError {
    /// The galaxy's model could not be set up (its table, the priors).
    #[error("{0}")]
    Model(#[from] InferError),
    /// The physics refused these values (for example, no isothermal core matches the halo).
    #[error("{0}")]
    Physics(#[from] PhysicsError),
}

/// The live curve and its fit statistics.
#[derive(Debug, Clone, PartialEq)]
pub struct LiveCurve {
    pub components: Components,
    pub chi2: f64,
    pub chi2_nu: f64,
    /// For SIDM: ⟨v_rel⟩ (km/s), ρ0 (Msun/kpc³), σ0 (km/s).
    pub v_rel_kms: Option<f64>,
    pub rho0_msun_kpc3: Option<f64>,
    pub sigma0_kms: Option<f64>,
}

/// Wide bounds: the live view must draw whatever the controls allow.
fn live_priors() -> Priors {
    Priors {
        halo: HaloBounds {
            log10_rho0: (-5.0, 20.0),
            log10_sigma0: (-3.0, 5.0),
            log10_v200: (-3.0, 5.0),
            log10_c200: (-3.0, 5.0),
            log10_core_radius: (-5.0, 5.0),
            log10_einasto_alpha: (-5.0, 5.0),
        },
        cross_section: CrossSectionPrior {
            logarithmic: true,
            min_cm2_g: 1e-6,
            max_cm2_g: 1e6,
        },
        ..Priors::default()
    }
}

/// Builds the curve for `settings` on `table`. The error names why no curve exists (for
/// example, no isothermal core matches the halo). `previous`, the SIDM core (ρ0, σ0) of the curve
/// drawn a moment ago, lets a drag follow the solution by Newton's method instead of searching
/// afresh (a full search runs when that fails or when there is no previous solution).
///
/// The halo family says which settings it reads ([`caldera_physics::HaloFamily::controls`]) and
/// turns them into its parameters (for SIDM, the halo-first solve with the baryons at the set
/// Υ's and distance); the curve is then drawn by the same [`GalaxyModel`] the fits use.
pub fn live_curve(
    table: &GalaxyTable,
    settings: &GalaxySettings,
    cosmology: &Cosmology,
    previous: Option<(f64, f64)>,
) -> Result<LiveCurve, LiveError> {
    let model = GalaxyModel::new(
        table,
        settings.model,
        live_priors(),
        *cosmology,
        Some(settings.age_gyr),
    )?;
    let family = settings.model.family();
    let nuisances = [
        ParamId::UpsilonDisk,
        ParamId::UpsilonBulge,
        ParamId::Distance,
        ParamId::Inclination,
    ];
    let controls = ParamValues::from_pairs(
        family
            .controls()
            .iter()
            .chain(&nuisances)
            .filter_map(|&id| settings.value(id).map(|v| (id, v))),
    );
    let near = previous.map(|(rho0, sigma0)| {
        ParamValues::from_pairs([(ParamId::Rho0, rho0), (ParamId::Sigma0, sigma0)])
    });
    let at_controls = model.theta_from_values(&controls);
    let baryons = model.baryons_at(&at_controls)?;
    let parameters =
        family.parameters_from_controls(&controls, &model.halo_context(&baryons), near.as_ref())?;
    let theta = model.theta_from_values(&parameters);
    let components = model.components(&theta)?;
    let chi2 = components.chi2;
    let dof = model
        .n_points()
        .saturating_sub(model.parameters().len())
        .max(1);
    let halo = components.halo;
    Ok(LiveCurve {
        chi2,
        chi2_nu: chi2 / dof as f64,
        v_rel_kms: halo.v_rel_kms,
        rho0_msun_kpc3: halo.rho0_msun_kpc3,
        sigma0_kms: halo.sigma0_kms,
        components,
    })
}

/// The settings that reproduce a fit's best sample on the controls, and for SIDM the core
/// (ρ0, σ0) of that sample, so the live curve follows the fitted branch of the halo-first solve
/// rather than the lowest-density one.
///
/// The family turns its fitted parameters into its controls (SIDM: the best core's matched NFW
/// halo, V200 and c200); Υ's, distance and inclination take the best sample's values, or the
/// table's when the fit held them fixed; the age is the fit's.
pub fn settings_from_fit(
    table: &GalaxyTable,
    settings: &GalaxySettings,
    summary: &FitSummary,
    cosmology: &Cosmology,
) -> Result<(GalaxySettings, Option<(f64, f64)>), LiveError> {
    let model = GalaxyModel::new(
        table,
        summary.model,
        live_priors(),
        *cosmology,
        Some(summary.age_gyr),
    )?;
    let family = summary.model.family();
    let best = summary.best_values();
    let baryons = model.baryons_at(&model.theta_from_values(&best))?;
    let controls = family.controls_from_parameters(&best, &model.halo_context(&baryons))?;
    let mut out = settings.clone();
    out.model = summary.model;
    out.age_gyr = summary.age_gyr;
    for &id in family.controls() {
        if let Some(v) = controls.get(id) {
            out.set_value(id, v);
        }
    }
    for id in [ParamId::UpsilonDisk, ParamId::UpsilonBulge] {
        if let Some(v) = best.get(id) {
            out.set_value(id, v);
        }
    }
    out.distance_mpc = best.get(ParamId::Distance).or(table.meta.distance_mpc);
    out.inclination_deg = best
        .get(ParamId::Inclination)
        .or(table.meta.inclination_deg);
    let core = best.get(ParamId::Rho0).zip(best.get(ParamId::Sigma0));
    let core = family
        .parameters()
        .contains(&ParamId::Sigma0)
        .then_some(core)
        .flatten();
    Ok((out, core))
}
