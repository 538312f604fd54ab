//! One "sample this density" path, shared by the galaxy fits and the population fits: walkers in
//! a ball around the best point, or around several starting points (with retries at smaller
//! scales), the ensemble sampler until converged, posterior summaries with the upper-limit rule,
//! and information criteria.
//!
//! The maximum itself comes from [`crate::optimize::multistart_nelder_mead`], which both fits call
//! with their own start rule.
//!
//! ```
//! use caldera_infer::pipeline::{information_criteria, walker_count};
//!
//! assert_eq!(walker_count(5, 3), 8);
//! let (aic, bic) = information_criteria(2, 20, -10.0);
//! assert!((aic - 24.0).abs() < 1e-12);
//! assert!((bic - (2.0 * 20f64.ln() + 20.0)).abs() < 1e-12);
//! ```

use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::InferError;
use crate::reparam::{ConditionalMap, Reparameterised};
use crate::sampler::{
    ChainStore, Control, EnsembleState, LogDensity, MoveMix, Observer, Progress, RunConfig,
    RunOutcome, run, run_recorded,
};
use crate::summary::{Interval, interval, piles_at_lower_bound, quantile};

/// How to start and run the ensemble around a best point.
#[derive(Debug, Clone, Copy)]
pub struct SamplingPlan<'a> {
    /// Requested walkers (raised by [`walker_count`]).
    pub n_walkers: usize,
    /// Ball radii tried in turn for each walker, as fractions of each coordinate's bound range;
    /// a walker whose every trial is invalid starts at the best point itself.
    pub ball_scales: &'a [f64],
    pub moves: &'a MoveMix,
    pub run: &'a RunConfig,
    /// Seed of the walkers' own random streams.
    pub seed: u64,
}

/// Walkers for `dim` coordinates: at least 2·dim + 2 (the stretch move needs more walkers than
/// dimensions; common practice), and an even number (the ensemble updates in halves).
#[must_use]
pub fn walker_count(requested: usize, dim: usize) -> usize {
    let n = requested.max(2 * dim + 2);
    n + n % 2
}

/// Samples `density` starting from balls around `centres`, shared out among the walkers in turn
/// (the first walker at the first centre, the second at the second, ...): walker positions are
/// drawn with `rng` (each retried at the plan's smaller scales until `is_valid` accepts it), then
/// the ensemble runs until converged, capped or stopped by `observer`. Returns the outcome and the
/// number of walkers.
#[allow(clippy::too_many_arguments)]
pub fn sample_around<D: LogDensity, O: Observer>(
    density: &D,
    centres: &[Vec<f64>],
    bounds: &[(f64, f64)],
    plan: &SamplingPlan<'_>,
    rng: &mut Xoshiro256PlusPlus,
    is_valid: impl Fn(&[f64]) -> bool,
    observer: &mut O,
) -> Result<(RunOutcome, usize), InferError> {
    let n_walkers = walker_count(plan.n_walkers, density.dim());
    let mut initial = Vec::with_capacity(n_walkers);
    for walker in 0..n_walkers {
        let centre = &centres[walker % centres.len()];
        let mut placed = centre.clone();
        for &scale in plan.ball_scales {
            let trial: Vec<f64> = centre
                .iter()
                .zip(bounds)
                .map(|(x, (lower, upper))| {
                    let z: f64 = Distribution::<f64>::sample(&StandardNormal, rng);
                    x + scale * (upper - lower) * z
                })
                .collect();
            if is_valid(&trial) {
                placed = trial;
                break;
            }
        }
        initial.push(placed);
    }
    let state = EnsembleState::new(density, initial, plan.seed)?;
    Ok((
        run(density, plan.moves, state, plan.run, observer),
        n_walkers,
    ))
}

/// Which coordinates of θ bend with which ([`crate::reparam`]), and how the map is fitted: a
/// pilot run in θ, then adaptation runs of the same length in the map's coordinates, each
/// refitting the map to every sample so far, while the samples still spread beyond the map's
/// range of s or τ is long; then the main run with the last map.
#[derive(Debug, Clone, PartialEq)]
pub struct Straightening {
    /// The conditioning coordinate s.
    pub given: usize,
    /// The coordinates regressed on s (and on the ones before them), in order.
    pub regressed: Vec<usize>,
    /// Steps of the pilot and of each adaptation run (they count towards the step cap).
    pub pilot_steps: usize,
    /// Adaptation goes on while an adaptation run's τ exceeds this many steps ...
    pub refit_tau_steps: f64,
    /// ... or its samples reach beyond the map's range of s by more than this fraction of it ...
    pub range_tolerance: f64,
    /// ... for at least `min_refits` and at most `max_refits` runs. A map fitted to samples that
    /// have not yet spread along the whole ridge straightens only the part they cover, and τ
    /// measured there looks short.
    pub min_refits: usize,
    pub max_refits: usize,
    /// The main run restarts with a map refitted to its samples while a check in its first half
    /// shows τ above this many steps (at most `max_refits` times).
    pub restart_tau_steps: f64,
    /// The pilot and the first adaptation runs sample the posterior raised to these powers β < 1
    /// (then β = 1): a flattened posterior spreads along the whole ridge within a few hundred
    /// steps, so the map covers its tails before the runs at β = 1 refine it.
    pub betas: Vec<f64>,
}

impl Straightening {
    /// 250-step pilot and adaptation runs: the pilot and the first adaptation run on the
    /// posterior flattened to β = 0.2, the next at β = 0.45, then β = 1; at least three and at
    /// most eight refits, going on while τ > 50 steps or the samples reach 5% beyond the map's
    /// range of s. Measured on the demo catalogue (DEVELOPERS.md, Benchmarks): a map fitted to
    /// an unflattened pilot alone left the spirals at τ = 200–1300 steps (the pilot had not spread
    /// along the whole ridge) and, on Kiln D03, a low-σ/m tail 0.1 dex short at its 16th
    /// percentile against a 30,000-step unstraightened run; the flattened rounds fixed both.
    #[must_use]
    pub fn new(given: usize, regressed: Vec<usize>) -> Self {
        Self {
            given,
            regressed,
            pilot_steps: 250,
            refit_tau_steps: 50.0,
            range_tolerance: 0.05,
            min_refits: 3,
            max_refits: 8,
            restart_tau_steps: 75.0,
            betas: vec![0.2, 0.2, 0.45],
        }
    }

    /// The map fitted to `samples`, if they determine one.
    fn fit(&self, samples: &DistinctPositions) -> Option<ConditionalMap> {
        ConditionalMap::fit(&samples.positions, self.given, &self.regressed)
    }
}

/// `inner`'s density raised to the power β (a flattened posterior for the pilot runs).
struct Tempered<'a, D> {
    inner: &'a D,
    beta: f64,
}

impl<D: LogDensity> LogDensity for Tempered<'_, D> {
    fn dim(&self) -> usize {
        self.inner.dim()
    }

    fn n_derived(&self) -> usize {
        self.inner.n_derived()
    }

    fn log_density(&self, theta: &[f64], derived: &mut [f64]) -> f64 {
        let value = self.inner.log_density(theta, derived);
        if value.is_finite() {
            self.beta * value
        } else {
            value
        }
    }
}

/// Reports a sub-run's progress as steps of the whole run (`offset` steps done before it, `cap`
/// in all).
struct Offset<'o, O> {
    observer: &'o mut O,
    offset: usize,
    cap: usize,
}

impl<O: Observer> Observer for Offset<'_, O> {
    fn on_progress(&mut self, progress: &Progress) -> Control {
        self.observer.on_progress(&Progress {
            step: self.offset + progress.step,
            max_steps: self.cap,
            target_steps: progress.target_steps.map(|t| self.offset + t),
            ..*progress
        })
    }
}

/// [`sample_around`] with the posterior straightened first ([`crate::reparam`]): pilot runs fit
/// a [`ConditionalMap`] and the main run samples in its coordinates until converged, its chain
/// recorded in θ, where τ (and so convergence) is measured. The pilot's walkers start around
/// the `starts` in turn (the best point, then points along the posterior's ridge in s:
/// [`crate::optimize::ridge`]), so that the first map already spans every stretch of s where
/// the posterior lives. Also returns the map used (None when no pilot could fit one: the main
/// run then samples θ).
#[allow(clippy::too_many_arguments)]
pub fn sample_straightened<D: LogDensity, O: Observer>(
    density: &D,
    starts: &[Vec<f64>],
    bounds: &[(f64, f64)],
    plan: &SamplingPlan<'_>,
    rng: &mut Xoshiro256PlusPlus,
    is_valid: impl Fn(&[f64]) -> bool,
    straightening: &Straightening,
    observer: &mut O,
) -> Result<(RunOutcome, usize, Option<ConditionalMap>), InferError> {
    if straightening.regressed.is_empty() {
        let (outcome, n_walkers) =
            sample_around(density, starts, bounds, plan, rng, is_valid, observer)?;
        return Ok((outcome, n_walkers, None));
    }
    let cap = plan.run.max_steps;
    let pilot_steps = straightening.pilot_steps.min(cap / 4).max(1);
    let pilot_config = RunConfig {
        min_steps: pilot_steps,
        max_steps: pilot_steps,
        check_every: pilot_steps,
        ..*plan.run
    };
    let pilot_plan = SamplingPlan {
        run: &pilot_config,
        ..*plan
    };
    let mut offset = Offset {
        observer: &mut *observer,
        offset: 0,
        cap,
    };
    let beta = |round: usize| straightening.betas.get(round).copied().unwrap_or(1.0);
    let flattened = Tempered {
        inner: density,
        beta: beta(0),
    };
    let (pilot, n_walkers) = sample_around(
        &flattened,
        starts,
        bounds,
        &pilot_plan,
        rng,
        &is_valid,
        &mut offset,
    )?;
    if pilot.cancelled {
        return Ok((pilot, n_walkers, None));
    }
    let mut done = pilot.chain.steps();
    let mut positions = pilot.final_positions();
    // The map is fitted to every sample since the pilot's first half (the walkers leaving their
    // starting ball): each later run spreads further along the ridge.
    let mut samples = DistinctPositions::default();
    samples.extend(&pilot.chain, done / 2);
    let mut fitted = straightening.fit(&samples);
    // A pilot whose samples cannot determine a map (walkers still bunched in their starting
    // ball) goes on for another round, within the adaptation's budget.
    let mut extra = 0;
    while fitted.is_none() && extra < straightening.max_refits && done + pilot_steps <= cap / 2 {
        let state = EnsembleState::new(
            &flattened,
            positions,
            plan.seed ^ (0x9170_7000 + extra as u64),
        )?;
        let mut offset = Offset {
            observer: &mut *observer,
            offset: done,
            cap,
        };
        let more = run(&flattened, plan.moves, state, &pilot_config, &mut offset);
        if more.cancelled {
            return Ok((more, n_walkers, None));
        }
        done += more.chain.steps();
        positions = more.final_positions();
        samples.extend(&more.chain, 0);
        fitted = straightening.fit(&samples);
        extra += 1;
    }
    let Some(mut map) = fitted else {
        let main_config = RunConfig {
            max_steps: cap.saturating_sub(done).max(1),
            ..*plan.run
        };
        let state = EnsembleState::new(density, positions, plan.seed ^ 0x57a1_6e7e)?;
        let mut offset = Offset {
            observer,
            offset: done,
            cap,
        };
        let outcome = run(density, plan.moves, state, &main_config, &mut offset);
        return Ok((outcome, n_walkers, None));
    };
    // Adaptation: runs of the pilot's length in the map's coordinates, each refitting the map
    // to every sample so far, until the samples stop spreading in s beyond the map's range and
    // τ is short (after at least `min_refits` of them), within half the step cap.
    for refits in 0..straightening.max_refits {
        if done + pilot_steps > cap / 2 {
            break;
        }
        let mut offset = Offset {
            observer: &mut *observer,
            offset: done,
            cap,
        };
        let beta = beta(refits + 1);
        let outcome = run_straightened(
            &Tempered {
                inner: density,
                beta,
            },
            &map,
            &positions,
            plan,
            &pilot_config,
            plan.seed ^ (0x57a1_6e7e + refits as u64),
            &mut offset,
        )?;
        if outcome.cancelled {
            return Ok((outcome, n_walkers, Some(map)));
        }
        done += outcome.chain.steps();
        positions = outcome.final_positions();
        let chain = &outcome.chain;
        let spread_further = !map.covers(
            chain
                .kept(0, 1)
                .map(|(s, w)| chain.position(s, w, straightening.given)),
            straightening.range_tolerance,
        );
        let long_tau = outcome.tau_max() > straightening.refit_tau_steps;
        samples.extend(chain, 0);
        if let Some(fitted) = straightening.fit(&samples) {
            map = fitted;
        }
        if refits + 1 >= straightening.min_refits && beta >= 1.0 && !spread_further && !long_tau {
            break;
        }
    }
    // The main run; while it shows a long τ at one of its checks, in its first half of the
    // remaining cap, it is stopped, the map refitted to its samples too, and it starts again
    // from its last walkers (at most `max_refits` times).
    let mut main_samples = DistinctPositions::default();
    let mut restart: usize = 0;
    loop {
        let remaining = cap.saturating_sub(done).max(1);
        let main_config = RunConfig {
            max_steps: remaining,
            ..*plan.run
        };
        let mut watch = LongTauWatch {
            observer: Offset {
                observer: &mut *observer,
                offset: done,
                cap,
            },
            restart_tau_steps: straightening.restart_tau_steps,
            allowed: restart < straightening.max_refits,
            until_step: remaining / 2,
            stopped: false,
        };
        let outcome = run_straightened(
            density,
            &map,
            &positions,
            plan,
            &main_config,
            plan.seed ^ (0x57a1_6e7d + 0x100 * restart as u64),
            &mut watch,
        )?;
        if !watch.stopped {
            return Ok((outcome, n_walkers, Some(map)));
        }
        done += outcome.chain.steps();
        positions = outcome.final_positions();
        // Refitted to the main runs' samples alone (the posterior itself, at β = 1).
        main_samples.extend(&outcome.chain, 0);
        if let Some(fitted) = straightening.fit(&main_samples) {
            map = fitted;
        }
        restart += 1;
    }
}

/// Stops the main run for a refit when τ is long at a check before `until_step` (see
/// [`sample_straightened`]); a stop asked by the user's observer passes through as a stop.
struct LongTauWatch<'o, O> {
    observer: Offset<'o, O>,
    restart_tau_steps: f64,
    allowed: bool,
    until_step: usize,
    stopped: bool,
}

impl<O: Observer> Observer for LongTauWatch<'_, O> {
    fn on_progress(&mut self, progress: &Progress) -> Control {
        if self.observer.on_progress(progress) == Control::Stop {
            return Control::Stop;
        }
        if self.allowed
            && progress.step <= self.until_step
            && progress
                .tau_max
                .is_some_and(|tau| tau > self.restart_tau_steps)
        {
            self.stopped = true;
            return Control::Stop;
        }
        Control::Continue
    }
}

/// Every position of `chain` from step `from` on.
/// The positions θ a map is fitted to, each distinct position once, in the order first met.
///
/// A walker that never leaves its start (in a start ball pressed against the edge of the
/// posterior's support, where nearly every move is rejected) repeats one position for a whole
/// run. Counted every time, such positions pull the map's fitted width at their s towards zero,
/// and the map then stretches that stretch of s so far in its own coordinates that the sampler
/// leaves it and never comes back: on an invented bulge-dominated spiral
/// (`tests/ridge_starts.rs`) the 2 positions of the 12 walkers started at the best point, at
/// log σ/m = −1.94, held the whole lower end of the map, and the chains put 1.5–1.9% of their
/// samples below log σ/m = −1.75 against 9.5% in outer-halo coordinates. A rejected move's
/// repeat carries no information on the spread (and the map only decides how well the sampler
/// mixes, never what it samples).
#[derive(Default)]
struct DistinctPositions {
    /// The bit patterns of the positions held.
    seen: std::collections::HashSet<Vec<u64>>,
    positions: Vec<Vec<f64>>,
}

impl DistinctPositions {
    /// Adds the positions of `chain`'s steps from `from` on that are not held yet.
    fn extend(&mut self, chain: &ChainStore, from: usize) {
        for (s, w) in chain.kept(from, 1) {
            let x: Vec<f64> = (0..chain.n_dim).map(|p| chain.position(s, w, p)).collect();
            if self.seen.insert(x.iter().map(|v| v.to_bits()).collect()) {
                self.positions.push(x);
            }
        }
    }
}

/// Runs the ensemble in `map`'s coordinates from `positions` (θ), recording the chain in θ
/// (ln p_θ(θ) = ln p_θ'(θ') − ln |∂θ/∂θ'|), and returns the final walkers in θ too.
fn run_straightened<D: LogDensity, O: Observer>(
    density: &D,
    map: &ConditionalMap,
    positions: &[Vec<f64>],
    plan: &SamplingPlan<'_>,
    config: &RunConfig,
    seed: u64,
    observer: &mut O,
) -> Result<RunOutcome, InferError> {
    let straight = Reparameterised {
        inner: density,
        map,
    };
    let start = positions.iter().map(|p| map.to_sampler(p)).collect();
    let state = EnsembleState::new(&straight, start, seed)?;
    let in_theta = |p: &[f64]| {
        let (theta, log_jacobian) = map.to_model_with_log_jacobian(p);
        (theta, -log_jacobian)
    };
    let record = |p: &[f64]| Some(in_theta(p));
    let mut outcome = run_recorded(&straight, plan.moves, state, config, observer, &record);
    for walker in &mut outcome.state.walkers {
        let (theta, shift) = in_theta(&walker.position);
        walker.position = theta;
        walker.log_density += shift;
    }
    Ok(outcome)
}

/// The summary of a bounded coordinate's posterior from its samples' physical `values`, with the
/// upper-limit rule: when the `coordinates` pile up at the prior's `lower` bound
/// ([`piles_at_lower_bound`]), the 95th percentile of the physical values is the limit to quote.
#[must_use]
pub fn bounded_interval(
    values: impl IntoIterator<Item = f64>,
    coordinates: &[f64],
    (lower, upper): (f64, f64),
    to_value: impl Fn(f64) -> f64,
) -> Option<Interval> {
    let mut summary = interval(values);
    if piles_at_lower_bound(coordinates, lower, upper)
        && let Some(s) = summary.as_mut()
    {
        let mut physical: Vec<f64> = coordinates.iter().map(|&c| to_value(c)).collect();
        physical.sort_by(f64::total_cmp);
        s.upper95 = Some(quantile(&physical, 0.95));
    }
    summary
}

/// (AIC, BIC) for `k` parameters, `n` data and the maximum log-likelihood:
/// AIC = 2k − 2 ln L_max (Akaike 1974), BIC = k ln n − 2 ln L_max (Schwarz 1978).
#[must_use]
pub fn information_criteria(k: usize, n: usize, log_likelihood_max: f64) -> (f64, f64) {
    (
        2.0 * k as f64 - 2.0 * log_likelihood_max,
        k as f64 * (n as f64).ln() - 2.0 * log_likelihood_max,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sampler::Silent;
    use rand::SeedableRng;

    /// A bent, flaring ridge: s ~ N(0, 1), y | s ~ N(s²/2, (0.1 e^{0.2 s})²), w ~ N(0, 1).
    struct Banana;

    impl LogDensity for Banana {
        fn dim(&self) -> usize {
            3
        }

        fn log_density(&self, x: &[f64], _derived: &mut [f64]) -> f64 {
            let (s, y, w) = (x[0], x[1], x[2]);
            let width = 0.1 * (0.2 * s).exp();
            -0.5 * s * s - 0.5 * ((y - 0.5 * s * s) / width).powi(2) - width.ln() - 0.5 * w * w
        }
    }

    fn sample(straightening: &Straightening) -> (RunOutcome, Option<ConditionalMap>) {
        let moves = MoveMix::default();
        let config = RunConfig::default();
        let plan = SamplingPlan {
            n_walkers: 32,
            ball_scales: &[1e-2],
            moves: &moves,
            run: &config,
            seed: 3,
        };
        let bounds = [(-10.0, 10.0), (-10.0, 60.0), (-10.0, 10.0)];
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(11);
        let (outcome, _, map) = sample_straightened(
            &Banana,
            &[vec![0.0, 0.0, 0.0]],
            &bounds,
            &plan,
            &mut rng,
            |_| true,
            straightening,
            &mut Silent,
        )
        .expect("run");
        (outcome, map)
    }

    #[test]
    fn a_straightened_run_samples_the_target_and_mixes() {
        let (outcome, map) = sample(&Straightening::new(0, vec![1, 2]));
        assert!(map.is_some());
        assert!(outcome.converged, "τ = {:?}", outcome.tau);
        // Exact moments: E s² = 1, E y = 1/2, E s⁴ = 3.
        let chain = &outcome.chain;
        let kept: Vec<(usize, usize)> = chain.kept(outcome.burn_in(), 1).collect();
        let n = kept.len() as f64;
        let mean =
            |f: &dyn Fn(usize, usize) -> f64| kept.iter().map(|&(s, w)| f(s, w)).sum::<f64>() / n;
        let s2 = mean(&|s, w| chain.position(s, w, 0).powi(2));
        let y = mean(&|s, w| chain.position(s, w, 1));
        let s4 = mean(&|s, w| chain.position(s, w, 0).powi(4));
        // Within 5 Monte Carlo errors, with n / τ effective samples: Var s² = 2, Var y ≈ 1/2,
        // Var s⁴ = 96.
        let effective = n / outcome.tau_max();
        assert!(
            (s2 - 1.0).abs() < 5.0 * (2.0 / effective).sqrt(),
            "E s² = {s2}"
        );
        assert!(
            (y - 0.5).abs() < 5.0 * (0.5 / effective).sqrt(),
            "E y = {y}"
        );
        assert!(
            (s4 - 3.0).abs() < 5.0 * (96.0 / effective).sqrt(),
            "E s⁴ = {s4}"
        );
        // The straightened run mixes several times faster than the same moves on θ (measured:
        // τ ≈ 10 against ≈ 160 steps).
        let (plain, none) = sample(&Straightening::new(0, Vec::new()));
        assert!(none.is_none());
        assert!(
            plain.tau_max() > 4.0 * outcome.tau_max(),
            "τ {} straightened, {} plain",
            outcome.tau_max(),
            plain.tau_max()
        );
    }
}
