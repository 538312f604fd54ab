//! Maximum a posteriori by Nelder–Mead (argmin) from several starts.

use argmin::core::{CostFunction, Error, Executor, State};
use argmin::solver::neldermead::NelderMead;
use rand::{RngExt, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;

use crate::InferError;
use crate::model::GalaxyModel;
use crate::sampler::LogDensity;

/// Cost given to points with zero posterior, so the simplex moves away from them.
const REFUSED_COST: f64 = 1e100;

struct NegativeLogDensity<'a, D> {
    density: &'a D,
}

impl<D: LogDensity> CostFunction for NegativeLogDensity<'_, D> {
    type Param = Vec<f64>;
    type Output = f64;

    fn cost(&self, theta: &Self::Param) -> Result<Self::Output, Error> {
        let mut derived = vec![f64::NAN; self.density.n_derived()];
        let lp = self.density.log_density(theta, &mut derived);
        Ok(if lp.is_finite() { -lp } else { REFUSED_COST })
    }
}

/// The best point found and its log-posterior.
#[derive(Debug, Clone, PartialEq)]
pub struct MapEstimate {
    pub theta: Vec<f64>,
    pub log_posterior: f64,
}

/// Draws a point uniformly within the bounds, nuisances at their centres, until its posterior is
/// positive (at most `tries` draws).
pub fn valid_random_start(
    model: &GalaxyModel,
    rng: &mut Xoshiro256PlusPlus,
    tries: usize,
) -> Option<Vec<f64>> {
    let centre = model.centre();
    let halo = model.layout().halo_specs();
    let mut derived = vec![f64::NAN; model.n_derived()];
    for _ in 0..tries {
        let mut theta = centre.clone();
        for (k, p) in halo.iter().enumerate() {
            theta[k] = p.lower + (p.upper - p.lower) * rng.random::<f64>();
        }
        if model.log_density(&theta, &mut derived).is_finite() {
            return Some(theta);
        }
    }
    None
}

/// Nelder–Mead on −ln p from `start`, the first simplex stepping 5% of each coordinate's
/// `(lower, upper)` range.
pub fn nelder_mead<D: LogDensity>(
    density: &D,
    bounds: &[(f64, f64)],
    start: &[f64],
    max_iterations: u64,
) -> Result<MapEstimate, InferError> {
    let mut vertices = vec![start.to_vec()];
    for (k, &(lower, upper)) in bounds.iter().enumerate() {
        let mut v = start.to_vec();
        let step = 0.05 * (upper - lower);
        v[k] = if v[k] + step <= upper {
            v[k] + step
        } else {
            v[k] - step
        };
        vertices.push(v);
    }
    let solver = NelderMead::new(vertices)
        .with_sd_tolerance(1e-10)
        .map_err(|e| InferError::Config(format!("optimiser set-up: {e}")))?;
    let result = Executor::new(NegativeLogDensity { density }, solver)
        .configure(|state| state.max_iters(max_iterations))
        .run()
        .map_err(|e| InferError::Config(format!("optimiser: {e}")))?;
    let state = result.state();
    let theta = state
        .get_best_param()
        .cloned()
        .unwrap_or_else(|| start.to_vec());
    Ok(MapEstimate {
        log_posterior: -state.get_best_cost(),
        theta,
    })
}

/// Nelder–Mead from each of `starts` points drawn by `next_start` (None: no valid point this
/// time), the best polished by a second run; `no_start` says why when no start was valid.
pub fn multistart_nelder_mead<D: LogDensity>(
    density: &D,
    bounds: &[(f64, f64)],
    starts: usize,
    mut next_start: impl FnMut() -> Option<Vec<f64>>,
    max_iterations: u64,
    no_start: impl FnOnce() -> String,
) -> Result<MapEstimate, InferError> {
    let mut best: Option<MapEstimate> = None;
    for _ in 0..starts.max(1) {
        let Some(start) = next_start() else {
            continue;
        };
        let estimate = nelder_mead(density, bounds, &start, max_iterations)?;
        if best
            .as_ref()
            .is_none_or(|b| estimate.log_posterior > b.log_posterior)
        {
            best = Some(estimate);
        }
    }
    let best = best.ok_or_else(|| InferError::NoValidStart(no_start()))?;
    let polished = nelder_mead(density, bounds, &best.theta, max_iterations)?;
    Ok(if polished.log_posterior > best.log_posterior {
        polished
    } else {
        best
    })
}

/// Maximum a posteriori: Nelder–Mead from `starts` random valid points, the best polished by a
/// second run.
pub fn maximum_a_posteriori(
    model: &GalaxyModel,
    starts: usize,
    seed: u64,
) -> Result<MapEstimate, InferError> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let bounds = model.layout().bounds();
    multistart_nelder_mead(
        model,
        &bounds,
        starts,
        || valid_random_start(model, &mut rng, 2000),
        2000,
        || {
            format!(
                "no point with a positive posterior found in 2000 random draws (model {})",
                model.model.name()
            )
        },
    )
}
