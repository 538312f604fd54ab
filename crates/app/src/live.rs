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
use caldera_physics::{BaryonTable, Cosmology, ParamId, ParamValues, PhysicsError};

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

/// An SIDM isothermal core: the solution of the halo-first solve a drag follows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SidmCore {
    pub rho0_msun_kpc3: f64,
    pub sigma0_kms: f64,
}

impl SidmCore {
    /// The core in `values`, if they hold one (ρ0 and σ0).
    #[must_use]
    pub fn from_values(values: &ParamValues) -> Option<Self> {
        Some(Self {
            rho0_msun_kpc3: values.get(ParamId::Rho0)?,
            sigma0_kms: values.get(ParamId::Sigma0)?,
        })
    }

    fn to_values(self) -> ParamValues {
        ParamValues::from_pairs([
            (ParamId::Rho0, self.rho0_msun_kpc3),
            (ParamId::Sigma0, self.sigma0_kms),
        ])
    }
}

/// The live curve and its fit statistics (the halo's derived quantities, the SIDM core and
/// ⟨v_rel⟩ among them, are in `components.halo`).
#[derive(Debug, Clone, PartialEq)]
pub struct LiveCurve {
    pub components: Components,
    pub chi2: f64,
    pub chi2_nu: f64,
}

impl LiveCurve {
    /// The SIDM core of this curve (None for other halo families).
    #[must_use]
    pub fn sidm_core(&self) -> Option<SidmCore> {
        let halo = &self.components.halo;
        Some(SidmCore {
            rho0_msun_kpc3: halo.rho0_msun_kpc3?,
            sigma0_kms: halo.sigma0_kms?,
        })
    }
}

/// The controls a galaxy opens with: V200 at 0.8 of its highest observed velocity, c200 = 10,
/// σ/m = 1 cm²/g, the table's distance, inclination and halo age (common practice: a halo near
/// the data's scale to start dragging from).
#[must_use]
pub fn starting_settings(table: &GalaxyTable) -> GalaxySettings {
    let (v200_low, v200_high, _) = ParamId::V200.control_range();
    GalaxySettings {
        v200_kms: (0.8 * table.v_obs_max_kms()).clamp(v200_low, v200_high),
        c200: 10.0,
        sigma_m_cm2_g: 1.0,
        distance_mpc: table.meta.distance_mpc,
        inclination_deg: table.meta.inclination_deg,
        age_gyr: table
            .meta
            .age_gyr
            .unwrap_or(caldera_physics::units::DEFAULT_HALO_AGE_GYR),
        ..GalaxySettings::default()
    }
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

/// What every live solve starts from: the galaxy's model under wide bounds, the controls the
/// halo family reads (plus the nuisances), and the baryons at them.
struct LiveSetup {
    model: GalaxyModel,
    controls: ParamValues,
    baryons: BaryonTable,
}

impl LiveSetup {
    fn new(
        table: &GalaxyTable,
        settings: &GalaxySettings,
        cosmology: &Cosmology,
    ) -> Result<Self, LiveError> {
        let model = GalaxyModel::new(
            table,
            settings.model,
            live_priors(),
            *cosmology,
            Some(settings.age_gyr),
        )?;
        let nuisances = [
            ParamId::UpsilonDisk,
            ParamId::UpsilonBulge,
            ParamId::Distance,
            ParamId::Inclination,
        ];
        let controls = ParamValues::from_pairs(
            settings
                .model
                .family()
                .controls()
                .iter()
                .chain(&nuisances)
                .filter_map(|&id| settings.value(id).map(|v| (id, v))),
        );
        let baryons = model.baryons_at_values(&controls)?;
        Ok(Self {
            model,
            controls,
            baryons,
        })
    }

    /// The curve and its χ² at the family's `parameters`.
    fn curve(&self, parameters: &ParamValues) -> Result<LiveCurve, LiveError> {
        let theta = self.model.theta_from_values(parameters);
        let components = self.model.components(&theta)?;
        let chi2 = components.chi2;
        let dof = self
            .model
            .n_points()
            .saturating_sub(self.model.parameters().len())
            .max(1);
        Ok(LiveCurve {
            chi2,
            chi2_nu: chi2 / dof as f64,
            components,
        })
    }
}

/// Builds the curve for `settings` on `table`. The error names why no curve exists (for
/// example, no isothermal core matches the halo). `previous`, the SIDM core of the curve drawn a
/// moment ago, lets a drag follow the solution by Newton's method instead of searching
/// afresh (a full search runs when that fails or when there is no previous solution: tens of
/// milliseconds with tabulated baryons, so the app runs this off its UI thread).
///
/// The halo family says which settings it reads ([`caldera_physics::HaloFamily::controls`]) and
/// turns them into its parameters (for SIDM, the halo-first solve with the baryons at the set
/// Υ's and distance); the curve is then drawn by the same [`GalaxyModel`] the fits use.
pub fn live_curve(
    table: &GalaxyTable,
    settings: &GalaxySettings,
    cosmology: &Cosmology,
    previous: Option<SidmCore>,
) -> Result<LiveCurve, LiveError> {
    let setup = LiveSetup::new(table, settings, cosmology)?;
    let near = previous.map(SidmCore::to_values);
    let parameters = settings.model.family().parameters_from_controls(
        &setup.controls,
        &setup.model.halo_context(&setup.baryons),
        near.as_ref(),
    )?;
    setup.curve(&parameters)
}

/// [`live_curve`] limited to what fits in a frame: closed-form halos, and an SIDM core followed
/// from `previous` by Newton's method (a few Jeans integrations). `Ok(None)` when that is not
/// enough and the full search of [`live_curve`] is needed.
pub fn quick_live_curve(
    table: &GalaxyTable,
    settings: &GalaxySettings,
    cosmology: &Cosmology,
    previous: Option<SidmCore>,
) -> Result<Option<LiveCurve>, LiveError> {
    let setup = LiveSetup::new(table, settings, cosmology)?;
    let near = previous.map(SidmCore::to_values);
    let followed = settings.model.family().follow_controls(
        &setup.controls,
        &setup.model.halo_context(&setup.baryons),
        near.as_ref(),
    );
    match followed {
        Some(parameters) => Ok(Some(setup.curve(&parameters?)?)),
        None => Ok(None),
    }
}

/// The settings that reproduce a fit's best sample on the controls, and for SIDM the core of
/// that sample, so the live curve follows the fitted branch of the halo-first solve
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
) -> Result<(GalaxySettings, Option<SidmCore>), LiveError> {
    let model = GalaxyModel::new(
        table,
        summary.model,
        live_priors(),
        *cosmology,
        Some(summary.age_gyr),
    )?;
    let family = summary.model.family();
    let best = summary.best_values();
    let baryons = model.baryons_at_values(&best)?;
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
    Ok((out, SidmCore::from_values(&best)))
}
