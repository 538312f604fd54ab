//! Parallel tempering and the Bayesian evidence by thermodynamic integration.
//!
//! A ladder of ensembles ("rungs") samples the tempered posteriors π_β(θ) ∝ p(θ) L(θ)^β for
//! 1 = β_0 > β_1 > … > β_{K−1} = 0 (the last rung samples the prior). Every step each rung makes
//! one ensemble move ([`crate::sampler::EnsembleState`] with the usual [`Move`]); then adjacent
//! rungs propose to swap walkers, accepted with probability
//! min(1, exp[(β_i − β_{i+1}) (ln L_{i+1} − ln L_i)]), so the cold rung receives states that
//! crossed between separated modes at high temperature (Swendsen & Wang 1986; Earl & Deem 2005).
//! During the first half of the run the inner temperatures adapt so that neighbouring rungs
//! swap equally often (Vousden, Farr & Mandel 2016, eqs. 4–6: S_i = ln(T_i − T_{i−1}) moves by
//! κ(t)(A_i − A_{i+1}) with κ(t) = t₀ / (ν (t + t₀))); the second half runs on the frozen ladder.
//!
//! Evidence: ln Z = ∫₀¹ ⟨ln L⟩_β dβ (thermodynamic integration; Gelman & Meng 1998), by the
//! trapezoid rule over the frozen ladder's post-burn-in means. Its uncertainty combines the
//! discretisation estimate of Vousden et al. (2016, §3.2: the difference between the estimates
//! from all rungs and from every other rung) with the Monte Carlo error of each mean (its
//! standard deviation over √(effective samples), effective samples from the autocorrelation
//! time of ln L on that rung).

use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::InferError;
use crate::diagnostics::{autocorrelation, integrated_time};
use crate::sampler::{
    ChainStore, Control, EnsembleState, LogDensity, Move, Observer, Progress, RunOutcome, Silent,
};

/// A posterior split into a prior and a likelihood: tempering raises only the likelihood. The
/// prior need not be normalised — thermodynamic integration gives ln ∫ p L − ln ∫ p, the evidence
/// under the normalised prior — but the likelihood must carry its normalisation for ln Z to be
/// absolute (comparable between models).
pub trait SplitDensity: Sync {
    /// Number of parameters.
    fn dim(&self) -> usize;
    /// (ln p(θ), ln L(θ)); ln p = −∞ outside the prior's support (ln L is then not used).
    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64);
}

/// One rung: p(θ) L(θ)^β, with (ln p, ln L) as the derived quantities.
struct Rung<'a, D> {
    density: &'a D,
    beta: f64,
}

impl<D: SplitDensity> LogDensity for Rung<'_, D> {
    fn dim(&self) -> usize {
        self.density.dim()
    }
    fn n_derived(&self) -> usize {
        2
    }
    fn log_density(&self, theta: &[f64], derived: &mut [f64]) -> f64 {
        let (log_prior, log_likelihood) = self.density.log_prior_and_likelihood(theta);
        if !log_prior.is_finite() {
            return f64::NEG_INFINITY;
        }
        derived[0] = log_prior;
        derived[1] = log_likelihood;
        if !log_likelihood.is_finite() {
            return f64::NEG_INFINITY;
        }
        log_prior + self.beta * log_likelihood
    }
}

/// How to run the ladder.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct LadderConfig {
    /// Rungs, the prior rung (β = 0) included; at least 3.
    pub rungs: usize,
    /// Smallest positive β of the starting ladder (geometric from 1 down to it, then β = 0).
    pub beta_min: f64,
    /// Ensemble steps; the first half adapts the ladder and is discarded.
    pub steps: usize,
    /// The ladder's adaptation time ν and lag t₀ (Vousden et al. 2016; their suggested 100 and
    /// 1000 steps): temperatures move by κ(t) = t₀ / (ν (t + t₀)) per step.
    pub adaptation_time_steps: f64,
    pub adaptation_lag_steps: f64,
}

impl Default for LadderConfig {
    fn default() -> Self {
        Self {
            rungs: 16,
            beta_min: 1e-6,
            steps: 4000,
            adaptation_time_steps: 100.0,
            adaptation_lag_steps: 1000.0,
        }
    }
}

/// The evidence and what it came from.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Evidence {
    /// ln Z.
    pub log_evidence: f64,
    /// Its standard uncertainty (discretisation and Monte Carlo, in quadrature).
    pub log_evidence_err: f64,
    /// The frozen ladder, β from 1 down to 0.
    pub betas: Vec<f64>,
    /// ⟨ln L⟩ on each rung after burn-in.
    pub mean_log_likelihood: Vec<f64>,
    /// Swap acceptance between rung i and i + 1 over the second half.
    pub swap_acceptance: Vec<f64>,
}

/// The result of a tempered run.
#[derive(Debug, Clone)]
pub struct TemperedRun {
    /// The cold rung's (β = 1) chain over the second half: the posterior sample.
    pub cold: ChainStore,
    pub evidence: Evidence,
    /// True when the observer stopped the run early (the chain and evidence are then partial
    /// and not to be used).
    pub cancelled: bool,
}

/// The evidence of `density` after a finished posterior run, the ladder starting from the run's
/// final walkers (all at finite density): None when no ladder is asked for or the run was
/// stopped by the user.
pub fn evidence_after_run<D: SplitDensity, M: Move>(
    density: &D,
    mv: &M,
    outcome: &RunOutcome,
    ladder: Option<&LadderConfig>,
    seed: u64,
) -> Result<Option<Evidence>, InferError> {
    let Some(ladder) = ladder.filter(|_| !outcome.cancelled) else {
        return Ok(None);
    };
    Ok(Some(
        run_tempered(density, mv, &outcome.final_positions(), ladder, seed)?.evidence,
    ))
}

/// The ladder's starting β: geometric from 1 to `beta_min` over `rungs − 1` rungs, then 0.
fn starting_ladder(rungs: usize, beta_min: f64) -> Vec<f64> {
    let positive = rungs - 1;
    let mut betas: Vec<f64> = (0..positive)
        .map(|i| {
            if positive == 1 {
                1.0
            } else {
                beta_min.powf(i as f64 / (positive - 1) as f64)
            }
        })
        .collect();
    betas.push(0.0);
    betas
}

/// Runs the ladder from `initial` walker positions (each must have a finite prior and
/// likelihood; every rung starts from them), with `mv` on every rung.
pub fn run_tempered<D: SplitDensity, M: Move>(
    density: &D,
    mv: &M,
    initial: &[Vec<f64>],
    config: &LadderConfig,
    seed: u64,
) -> Result<TemperedRun, InferError> {
    run_tempered_observed(density, mv, initial, config, seed, &mut Silent)
}

/// [`run_tempered`], reporting the cold rung's progress to `observer` after every step (the
/// step out of the ladder's steps, its acceptance; no τ) and stopping when it says so.
pub fn run_tempered_observed<D: SplitDensity, M: Move, O: Observer>(
    density: &D,
    mv: &M,
    initial: &[Vec<f64>],
    config: &LadderConfig,
    seed: u64,
    observer: &mut O,
) -> Result<TemperedRun, InferError> {
    if config.rungs < 3 {
        return Err(InferError::Config(format!(
            "parallel tempering needs at least 3 rungs (the prior's included), got {}",
            config.rungs
        )));
    }
    if !(config.beta_min > 0.0 && config.beta_min < 1.0) {
        return Err(InferError::Config(format!(
            "the smallest positive β must lie in (0, 1), got {}",
            config.beta_min
        )));
    }
    if config.steps < 4 {
        return Err(InferError::Config(format!(
            "a tempered run needs at least 4 steps, got {}",
            config.steps
        )));
    }
    let mut betas = starting_ladder(config.rungs, config.beta_min);
    let mut rungs: Vec<EnsembleState> = betas
        .iter()
        .enumerate()
        .map(|(k, &beta)| {
            EnsembleState::new(
                &Rung { density, beta },
                initial.to_vec(),
                seed.wrapping_add(1 + k as u64),
            )
        })
        .collect::<Result<_, _>>()?;
    let n_walkers = initial.len();
    let burn = config.steps / 2;
    let mut swap_rng = Xoshiro256PlusPlus::seed_from_u64(seed ^ 0x5eed_5a4f);
    let mut proposed = vec![0u64; config.rungs - 1];
    let mut accepted = vec![0u64; config.rungs - 1];
    let mut cold = ChainStore::new(n_walkers, density.dim(), 2);
    let mut cancelled = false;
    // ln L of every walker of every rung at every kept step, rung-major: [rung][step][walker].
    let mut kept_log_likelihood: Vec<Vec<Vec<f64>>> = vec![Vec::new(); config.rungs];
    for step in 0..config.steps {
        for (state, &beta) in rungs.iter_mut().zip(&betas) {
            state.advance(&Rung { density, beta }, mv);
        }
        // Swaps between neighbours, from the hot end down, each walker with a random partner.
        let mut window_accepted = vec![0u64; config.rungs - 1];
        for i in (0..config.rungs - 1).rev() {
            let (cooler, hotter) = rungs.split_at_mut(i + 1);
            let (a, b) = (&mut cooler[i], &mut hotter[0]);
            let delta_beta = betas[i] - betas[i + 1];
            let mut partners: Vec<usize> = (0..n_walkers).collect();
            for j in (1..n_walkers).rev() {
                let k = swap_rng.random_range(0..=j);
                partners.swap(j, k);
            }
            for (j, &k) in partners.iter().enumerate() {
                let (ll_a, ll_b) = (a.walkers[j].derived[1], b.walkers[k].derived[1]);
                let log_ratio = delta_beta * (ll_b - ll_a);
                let u: f64 = swap_rng.random();
                proposed[i] += 1;
                if u.ln() < log_ratio {
                    accepted[i] += 1;
                    window_accepted[i] += 1;
                    std::mem::swap(&mut a.walkers[j].position, &mut b.walkers[k].position);
                    std::mem::swap(&mut a.walkers[j].derived, &mut b.walkers[k].derived);
                    for (walker, beta) in [
                        (&mut a.walkers[j], betas[i]),
                        (&mut b.walkers[k], betas[i + 1]),
                    ] {
                        walker.log_density = walker.derived[0] + beta * walker.derived[1];
                    }
                }
            }
        }
        if step < burn {
            adapt_ladder(&mut betas, &window_accepted, n_walkers, step, config);
            for (state, &beta) in rungs.iter_mut().zip(&betas) {
                for walker in &mut state.walkers {
                    walker.log_density = walker.derived[0] + beta * walker.derived[1];
                }
            }
            if step + 1 == burn {
                proposed.iter_mut().for_each(|p| *p = 0);
                accepted.iter_mut().for_each(|a| *a = 0);
            }
        } else {
            cold.record_step(
                rungs[0]
                    .walkers
                    .iter()
                    .map(|w| (w.position.as_slice(), w.log_density, w.derived.as_slice())),
            );
            for (kept, state) in kept_log_likelihood.iter_mut().zip(&rungs) {
                kept.push(state.walkers.iter().map(|w| w.derived[1]).collect());
            }
        }
        let progress = Progress {
            step: step + 1,
            max_steps: config.steps,
            acceptance: rungs[0].acceptance_fraction(),
            tau_max: None,
            target_steps: None,
        };
        if observer.on_progress(&progress) == Control::Stop {
            cancelled = true;
            break;
        }
    }
    let swap_acceptance = proposed
        .iter()
        .zip(&accepted)
        .map(|(&p, &a)| if p == 0 { 0.0 } else { a as f64 / p as f64 })
        .collect();
    let (means, errors): (Vec<f64>, Vec<f64>) = kept_log_likelihood
        .iter()
        .map(|steps| mean_and_error(steps))
        .unzip();
    let (log_evidence, log_evidence_err) = thermodynamic_integral(&betas, &means, &errors);
    Ok(TemperedRun {
        cold,
        evidence: Evidence {
            log_evidence,
            log_evidence_err,
            betas,
            mean_log_likelihood: means,
            swap_acceptance,
        },
        cancelled,
    })
}

/// One adaptation step of the inner temperatures (Vousden et al. 2016): with T = 1/β, the
/// spacings S_i = ln(T_i − T_{i−1}) of the rungs 1 … K−2 move by κ(t)(A_i − A_{i+1}), where
/// A_i is this step's swap acceptance between rungs i − 1 and i. β_0 = 1 and the prior rung
/// (β = 0) stay; the last positive rung moves with the others but may not pass the prior rung.
fn adapt_ladder(
    betas: &mut [f64],
    window_accepted: &[u64],
    n_walkers: usize,
    step: usize,
    config: &LadderConfig,
) {
    let k = betas.len();
    if k < 4 {
        return;
    }
    let kappa = config.adaptation_lag_steps
        / (config.adaptation_time_steps * (step as f64 + config.adaptation_lag_steps));
    let acceptance: Vec<f64> = window_accepted
        .iter()
        .map(|&a| a as f64 / n_walkers as f64)
        .collect();
    // Temperatures of the positive rungs 0 … K−2 (the prior rung has T = ∞).
    let temperatures: Vec<f64> = betas[..k - 1].iter().map(|b| 1.0 / b).collect();
    let mut spacings: Vec<f64> = temperatures
        .windows(2)
        .map(|w| (w[1] - w[0]).max(1e-300).ln())
        .collect();
    // spacing index s ↔ rung s + 1; A for the pair (s, s + 1) is acceptance[s].
    for s in 0..spacings.len() {
        let next = acceptance.get(s + 1).copied().unwrap_or(0.0);
        spacings[s] += kappa * (acceptance[s] - next);
    }
    let mut t = 1.0;
    for (s, spacing) in spacings.iter().enumerate() {
        t += spacing.exp();
        betas[s + 1] = 1.0 / t;
    }
}

/// Mean of ln L over the kept steps and walkers, and its Monte Carlo standard error from the
/// walker-averaged autocorrelation time of the per-step ensemble mean.
fn mean_and_error(steps: &[Vec<f64>]) -> (f64, f64) {
    let values: Vec<f64> = steps.iter().flatten().copied().collect();
    let n = values.len();
    if n == 0 {
        return (f64::NAN, f64::NAN);
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let variance = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n.max(2) - 1) as f64;
    // The ensemble mean per step is one time series; its integrated time sets the effective
    // number of independent ensemble means.
    let series: Vec<f64> = steps
        .iter()
        .map(|w| w.iter().sum::<f64>() / w.len().max(1) as f64)
        .collect();
    let mut planner = rustfft::FftPlanner::new();
    let tau = if series.len() >= 8 {
        integrated_time(&autocorrelation(&series, &mut planner)).max(1.0)
    } else {
        1.0
    };
    let walkers = steps.first().map_or(1, Vec::len).max(1);
    let effective = (steps.len() as f64 / tau) * walkers as f64;
    (mean, (variance / effective.max(1.0)).sqrt())
}

/// ∫₀¹ ⟨ln L⟩_β dβ over `betas` (descending to 0), with the uncertainty described in the module
/// documentation. Between positive rungs ⟨ln L⟩_β is interpolated as a + b/β through the two
/// rungs' means and integrated exactly: exact where the tempered posterior is much narrower than
/// the prior (there ⟨ln L⟩_β = ln L_max − d/(2β) for a Gaussian likelihood) and where it is flat
/// (a constant); a trapezoid in β would overshoot the first, one in ln β the second. From the
/// last positive rung to β = 0, the trapezoid in β. (Interpolation choice: common practice is the
/// plain trapezoid; this form follows from the Gaussian limit above.)
fn thermodynamic_integral(betas: &[f64], means: &[f64], errors: &[f64]) -> (f64, f64) {
    // Weights of each rung's mean in the integral over the rungs `indices`.
    let weights = |indices: &[usize]| -> Vec<f64> {
        let mut w = vec![0.0; betas.len()];
        for pair in indices.windows(2) {
            let (i, j) = (pair[0], pair[1]);
            let width = betas[i] - betas[j];
            if betas[j] > 0.0 {
                // ∫ (a + b/β) dβ = m_i (D + c) − m_j c, c = (ln(β_i/β_j) − D/β_i)/(1/β_i − 1/β_j).
                let c = ((betas[i] / betas[j]).ln() - width / betas[i])
                    / (1.0 / betas[i] - 1.0 / betas[j]);
                w[i] += width + c;
                w[j] -= c;
            } else {
                w[i] += 0.5 * width;
                w[j] += 0.5 * width;
            }
        }
        w
    };
    let integral = |w: &[f64]| -> f64 { w.iter().zip(means).map(|(w, m)| w * m).sum() };
    let all: Vec<usize> = (0..betas.len()).collect();
    let mut every_other: Vec<usize> = (0..betas.len()).step_by(2).collect();
    if every_other.last() != Some(&(betas.len() - 1)) {
        every_other.push(betas.len() - 1);
    }
    let w_all = weights(&all);
    let estimate = integral(&w_all);
    let discretisation = (estimate - integral(&weights(&every_other))).abs();
    let monte_carlo = w_all
        .iter()
        .zip(errors)
        .map(|(w, e)| (w * e).powi(2))
        .sum::<f64>()
        .sqrt();
    (estimate, discretisation.hypot(monte_carlo))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_integral_of_known_curves() {
        // ⟨ln L⟩_β = −1 − β on a fine geometric ladder: ∫₀¹ = −1.5.
        let mut betas: Vec<f64> = (0..400)
            .map(|i| 1e-8f64.powf(f64::from(i) / 399.0))
            .collect();
        betas.push(0.0);
        let means: Vec<f64> = betas.iter().map(|b| -1.0 - b).collect();
        let (value, error) = thermodynamic_integral(&betas, &means, &vec![0.0; betas.len()]);
        assert!((value + 1.5).abs() < 2e-3, "{value}");
        assert!(error < 5e-3, "{error}");
        // ⟨ln L⟩_β = −1/β (the d = 2 Gaussian's curvature term) is integrated exactly between
        // positive rungs: from β = 1 to 0.01 the integral is −ln 100.
        let betas = [1.0, 0.3, 0.1, 0.03, 0.01];
        let means: Vec<f64> = betas.iter().map(|b| -1.0 / b).collect();
        let (value, error) = thermodynamic_integral(&betas, &means, &[0.0; 5]);
        assert!((value + 100f64.ln()).abs() < 1e-12, "{value}");
        assert!(error < 1e-12, "{error}");
        // On a coarse ladder over a curved integrand the every-other-rung estimate differs and
        // says so in the uncertainty.
        let (_, coarse_error) = thermodynamic_integral(
            &[1.0, 0.3, 0.1, 0.01, 0.0],
            &[-2.0, -3.0, -40.0, -45.0, -1000.0],
            &[0.0; 5],
        );
        assert!(coarse_error > 0.5, "{coarse_error}");
    }

    #[test]
    fn the_starting_ladder_runs_from_one_to_the_prior() {
        let betas = starting_ladder(5, 1e-4);
        assert_eq!(betas.len(), 5);
        assert!((betas[0] - 1.0).abs() < 1e-15);
        assert!((betas[3] - 1e-4).abs() < 1e-18);
        assert!(betas[4].abs() < f64::MIN_POSITIVE);
        assert!(betas.windows(2).all(|w| w[0] > w[1]));
    }
}
