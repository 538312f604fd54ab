//! One "sample this density" path, shared by the galaxy fits and the population fits: walkers in
//! a ball around the best point (with retries at smaller scales), the ensemble sampler until
//! converged, posterior summaries with the upper-limit rule, and information criteria.
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
use crate::sampler::{EnsembleState, LogDensity, MoveMix, Observer, RunConfig, RunOutcome, run};
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

/// Samples `density` starting from a ball around `centre`: walker positions are drawn with
/// `rng` (each retried at the plan's smaller scales until `is_valid` accepts it), then the
/// ensemble runs until converged, capped or stopped by `observer`. Returns the outcome and the
/// number of walkers.
#[allow(clippy::too_many_arguments)]
pub fn sample_around<D: LogDensity, O: Observer>(
    density: &D,
    centre: &[f64],
    bounds: &[(f64, f64)],
    plan: &SamplingPlan<'_>,
    rng: &mut Xoshiro256PlusPlus,
    is_valid: impl Fn(&[f64]) -> bool,
    observer: &mut O,
) -> Result<(RunOutcome, usize), InferError> {
    let n_walkers = walker_count(plan.n_walkers, centre.len());
    let mut initial = Vec::with_capacity(n_walkers);
    for _ in 0..n_walkers {
        let mut placed = centre.to_vec();
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
