//! The population view's model, with no UI in it: a particle model drawn over the data, its
//! curves, and the SIDM posteriors a population fit would use.

use caldera_infer::population::{GalaxyPosterior, VelocityModel, effective_sigma_m_cm2_g};
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::{CrossSection, PhysicsError};

/// A particle model chosen in the population view: its kind and the log10 of each parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct ParticleModel {
    pub kind: VelocityModel,
    pub log10_values: Vec<f64>,
}

impl ParticleModel {
    /// The model of this kind at its default parameters.
    #[must_use]
    pub fn new(kind: VelocityModel) -> Self {
        Self {
            kind,
            log10_values: kind
                .parameters()
                .iter()
                .map(|p| p.default.log10())
                .collect(),
        }
    }

    /// The cross-section, or why the parameters are refused.
    pub fn cross_section(&self) -> Result<CrossSection, PhysicsError> {
        let values: Vec<f64> = self.log10_values.iter().map(|x| 10f64.powf(*x)).collect();
        self.kind.build(&values)
    }
}

impl Default for ParticleModel {
    /// The fall-off at its defaults: it lies over the demo data, and unlike a Yukawa that
    /// would (α m_χ / m_φ > 1) it is not outside its own regime of validity.
    fn default() -> Self {
        Self::new(VelocityModel::FallOff)
    }
}

/// Mean relative speeds (km/s) at which curves are drawn.
#[must_use]
pub fn curve_speeds() -> Vec<f64> {
    (0..=80)
        .map(|i| 10f64.powf(0.5 + 3.0 * f64::from(i) / 80.0))
        .collect()
}

/// A curve of (speed km/s, σ/m cm²/g) points.
pub type SpeedCurve = Vec<(f64, f64)>;

/// A cross-section's curves in physical units, (speed km/s, σ/m cm²/g): (unaveraged σ(v)/m at
/// v, velocity-averaged <σv>/m / <v_rel> at <v_rel>), for exported figures.
#[must_use]
pub fn linear_curves(cross_section: &CrossSection) -> (SpeedCurve, SpeedCurve) {
    let mut unaveraged = Vec::new();
    let mut averaged = Vec::new();
    for v in curve_speeds() {
        let sigma0 = dispersion_from_mean_relative_speed_kms(v);
        unaveraged.push((v, cross_section.sigma_m_cm2_g(v)));
        averaged.push((v, effective_sigma_m_cm2_g(cross_section, sigma0)));
    }
    (unaveraged, averaged)
}

/// A cross-section's curves in log10 plot coordinates: (unaveraged σ(v)/m at v, velocity-averaged
/// <σv>/m / <v_rel> at <v_rel>); non-positive values are left out.
#[must_use]
pub fn log_curves(cross_section: &CrossSection) -> (Vec<[f64; 2]>, Vec<[f64; 2]>) {
    let logs = |points: Vec<(f64, f64)>| -> Vec<[f64; 2]> {
        points
            .into_iter()
            .filter(|(_, s)| *s > 0.0)
            .map(|(v, s)| [v.log10(), s.log10()])
            .collect()
    };
    let (unaveraged, averaged) = linear_curves(cross_section);
    (logs(unaveraged), logs(averaged))
}

/// The SIDM posteriors the population fit would use, cached until the fits in memory or the
/// run folder's posteriors change.
pub struct PopulationInputs {
    pub(crate) key: (Vec<(String, usize)>, usize),
    pub posteriors: Vec<GalaxyPosterior>,
    /// Whether each posterior's chain met the convergence rule (same order).
    pub converged: Vec<bool>,
    pub problems: Vec<String>,
}
