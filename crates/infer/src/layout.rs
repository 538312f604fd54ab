//! One layout per model: which parameters a sampler sees, in which coordinates, within which
//! bounds, under which prior.
//!
//! A [`ParamSpec`] joins a [`ParamId`] (what the parameter is: key, label, unit) to its sampling
//! transform, bounds and prior; a [`Layout`] is the ordered list of specs of one galaxy's
//! posterior (the halo family's parameters first, then the nuisances) plus any parameters held
//! fixed. Everything that maps θ to values, values to θ, draws from the prior, names chain
//! columns or labels axes asks the layout; nothing else matches a parameter by name or position.
//!
//! ```
//! use caldera_infer::layout::{Layout, ParamSpec, Prior};
//! use caldera_physics::{ParamId, ParamValues, Transform};
//!
//! let layout = Layout::new(
//!     vec![
//!         ParamSpec::uniform(ParamId::V200, Transform::Log10, (1.0, 2.7)),
//!         ParamSpec::uniform(ParamId::C200, Transform::Log10, (0.0, 1.7)),
//!     ],
//!     2,
//!     ParamValues::default(),
//! );
//! assert_eq!(layout.index_of(ParamId::C200), Some(1));
//! assert_eq!(layout.columns(), ["log10_v200_kms", "log10_c200"]);
//! let theta = layout.theta_from_values(&ParamValues::from_pairs([(ParamId::V200, 100.0)]));
//! assert!((theta[0] - 2.0).abs() < 1e-12);
//! assert!(matches!(layout.specs()[0].prior, Prior::Uniform));
//! ```

use caldera_physics::{ParamId, ParamValues, Transform};
use rand::RngExt;
use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::{Deserialize, Serialize};

use crate::priors::ln_normal;

/// The prior of one sampled coordinate (uniform within the bounds, or normal truncated to them).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum Prior {
    Uniform,
    Normal { mean: f64, sd: f64 },
}

/// One sampled parameter: what it is, its coordinate, bounds (in that coordinate) and prior.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ParamSpec {
    pub id: ParamId,
    pub transform: Transform,
    pub lower: f64,
    pub upper: f64,
    pub prior: Prior,
}

impl ParamSpec {
    /// A parameter uniform within `(lower, upper)` in its sampled coordinate.
    #[must_use]
    pub fn uniform(id: ParamId, transform: Transform, (lower, upper): (f64, f64)) -> Self {
        Self {
            id,
            transform,
            lower,
            upper,
            prior: Prior::Uniform,
        }
    }

    /// A parameter normal in its sampled coordinate, truncated to `(lower, upper)`.
    #[must_use]
    pub fn normal(
        id: ParamId,
        transform: Transform,
        (lower, upper): (f64, f64),
        mean: f64,
        sd: f64,
    ) -> Self {
        Self {
            id,
            transform,
            lower,
            upper,
            prior: Prior::Normal { mean, sd },
        }
    }

    /// The physical value of a sampled coordinate.
    #[must_use]
    pub fn physical(&self, coordinate: f64) -> f64 {
        self.transform.to_value(coordinate)
    }

    /// The sampled coordinate of a physical value.
    #[must_use]
    pub fn coordinate(&self, value: f64) -> f64 {
        self.transform.to_coordinate(value)
    }

    /// The chain column of this coordinate (`log10_sigma_m_cm2_g`).
    #[must_use]
    pub fn column(&self) -> String {
        self.id.column(self.transform)
    }

    /// The label of this coordinate for people (`log σ/m [cm²/g]`).
    #[must_use]
    pub fn label(&self) -> String {
        self.id.coordinate_label(self.transform)
    }

    /// The prior's centre: the normal's mean, or the middle of the bounds.
    #[must_use]
    pub fn centre(&self) -> f64 {
        match self.prior {
            Prior::Uniform => 0.5 * (self.lower + self.upper),
            Prior::Normal { mean, .. } => mean,
        }
    }

    /// ln of the prior density up to a constant (zero for a uniform prior inside its bounds).
    #[must_use]
    pub fn ln_prior(&self, coordinate: f64) -> f64 {
        match self.prior {
            Prior::Uniform => 0.0,
            Prior::Normal { mean, sd } => ln_normal(coordinate, mean, sd),
        }
    }

    /// One draw from the prior (untruncated for a normal; the caller checks the bounds).
    pub fn draw(&self, rng: &mut Xoshiro256PlusPlus) -> f64 {
        match self.prior {
            Prior::Uniform => self.lower + (self.upper - self.lower) * rng.random::<f64>(),
            Prior::Normal { mean, sd } => {
                let z: f64 = StandardNormal.sample(rng);
                mean + sd * z
            }
        }
    }

    /// True when `coordinate` is finite and within the bounds.
    #[must_use]
    pub fn contains(&self, coordinate: f64) -> bool {
        coordinate.is_finite() && coordinate >= self.lower && coordinate <= self.upper
    }
}

/// The ordered parameters of one posterior: the halo family's first, then the nuisances, and the
/// values of parameters held fixed.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    specs: Vec<ParamSpec>,
    halo_len: usize,
    fixed: ParamValues,
}

impl Layout {
    /// A layout of `specs`, the first `halo_len` describing the halo, with `fixed` values for
    /// parameters that are not sampled.
    #[must_use]
    pub fn new(specs: Vec<ParamSpec>, halo_len: usize, fixed: ParamValues) -> Self {
        Self {
            halo_len: halo_len.min(specs.len()),
            specs,
            fixed,
        }
    }

    /// Every sampled parameter, in θ order.
    #[must_use]
    pub fn specs(&self) -> &[ParamSpec] {
        &self.specs
    }

    /// The halo's sampled parameters (the first ones).
    #[must_use]
    pub fn halo_specs(&self) -> &[ParamSpec] {
        &self.specs[..self.halo_len]
    }

    /// Number of sampled parameters.
    #[must_use]
    pub fn len(&self) -> usize {
        self.specs.len()
    }

    /// True when nothing is sampled.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.specs.is_empty()
    }

    /// Values held fixed (not sampled).
    #[must_use]
    pub fn fixed(&self) -> &ParamValues {
        &self.fixed
    }

    /// Where `id` sits in θ.
    #[must_use]
    pub fn index_of(&self, id: ParamId) -> Option<usize> {
        self.specs.iter().position(|s| s.id == id)
    }

    /// The spec of `id`, when sampled.
    #[must_use]
    pub fn spec(&self, id: ParamId) -> Option<&ParamSpec> {
        self.specs.iter().find(|s| s.id == id)
    }

    /// Physical values at θ, with the fixed values.
    #[must_use]
    pub fn values(&self, theta: &[f64]) -> ParamValues {
        let mut values = self.fixed;
        for (spec, &x) in self.specs.iter().zip(theta) {
            values.set(spec.id, spec.physical(x));
        }
        values
    }

    /// θ from physical values; parameters without a value sit at their prior's centre.
    #[must_use]
    pub fn theta_from_values(&self, values: &ParamValues) -> Vec<f64> {
        self.specs
            .iter()
            .map(|s| {
                values
                    .get(s.id)
                    .map_or_else(|| s.centre(), |v| s.coordinate(v))
            })
            .collect()
    }

    /// The centre of every prior.
    #[must_use]
    pub fn centre(&self) -> Vec<f64> {
        self.specs.iter().map(ParamSpec::centre).collect()
    }

    /// True when θ has the right length and every coordinate lies within its bounds.
    #[must_use]
    pub fn in_bounds(&self, theta: &[f64]) -> bool {
        theta.len() == self.specs.len() && self.specs.iter().zip(theta).all(|(s, &x)| s.contains(x))
    }

    /// Sum of the coordinates' ln prior densities (constants dropped).
    #[must_use]
    pub fn ln_prior(&self, theta: &[f64]) -> f64 {
        // Uniform priors add exactly zero, so the sum equals that of the normal priors alone.
        self.specs
            .iter()
            .zip(theta)
            .map(|(spec, &x)| spec.ln_prior(x))
            .sum()
    }

    /// One draw of every coordinate from its prior (may fall outside the bounds of a normal).
    pub fn draw(&self, rng: &mut Xoshiro256PlusPlus) -> Vec<f64> {
        self.specs.iter().map(|s| s.draw(rng)).collect()
    }

    /// (lower, upper) of every coordinate.
    #[must_use]
    pub fn bounds(&self) -> Vec<(f64, f64)> {
        self.specs.iter().map(|s| (s.lower, s.upper)).collect()
    }

    /// The chain columns of θ, in order.
    #[must_use]
    pub fn columns(&self) -> Vec<String> {
        self.specs.iter().map(ParamSpec::column).collect()
    }

    /// The labels of θ's coordinates for people, in order.
    #[must_use]
    pub fn labels(&self) -> Vec<String> {
        self.specs.iter().map(ParamSpec::label).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    fn layout() -> Layout {
        Layout::new(
            vec![
                ParamSpec::uniform(ParamId::Rho0, Transform::Log10, (5.0, 11.0)),
                ParamSpec::uniform(ParamId::SigmaM, Transform::Linear, (0.01, 100.0)),
                ParamSpec::normal(
                    ParamId::UpsilonDisk,
                    Transform::Log10,
                    (-0.8, 0.2),
                    -0.3,
                    0.1,
                ),
            ],
            2,
            ParamValues::from_pairs([(ParamId::EinastoAlpha, 0.17)]),
        )
    }

    #[test]
    fn values_and_theta_round_trip() {
        let l = layout();
        let theta = vec![8.0, 3.5, -0.2];
        let values = l.values(&theta);
        assert!((values.get(ParamId::Rho0).expect("rho0") - 1e8).abs() < 1e-4);
        assert_eq!(values.get(ParamId::EinastoAlpha), Some(0.17));
        let back = l.theta_from_values(&values);
        for (a, b) in theta.iter().zip(&back) {
            assert!((a - b).abs() < 1e-12);
        }
        assert_eq!(l.halo_specs().len(), 2);
        assert_eq!(l.index_of(ParamId::UpsilonDisk), Some(2));
        assert_eq!(l.index_of(ParamId::Distance), None);
    }

    #[test]
    fn prior_draws_follow_the_specs() {
        // Seeded: 20,000 draws; uniform mean within 0.02 of the middle, normal mean within 0.005
        // and spread within 3% of the stated values.
        let l = layout();
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        let n = 20_000;
        let draws: Vec<Vec<f64>> = (0..n).map(|_| l.draw(&mut rng)).collect();
        let mean = |k: usize| draws.iter().map(|d| d[k]).sum::<f64>() / f64::from(n);
        assert!((mean(0) - 8.0).abs() < 0.02 * 6.0);
        assert!(draws.iter().all(|d| (5.0..=11.0).contains(&d[0])));
        let m2 = mean(2);
        assert!((m2 + 0.3).abs() < 0.005);
        let sd = (draws.iter().map(|d| (d[2] - m2).powi(2)).sum::<f64>() / f64::from(n)).sqrt();
        assert!((sd - 0.1).abs() < 0.003);
    }

    #[test]
    fn bounds_and_priors() {
        let l = layout();
        assert!(l.in_bounds(&[8.0, 3.5, -0.2]));
        assert!(!l.in_bounds(&[4.0, 3.5, -0.2]));
        assert!(!l.in_bounds(&[8.0, 3.5]));
        // Only the normal prior contributes.
        let expected = ln_normal(-0.2, -0.3, 0.1);
        assert!((l.ln_prior(&[8.0, 3.5, -0.2]) - expected).abs() < 1e-14);
        assert_eq!(l.columns()[1], "sigma_m_cm2_g");
        assert_eq!(l.labels()[0], "log ρ0 [Msun/kpc³]");
    }
}
