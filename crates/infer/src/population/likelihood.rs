//! The population likelihood: how a shared σ(v)/m is scored against each galaxy's posterior
//! samples and against outside constraints.
//!
//! Each galaxy's SIDM fit sampled (ρ0, σ0, σ/m, nuisances) with σ/m a constant, uniform in
//! log10 σ/m. The halo a velocity-dependent σ(v)/m makes is the one a constant σ/m makes when the
//! two give the same rate ⟨σv⟩/m at the core's σ0, so a shared model predicts, for every σ0, the
//! *effective* constant cross-section σ_eff(σ0) = ⟨σv⟩/m(σ0) / ⟨v_rel⟩(σ0), ⟨v_rel⟩ = 4σ0/√π.
//!
//! - Joint treatment (all galaxies share σ(v)/m, each keeps its own halo and nuisances): the
//!   galaxy's marginal likelihood is ∫ p(σ0, log σ/m = log σ_eff(σ0) | data) dσ0 divided by the
//!   (flat) prior density of log σ/m, estimated from the chain by importance reweighting: each
//!   sample k counts with the kernel weight K_h(log σ_eff(σ0_k) − log (σ/m)_k). The halo and
//!   nuisance parameters are integrated out by the chain itself; the kernel (width h, Silverman's
//!   rule on log σ/m) stands in for the conditional density of σ/m at the sample's σ0.
//! - Marginal treatment (the population fit over the σ/m–velocity plane): each galaxy is one
//!   point at its median σ0, scored by the kernel density of its log σ/m samples — the whole
//!   posterior, so a galaxy that only sets an upper limit counts as one.
//!
//! Predictions below the per-galaxy prior's lower bound are scored at the bound (a smaller σ/m
//! changes the halo no further: the core is already smaller than the data resolve), and the
//! kernel is reflected there so the density does not halve at the edge. Above the upper bound the
//! kernel's tail takes over: the galaxy's fit says nothing there, and the score falls off.
//!
//! Intrinsic scatter (the hierarchical model): each galaxy's own effective cross-section scatters
//! about the model's, log10 σ_eff,i = log10 σ_model(σ0_i) + ε_i with ε_i ~ N(0, τ²), τ in dex a
//! population parameter. Its likelihood is the galaxy's ∫ L_i(y) N(y; μ_i, τ²) dy, and with the
//! Gaussian kernel standing for L_i the integral is exact: the same kernel sum with the width
//! √(h² + τ²) in place of h (a Gaussian convolved with a Gaussian). Near the lower bound the
//! mirrored kernel is widened alike, which treats scatter below the bound as the bound itself
//! would (an approximation when τ is comparable to the distance to the bound). Outside
//! constraints are not scattered: they enter at the model's σ_eff.

use caldera_data::{ConstraintValue, OutsideConstraint};
use caldera_physics::CrossSection;
use caldera_physics::cross_section::{
    dispersion_from_mean_relative_speed_kms, mean_relative_speed_kms,
};
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::population::models::{PopulationModel, PopulationParameter, VelocityModel};
use crate::sampler::LogDensity;
use crate::summary::{Interval, interval};

/// √(2π).
const SQRT_TWO_PI: f64 = 2.506_628_274_631_000_7;

/// z of a one-sided 95% limit read as a half-normal centred at zero (common practice).
const HALF_NORMAL_95: f64 = 1.959_963_984_540_054;

/// Fewest posterior samples a galaxy must have.
pub const MIN_SAMPLES: usize = 50;

/// One galaxy's SIDM posterior, reduced to what a population fit needs.
#[derive(Debug, Clone, PartialEq)]
pub struct GalaxyPosterior {
    pub galaxy: String,
    /// Core dispersion σ0 of each sample, km/s.
    pub sigma0_kms: Vec<f64>,
    /// log10 of each sample's σ/m (cm²/g).
    pub log10_sigma_m: Vec<f64>,
    /// The fit's prior bounds on log10 σ/m.
    pub log10_bounds: (f64, f64),
    /// Kernel width in log10 σ/m (dex).
    pub bandwidth_dex: f64,
    /// Median σ0 of the samples, km/s.
    pub median_sigma0_kms: f64,
    /// Marginal log-density of log10 σ/m, tabulated from the lower bound in steps of
    /// `bandwidth_dex / 8`.
    marginal: Vec<f64>,
    /// Summaries of ⟨v_rel⟩ (km/s) and σ/m (cm²/g) over every sample given, before the thinning
    /// to `max_samples`: what the galaxy's own fit reports, not a 600-sample subset's noisier
    /// quantiles (on the demo dwarf Kiln D01 the subset's median σ/m was 0.1 dex off).
    v_rel_kms: Option<Interval>,
    sigma_m_cm2_g: Option<Interval>,
}

/// Silverman's rule of thumb, h = 0.9 min(s, IQR/1.34) n^(−1/5) (Silverman 1986, eq. 3.31; cited
/// from memory), floored at 0.02 dex (common practice).
fn silverman_bandwidth(values: &[f64]) -> f64 {
    let n = values.len() as f64;
    let mean = values.iter().sum::<f64>() / n;
    let sd = (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let iqr = crate::summary::quantile(&sorted, 0.75) - crate::summary::quantile(&sorted, 0.25);
    let spread = if iqr > 0.0 { sd.min(iqr / 1.34) } else { sd };
    (0.9 * spread * n.powf(-0.2)).max(0.02)
}

/// ln of the mean Gaussian kernel density, (1/(N h √(2π))) Σ_k [K((y_k − s_k)/h) +
/// K((y_k + s_k − 2 lower)/h)], over pairs (y_k, s_k), for a kernel width h (dex); the reflected
/// term is skipped where it is below e⁻³² of the direct one.
fn log_kernel_mean(pairs: impl Iterator<Item = (f64, f64)>, lower: f64, h: f64) -> f64 {
    let mut terms = Vec::with_capacity(pairs.size_hint().0);
    for (y, s) in pairs {
        let u = (y - s) / h;
        let r = (y + s - 2.0 * lower) / h;
        let direct = -0.5 * u * u;
        terms.push(if r < 8.0 {
            let reflected = -0.5 * r * r;
            direct.max(reflected) + (-(direct - reflected).abs()).exp().ln_1p()
        } else {
            direct
        });
    }
    let max = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !max.is_finite() {
        return max;
    }
    let sum: f64 = terms.iter().map(|t| (t - max).exp()).sum();
    max + sum.ln() - (terms.len() as f64 * h * SQRT_TWO_PI).ln()
}

impl GalaxyPosterior {
    /// From paired samples of σ0 (km/s) and log10 σ/m; non-finite pairs are dropped, and at
    /// most `max_samples` are kept (evenly spaced through the chain).
    pub fn from_samples(
        galaxy: &str,
        sigma0_kms: &[f64],
        log10_sigma_m: &[f64],
        log10_bounds: (f64, f64),
        max_samples: usize,
    ) -> Result<Self, InferError> {
        let pairs: Vec<(f64, f64)> = sigma0_kms
            .iter()
            .zip(log10_sigma_m)
            .filter(|(s, y)| s.is_finite() && **s > 0.0 && y.is_finite())
            .map(|(&s, &y)| (s, y))
            .collect();
        if pairs.len() < MIN_SAMPLES {
            return Err(InferError::Config(format!(
                "galaxy '{galaxy}': {} usable posterior samples of (sigma0, sigma/m); need at least {MIN_SAMPLES}",
                pairs.len()
            )));
        }
        if log10_bounds.0.partial_cmp(&log10_bounds.1) != Some(std::cmp::Ordering::Less) {
            return Err(InferError::Config(format!(
                "galaxy '{galaxy}': sigma/m prior bounds {log10_bounds:?} (log10) are not increasing"
            )));
        }
        let v_rel_kms = interval(pairs.iter().map(|p| mean_relative_speed_kms(p.0)));
        let sigma_m_cm2_g = interval(pairs.iter().map(|p| 10f64.powf(p.1)));
        let stride = pairs.len().div_ceil(max_samples.max(MIN_SAMPLES));
        let kept: Vec<(f64, f64)> = pairs.into_iter().step_by(stride).collect();
        let log10_sigma_m: Vec<f64> = kept.iter().map(|p| p.1).collect();
        let bandwidth_dex = silverman_bandwidth(&log10_sigma_m);
        let mut sigma0_sorted: Vec<f64> = kept.iter().map(|p| p.0).collect();
        sigma0_sorted.sort_by(f64::total_cmp);
        let mut posterior = Self {
            median_sigma0_kms: crate::summary::quantile(&sigma0_sorted, 0.5),
            galaxy: galaxy.to_string(),
            sigma0_kms: kept.iter().map(|p| p.0).collect(),
            log10_sigma_m,
            log10_bounds,
            bandwidth_dex,
            marginal: Vec::new(),
            v_rel_kms,
            sigma_m_cm2_g,
        };
        let step = bandwidth_dex / 8.0;
        let nodes = (((log10_bounds.1 - log10_bounds.0) + 1.0) / step).ceil() as usize + 1;
        posterior.marginal = (0..nodes)
            .map(|i| posterior.direct_log_density(log10_bounds.0 + step * i as f64))
            .collect();
        Ok(posterior)
    }

    /// The kernel log-density of log10 σ/m at `y`, summed over the samples.
    fn direct_log_density(&self, y: f64) -> f64 {
        self.direct_log_density_width(y, self.bandwidth_dex)
    }

    /// As [`Self::direct_log_density`] with a kernel of width `width_dex`.
    fn direct_log_density_width(&self, y: f64, width_dex: f64) -> f64 {
        let lower = self.log10_bounds.0;
        let y = y.max(lower);
        log_kernel_mean(self.log10_sigma_m.iter().map(|&s| (y, s)), lower, width_dex)
    }

    /// The kernel width for an intrinsic scatter `scatter_dex`: √(h² + τ²), dex.
    #[must_use]
    pub fn scattered_width_dex(&self, scatter_dex: f64) -> f64 {
        self.bandwidth_dex.hypot(scatter_dex)
    }

    /// The marginal log-likelihood of a model that predicts log10 σ_eff = `y` for this galaxy
    /// with an intrinsic scatter of `scatter_dex` (0: none, the tabulated density).
    #[must_use]
    pub fn scattered_marginal_log_density(&self, y: f64, scatter_dex: f64) -> f64 {
        if scatter_dex > 0.0 {
            self.direct_log_density_width(y, self.scattered_width_dex(scatter_dex))
        } else {
            self.marginal_log_density(y)
        }
    }

    /// The marginal log-density of log10 σ/m at `y` (tabulated; clamped at the lower bound).
    #[must_use]
    pub fn marginal_log_density(&self, y: f64) -> f64 {
        let y = y.max(self.log10_bounds.0);
        let position = (y - self.log10_bounds.0) / (self.bandwidth_dex / 8.0);
        let below = position.floor() as usize;
        if below + 1 >= self.marginal.len() {
            return self.direct_log_density(y);
        }
        let w = position - below as f64;
        self.marginal[below] * (1.0 - w) + self.marginal[below + 1] * w
    }

    /// The joint-treatment log-likelihood: samples reweighted by how close each one's σ/m lies
    /// to the shared model's σ_eff at that sample's σ0 (`predicted` maps σ0 to log10 σ_eff),
    /// with an intrinsic scatter of `scatter_dex` about the model (0: none).
    pub fn joint_log_density(&self, predicted: impl Fn(f64) -> f64, scatter_dex: f64) -> f64 {
        let lower = self.log10_bounds.0;
        log_kernel_mean(
            self.sigma0_kms
                .iter()
                .zip(&self.log10_sigma_m)
                .map(|(&sigma0, &s)| (predicted(sigma0).max(lower), s)),
            lower,
            self.scattered_width_dex(scatter_dex),
        )
    }

    /// Posterior summary of the mean relative speed ⟨v_rel⟩ = 4σ0/√π, km/s, over every sample
    /// given (not only the ones kept for the likelihood).
    #[must_use]
    pub fn v_rel_kms(&self) -> Option<Interval> {
        self.v_rel_kms
    }

    /// Posterior summary of σ/m, cm²/g, over every sample given.
    #[must_use]
    pub fn sigma_m_cm2_g(&self) -> Option<Interval> {
        self.sigma_m_cm2_g
    }
}

/// The velocity-averaged, effective constant cross-section σ_eff = ⟨σv⟩/m / ⟨v_rel⟩ at σ0,
/// cm²/g.
#[must_use]
pub fn effective_sigma_m_cm2_g(cross_section: &CrossSection, sigma0_kms: f64) -> f64 {
    cross_section.sigma_v_over_m_cm2_g_kms(sigma0_kms) / mean_relative_speed_kms(sigma0_kms)
}

/// The log-likelihood of one outside constraint given the model's σ_eff at its velocity:
/// Gaussian for a measurement, and for a 95% upper limit U a half-normal centred at zero with
/// width U/1.96 (common practice).
#[must_use]
pub fn constraint_log_likelihood(constraint: &OutsideConstraint, predicted_cm2_g: f64) -> f64 {
    match constraint.value {
        ConstraintValue::Measurement {
            sigma_m_cm2_g,
            error_cm2_g,
        } => {
            -0.5 * ((predicted_cm2_g - sigma_m_cm2_g) / error_cm2_g).powi(2)
                - (error_cm2_g * SQRT_TWO_PI).ln()
        }
        ConstraintValue::Upper95 { sigma_m_cm2_g } => {
            let width = sigma_m_cm2_g / HALF_NORMAL_95;
            -0.5 * (predicted_cm2_g / width).powi(2) + (2.0 / (width * SQRT_TWO_PI)).ln()
        }
    }
}

/// How the galaxies enter a population likelihood.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Treatment {
    /// Each galaxy is one point at its median velocity (its whole σ/m posterior counts).
    Marginal,
    /// All galaxies share σ(v)/m with their own halo and nuisance parameters (reweighting).
    Joint,
}

/// Nodes of the σ0 table used by the joint treatment, per e-fold.
const NODES_PER_E_FOLD: f64 = 8.0;

/// The sampled coordinate of the intrinsic scatter: log10 τ (τ in dex of σ_eff), log-uniform
/// between 0.01 dex (no scatter the galaxies could resolve: their posteriors are ≳ 0.1 dex wide)
/// and 2 dex (a spread wider than any catalogue's σ/m range); common practice for a scale
/// parameter, the bounds our choice.
pub const SCATTER_PARAMETER: PopulationParameter = PopulationParameter {
    name: "tau",
    unit: "dex",
    lower: -2.0,
    upper: std::f64::consts::LOG10_2,
};

/// The likelihood of one population model's coordinates, as a density for the sampler (flat
/// priors on the log10 coordinates within their bounds).
pub struct PopulationLikelihood<'a> {
    pub model: VelocityModel,
    pub treatment: Treatment,
    pub yukawa_dm_mass_gev: f64,
    galaxies: &'a [GalaxyPosterior],
    constraints: &'a [OutsideConstraint],
    /// ln σ0 at the table nodes (joint treatment).
    ln_sigma0_nodes: Vec<f64>,
    /// The model's sampled coordinates (then log10 τ when the scatter is fitted).
    parameters: Vec<PopulationParameter>,
    /// Whether the last coordinate is the intrinsic scatter's log10 τ.
    scatter: bool,
}

impl<'a> PopulationLikelihood<'a> {
    #[must_use]
    pub fn new(
        model: VelocityModel,
        treatment: Treatment,
        yukawa_dm_mass_gev: f64,
        galaxies: &'a [GalaxyPosterior],
        constraints: &'a [OutsideConstraint],
    ) -> Self {
        let (low, high) = galaxies
            .iter()
            .flat_map(|g| g.sigma0_kms.iter())
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &s| {
                (lo.min(s.ln()), hi.max(s.ln()))
            });
        let ln_sigma0_nodes = if low.is_finite() && high.is_finite() {
            let count = ((high - low) * NODES_PER_E_FOLD).ceil().max(1.0) as usize + 1;
            (0..count)
                .map(|i| low + (high - low) * i as f64 / (count - 1).max(1) as f64)
                .collect()
        } else {
            Vec::new()
        };
        Self {
            model,
            treatment,
            yukawa_dm_mass_gev,
            galaxies,
            constraints,
            ln_sigma0_nodes,
            parameters: model.population_parameters(),
            scatter: false,
        }
    }

    /// The hierarchical model: adds the intrinsic scatter τ as the last coordinate (log10 τ,
    /// [`SCATTER_PARAMETER`]).
    #[must_use]
    pub fn with_scatter(mut self, scatter: bool) -> Self {
        if scatter && !self.scatter {
            self.parameters.push(SCATTER_PARAMETER);
        }
        if !scatter && self.scatter {
            self.parameters.pop();
        }
        self.scatter = scatter;
        self
    }

    /// Whether the intrinsic scatter is fitted.
    #[must_use]
    pub fn has_scatter(&self) -> bool {
        self.scatter
    }

    /// The sampled coordinates (log10 of each free parameter) and their bounds.
    #[must_use]
    pub fn parameters(&self) -> &[PopulationParameter] {
        &self.parameters
    }

    /// Number of data points: galaxies plus outside constraints.
    #[must_use]
    pub fn n_data(&self) -> usize {
        self.galaxies.len() + self.constraints.len()
    }

    /// True when every coordinate lies within its prior bounds.
    #[must_use]
    pub fn in_bounds(&self, theta: &[f64]) -> bool {
        theta.len() == self.parameters.len()
            && theta
                .iter()
                .zip(&self.parameters)
                .all(|(x, p)| *x >= p.lower && *x <= p.upper)
    }

    /// ln L(θ) (−∞ outside the bounds).
    #[must_use]
    pub fn log_likelihood(&self, theta: &[f64]) -> f64 {
        if !self.in_bounds(theta) {
            return f64::NEG_INFINITY;
        }
        let (model_theta, scatter_dex) = if self.scatter {
            let (model_theta, tau) = theta.split_at(theta.len() - 1);
            (model_theta, 10f64.powf(tau[0]))
        } else {
            (theta, 0.0)
        };
        let Ok(cross_section) = self
            .model
            .cross_section(model_theta, self.yukawa_dm_mass_gev)
        else {
            return f64::NEG_INFINITY;
        };
        let log10_effective = |sigma0: f64| effective_sigma_m_cm2_g(&cross_section, sigma0).log10();
        let galaxies: f64 = match self.treatment {
            Treatment::Marginal => self
                .galaxies
                .iter()
                .map(|g| {
                    g.scattered_marginal_log_density(
                        log10_effective(g.median_sigma0_kms),
                        scatter_dex,
                    )
                })
                .sum(),
            Treatment::Joint => {
                let table: Vec<f64> = self
                    .ln_sigma0_nodes
                    .iter()
                    .map(|&x| log10_effective(x.exp()))
                    .collect();
                let nodes = &self.ln_sigma0_nodes;
                let interpolate = |sigma0: f64| -> f64 {
                    let x = sigma0.ln();
                    // One node, or every sample at one σ0: the table is one value.
                    if nodes.len() < 2 || nodes[1] <= nodes[0] {
                        return table.first().copied().unwrap_or(f64::NAN);
                    }
                    let step = nodes[1] - nodes[0];
                    let position = ((x - nodes[0]) / step).clamp(0.0, (nodes.len() - 1) as f64);
                    let below = (position.floor() as usize).min(nodes.len() - 2);
                    let w = position - below as f64;
                    table[below] * (1.0 - w) + table[below + 1] * w
                };
                self.galaxies
                    .iter()
                    .map(|g| g.joint_log_density(interpolate, scatter_dex))
                    .sum()
            }
        };
        let outside: f64 = self
            .constraints
            .iter()
            .map(|c| {
                let sigma0 = dispersion_from_mean_relative_speed_kms(c.v_rel_kms);
                constraint_log_likelihood(c, effective_sigma_m_cm2_g(&cross_section, sigma0))
            })
            .sum();
        let total = galaxies + outside;
        if total.is_nan() {
            f64::NEG_INFINITY
        } else {
            total
        }
    }
}

/// Flat priors on the log10 coordinates within their bounds; the likelihood of the galaxies and
/// constraints (for the evidence by tempering).
impl crate::tempering::SplitDensity for PopulationLikelihood<'_> {
    fn dim(&self) -> usize {
        self.parameters.len()
    }

    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        if !self.in_bounds(theta) {
            return (f64::NEG_INFINITY, f64::NEG_INFINITY);
        }
        (0.0, self.log_likelihood(theta))
    }
}

impl LogDensity for PopulationLikelihood<'_> {
    fn dim(&self) -> usize {
        self.parameters.len()
    }

    fn log_density(&self, theta: &[f64], _derived: &mut [f64]) -> f64 {
        self.log_likelihood(theta)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    /// A galaxy whose 800 log10 σ/m samples are drawn from N(`centre`, `width`).
    fn gaussian_galaxy(centre: f64, width: f64) -> GalaxyPosterior {
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(5);
        let normal = Normal::new(centre, width).expect("valid");
        let samples: Vec<f64> = (0..800).map(|_| normal.sample(&mut rng)).collect();
        GalaxyPosterior::from_samples("G", &[30.0; 800], &samples, (-2.0, 2.0), 800)
            .expect("valid posterior")
    }

    #[test]
    fn the_galaxy_summaries_use_every_sample_not_the_thinned_ones() {
        // 5000 samples thinned to 600 for the likelihood; the reported intervals are those of
        // all 5000, as the galaxy's own fit reports them.
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(9);
        let normal = Normal::new(0.3, 0.6).expect("valid");
        let log_sigma_m: Vec<f64> = (0..5000).map(|_| normal.sample(&mut rng)).collect();
        let sigma0: Vec<f64> = (0..5000).map(|i| 20.0 + f64::from(i % 50)).collect();
        let galaxy = GalaxyPosterior::from_samples("G", &sigma0, &log_sigma_m, (-2.0, 2.0), 600)
            .expect("valid posterior");
        assert!(galaxy.log10_sigma_m.len() <= 600);
        let all = interval(log_sigma_m.iter().map(|y| 10f64.powf(*y))).expect("an interval");
        assert_eq!(galaxy.sigma_m_cm2_g(), Some(all));
        let speeds = interval(sigma0.iter().map(|&s| mean_relative_speed_kms(s)));
        assert_eq!(galaxy.v_rel_kms(), speeds);
    }

    #[test]
    fn scatter_widens_the_kernel_as_the_convolution_integral_does() {
        // ∫ f_h(y') N(y'; y, τ²) dy' by midpoint quadrature, f_h the galaxy's kernel density:
        // the widened kernel must equal it (Gaussian ⊗ Gaussian; away from the lower bound).
        let galaxy = gaussian_galaxy(0.4, 0.3);
        let tau = 0.35;
        for y in [-0.5, 0.1, 0.4, 1.2] {
            let (a, b, n) = (y - 8.0 * tau, y + 8.0 * tau, 4000);
            let step = (b - a) / f64::from(n);
            let integral: f64 = (0..n)
                .map(|i| {
                    let x = a + step * (f64::from(i) + 0.5);
                    let normal = (-0.5 * ((x - y) / tau).powi(2)).exp() / (tau * SQRT_TWO_PI);
                    galaxy.direct_log_density(x).exp() * normal * step
                })
                .sum();
            let widened = galaxy.scattered_marginal_log_density(y, tau);
            assert!(
                (widened - integral.ln()).abs() < 1e-3,
                "y {y}: widened {widened}, quadrature {}",
                integral.ln()
            );
        }
        // No scatter: the tabulated density.
        assert_eq!(
            galaxy.scattered_marginal_log_density(0.3, 0.0).to_bits(),
            galaxy.marginal_log_density(0.3).to_bits()
        );
    }

    #[test]
    fn the_scatter_coordinate_comes_last_and_enters_the_likelihood() {
        let galaxies = [gaussian_galaxy(0.0, 0.2), gaussian_galaxy(1.0, 0.2)];
        let plain = PopulationLikelihood::new(
            VelocityModel::Constant,
            Treatment::Joint,
            10.0,
            &galaxies,
            &[],
        );
        let scattered = PopulationLikelihood::new(
            VelocityModel::Constant,
            Treatment::Joint,
            10.0,
            &galaxies,
            &[],
        )
        .with_scatter(true);
        assert_eq!(scattered.parameters().len(), 2);
        assert_eq!(scattered.parameters()[1], SCATTER_PARAMETER);
        // Two galaxies 1 dex apart: a constant at 0.5 with 0.5 dex of scatter beats none, and
        // the smallest scatter reproduces the plain likelihood closely.
        let at = |tau: f64| scattered.log_likelihood(&[0.5, tau.log10()]);
        assert!(at(0.5) > plain.log_likelihood(&[0.5]) + 1.0);
        assert!((at(0.01) - plain.log_likelihood(&[0.5])).abs() < 0.05);
        assert!(
            scattered
                .log_likelihood(&[0.5, SCATTER_PARAMETER.upper + 0.1])
                .is_infinite()
        );
    }
}
