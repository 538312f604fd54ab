//! Population-level σ(v)/m: velocity-dependent cross-section models fitted to the per-galaxy
//! SIDM posteriors of a catalogue run (and to outside constraints), compared by AIC and BIC.
//!
//! See [`likelihood`] for how the galaxies enter: the *marginal* treatment is the population fit
//! over the σ/m–velocity plane, the *joint* treatment shares one σ(v)/m among all galaxies' Jeans
//! models by importance reweighting of their chains. Reweighting reuses the chains a catalogue run
//! already made (a direct hierarchical sampler would explore every galaxy's halo and nuisance
//! parameters at once — about 100 dimensions for the 16 demo galaxies — re-solving each galaxy's
//! Jeans model at every step), at the price of a kernel width in log σ/m; it is accurate when each galaxy's chain covers the region the shared model picks,
//! which holds because each galaxy's prior on σ/m spans that region uniformly in log.

pub mod likelihood;
pub mod models;

use rand::RngExt;
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use caldera_data::OutsideConstraint;
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::{HaloModel, ParamId, Transform};

use crate::InferError;
use crate::optimize::{MapEstimate, multistart_nelder_mead};
use crate::pipeline::{SamplingPlan, bounded_interval, information_criteria, sample_around};
use crate::priors::CrossSectionPrior;
use crate::run_folder::RunFolder;
use crate::sampler::{MoveMix, Observer, RunConfig};
use crate::summary::{Interval, quantile};

pub use likelihood::{
    GalaxyPosterior, PopulationLikelihood, SCATTER_PARAMETER, Treatment, constraint_log_likelihood,
    effective_sigma_m_cm2_g,
};
pub use models::{PopulationModel, PopulationParameter, VelocityModel};

/// Everything that controls a population fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PopulationSettings {
    /// Dark-matter mass held fixed in the Yukawa model, GeV.
    pub yukawa_dm_mass_gev: f64,
    /// Posterior samples kept per galaxy.
    pub max_samples_per_galaxy: usize,
    pub n_walkers: usize,
    pub run: RunConfig,
    /// Optimiser starts per model for the maximum likelihood.
    pub map_starts: usize,
    pub seed: u64,
    /// Also compute each model's evidence ln Z by parallel tempering (None: skip).
    pub evidence: Option<crate::tempering::LadderConfig>,
    /// Fit the hierarchical model: each galaxy's log10 σ_eff scatters about the model's with an
    /// intrinsic scatter τ (dex), a population parameter (see [`likelihood`]).
    #[serde(default)]
    pub scatter: bool,
}

impl Default for PopulationSettings {
    fn default() -> Self {
        Self {
            yukawa_dm_mass_gev: caldera_physics::cross_section::DEFAULT_YUKAWA_DM_MASS_GEV,
            max_samples_per_galaxy: 600,
            n_walkers: 24,
            run: RunConfig {
                max_steps: 10_000,
                ..RunConfig::default()
            },
            map_starts: 6,
            seed: 1,
            evidence: None,
            scatter: false,
        }
    }
}

/// The population likelihood divides by a flat prior density in log10 σ/m: refuses chains
/// sampled uniformly in σ/m itself.
fn require_logarithmic_prior(galaxy: &str, prior: &CrossSectionPrior) -> Result<(), InferError> {
    if prior.logarithmic {
        Ok(())
    } else {
        Err(InferError::Config(format!(
            "galaxy '{galaxy}': its sigma/m was sampled uniformly in sigma/m; the population fit reweights chains sampled uniformly in log10 sigma/m (refit with a logarithmic prior)"
        )))
    }
}

impl GalaxyPosterior {
    /// From a chain's columns `log10_sigma0_kms` and `log10_sigma_m_cm2_g` (as Caldera writes
    /// SIDM chains), with the fit's σ/m prior.
    pub fn from_chain(
        galaxy: &str,
        log10_sigma0_kms: &[f64],
        log10_sigma_m_cm2_g: &[f64],
        prior: &CrossSectionPrior,
        max_samples: usize,
    ) -> Result<Self, InferError> {
        require_logarithmic_prior(galaxy, prior)?;
        let sigma0: Vec<f64> = log10_sigma0_kms.iter().map(|x| 10f64.powf(*x)).collect();
        Self::from_samples(
            galaxy,
            &sigma0,
            log10_sigma_m_cm2_g,
            (prior.min_cm2_g.log10(), prior.max_cm2_g.log10()),
            max_samples,
        )
    }

    /// From a finished SIDM fit held in memory.
    pub fn from_fit(
        fit: &crate::FitResult,
        prior: &CrossSectionPrior,
        max_samples: usize,
    ) -> Result<Self, InferError> {
        require_logarithmic_prior(&fit.summary.galaxy, prior)?;
        let index = |id: ParamId| {
            fit.parameters
                .iter()
                .position(|p| p.id == id && p.transform == Transform::Log10)
                .ok_or_else(|| {
                    InferError::Config(format!(
                        "galaxy '{}': the {} fit has no parameter {} (population fits need SIDM fits)",
                        fit.summary.galaxy,
                        fit.summary.model.name(),
                        id.column(Transform::Log10)
                    ))
                })
        };
        let sigma_m = index(ParamId::SigmaM)?;
        let kept: Vec<(usize, usize)> = fit.chain.kept(fit.burn_in, fit.thin).collect();
        let column = |p: usize| -> Vec<f64> {
            kept.iter()
                .map(|&(s, w)| fit.chain.position(s, w, p))
                .collect()
        };
        // Sampled in the core, log10 σ0 is a coordinate; sampled in the outer halo (asked for,
        // or after the core coordinates ended unconverged), σ0 comes from the derived
        // ⟨v_rel⟩ = 4σ0/√π, as for a run folder's chains.
        let log10_sigma0: Vec<f64> = match index(ParamId::Sigma0) {
            Ok(sigma0) => column(sigma0),
            Err(missing) => {
                if fit.summary.model != caldera_data::session::HaloModel::Sidm {
                    return Err(missing);
                }
                kept.iter()
                    .map(|&(s, w)| {
                        log10_sigma0_kms(fit.chain.derived(
                            s,
                            w,
                            crate::model::Derived::VRel as usize,
                        ))
                    })
                    .collect()
            }
        };
        Self::from_chain(
            &fit.summary.galaxy,
            &log10_sigma0,
            &column(sigma_m),
            prior,
            max_samples,
        )
    }
}

/// The SIDM posteriors of a catalogue run's output folder (`caldera fit CATALOGUE --out DIR`):
/// each `galaxies/<name>/sidm.chain.csv` with its `sidm.summary.json`.
#[derive(Debug, Default)]
pub struct FolderPosteriors {
    pub posteriors: Vec<GalaxyPosterior>,
    /// Whether each galaxy's chain met the convergence rule (same order).
    pub converged: Vec<bool>,
    /// Galaxy folders without a finished SIDM fit.
    pub skipped: Vec<String>,
}

/// Reads the SIDM posteriors of a catalogue run's output folder, with the run's σ/m prior.
pub fn load_folder_posteriors(
    results: &std::path::Path,
    prior: &CrossSectionPrior,
    max_samples: usize,
) -> Result<FolderPosteriors, InferError> {
    let run = RunFolder::new(results);
    let mut out = FolderPosteriors::default();
    for slug in run.slugs()? {
        let chain_path = run.chain_path(&slug, HaloModel::Sidm);
        let summary = match run.read_summary(&slug, HaloModel::Sidm)? {
            Some(summary) if chain_path.exists() => summary,
            _ => {
                out.skipped.push(format!(
                    "{}: no finished SIDM fit",
                    run.galaxy_dir(&slug).display()
                ));
                continue;
            }
        };
        let chain = caldera_data::read_numeric_csv(&chain_path)?;
        let column = |id: ParamId| {
            let name = id.column(Transform::Log10);
            chain.column(&name).ok_or_else(|| {
                InferError::Config(format!("{}: no column '{name}'", chain_path.display()))
            })
        };
        // A fit sampled in the core has log10 σ0 as a column; one sampled in the outer halo
        // (`SidmCoordinates::Halo`) records σ0 through the derived ⟨v_rel⟩ = 4σ0/√π.
        let log10_sigma0: Vec<f64> = match column(ParamId::Sigma0) {
            Ok(values) => values.to_vec(),
            Err(missing) => chain
                .column(crate::model::DERIVED_NAMES[crate::model::Derived::VRel as usize])
                .ok_or(missing)?
                .iter()
                .map(|&v| log10_sigma0_kms(v))
                .collect(),
        };
        out.posteriors.push(GalaxyPosterior::from_chain(
            &summary.galaxy,
            &log10_sigma0,
            column(ParamId::SigmaM)?,
            prior,
            max_samples,
        )?);
        out.converged.push(summary.converged);
    }
    Ok(out)
}

/// log10 of the core dispersion σ0 (km/s) from the mean relative speed ⟨v_rel⟩ = 4σ0/√π (km/s):
/// how a chain sampled in outer-halo coordinates, which has no σ0 column, gives its σ0.
fn log10_sigma0_kms(v_rel_kms: f64) -> f64 {
    dispersion_from_mean_relative_speed_kms(v_rel_kms).log10()
}

/// One fitted parameter: physical value (not its log) summarised over the posterior.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FittedParameter {
    pub name: String,
    pub unit: String,
    /// Posterior summary (median, 16/84, 2.5/97.5 percentiles; `upper95` when it piles up at
    /// the lower prior bound).
    pub interval: Option<Interval>,
    /// Value at the maximum likelihood.
    pub best: f64,
}

/// One population model fitted under one treatment.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PopulationFit {
    /// The model (its name in JSON: "constant", "fall-off", "yukawa", "resonance").
    #[serde(rename = "name")]
    pub model: VelocityModel,
    pub treatment: Treatment,
    /// Whether the intrinsic scatter τ was fitted (then the last parameter is "tau", dex).
    #[serde(default)]
    pub scatter: bool,
    pub formula: String,
    pub parameters: Vec<FittedParameter>,
    pub log_likelihood_max: f64,
    /// AIC = 2k − 2 ln L_max.
    pub aic: f64,
    /// BIC = k ln N − 2 ln L_max, N = galaxies + outside constraints.
    pub bic: f64,
    pub n_parameters: usize,
    pub n_data: usize,
    pub converged: bool,
    pub tau_max: f64,
    pub acceptance: f64,
    pub n_samples: usize,
    /// Validity warnings (e.g. the Born regime).
    pub notes: Vec<String>,
    /// Kept posterior samples of the log10 coordinates (not serialised); the model's
    /// coordinates first, then log10 τ when the scatter is fitted.
    #[serde(skip)]
    pub samples: Vec<Vec<f64>>,
    /// log10 coordinates at the maximum likelihood (the same order).
    pub best_theta: Vec<f64>,
    /// The Yukawa model's fixed dark-matter mass, GeV.
    pub yukawa_dm_mass_gev: f64,
    /// ln Z under the flat priors on the log10 coordinates (thermodynamic integration), when
    /// asked for; differences between models under one treatment are ln Bayes factors.
    #[serde(default)]
    pub log_evidence: Option<f64>,
    #[serde(default)]
    pub log_evidence_err: Option<f64>,
}

/// Summary of a curve over posterior samples at each velocity: median, 16th and 84th percentiles.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    pub median: f64,
    pub p16: f64,
    pub p84: f64,
}

impl PopulationFit {
    /// The model's name, with "+ scatter" for the hierarchical model.
    #[must_use]
    pub fn label(&self) -> String {
        if self.scatter {
            format!("{} + scatter", self.model.name())
        } else {
            self.model.name().to_string()
        }
    }

    /// The intrinsic scatter τ's summary (dex), when fitted.
    #[must_use]
    pub fn scatter_dex(&self) -> Option<&FittedParameter> {
        self.scatter
            .then(|| self.parameters.last())
            .flatten()
            .filter(|p| p.name == SCATTER_PARAMETER.name)
    }

    /// The posterior band of the effective σ/m (cm²/g) at mean relative speeds `v_rel_kms`,
    /// from at most `max_draws` samples.
    #[must_use]
    pub fn effective_band(&self, v_rel_kms: &[f64], max_draws: usize) -> Vec<Band> {
        let stride = self.samples.len().div_ceil(max_draws.max(1)).max(1);
        let draws: Vec<_> = self
            .samples
            .iter()
            .step_by(stride)
            .filter_map(|theta| {
                self.model
                    .cross_section(theta, self.yukawa_dm_mass_gev)
                    .ok()
            })
            .collect();
        v_rel_kms
            .iter()
            .map(|&v| {
                let sigma0 = dispersion_from_mean_relative_speed_kms(v);
                let mut values: Vec<f64> = draws
                    .iter()
                    .map(|c| effective_sigma_m_cm2_g(c, sigma0))
                    .filter(|x| x.is_finite())
                    .collect();
                values.sort_by(f64::total_cmp);
                Band {
                    median: quantile(&values, 0.5),
                    p16: quantile(&values, 0.16),
                    p84: quantile(&values, 0.84),
                }
            })
            .collect()
    }

    /// The cross-section at the maximum likelihood.
    pub fn best_cross_section(&self) -> Result<caldera_physics::CrossSection, InferError> {
        Ok(self
            .model
            .cross_section(&self.best_theta, self.yukawa_dm_mass_gev)?)
    }
}

/// Maximum likelihood over the bounded log10 coordinates: Nelder–Mead from `starts` uniform
/// random points, the best polished once more.
fn maximum_likelihood(
    density: &PopulationLikelihood<'_>,
    starts: usize,
    rng: &mut Xoshiro256PlusPlus,
) -> Result<MapEstimate, InferError> {
    let bounds: Vec<(f64, f64)> = density
        .parameters()
        .iter()
        .map(|p| (p.lower, p.upper))
        .collect();
    multistart_nelder_mead(
        density,
        &bounds,
        starts,
        || {
            let start: Vec<f64> = bounds
                .iter()
                .map(|(lo, hi)| lo + (hi - lo) * rng.random::<f64>())
                .collect();
            density.log_likelihood(&start).is_finite().then_some(start)
        },
        1500,
        || {
            format!(
                "population model {}: no start with a finite likelihood",
                density.model.name()
            )
        },
    )
}

/// A population model's maximum likelihood alone, without a posterior sample.
#[derive(Debug, Clone, PartialEq)]
pub struct BestFit {
    /// log10 coordinates at the maximum (the model's, then log10 τ with scatter).
    pub theta: Vec<f64>,
    pub log_likelihood_max: f64,
    pub aic: f64,
    pub bic: f64,
}

/// The maximum likelihood of one population model under one treatment (Nelder–Mead from
/// several random starts), with its AIC and BIC: what a forecast needs of each of many invented
/// catalogues, at a small fraction of [`fit_population`]'s cost.
pub fn best_fit_population(
    model: VelocityModel,
    treatment: Treatment,
    galaxies: &[GalaxyPosterior],
    constraints: &[OutsideConstraint],
    settings: &PopulationSettings,
) -> Result<BestFit, InferError> {
    if galaxies.is_empty() && constraints.is_empty() {
        return Err(InferError::Config(
            "a population fit needs at least one galaxy posterior or outside constraint".into(),
        ));
    }
    let density = PopulationLikelihood::new(
        model,
        treatment,
        settings.yukawa_dm_mass_gev,
        galaxies,
        constraints,
    )
    .with_scatter(settings.scatter);
    let dim = density.parameters().len();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(
        settings.seed ^ (model as u64 + 1).wrapping_mul(0x9e37_79b9_7f4a_7c15),
    );
    let best = maximum_likelihood(&density, settings.map_starts * dim, &mut rng)?;
    let (aic, bic) = information_criteria(dim, density.n_data(), best.log_posterior);
    Ok(BestFit {
        theta: best.theta,
        log_likelihood_max: best.log_posterior,
        aic,
        bic,
    })
}

/// Fits one population model under one treatment: maximum likelihood, then the ensemble
/// sampler with flat priors on the log10 coordinates.
pub fn fit_population<O: Observer>(
    model: VelocityModel,
    treatment: Treatment,
    galaxies: &[GalaxyPosterior],
    constraints: &[OutsideConstraint],
    settings: &PopulationSettings,
    observer: &mut O,
) -> Result<PopulationFit, InferError> {
    if galaxies.is_empty() && constraints.is_empty() {
        return Err(InferError::Config(
            "a population fit needs at least one galaxy posterior or outside constraint".into(),
        ));
    }
    let density = PopulationLikelihood::new(
        model,
        treatment,
        settings.yukawa_dm_mass_gev,
        galaxies,
        constraints,
    )
    .with_scatter(settings.scatter);
    let parameters = density.parameters().to_vec();
    let dim = parameters.len();
    let seed = settings.seed
        ^ (model as u64 + 1).wrapping_mul(0x9e37_79b9_7f4a_7c15)
        ^ if settings.scatter { 0x5ca7_7e12 } else { 0 };
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let best = maximum_likelihood(&density, settings.map_starts * dim, &mut rng)?;

    let bounds: Vec<(f64, f64)> = parameters.iter().map(|p| (p.lower, p.upper)).collect();
    let plan = SamplingPlan {
        n_walkers: settings.n_walkers,
        ball_scales: &[1e-2, 1e-3, 1e-5],
        moves: &MoveMix::default(),
        run: &settings.run,
        seed,
    };
    let (outcome, _) = sample_around(
        &density,
        std::slice::from_ref(&best.theta),
        &bounds,
        &plan,
        &mut rng,
        |trial| density.log_likelihood(trial).is_finite(),
        observer,
    )?;
    let evidence = crate::tempering::evidence_after_run(
        &density,
        &MoveMix::default(),
        &outcome,
        settings.evidence.as_ref(),
        seed ^ 0x7e3b_e11d,
    )?;
    let (burn_in, thin) = (outcome.burn_in(), outcome.thin());
    let chain = &outcome.chain;
    let mut log_likelihood_max = best.log_posterior;
    let mut best_theta = best.theta.clone();
    let mut samples = Vec::new();
    for (s, w) in chain.kept(burn_in, thin) {
        let theta: Vec<f64> = (0..dim).map(|p| chain.position(s, w, p)).collect();
        let ll = chain.log_density(s, w);
        if ll > log_likelihood_max {
            log_likelihood_max = ll;
            best_theta.clone_from(&theta);
        }
        samples.push(theta);
    }
    let fitted = parameters
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let coordinates: Vec<f64> = samples.iter().map(|t| t[k]).collect();
            let summary = bounded_interval(
                coordinates.iter().map(|x| 10f64.powf(*x)),
                &coordinates,
                (p.lower, p.upper),
                |x| 10f64.powf(x),
            );
            FittedParameter {
                name: p.name.to_string(),
                unit: p.unit.to_string(),
                interval: summary,
                best: 10f64.powf(best_theta[k]),
            }
        })
        .collect();
    let n_data = density.n_data();
    let mut notes = Vec::new();
    if model == VelocityModel::Yukawa {
        // Born regime: α m_χ / m_φ ≪ 1 (Feng, Kaplinghat & Yu 2010; Tulin, Yu & Zurek 2013).
        let born: Vec<f64> = {
            let mut v: Vec<f64> = samples
                .iter()
                .filter_map(|t| {
                    model
                        .cross_section(t, settings.yukawa_dm_mass_gev)
                        .ok()?
                        .born_parameter()
                })
                .collect();
            v.sort_by(f64::total_cmp);
            v
        };
        let p84 = quantile(&born, 0.84);
        if p84 > 0.1 {
            notes.push(format!(
                "Born regime questionable: alpha m_chi / m_phi reaches {p84:.2} at the 84th percentile (needs << 1)"
            ));
        }
    }
    if !outcome.converged {
        notes.push(format!(
            "chain not converged within {} steps (tau {:.0} steps)",
            settings.run.max_steps,
            outcome.tau_max()
        ));
    }
    let (aic, bic) = information_criteria(dim, n_data, log_likelihood_max);
    Ok(PopulationFit {
        model,
        treatment,
        scatter: settings.scatter,
        formula: model.formula().to_string(),
        parameters: fitted,
        log_likelihood_max,
        aic,
        bic,
        n_parameters: dim,
        n_data,
        converged: outcome.converged,
        tau_max: outcome.tau_max(),
        acceptance: outcome.state.acceptance_fraction(),
        n_samples: samples.len(),
        notes,
        samples,
        best_theta,
        yukawa_dm_mass_gev: settings.yukawa_dm_mass_gev,
        log_evidence: evidence.as_ref().map(|e| e.log_evidence),
        log_evidence_err: evidence.as_ref().map(|e| e.log_evidence_err),
    })
}

/// The model with the lowest BIC among `fits` (None when empty).
#[must_use]
pub fn preferred_by_bic(fits: &[PopulationFit]) -> Option<VelocityModel> {
    fits.iter()
        .min_by(|a, b| a.bic.total_cmp(&b.bic))
        .map(|f| f.model)
}

/// The model with the lowest AIC among `fits` (None when empty).
#[must_use]
pub fn preferred_by_aic(fits: &[PopulationFit]) -> Option<VelocityModel> {
    fits.iter()
        .min_by(|a, b| a.aic.total_cmp(&b.aic))
        .map(|f| f.model)
}

/// The population fits ranked by BIC in one sentence ([`crate::summary::ranking_sentence`]):
/// what the app's panel, its status line and `caldera population` say.
#[must_use]
pub fn bic_ranking(fits: &[PopulationFit]) -> Option<String> {
    crate::summary::ranking_sentence(fits, |f| f.model.name().to_string(), |f| f.bic)
}
