//! One galaxy, one halo model: MAP, then the ensemble sampler until converged, then summaries.

use std::collections::BTreeMap;

use caldera_data::session::HaloModel;
use caldera_data::{GalaxyTable, OutputTable};
use caldera_physics::{Cosmology, ParamId, ParamValues};
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::diagnostics::{integrated_autocorr_times, split_rhat};
use crate::layout::ParamSpec;
use crate::model::{DERIVED_NAMES, Derived, Evaluation, FailureSummary, GalaxyModel};
use crate::optimize::{MapEstimate, maximum_a_posteriori, ridge};
use crate::pipeline::{
    SamplingPlan, Straightening, bounded_interval, information_criteria, sample_straightened,
};
use crate::priors::{Priors, SidmBranches, SidmCoordinates};
use crate::sampler::{
    ChainStore, EnsembleState, LogDensity, MoveMix, Observer, RunConfig, RunOutcome,
};
use crate::summary::{Interval, interval};
use crate::tempering::{LadderConfig, evidence_after_run, run_tempered_observed};

/// Everything that controls a fit (saved with a session).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FitConfig {
    pub priors: Priors,
    pub run: RunConfig,
    /// Walkers (raised to at least 2·dim + 2 and made even).
    pub n_walkers: usize,
    pub seed: u64,
    /// Optimiser starts for the MAP.
    pub map_starts: usize,
    pub cosmology: Cosmology,
    /// Halo age, Gyr; None uses the table's, else 10 Gyr.
    pub age_gyr: Option<f64>,
    /// The sampler's moves.
    pub moves: MoveMix,
    /// Also compute the Bayesian evidence ln Z by parallel tempering on this ladder (after the
    /// posterior run, from its walkers; [`crate::tempering`]); None skips it (the default: it
    /// costs about rungs × steps / (the posterior run's steps) times the fit).
    #[serde(default)]
    pub evidence: Option<LadderConfig>,
    /// Sample the prior alone (no data): what the priors imply for σ/m, V200, c200, M200, … —
    /// the check that the prior a user set is the prior the sampler sees.
    #[serde(default)]
    pub prior_only: bool,
    /// Straighten the SIDM posterior before sampling it ([`crate::reparam`]); off, the
    /// ensemble samples the coordinates themselves (slower to mix on spirals; for comparison).
    #[serde(default = "on_by_default")]
    pub straighten: bool,
    /// When to sample the posterior by parallel tempering ([`Tempering`]).
    #[serde(default)]
    pub tempering: Tempering,
    /// The ladder of a tempered posterior run; None takes [`FitConfig::evidence`]'s ladder, or
    /// else the default one.
    #[serde(default)]
    pub tempering_ladder: Option<LadderConfig>,
    /// Sample an SIDM posterior again in outer-halo coordinates when the core coordinates end
    /// unconverged ([`fit_galaxy`]).
    #[serde(default = "on_by_default")]
    pub halo_coordinates_fallback: bool,
}

/// When the posterior sample comes from a parallel-tempering ladder ([`crate::tempering`])
/// instead of the ensemble alone: a ladder's hot rungs carry walkers between modes that the
/// stretch and differential-evolution moves cannot cross, at the cost of rungs × steps
/// evaluations after the ensemble's own run (with the default ladder, 16 × 4000 steps: 20 s on
/// 2 cores for an invented dwarf whose ensemble run takes 1.3 s).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub enum Tempering {
    /// On where the posterior has separated branches within its bounds: an SIDM fit that admits
    /// every branch ([`crate::priors::SidmBranches::All`]) whose MAP's outer halo is matched
    /// by more than one core within the sampled (ρ0, σ0) bounds. Off otherwise — with the
    /// lowest-density branch alone (the default) the SIDM posterior has one branch by
    /// construction, and the closed-form halos have one solution per parameter set.
    #[default]
    Auto,
    /// Never: the ensemble alone.
    Off,
    /// Always, for any model.
    On,
}

/// The serde default of the switches that are on unless a saved session turned them off.
fn on_by_default() -> bool {
    true
}

impl Default for FitConfig {
    fn default() -> Self {
        Self {
            priors: Priors::default(),
            run: RunConfig::default(),
            n_walkers: 32,
            seed: 1,
            map_starts: 6,
            cosmology: Cosmology::default(),
            age_gyr: None,
            moves: MoveMix::default(),
            evidence: None,
            prior_only: false,
            straighten: true,
            tempering: Tempering::Auto,
            tempering_ladder: None,
            halo_coordinates_fallback: true,
        }
    }
}

/// The summary of a fit, as the CLI prints it and result tables store it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FitSummary {
    pub galaxy: String,
    /// The halo model (written by its name, e.g. "sidm").
    #[serde(with = "model_name")]
    pub model: HaloModel,
    pub sigma_m_cm2_g: Option<Interval>,
    pub v_rel_kms: Option<Interval>,
    pub r1_kpc: Option<Interval>,
    pub core_radius_kpc: Option<Interval>,
    pub v200_kms: Option<Interval>,
    pub c200: Option<Interval>,
    pub m200_msun: Option<Interval>,
    pub upsilon_disk: Option<Interval>,
    pub upsilon_bulge: Option<Interval>,
    pub distance_mpc: Option<Interval>,
    pub inclination_deg: Option<Interval>,
    /// χ² and log-likelihood at the best-fitting point found (MAP or a sample).
    pub chi2: f64,
    pub dof: usize,
    pub chi2_nu: f64,
    pub log_likelihood_max: f64,
    /// AIC = 2k − 2 ln L_max; BIC = k ln N − 2 ln L_max.
    pub aic: f64,
    pub bic: f64,
    pub n_parameters: usize,
    pub n_points: usize,
    pub converged: bool,
    pub cancelled: bool,
    pub tau_max: f64,
    pub rhat_max: f64,
    pub acceptance: f64,
    pub n_evaluations: u64,
    pub n_walkers: usize,
    pub n_steps: usize,
    pub burn_in: usize,
    pub thin: usize,
    pub n_samples: usize,
    pub seed: u64,
    pub age_gyr: f64,
    /// Best-fitting physical parameter values, by parameter key ([`caldera_physics::ParamId::key`]).
    pub best_fit: BTreeMap<String, f64>,
    pub failures: FailureSummary,
    /// ln Z, the Bayesian evidence under the fit's priors (thermodynamic integration over a
    /// parallel-tempering ladder), when asked for; the likelihood carries its normalisation,
    /// so differences between models of one galaxy are ln Bayes factors.
    #[serde(default)]
    pub log_evidence: Option<f64>,
    /// Standard uncertainty of [`FitSummary::log_evidence`].
    #[serde(default)]
    pub log_evidence_err: Option<f64>,
    /// True for a prior-only run (no data in the density): its intervals describe the prior.
    #[serde(default)]
    pub prior_only: bool,
    /// True when the posterior sample is the cold rung of a parallel-tempering ladder
    /// ([`Tempering`]); τ and convergence then describe that rung.
    #[serde(default)]
    pub tempered: bool,
    /// True when the core coordinates ended unconverged and the posterior was sampled again in
    /// outer-halo coordinates ([`fit_galaxy`]); the sample, τ and convergence are that run's.
    #[serde(default)]
    pub resampled_in_halo_coordinates: bool,
}

/// A finished fit: its summary, the kept samples and the best-fitting model curve.
#[derive(Debug, Clone)]
pub struct FitResult {
    pub summary: FitSummary,
    /// The priors the sample was drawn under, its coordinates included (an SIDM fit sampled
    /// again in outer-halo coordinates has [`SidmCoordinates::Halo`] here): a [`GalaxyModel`]
    /// built with them reads `best_theta` and the chain's positions.
    pub priors: Priors,
    pub parameters: Vec<ParamSpec>,
    pub chain: ChainStore,
    pub burn_in: usize,
    pub thin: usize,
    pub best_theta: Vec<f64>,
    pub best: Evaluation,
}

/// Fits `model` to `table`.
///
/// An SIDM fit sampled in core coordinates that ends unconverged at the step cap is sampled again
/// in outer-halo coordinates ([`SidmCoordinates::Halo`]: the same posterior, checked point by
/// point in `tests/outer_halo_prior.rs`), unless [`FitConfig::halo_coordinates_fallback`] is off.
/// Why: the core coordinates fail where the posterior is a thin curved sliver in (ρ0, σ0) — a
/// spiral at low σ/m, its core deep in the NFW cusp — while the outer halo's coordinates are
/// nearly independent there (Kiln S02 under seeds 3 and 5: unconverged in core coordinates,
/// τ = 42 and 44 steps in halo coordinates). They cost 15–20 times more per fit, so they are
/// the fallback, not the default.
pub fn fit_galaxy<O: Observer>(
    table: &GalaxyTable,
    model: HaloModel,
    config: &FitConfig,
    observer: &mut O,
) -> Result<FitResult, InferError> {
    let first = fit_galaxy_as_configured(table, model, config, observer)?;
    let summary = &first.summary;
    let falls_back = config.halo_coordinates_fallback
        && model == HaloModel::Sidm
        && config.priors.sidm_coordinates == SidmCoordinates::Core
        && config.priors.sidm_branches == SidmBranches::LowestDensity
        && !config.prior_only
        && !summary.converged
        && !summary.cancelled
        && !summary.tempered;
    if !falls_back {
        return Ok(first);
    }
    let halo_config = FitConfig {
        priors: Priors {
            sidm_coordinates: SidmCoordinates::Halo,
            ..config.priors
        },
        ..*config
    };
    let mut second = fit_galaxy_as_configured(table, model, &halo_config, observer)?;
    second.summary.resampled_in_halo_coordinates = true;
    // Both runs' likelihood evaluations count towards the fit's cost.
    second.summary.n_evaluations += first.summary.n_evaluations;
    Ok(second)
}

/// [`fit_galaxy`] in the coordinates `config` states, without the fallback.
fn fit_galaxy_as_configured<O: Observer>(
    table: &GalaxyTable,
    model: HaloModel,
    config: &FitConfig,
    observer: &mut O,
) -> Result<FitResult, InferError> {
    let mut posterior = GalaxyModel::new(
        table,
        model,
        config.priors,
        config.cosmology,
        config.age_gyr,
    )?;
    posterior.prior_only = config.prior_only;
    table.check_enough_points(posterior.dim())?;
    let dim = posterior.dim();
    let map = maximum_a_posteriori(&posterior, config.map_starts, config.seed)?;

    // Walkers in small balls around the MAP (and, for a straightened posterior, around points of
    // its ridge in σ/m: `ridge_starts`), each with a positive posterior.
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(config.seed ^ 0x5eed_ba11);
    let plan = SamplingPlan {
        n_walkers: config.n_walkers,
        ball_scales: &[1e-2, 1e-3, 1e-4, 1e-6],
        moves: &config.moves,
        run: &config.run,
        seed: config.seed,
    };
    let bounds = posterior.layout().bounds();
    let straightening = straightening(&posterior, config.straighten);
    // A prior-only run starts at the best point alone: the ridge follows the data's posterior,
    // and on the prior's support (halos whose core lies within the bounds) its fallback starts
    // can land in pockets the ensemble then over-weights.
    let starts = if straightening.regressed.is_empty() || posterior.prior_only {
        vec![map.theta.clone()]
    } else {
        ridge_starts(&posterior, &bounds, &map, straightening.given)?
    };
    let (outcome, n_walkers, _) = sample_straightened(
        &posterior,
        &starts,
        &bounds,
        &plan,
        &mut rng,
        |trial| {
            let mut derived = vec![f64::NAN; posterior.n_derived()];
            posterior.log_density(trial, &mut derived).is_finite()
        },
        &straightening,
        observer,
    )?;
    let tempered = if outcome.cancelled
        || !wants_tempering(config.tempering, &config.priors, &posterior, &map.theta)
    {
        None
    } else {
        let ladder = config
            .tempering_ladder
            .or(config.evidence)
            .unwrap_or_default();
        Some(run_tempered_observed(
            &posterior,
            &config.moves,
            &outcome.final_positions(),
            &ladder,
            config.seed ^ 0x7e3b_e11d,
            observer,
        )?)
    };
    let (outcome, tempered_evidence) = match tempered {
        Some(run) if !run.cancelled => (
            cold_rung_outcome(&posterior, &run.cold, outcome.state, &config.run),
            Some(run.evidence),
        ),
        // Stopped on the ladder: the ensemble's sample, marked as stopped.
        Some(_) => (
            RunOutcome {
                cancelled: true,
                ..outcome
            },
            None,
        ),
        None => (outcome, None),
    };
    let burn_in = outcome.burn_in();
    let thin = outcome.thin();
    let chain = &outcome.chain;
    let kept: Vec<(usize, usize)> = chain.kept(burn_in, thin).collect();
    let column = |d: Derived| {
        kept.iter()
            .map(|&(s, w)| chain.derived(s, w, d as usize))
            .collect::<Vec<f64>>()
    };

    // Best fit: the highest likelihood among the MAP and the kept samples.
    let (map_evaluation, map_derived) = posterior.evaluate(&map.theta)?;
    let mut best_theta = map.theta.clone();
    let mut best_log_likelihood = map_derived[Derived::LogLikelihood as usize];
    for &(s, w) in &kept {
        let ll = chain.derived(s, w, Derived::LogLikelihood as usize);
        if ll > best_log_likelihood {
            best_log_likelihood = ll;
            best_theta = (0..dim).map(|p| chain.position(s, w, p)).collect();
        }
    }
    let best = if best_theta == map.theta {
        map_evaluation
    } else {
        posterior.evaluate(&best_theta)?.0
    };

    let k = dim;
    let n = posterior.n_points();
    let dof = n.saturating_sub(k);
    let sigma_m = match posterior.layout().index_of(ParamId::SigmaM) {
        Some(k) => {
            let p = &posterior.parameters()[k];
            let coordinates: Vec<f64> =
                kept.iter().map(|&(s, w)| chain.position(s, w, k)).collect();
            bounded_interval(
                column(Derived::SigmaM),
                &coordinates,
                (p.lower, p.upper),
                |c| p.physical(c),
            )
        }
        None => interval(column(Derived::SigmaM)),
    };
    let (aic, bic) = information_criteria(k, n, best.log_likelihood);
    let rhat_max = split_rhat(chain, burn_in)
        .into_iter()
        .fold(f64::NAN, f64::max);
    let is_tempered = tempered_evidence.is_some();
    let evidence = match tempered_evidence {
        Some(evidence) => Some(evidence),
        None => evidence_after_run(
            &posterior,
            &config.moves,
            &outcome,
            config.evidence.as_ref(),
            config.seed ^ 0x7e3b_e11d,
        )?,
    };
    let summary = FitSummary {
        galaxy: table.meta.name.clone(),
        model,
        sigma_m_cm2_g: sigma_m,
        v_rel_kms: interval(column(Derived::VRel)),
        r1_kpc: interval(column(Derived::R1)),
        core_radius_kpc: interval(column(Derived::CoreRadius)),
        v200_kms: interval(column(Derived::V200)),
        c200: interval(column(Derived::C200)),
        m200_msun: interval(column(Derived::M200)),
        upsilon_disk: interval(column(Derived::UpsilonDisk)),
        upsilon_bulge: interval(column(Derived::UpsilonBulge)),
        distance_mpc: interval(column(Derived::Distance)),
        inclination_deg: interval(column(Derived::Inclination)),
        chi2: best.chi2,
        dof,
        chi2_nu: if dof > 0 {
            best.chi2 / dof as f64
        } else {
            f64::NAN
        },
        log_likelihood_max: best.log_likelihood,
        aic,
        bic,
        n_parameters: k,
        n_points: n,
        converged: outcome.converged,
        cancelled: outcome.cancelled,
        tau_max: outcome.tau_max(),
        rhat_max,
        acceptance: outcome.state.acceptance_fraction(),
        n_evaluations: posterior.failure_summary().evaluations,
        n_walkers,
        n_steps: chain.steps(),
        burn_in,
        thin,
        n_samples: kept.len(),
        seed: config.seed,
        age_gyr: posterior.age_gyr,
        best_fit: posterior
            .values_with_core(&best_theta)
            .iter()
            .map(|(id, value)| (id.key().to_string(), value))
            .collect(),
        failures: posterior.failure_summary(),
        log_evidence: evidence.as_ref().map(|e| e.log_evidence),
        log_evidence_err: evidence.as_ref().map(|e| e.log_evidence_err),
        prior_only: config.prior_only,
        tempered: is_tempered,
        resampled_in_halo_coordinates: false,
    };
    Ok(FitResult {
        summary,
        priors: config.priors,
        parameters: posterior.parameters().to_vec(),
        chain: outcome.chain.clone(),
        burn_in,
        thin,
        best_theta,
        best,
    })
}

/// Whether `choice` puts this fit on a parallel-tempering ladder ([`Tempering::Auto`]: an SIDM
/// posterior admitting every branch whose MAP's outer halo has more than one core in bounds).
fn wants_tempering(
    choice: Tempering,
    priors: &Priors,
    posterior: &GalaxyModel,
    map_theta: &[f64],
) -> bool {
    match choice {
        Tempering::Off => false,
        Tempering::On => true,
        Tempering::Auto => {
            priors.sidm_branches == SidmBranches::All
                && posterior
                    .sidm_branches_within_bounds(map_theta)
                    .is_some_and(|n| n > 1)
        }
    }
}

/// The cold rung of a tempered run as a run outcome: its positions with the model's derived
/// quantities (the ladder records only ln p and ln L, so each position is evaluated again), τ
/// from the whole rung (the ladder's adaptation half is already dropped) and converged when the
/// rung is longer than `run.tau_factor` autocorrelation times. `state` is the ensemble the
/// ladder started from, kept for its acceptance fraction.
fn cold_rung_outcome(
    posterior: &GalaxyModel,
    cold: &ChainStore,
    state: EnsembleState,
    run: &RunConfig,
) -> RunOutcome {
    let dim = posterior.dim();
    let mut chain = ChainStore::new(cold.n_walkers, dim, posterior.n_derived());
    let mut derived = vec![f64::NAN; posterior.n_derived()];
    for step in 0..cold.steps() {
        let walkers: Vec<(Vec<f64>, f64, Vec<f64>)> = (0..cold.n_walkers)
            .map(|w| {
                let position: Vec<f64> = (0..dim).map(|p| cold.position(step, w, p)).collect();
                derived.fill(f64::NAN);
                let log_density = posterior.log_density(&position, &mut derived);
                (position, log_density, derived.clone())
            })
            .collect();
        chain.record_step(
            walkers
                .iter()
                .map(|(p, l, d)| (p.as_slice(), *l, d.as_slice())),
        );
    }
    let tau = integrated_autocorr_times(&chain, 0);
    let tau_max = tau.iter().copied().fold(f64::NAN, f64::max);
    RunOutcome {
        converged: tau_max.is_finite() && chain.steps() as f64 > run.tau_factor * tau_max,
        chain,
        state,
        tau,
        cancelled: false,
    }
}

/// Points along the ridge in s ([`crate::optimize::ridge`]) at which the ensemble starts.
const RIDGE_POINTS: usize = 12;
/// Nelder–Mead iterations per ridge point (each starts from its neighbour's maximum).
const RIDGE_ITERATIONS: u64 = 600;
/// Ridge points more than this many nats below the best point's log-posterior start no walkers
/// (e^−10 of the best point's density: no mass worth a walker; common practice).
const RIDGE_DROP: f64 = 10.0;

/// Where the walkers start: the best point, then the ridge's points in s within [`RIDGE_DROP`]
/// of it.
fn ridge_starts(
    posterior: &GalaxyModel,
    bounds: &[(f64, f64)],
    map: &MapEstimate,
    given: usize,
) -> Result<Vec<Vec<f64>>, InferError> {
    let points = ridge(
        posterior,
        bounds,
        map,
        given,
        RIDGE_POINTS,
        RIDGE_ITERATIONS,
    )?;
    Ok(std::iter::once(map.theta.clone())
        .chain(
            points
                .into_iter()
                .filter(|p| p.log_posterior >= map.log_posterior - RIDGE_DROP)
                .map(|p| p.theta),
        )
        .collect())
}

/// How the sampler straightens this posterior ([`crate::reparam`]): when σ/m is sampled with
/// other halo coordinates (the SIDM core or outer halo), every other coordinate is regressed on
/// log σ/m and the ones before it; otherwise nothing is straightened.
fn straightening(posterior: &GalaxyModel, wanted: bool) -> Straightening {
    let layout = posterior.layout();
    match layout.index_of(ParamId::SigmaM) {
        Some(given) if wanted && layout.halo_specs().len() > 1 => {
            Straightening::new(given, (0..layout.len()).filter(|&k| k != given).collect())
        }
        _ => Straightening::new(0, Vec::new()),
    }
}

impl FitSummary {
    /// The best-fitting physical values as typed parameters (keys that name no parameter are
    /// skipped).
    #[must_use]
    pub fn best_values(&self) -> ParamValues {
        ParamValues::from_pairs(
            self.best_fit
                .iter()
                .filter_map(|(key, &v)| ParamId::from_key(key).map(|id| (id, v))),
        )
    }
}

/// Writes a [`HaloModel`] by its command-line name and reads it back.
mod model_name {
    use caldera_data::session::HaloModel;
    use serde::{Deserialize, Deserializer, Serializer, de::Error};

    pub fn serialize<S: Serializer>(model: &HaloModel, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(model.name())
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(deserializer: D) -> Result<HaloModel, D::Error> {
        let name = String::deserialize(deserializer)?;
        HaloModel::from_name(&name)
            .ok_or_else(|| D::Error::custom(format!("unknown halo model '{name}'")))
    }
}

impl FitResult {
    /// The kept samples as a table: sampled coordinates, then derived quantities.
    #[must_use]
    pub fn chain_table(&self) -> OutputTable {
        let kept: Vec<(usize, usize)> = self.chain.kept(self.burn_in, self.thin).collect();
        let mut table = OutputTable::default()
            .with_column("step", None, kept.iter().map(|&(s, _)| s as f64).collect())
            .with_column(
                "walker",
                None,
                kept.iter().map(|&(_, w)| w as f64).collect(),
            );
        for (p, parameter) in self.parameters.iter().enumerate() {
            table = table.with_column(
                &parameter.column(),
                None,
                kept.iter()
                    .map(|&(s, w)| self.chain.position(s, w, p))
                    .collect(),
            );
        }
        for (d, name) in DERIVED_NAMES.iter().enumerate() {
            table = table.with_column(
                name,
                None,
                kept.iter()
                    .map(|&(s, w)| self.chain.derived(s, w, d))
                    .collect(),
            );
        }
        table.with_column(
            "log_posterior",
            None,
            kept.iter()
                .map(|&(s, w)| self.chain.log_density(s, w))
                .collect(),
        )
    }
}
