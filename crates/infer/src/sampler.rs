//! An affine-invariant ensemble sampler with the stretch move (Goodman & Weare 2010), in the
//! structure of the best-known Python implementation: a [`EnsembleState`] (walker positions,
//! log-densities, derived quantities and one RNG stream per walker) passed from step to step, a
//! [`Move`] that proposes, and a [`ChainStore`] that keeps the chain. [`run`] drives it until the
//! chain is longer than a multiple of the autocorrelation time, reporting to an [`Observer`]
//! that can stop it.
//!
//! Walkers are updated in two halves; within a half every walker moves against the other half's
//! fixed positions, so a half updates in parallel (rayon) and the result does not depend on the
//! number of threads.

use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

use crate::InferError;
pub use crate::chain::ChainStore;
use crate::diagnostics::integrated_autocorr_times;

/// A log-probability density on R^dim (up to a constant), with derived quantities ("blobs")
/// computed on the way.
pub trait LogDensity: Sync {
    /// Number of parameters.
    fn dim(&self) -> usize;
    /// Number of derived quantities written by [`LogDensity::log_density`].
    fn n_derived(&self) -> usize {
        0
    }
    /// ln p(θ), or −∞ outside the support; fills `derived` (length [`LogDensity::n_derived`]).
    fn log_density(&self, theta: &[f64], derived: &mut [f64]) -> f64;
}

/// A proposal for one walker, drawing on the walkers of the complementary half (held fixed).
pub trait Move: Sync {
    /// Returns the proposed position and the log of the proposal's acceptance factor
    /// (excluding the density ratio).
    fn propose(
        &self,
        walker: &[f64],
        others: &[Walker],
        rng: &mut Xoshiro256PlusPlus,
    ) -> (Vec<f64>, f64);
}

/// The stretch move: y = x_j + z (x_k − x_j), z ~ g(z) ∝ 1/√z on [1/a, a]; acceptance factor
/// z^(d−1) (Goodman & Weare 2010, eqs. 10–11). a = 2 is the usual choice.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StretchMove {
    pub a: f64,
}

impl Default for StretchMove {
    fn default() -> Self {
        Self { a: 2.0 }
    }
}

impl Move for StretchMove {
    fn propose(
        &self,
        walker: &[f64],
        others: &[Walker],
        rng: &mut Xoshiro256PlusPlus,
    ) -> (Vec<f64>, f64) {
        let partner = &others[rng.random_range(0..others.len())].position;
        let u: f64 = rng.random();
        let z = ((self.a - 1.0) * u + 1.0).powi(2) / self.a;
        let proposal: Vec<f64> = walker
            .iter()
            .zip(partner)
            .map(|(x, p)| p + z * (x - p))
            .collect();
        (proposal, (walker.len() as f64 - 1.0) * z.ln())
    }
}

/// Differential-evolution move (ter Braak 2006; as in the Python ensemble sampler's DE move):
/// y = x + γ (x_j − x_k) + ε, with x_j ≠ x_k two walkers of the other half, γ = 2.38/√(2d) by
/// default and ε ~ N(0, jitter²). Symmetric, so its acceptance factor is 1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DifferentialEvolutionMove {
    /// Scale γ; None uses 2.38/√(2d).
    pub gamma: Option<f64>,
    /// Standard deviation of the small jitter ε.
    pub jitter: f64,
}

impl Default for DifferentialEvolutionMove {
    fn default() -> Self {
        Self {
            gamma: None,
            jitter: 1e-5,
        }
    }
}

impl Move for DifferentialEvolutionMove {
    fn propose(
        &self,
        walker: &[f64],
        others: &[Walker],
        rng: &mut Xoshiro256PlusPlus,
    ) -> (Vec<f64>, f64) {
        let j = rng.random_range(0..others.len());
        let k = (j + 1 + rng.random_range(0..others.len() - 1)) % others.len();
        let d = walker.len() as f64;
        let gamma = self.gamma.unwrap_or(2.38 / (2.0 * d).sqrt());
        let proposal = walker
            .iter()
            .zip(others[j].position.iter().zip(&others[k].position))
            .map(|(x, (a, b))| {
                let e: f64 = rand_distr::Distribution::sample(&rand_distr::StandardNormal, rng);
                x + gamma * (a - b) + self.jitter * e
            })
            .collect();
        (proposal, 0.0)
    }
}

/// A mixture: each walker, at each step, uses the differential-evolution move with probability
/// `de_fraction` and the stretch move otherwise. The default, 0.9, was measured on the 16 demo
/// galaxies' SIDM posteriors (step cap 12 000): with half and half, the four spirals S02–S05 did
/// not converge (τ 296–404 steps) and the dwarfs had τ 31–55; with 0.9, fifteen of sixteen
/// converge with τ 21–99 (S02 174) and only S04 (τ ≈ 380) needs more steps. Stretch alone gave
/// τ 140–230 on the dwarfs. A larger or smaller γ, or occasional γ = 1 jumps, did not help.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct MoveMix {
    pub stretch_a: f64,
    pub de_fraction: f64,
}

impl Default for MoveMix {
    fn default() -> Self {
        Self {
            stretch_a: 2.0,
            de_fraction: 0.9,
        }
    }
}

impl Move for MoveMix {
    fn propose(
        &self,
        walker: &[f64],
        others: &[Walker],
        rng: &mut Xoshiro256PlusPlus,
    ) -> (Vec<f64>, f64) {
        let u: f64 = rng.random();
        if u < self.de_fraction {
            DifferentialEvolutionMove::default().propose(walker, others, rng)
        } else {
            StretchMove { a: self.stretch_a }.propose(walker, others, rng)
        }
    }
}

/// One walker: position, log-density, derived quantities, RNG stream, accepted moves.
#[derive(Debug, Clone)]
pub struct Walker {
    pub position: Vec<f64>,
    pub log_density: f64,
    pub derived: Vec<f64>,
    rng: Xoshiro256PlusPlus,
    pub accepted: u64,
}

/// The ensemble at one step.
#[derive(Debug, Clone)]
pub struct EnsembleState {
    pub walkers: Vec<Walker>,
    pub step: usize,
    pub evaluations: u64,
}

impl EnsembleState {
    /// Starts walkers at `initial` positions (at least 2·dim + 2 of them, even count), each with
    /// its own RNG stream derived from `seed`. Every start must have a finite density.
    pub fn new<D: LogDensity>(
        density: &D,
        initial: Vec<Vec<f64>>,
        seed: u64,
    ) -> Result<Self, InferError> {
        let dim = density.dim();
        if initial.len() < 2 * dim + 2 || !initial.len().is_multiple_of(2) {
            return Err(InferError::Config(format!(
                "need an even number of at least {} walkers for {dim} parameters, got {}",
                2 * dim + 2,
                initial.len()
            )));
        }
        let mut stream = Xoshiro256PlusPlus::seed_from_u64(seed);
        let mut walkers = Vec::with_capacity(initial.len());
        for position in initial {
            if position.len() != dim {
                return Err(InferError::Config(format!(
                    "a walker has {} coordinates, not {dim}",
                    position.len()
                )));
            }
            let mut derived = vec![f64::NAN; density.n_derived()];
            let log_density = density.log_density(&position, &mut derived);
            if !log_density.is_finite() {
                return Err(InferError::NoValidStart(format!(
                    "walker start {position:?} has ln p = {log_density}"
                )));
            }
            // Each walker gets a stream 2^128 draws apart from the previous one.
            let rng = stream.clone();
            stream.jump();
            walkers.push(Walker {
                position,
                log_density,
                derived,
                rng,
                accepted: 0,
            });
        }
        let evaluations = walkers.len() as u64;
        Ok(Self {
            walkers,
            step: 0,
            evaluations,
        })
    }

    /// Number of walkers.
    #[must_use]
    pub fn n_walkers(&self) -> usize {
        self.walkers.len()
    }

    /// Fraction of proposals accepted so far, over all walkers.
    #[must_use]
    pub fn acceptance_fraction(&self) -> f64 {
        if self.step == 0 {
            return 0.0;
        }
        let accepted: u64 = self.walkers.iter().map(|w| w.accepted).sum();
        accepted as f64 / (self.step * self.walkers.len()) as f64
    }

    /// Advances every walker by one move (two half-updates).
    pub fn advance<D: LogDensity, M: Move>(&mut self, density: &D, mv: &M) {
        let half = self.walkers.len() / 2;
        for first in [true, false] {
            let (a, b) = self.walkers.split_at_mut(half);
            let (moving, fixed) = if first { (a, &*b) } else { (b, &*a) };
            let update = |walker: &mut Walker| {
                let (proposal, log_factor) = mv.propose(&walker.position, fixed, &mut walker.rng);
                let mut derived = vec![f64::NAN; walker.derived.len()];
                let log_density = density.log_density(&proposal, &mut derived);
                let log_accept = log_factor + log_density - walker.log_density;
                let u: f64 = walker.rng.random();
                if log_density.is_finite() && u.ln() < log_accept {
                    walker.position = proposal;
                    walker.log_density = log_density;
                    walker.derived = derived;
                    walker.accepted += 1;
                }
            };
            // One thread: no hand-over to the pool and back at every half-step (measured: it
            // took 40% of a one-core fit, Kiln D03 2.5 s → 1.5 s). Each walker has its own
            // generator, so the draws are the same either way.
            if rayon::current_num_threads() > 1 {
                moving.par_iter_mut().for_each(update);
            } else {
                moving.iter_mut().for_each(update);
            }
        }
        self.step += 1;
        self.evaluations += self.walkers.len() as u64;
    }
}

/// What the observer sees after each step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Progress {
    pub step: usize,
    pub max_steps: usize,
    pub acceptance: f64,
    /// Largest integrated autocorrelation time at the last check.
    pub tau_max: Option<f64>,
    /// Steps the chain needs to be longer than `tau_factor` τ, at the last check.
    pub target_steps: Option<usize>,
}

/// Whether to go on.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Control {
    Continue,
    Stop,
}

/// Receives progress and may stop the run (a GUI's cancel button, Ctrl-C).
pub trait Observer {
    fn on_progress(&mut self, progress: &Progress) -> Control;
}

/// An observer that never stops the run.
pub struct Silent;

impl Observer for Silent {
    fn on_progress(&mut self, _progress: &Progress) -> Control {
        Control::Continue
    }
}

impl<F: FnMut(&Progress) -> Control> Observer for F {
    fn on_progress(&mut self, progress: &Progress) -> Control {
        self(progress)
    }
}

/// How long to run.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct RunConfig {
    /// Stop once the chain is longer than this many autocorrelation times (50 is common
    /// practice) and τ has settled.
    pub tau_factor: f64,
    /// Never run fewer steps than this.
    pub min_steps: usize,
    /// Never run more steps than this (the user's cap); a chain stopped here is unconverged.
    pub max_steps: usize,
    /// Estimate τ every this many steps.
    pub check_every: usize,
    /// Relative change of τ between checks below which it counts as settled.
    pub tau_tolerance: f64,
}

impl Default for RunConfig {
    fn default() -> Self {
        Self {
            tau_factor: 50.0,
            min_steps: 500,
            max_steps: 20_000,
            check_every: 250,
            tau_tolerance: 0.05,
        }
    }
}

/// The result of a run.
#[derive(Debug, Clone)]
pub struct RunOutcome {
    pub chain: ChainStore,
    pub state: EnsembleState,
    /// Integrated autocorrelation time per parameter, steps (at the end).
    pub tau: Vec<f64>,
    pub converged: bool,
    pub cancelled: bool,
}

impl RunOutcome {
    /// Where the walkers ended, one position each: where a following run (a tempering ladder)
    /// starts.
    #[must_use]
    pub fn final_positions(&self) -> Vec<Vec<f64>> {
        self.state
            .walkers
            .iter()
            .map(|w| w.position.clone())
            .collect()
    }

    /// Largest τ, steps.
    #[must_use]
    pub fn tau_max(&self) -> f64 {
        self.tau.iter().copied().fold(f64::NAN, f64::max)
    }

    /// Burn-in to discard: two autocorrelation times (common practice), at most half the chain.
    #[must_use]
    pub fn burn_in(&self) -> usize {
        let tau = self.tau_max();
        let steps = self.chain.steps();
        if tau.is_finite() {
            ((2.0 * tau).ceil() as usize).min(steps / 2)
        } else {
            steps / 2
        }
    }

    /// Thinning: half an autocorrelation time (common practice), at least 1.
    #[must_use]
    pub fn thin(&self) -> usize {
        let tau = self.tau_max();
        if tau.is_finite() {
            ((0.5 * tau).floor() as usize).max(1)
        } else {
            1
        }
    }
}

/// Runs the ensemble from `state` until converged, capped, or stopped by the observer.
pub fn run<D: LogDensity, M: Move, O: Observer>(
    density: &D,
    mv: &M,
    state: EnsembleState,
    config: &RunConfig,
    observer: &mut O,
) -> RunOutcome {
    run_recorded(density, mv, state, config, observer, &|_| None)
}

/// Where a run records its walkers: the sampler's own coordinates (`None`), or other coordinates
/// of the same points (a position and the change of ln density, minus the log-Jacobian of the
/// change of coordinates).
pub type Recording<'a> = &'a (dyn Fn(&[f64]) -> Option<(Vec<f64>, f64)> + Sync);

/// [`run`], recording the chain in the coordinates `record` gives (see [`Recording`]): the
/// autocorrelation times that decide convergence are those of the recorded chain, so a sampler
/// that moves in reparameterised coordinates is judged on the coordinates the user reads.
pub fn run_recorded<D: LogDensity, M: Move, O: Observer>(
    density: &D,
    mv: &M,
    mut state: EnsembleState,
    config: &RunConfig,
    observer: &mut O,
    record: Recording<'_>,
) -> RunOutcome {
    let mut chain = ChainStore::new(state.n_walkers(), density.dim(), density.n_derived());
    let mut tau_previous: Option<f64> = None;
    let mut tau = vec![f64::NAN; density.dim()];
    let mut converged = false;
    let mut cancelled = false;
    let mut target_steps = None;
    while state.step < config.max_steps {
        state.advance(density, mv);
        let recorded: Vec<Option<(Vec<f64>, f64)>> =
            state.walkers.iter().map(|w| record(&w.position)).collect();
        chain.record_step(state.walkers.iter().zip(&recorded).map(|(w, r)| match r {
            Some((position, shift)) => (
                position.as_slice(),
                w.log_density + shift,
                w.derived.as_slice(),
            ),
            None => (w.position.as_slice(), w.log_density, w.derived.as_slice()),
        }));
        let check = state.step.is_multiple_of(config.check_every.max(1))
            && state.step >= config.min_steps.min(config.max_steps);
        if check {
            tau = integrated_autocorr_times(&chain, 0);
            let tau_max = tau.iter().copied().fold(f64::NAN, f64::max);
            if tau_max.is_finite() {
                target_steps = Some((config.tau_factor * tau_max).ceil() as usize);
                let settled = tau_previous
                    .is_some_and(|p| ((tau_max - p) / tau_max).abs() < config.tau_tolerance);
                if state.step as f64 > config.tau_factor * tau_max && settled {
                    converged = true;
                }
                tau_previous = Some(tau_max);
            }
        }
        let progress = Progress {
            step: state.step,
            max_steps: config.max_steps,
            acceptance: state.acceptance_fraction(),
            tau_max: tau_previous,
            target_steps,
        };
        if observer.on_progress(&progress) == Control::Stop {
            cancelled = true;
            break;
        }
        if converged {
            break;
        }
    }
    if !converged {
        tau = integrated_autocorr_times(&chain, 0);
    }
    RunOutcome {
        chain,
        state,
        tau,
        converged,
        cancelled,
    }
}
