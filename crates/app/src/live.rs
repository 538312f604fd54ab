//! The live curve: what the app draws while the user drags the halo's parameters. No UI here, so
//! tests and the benchmark call exactly what the app calls.
//!
//! The SIDM halo follows the controls through the halo-first solve: the user sets the outer NFW
//! halo (V200, c200) and σ/m, and the isothermal core that matches it (with the galaxy's baryons
//! in the Jeans equation, lowest-density solution) is found; the curve is then drawn by the same
//! model the fits use.

use caldera_data::GalaxyTable;
use caldera_data::session::{GalaxySettings, HaloModel};
use caldera_infer::model::{Components, GalaxyModel};
use caldera_infer::priors::{CrossSectionPrior, HaloBounds, Priors};
use caldera_physics::{Branch, Cosmology, CrossSection, Nfw, SidmSetup, sidm};

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
/// example, no isothermal core matches the halo). `previous`, the (ρ0, σ0) of the curve drawn a
/// moment ago, lets a drag follow the solution by Newton's method instead of searching afresh
/// (a full search runs when that fails or when there is no previous solution).
pub fn live_curve(
    table: &GalaxyTable,
    settings: &GalaxySettings,
    cosmology: &Cosmology,
    previous: Option<(f64, f64)>,
) -> Result<LiveCurve, String> {
    let model = GalaxyModel::new(
        table,
        settings.model,
        live_priors(),
        *cosmology,
        Some(settings.age_gyr),
    )
    .map_err(|e| e.to_string())?;
    let mut theta = model.centre();
    for (k, p) in model.parameters().iter().enumerate() {
        match p.name.as_str() {
            "log10_upsilon_disk" => theta[k] = settings.upsilon_disk.max(1e-6).log10(),
            "log10_upsilon_bulge" => theta[k] = settings.upsilon_bulge.max(1e-6).log10(),
            "distance_mpc" => {
                if let Some(d) = settings.distance_mpc {
                    theta[k] = d;
                }
            }
            "inclination_deg" => {
                if let Some(i) = settings.inclination_deg {
                    theta[k] = i;
                }
            }
            _ => {}
        }
    }
    let (mut v_rel_kms, mut rho0_msun_kpc3, mut sigma0_kms) = (None, None, None);
    match settings.model {
        HaloModel::Sidm => {
            let baryons = model.baryons_at(&theta).map_err(|e| e.to_string())?;
            let setup = SidmSetup {
                cross_section: CrossSection::constant(settings.sigma_m_cm2_g)
                    .map_err(|e| e.to_string())?,
                age_gyr: settings.age_gyr,
                baryons: &baryons,
                cosmology: *cosmology,
            };
            let nfw = Nfw::from_v200_c200(settings.v200_kms, settings.c200, cosmology)
                .map_err(|e| e.to_string())?;
            let followed =
                previous.and_then(|guess| sidm::halo_first_near(&setup, &nfw, guess).ok());
            let halo = match followed {
                Some(halo) => halo,
                None => sidm::halo_first(&setup, &nfw, Branch::LowestDensity)
                    .map_err(|e| e.to_string())?,
            };
            theta[0] = halo.rho0_msun_kpc3().log10();
            theta[1] = halo.sigma0_kms().log10();
            theta[2] = settings.sigma_m_cm2_g.log10();
            v_rel_kms = Some(halo.summary().v_rel_kms);
            rho0_msun_kpc3 = Some(halo.rho0_msun_kpc3());
            sigma0_kms = Some(halo.sigma0_kms());
        }
        HaloModel::Nfw => {
            theta[0] = settings.v200_kms.max(1e-6).log10();
            theta[1] = settings.c200.max(1e-6).log10();
        }
        HaloModel::Burkert | HaloModel::PseudoIsothermal => {
            theta[0] = settings.rho0_msun_kpc3.max(1e-6).log10();
            theta[1] = settings.core_radius_kpc.max(1e-6).log10();
        }
    }
    let components = model.components(&theta).map_err(|e| e.to_string())?;
    let chi2 = components.chi2;
    let dof = model
        .n_points()
        .saturating_sub(model.parameters().len())
        .max(1);
    Ok(LiveCurve {
        components,
        chi2,
        chi2_nu: chi2 / dof as f64,
        v_rel_kms,
        rho0_msun_kpc3,
        sigma0_kms,
    })
}
