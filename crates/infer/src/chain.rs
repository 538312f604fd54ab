//! The stored chain of an ensemble run, apart from the sampler that fills it and the diagnostics
//! that read it.

/// The stored chain: for every step and walker, the position, log-density and derived values.
#[derive(Debug, Clone, Default)]
pub struct ChainStore {
    pub n_walkers: usize,
    pub n_dim: usize,
    pub n_derived: usize,
    positions: Vec<f64>,
    log_densities: Vec<f64>,
    derived: Vec<f64>,
}

impl ChainStore {
    /// An empty chain for this ensemble shape.
    #[must_use]
    pub fn new(n_walkers: usize, n_dim: usize, n_derived: usize) -> Self {
        Self {
            n_walkers,
            n_dim,
            n_derived,
            ..Self::default()
        }
    }

    /// Appends one step: each walker's (position, log-density, derived values), in walker
    /// order.
    pub fn record_step<'a>(
        &mut self,
        walkers: impl IntoIterator<Item = (&'a [f64], f64, &'a [f64])>,
    ) {
        for (position, log_density, derived) in walkers {
            self.positions.extend_from_slice(position);
            self.log_densities.push(log_density);
            self.derived.extend_from_slice(derived);
        }
    }

    /// Number of recorded steps.
    #[must_use]
    pub fn steps(&self) -> usize {
        self.log_densities
            .len()
            .checked_div(self.n_walkers)
            .unwrap_or(0)
    }

    /// Parameter `param` of walker `walker` at `step`.
    #[must_use]
    pub fn position(&self, step: usize, walker: usize, param: usize) -> f64 {
        self.positions[(step * self.n_walkers + walker) * self.n_dim + param]
    }

    /// Derived quantity `index` of walker `walker` at `step`.
    #[must_use]
    pub fn derived(&self, step: usize, walker: usize, index: usize) -> f64 {
        self.derived[(step * self.n_walkers + walker) * self.n_derived + index]
    }

    /// Log-density of walker `walker` at `step`.
    #[must_use]
    pub fn log_density(&self, step: usize, walker: usize) -> f64 {
        self.log_densities[step * self.n_walkers + walker]
    }

    /// The series of one parameter for one walker from step `start` on.
    #[must_use]
    pub fn walker_series(&self, walker: usize, param: usize, start: usize) -> Vec<f64> {
        (start..self.steps())
            .map(|s| self.position(s, walker, param))
            .collect()
    }

    /// Every (step, walker) pair kept after discarding `burn` steps and keeping one step in
    /// `thin`.
    pub fn kept(&self, burn: usize, thin: usize) -> impl Iterator<Item = (usize, usize)> + '_ {
        let thin = thin.max(1);
        (burn.min(self.steps())..self.steps())
            .step_by(thin)
            .flat_map(move |s| (0..self.n_walkers).map(move |w| (s, w)))
    }
}
