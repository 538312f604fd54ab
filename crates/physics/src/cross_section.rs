//! Self-interaction cross-sections per mass and their Maxwellian averages.

use crate::PhysicsError;
use crate::error::{require_non_negative, require_positive};
use crate::roots::brent;
use crate::units::{
    CM2_PER_MB, GRAM_PER_GEV, HBAR_C_SQUARED_MB_GEV2, SPEED_OF_LIGHT_KMS,
    cm2_per_g_to_kpc2_per_msun, gyr_to_kpc_per_kms,
};

/// Mean relative speed of two particles drawn from a Maxwellian with 1D dispersion σ0:
/// ⟨v_rel⟩ = 4σ0/√π, km/s.
#[must_use]
pub fn mean_relative_speed_kms(sigma0_kms: f64) -> f64 {
    4.0 * sigma0_kms / std::f64::consts::PI.sqrt()
}

/// The 1D dispersion σ0 whose Maxwellian has mean relative speed `v_rel_kms`: the inverse of
/// [`mean_relative_speed_kms`], σ0 = ⟨v_rel⟩ √π / 4, km/s.
#[must_use]
pub fn dispersion_from_mean_relative_speed_kms(v_rel_kms: f64) -> f64 {
    v_rel_kms * std::f64::consts::PI.sqrt() / 4.0
}

/// MeV in GeV.
#[must_use]
pub fn mev_to_gev(mass_mev: f64) -> f64 {
    mass_mev * 1e-3
}

/// The kinds of σ(v)/m model, each described once: its parameters (key, symbol, unit, default
/// log10 bounds and default value) and one constructor from values
/// ([`CrossSectionKind::build`]). The command line's `--particle kind:key=value,...`, the app's
/// particle panel and the population fits all read this description.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize, serde::Deserialize,
)]
#[serde(rename_all = "kebab-case")]
pub enum CrossSectionKind {
    Constant,
    FallOff,
    Yukawa,
    Resonance,
}

/// One parameter of a cross-section model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrossSectionParam {
    /// Machine key (`--particle`, JSON), e.g. `m_phi`.
    pub key: &'static str,
    /// Symbol for people, e.g. `m_φ`.
    pub symbol: &'static str,
    /// Unit for people (empty when dimensionless).
    pub unit: &'static str,
    /// Default bounds of log10 of the value: the population fits' uniform prior and the app's
    /// slider range (common practice: wide enough to span dwarfs to clusters; chosen here, not
    /// taken from a publication).
    pub log10_bounds: (f64, f64),
    /// Default value.
    pub default: f64,
    /// Held at its default in population fits (the Yukawa dark-matter mass: in the Born regime
    /// σ_T/m depends on (α, m_χ, m_φ) through two combinations only).
    pub held_in_population_fits: bool,
}

impl CrossSectionParam {
    /// "symbol [unit]", or the symbol alone.
    #[must_use]
    pub fn label(&self) -> String {
        if self.unit.is_empty() {
            self.symbol.to_string()
        } else {
            format!("{} [{}]", self.symbol, self.unit)
        }
    }
}

const fn xs_param(
    key: &'static str,
    symbol: &'static str,
    unit: &'static str,
    log10_bounds: (f64, f64),
    default: f64,
) -> CrossSectionParam {
    CrossSectionParam {
        key,
        symbol,
        unit,
        log10_bounds,
        default,
        held_in_population_fits: false,
    }
}

/// The Yukawa dark-matter mass held in population fits unless the user says otherwise, GeV.
pub const DEFAULT_YUKAWA_DM_MASS_GEV: f64 = 10.0;

const CONSTANT_PARAMS: [CrossSectionParam; 1] =
    [xs_param("sigma_m", "σ/m", "cm²/g", (-3.0, 3.0), 1.0)];
const FALL_OFF_PARAMS: [CrossSectionParam; 2] = [
    xs_param("sigma0_m", "σ0/m", "cm²/g", (-2.0, 4.0), 10.0),
    xs_param("w", "w", "km/s", (0.5, 4.0), 200.0),
];
const YUKAWA_PARAMS: [CrossSectionParam; 3] = [
    // Defaults inside the Born regime (α m_χ / m_φ ≈ 0.08).
    xs_param("alpha", "α", "", (-9.0, -1.0), 1e-5),
    xs_param("m_phi", "m_φ", "MeV", (-2.0, 3.0), 1.2),
    CrossSectionParam {
        held_in_population_fits: true,
        ..xs_param(
            "m_chi",
            "m_χ",
            "GeV",
            (-1.0, 3.0),
            DEFAULT_YUKAWA_DM_MASS_GEV,
        )
    },
];
const RESONANCE_PARAMS: [CrossSectionParam; 4] = [
    xs_param("m_chi", "m_χ", "GeV", (-1.0, 3.0), 20.0),
    xs_param("delta", "δ", "", (-10.0, -5.0), 1e-8),
    xs_param("gamma", "γ", "", (-7.0, -1.0), 1e-4),
    xs_param("background", "background", "cm²/g", (-3.0, 2.0), 0.3),
];

impl CrossSectionKind {
    /// Every kind, in the order outputs list them.
    pub const ALL: [Self; 4] = [Self::Constant, Self::FallOff, Self::Yukawa, Self::Resonance];

    /// The name on the command line and in outputs.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::Constant => "constant",
            Self::FallOff => "fall-off",
            Self::Yukawa => "yukawa",
            Self::Resonance => "resonance",
        }
    }

    /// The kind called `name`.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|k| k.name() == name.trim())
    }

    /// A one-line formula for legends and reports.
    #[must_use]
    pub fn formula(self) -> &'static str {
        match self {
            Self::Constant => "σ/m",
            Self::FallOff => "σ0/m (1 + v²/w²)⁻²",
            Self::Yukawa => "Yukawa Born σ_T/m (α, m_φ, m_χ)",
            Self::Resonance => "s-wave resonance (m_χ, δ, γ) + background",
        }
    }

    /// The parameters, in the order [`CrossSectionKind::build`] takes their values.
    #[must_use]
    pub fn parameters(self) -> &'static [CrossSectionParam] {
        match self {
            Self::Constant => &CONSTANT_PARAMS,
            Self::FallOff => &FALL_OFF_PARAMS,
            Self::Yukawa => &YUKAWA_PARAMS,
            Self::Resonance => &RESONANCE_PARAMS,
        }
    }

    /// The default values, in [`CrossSectionKind::parameters`] order.
    #[must_use]
    pub fn defaults(self) -> Vec<f64> {
        self.parameters().iter().map(|p| p.default).collect()
    }

    /// The cross-section from physical values in [`CrossSectionKind::parameters`] order.
    pub fn build(self, values: &[f64]) -> Result<CrossSection, PhysicsError> {
        let expected = self.parameters().len();
        if values.len() != expected {
            return Err(PhysicsError::InvalidTable(format!(
                "the {} cross-section takes {expected} values, got {}",
                self.name(),
                values.len()
            )));
        }
        let v = |k: usize| values[k];
        match self {
            Self::Constant => CrossSection::constant(v(0)),
            Self::FallOff => CrossSection::fall_off(v(0), v(1)),
            Self::Yukawa => CrossSection::yukawa(v(2), v(1), v(0)),
            Self::Resonance => CrossSection::resonance(v(0), v(1), v(2), v(3)),
        }
    }
}

/// A dark-matter self-interaction cross-section per unit mass, σ(v)/m, as a function of the
/// relative speed v of the colliding pair.
///
/// Every caller goes through [`CrossSection::sigma_v_over_m`]: the Maxwellian average ⟨σ v⟩/m at
/// the core's 1D dispersion σ0, which is what the rate condition of the SIDM halo uses.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[non_exhaustive]
pub enum CrossSection {
    /// σ/m independent of velocity, cm²/g.
    Constant { sigma_m_cm2_g: f64 },
    /// A light-mediator-like fall-off, σ(v)/m = σ0/m · (1 + v²/w²)⁻² (common practice
    /// parametrisation), with σ0/m in cm²/g and w in km/s.
    FallOff { sigma0_cm2_g: f64, w_kms: f64 },
    /// Yukawa potential in the Born regime, transfer cross-section (Feng, Kaplinghat & Yu 2010;
    /// Tulin, Yu & Zurek 2013): σ_T = (8πα²/(m² v⁴)) [ln(1+R²) − R²/(1+R²)], R = m v / m_φ, v
    /// in units of c; valid for α m / m_φ ≪ 1. Dark-matter mass in GeV, mediator mass in MeV.
    Yukawa {
        dm_mass_gev: f64,
        mediator_mass_mev: f64,
        alpha: f64,
    },
    /// An s-wave Breit–Wigner resonance (the idea of resonant SIDM, Chu, Garcia-Cely & Murayama
    /// 2019; textbook non-relativistic form) plus a constant background:
    /// σ = 64πγ² / (m² [(v² − v_R²)² + 4γ² v²]) + σ_bg, with a state of mass m_R = 2m(1 + δ), so
    /// E_R = 2δm and v_R = 2√(2δ) (v in units of c; this δ convention), elastic width Γ = γ m v.
    /// The factor 2 for identical bosons is not included. Dark-matter mass in GeV, background
    /// in cm²/g.
    Resonance {
        dm_mass_gev: f64,
        delta: f64,
        gamma: f64,
        background_cm2_g: f64,
    },
}

/// Natural-unit cross-section (GeV⁻²) per dark-matter mass (GeV) in cm²/g.
fn natural_per_mass_to_cm2_g(sigma_gev2: f64, mass_gev: f64) -> f64 {
    sigma_gev2 * HBAR_C_SQUARED_MB_GEV2 * CM2_PER_MB / (mass_gev * GRAM_PER_GEV)
}

impl CrossSection {
    /// Its kind.
    #[must_use]
    pub fn kind(&self) -> CrossSectionKind {
        match self {
            Self::Constant { .. } => CrossSectionKind::Constant,
            Self::FallOff { .. } => CrossSectionKind::FallOff,
            Self::Yukawa { .. } => CrossSectionKind::Yukawa,
            Self::Resonance { .. } => CrossSectionKind::Resonance,
        }
    }

    /// Its physical values in [`CrossSectionKind::parameters`] order (the inverse of
    /// [`CrossSectionKind::build`]).
    #[must_use]
    pub fn values(&self) -> Vec<f64> {
        match *self {
            Self::Constant { sigma_m_cm2_g } => vec![sigma_m_cm2_g],
            Self::FallOff {
                sigma0_cm2_g,
                w_kms,
            } => vec![sigma0_cm2_g, w_kms],
            Self::Yukawa {
                dm_mass_gev,
                mediator_mass_mev,
                alpha,
            } => vec![alpha, mediator_mass_mev, dm_mass_gev],
            Self::Resonance {
                dm_mass_gev,
                delta,
                gamma,
                background_cm2_g,
            } => vec![dm_mass_gev, delta, gamma, background_cm2_g],
        }
    }

    /// A velocity-independent cross-section per mass (cm²/g, ≥ 0).
    pub fn constant(sigma_m_cm2_g: f64) -> Result<Self, PhysicsError> {
        Ok(Self::Constant {
            sigma_m_cm2_g: require_non_negative("sigma/m [cm2/g]", sigma_m_cm2_g)?,
        })
    }

    /// σ(v)/m = σ0/m (1 + v²/w²)⁻² (σ0/m in cm²/g ≥ 0, w in km/s > 0).
    pub fn fall_off(sigma0_cm2_g: f64, w_kms: f64) -> Result<Self, PhysicsError> {
        Ok(Self::FallOff {
            sigma0_cm2_g: require_non_negative("sigma0/m [cm2/g]", sigma0_cm2_g)?,
            w_kms: require_positive("turnover velocity w [km/s]", w_kms)?,
        })
    }

    /// The Born-regime Yukawa transfer cross-section (masses in GeV and MeV, coupling α).
    pub fn yukawa(
        dm_mass_gev: f64,
        mediator_mass_mev: f64,
        alpha: f64,
    ) -> Result<Self, PhysicsError> {
        Ok(Self::Yukawa {
            dm_mass_gev: require_positive("dark-matter mass [GeV]", dm_mass_gev)?,
            mediator_mass_mev: require_positive("mediator mass [MeV]", mediator_mass_mev)?,
            alpha: require_non_negative("coupling alpha", alpha)?,
        })
    }

    /// An s-wave resonance (dark-matter mass in GeV, fractional mass offset δ, width parameter
    /// γ, background in cm²/g).
    pub fn resonance(
        dm_mass_gev: f64,
        delta: f64,
        gamma: f64,
        background_cm2_g: f64,
    ) -> Result<Self, PhysicsError> {
        Ok(Self::Resonance {
            dm_mass_gev: require_positive("dark-matter mass [GeV]", dm_mass_gev)?,
            delta: require_positive("resonance mass offset delta", delta)?,
            gamma: require_positive("resonance width gamma", gamma)?,
            background_cm2_g: require_non_negative("background sigma/m [cm2/g]", background_cm2_g)?,
        })
    }

    /// For the Yukawa model, the Born parameter α m_χ / m_φ; the Born approximation needs it
    /// ≪ 1 (Feng, Kaplinghat & Yu 2010; Tulin, Yu & Zurek 2013). None for other models.
    #[must_use]
    pub fn born_parameter(&self) -> Option<f64> {
        match *self {
            Self::Yukawa {
                dm_mass_gev,
                mediator_mass_mev,
                alpha,
            } => Some(alpha * dm_mass_gev / mev_to_gev(mediator_mass_mev)),
            _ => None,
        }
    }

    /// σ(v)/m at relative speed `v_kms`, cm²/g.
    #[must_use]
    pub fn sigma_m_cm2_g(&self, v_kms: f64) -> f64 {
        match *self {
            Self::Constant { sigma_m_cm2_g } => sigma_m_cm2_g,
            Self::FallOff {
                sigma0_cm2_g,
                w_kms,
            } => {
                let s = 1.0 + (v_kms / w_kms).powi(2);
                sigma0_cm2_g / (s * s)
            }
            Self::Yukawa {
                dm_mass_gev,
                mediator_mass_mev,
                alpha,
            } => {
                let mediator_gev = mev_to_gev(mediator_mass_mev);
                let v = v_kms / SPEED_OF_LIGHT_KMS;
                let r = dm_mass_gev * v / mediator_gev;
                let r2 = r * r;
                // σ_T / (4πα² m² / m_φ⁴) = 2 [ln(1+R²) − R²/(1+R²)] / R⁴, by its series at small R.
                let shape = if r2 < 1e-3 {
                    1.0 - 4.0 / 3.0 * r2 + 1.5 * r2 * r2
                } else {
                    2.0 * (r2.ln_1p() - r2 / (1.0 + r2)) / (r2 * r2)
                };
                let sigma_gev2 =
                    4.0 * std::f64::consts::PI * alpha * alpha * dm_mass_gev * dm_mass_gev
                        / mediator_gev.powi(4)
                        * shape;
                natural_per_mass_to_cm2_g(sigma_gev2, dm_mass_gev)
            }
            Self::Resonance {
                dm_mass_gev,
                delta,
                gamma,
                background_cm2_g,
            } => {
                let v = v_kms / SPEED_OF_LIGHT_KMS;
                let v_r2 = 8.0 * delta;
                let denominator = (v * v - v_r2).powi(2) + 4.0 * gamma * gamma * v * v;
                let sigma_gev2 = 64.0 * std::f64::consts::PI * gamma * gamma
                    / (dm_mass_gev * dm_mass_gev * denominator);
                natural_per_mass_to_cm2_g(sigma_gev2, dm_mass_gev) + background_cm2_g
            }
        }
    }

    /// Resonance speed v_R = 2√(2δ) c in km/s, for the resonance model.
    #[must_use]
    pub fn resonance_speed_kms(&self) -> Option<f64> {
        match *self {
            Self::Resonance { delta, .. } => Some(2.0 * (2.0 * delta).sqrt() * SPEED_OF_LIGHT_KMS),
            _ => None,
        }
    }

    /// ⟨σ v_rel⟩/m averaged over a Maxwellian with 1D dispersion `sigma0_kms`, in cm²/g · km/s:
    /// ∫ σ(v) v f(v) dv with f(v) = v² e^{−v²/(4σ0²)} / (2√π σ0³); in x = v/(2σ0) this is
    /// (8σ0/√π) ∫₀^∞ σ(2σ0 x) x³ e^{−x²} dx. For a constant σ/m it is exactly (σ/m) · 4σ0/√π;
    /// otherwise 8-point Gauss–Legendre on a mesh graded towards the model's velocity scale
    /// (geometric panels down to 10⁻³ of the turnover or resonance speed, and panels halving in
    /// width towards the resonance peak). Agrees with the adaptive reference
    /// [`CrossSection::sigma_v_over_m_reference_cm2_g_kms`] to ~1e-9 and costs a few µs.
    #[must_use]
    pub fn sigma_v_over_m_cm2_g_kms(&self, sigma0_kms: f64) -> f64 {
        if let Self::Constant { sigma_m_cm2_g } = *self {
            return sigma_m_cm2_g * mean_relative_speed_kms(sigma0_kms);
        }
        let integrand =
            |x: f64| self.sigma_m_cm2_g(2.0 * sigma0_kms * x) * x * x * x * (-x * x).exp();
        let breaks = self.quadrature_mesh(sigma0_kms);
        let integral: f64 = breaks
            .windows(2)
            .map(|w| gauss_legendre_8(&integrand, w[0], w[1]))
            .sum();
        8.0 * sigma0_kms / std::f64::consts::PI.sqrt() * integral
    }

    /// The speed (km/s) at which σ(v)/m changes behaviour: w for the fall-off, m_φ c / m_χ for
    /// the Yukawa model, v_R for the resonance.
    fn velocity_scale_kms(&self) -> Option<f64> {
        match *self {
            Self::Constant { .. } => None,
            Self::FallOff { w_kms, .. } => Some(w_kms),
            Self::Yukawa {
                dm_mass_gev,
                mediator_mass_mev,
                ..
            } => Some(mev_to_gev(mediator_mass_mev) / dm_mass_gev * SPEED_OF_LIGHT_KMS),
            Self::Resonance { .. } => self.resonance_speed_kms(),
        }
    }

    /// Panel edges in x = v/(2σ0) for the Maxwellian average.
    fn quadrature_mesh(&self, sigma0_kms: f64) -> Vec<f64> {
        const UPPER: f64 = 6.5; // x³ e^{−x²} < 1e-16 beyond
        let scale_x = self
            .velocity_scale_kms()
            .map_or(1.0, |v| v / (2.0 * sigma0_kms));
        let mut breaks = vec![0.0];
        let mut x = (1e-3 * scale_x.min(1.0)).max(1e-300);
        while x < 0.5 {
            breaks.push(x);
            x *= 2.0;
        }
        breaks.extend((1..=13).map(|k| 0.5 * f64::from(k)));
        if let Self::Resonance { gamma, .. } = *self {
            // The peak's half-width in v is γ c.
            let width = gamma * SPEED_OF_LIGHT_KMS / (2.0 * sigma0_kms);
            if scale_x > 0.0 && scale_x < UPPER {
                breaks.push(scale_x);
                let mut step = 0.25 * width;
                while step < UPPER {
                    for edge in [scale_x - step, scale_x + step] {
                        if edge > 0.0 && edge < UPPER {
                            breaks.push(edge);
                        }
                    }
                    step *= 2.0;
                }
            }
        }
        breaks.sort_by(f64::total_cmp);
        breaks.dedup();
        breaks
    }

    /// The same average by adaptive Simpson quadrature to 1e-12 of the fast rule's value, with
    /// the breakpoints of the fast rule's mesh (slow; the reference the fast rule is tested
    /// against).
    #[must_use]
    pub fn sigma_v_over_m_reference_cm2_g_kms(&self, sigma0_kms: f64) -> f64 {
        if let Self::Constant { sigma_m_cm2_g } = *self {
            return sigma_m_cm2_g * mean_relative_speed_kms(sigma0_kms);
        }
        let integrand =
            |x: f64| self.sigma_m_cm2_g(2.0 * sigma0_kms * x) * x * x * x * (-x * x).exp();
        let mut breaks = self.quadrature_mesh(sigma0_kms);
        breaks.push(9.0); // e^{-81}: negligible beyond
        let scale = breaks
            .windows(2)
            .map(|w| gauss_legendre_8(&integrand, w[0], w[1]))
            .sum::<f64>()
            .abs()
            .max(f64::MIN_POSITIVE);
        let tolerance = 1e-12 * scale / breaks.len() as f64;
        let integral: f64 = breaks
            .windows(2)
            .map(|w| adaptive_simpson(&integrand, w[0], w[1], tolerance, 50))
            .sum();
        8.0 * sigma0_kms / std::f64::consts::PI.sqrt() * integral
    }

    /// ⟨σ v_rel⟩/m in the solver's units, kpc²/Msun · km/s.
    #[must_use]
    pub fn sigma_v_over_m(&self, sigma0_kms: f64) -> f64 {
        cm2_per_g_to_kpc2_per_msun(self.sigma_v_over_m_cm2_g_kms(sigma0_kms))
    }

    /// The density at which each particle has scattered once over `age_gyr`:
    /// ρ1 = 1 / (⟨σv⟩/m · t_age), Msun/kpc³ (Kaplinghat, Tulin & Yu 2016).
    #[must_use]
    pub fn rate_density_msun_kpc3(&self, sigma0_kms: f64, age_gyr: f64) -> f64 {
        1.0 / (self.sigma_v_over_m(sigma0_kms) * gyr_to_kpc_per_kms(age_gyr))
    }

    /// The dispersion σ0 at which the rate condition puts ρ1 = `rho1_msun_kpc3`, km/s. For a
    /// constant σ/m the relation is exact and unique; for a velocity-dependent one, ρ1·⟨σv⟩/m·t
    /// need not be monotone in σ0, and the lowest σ0 that satisfies it (between 0.01 and 10⁵ km/s)
    /// is returned.
    pub fn sigma0_for_rate_density_kms(
        &self,
        rho1_msun_kpc3: f64,
        age_gyr: f64,
    ) -> Result<f64, PhysicsError> {
        if let Self::Constant { sigma_m_cm2_g } = *self {
            require_positive("sigma/m [cm2/g]", sigma_m_cm2_g)?;
        }
        self.sigma0_roots_for_rate_density_kms(rho1_msun_kpc3, age_gyr, 1)
            .first()
            .copied()
            .ok_or_else(|| PhysicsError::NoSolution {
                reason: format!(
                    "no core dispersion between 0.01 and 1e5 km/s makes each particle scatter once at {rho1_msun_kpc3:.3e} Msun/kpc3"
                ),
            })
    }

    /// The lowest `most` dispersions σ0 (km/s, ascending, between 0.01 and 10⁵ km/s) at which
    /// the rate condition ρ1·⟨σv⟩/m(σ0)·t = 1 puts ρ1 = `rho1_msun_kpc3`: at most one for a
    /// constant σ/m; a velocity-dependent σ(v)/m whose ⟨σv⟩/m rises and then falls with σ0 can
    /// have two or more. Found by a scan of 120 steps in ln σ0 and Brent's method in each bracket.
    #[must_use]
    pub fn sigma0_roots_for_rate_density_kms(
        &self,
        rho1_msun_kpc3: f64,
        age_gyr: f64,
        most: usize,
    ) -> Vec<f64> {
        if let Self::Constant { sigma_m_cm2_g } = *self {
            if most == 0 || sigma_m_cm2_g <= 0.0 {
                return Vec::new();
            }
            let per_sigma0 = cm2_per_g_to_kpc2_per_msun(sigma_m_cm2_g)
                * mean_relative_speed_kms(1.0)
                * gyr_to_kpc_per_kms(age_gyr);
            return vec![1.0 / (per_sigma0 * rho1_msun_kpc3)];
        }
        let excess = |ln_sigma0: f64| -> f64 {
            (rho1_msun_kpc3 * self.sigma_v_over_m(ln_sigma0.exp()) * gyr_to_kpc_per_kms(age_gyr))
                .ln()
        };
        let (low, high) = ((0.01f64).ln(), (1e5f64).ln());
        let steps = 120;
        let mut roots = Vec::new();
        let mut previous = (low, excess(low));
        for k in 1..=steps {
            if roots.len() >= most {
                break;
            }
            let x = low + (high - low) * f64::from(k) / f64::from(steps);
            let here = (x, excess(x));
            if previous.1.is_finite()
                && here.1.is_finite()
                && (previous.1 < 0.0) != (here.1 < 0.0)
                && let Ok(root) = brent(
                    excess,
                    previous.0,
                    here.0,
                    1e-13,
                    "dispersion from the rate condition",
                )
            {
                roots.push(root.exp());
            }
            previous = here;
        }
        roots
    }

    /// True when the cross-section vanishes at every velocity (the collisionless limit).
    #[must_use]
    pub fn is_zero(&self) -> bool {
        match *self {
            Self::Constant { sigma_m_cm2_g } => sigma_m_cm2_g == 0.0,
            Self::FallOff { sigma0_cm2_g, .. } => sigma0_cm2_g == 0.0,
            Self::Yukawa { alpha, .. } => alpha == 0.0,
            Self::Resonance { .. } => false,
        }
    }
}

/// Nodes and weights of the 8-point Gauss–Legendre rule on [−1, 1] (Abramowitz & Stegun 1964,
/// table 25.4; written from memory and verified in the tests by exactness on polynomials up to
/// degree 15, which determines the rule).
const GAUSS_LEGENDRE_8: [(f64, f64); 4] = [
    (0.183_434_642_495_649_8, 0.362_683_783_378_362),
    (0.525_532_409_916_329, 0.313_706_645_877_887_3),
    (0.796_666_477_413_626_7, 0.222_381_034_453_374_5),
    (0.960_289_856_497_536_3, 0.101_228_536_290_376_3),
];

/// ∫ f over [a, b] by the 8-point Gauss–Legendre rule.
fn gauss_legendre_8(f: &dyn Fn(f64) -> f64, a: f64, b: f64) -> f64 {
    let (centre, half) = (0.5 * (a + b), 0.5 * (b - a));
    half * GAUSS_LEGENDRE_8
        .iter()
        .map(|&(x, w)| w * (f(centre - half * x) + f(centre + half * x)))
        .sum::<f64>()
}

/// Adaptive Simpson quadrature of `f` on [a, b] to absolute tolerance `tolerance`.
fn adaptive_simpson(f: &dyn Fn(f64) -> f64, a: f64, b: f64, tolerance: f64, depth: u32) -> f64 {
    fn simpson(f: &dyn Fn(f64) -> f64, a: f64, fa: f64, b: f64, fb: f64) -> (f64, f64, f64) {
        let m = 0.5 * (a + b);
        let fm = f(m);
        (m, fm, (b - a) / 6.0 * (fa + 4.0 * fm + fb))
    }
    fn recurse(
        f: &dyn Fn(f64) -> f64,
        (a, fa): (f64, f64),
        (b, fb): (f64, f64),
        (m, fm): (f64, f64),
        whole: f64,
        tolerance: f64,
        depth: u32,
    ) -> f64 {
        let (lm, flm, left) = simpson(f, a, fa, m, fm);
        let (rm, frm, right) = simpson(f, m, fm, b, fb);
        let delta = left + right - whole;
        if depth == 0 || delta.abs() <= 15.0 * tolerance {
            return left + right + delta / 15.0;
        }
        recurse(
            f,
            (a, fa),
            (m, fm),
            (lm, flm),
            left,
            0.5 * tolerance,
            depth - 1,
        ) + recurse(
            f,
            (m, fm),
            (b, fb),
            (rm, frm),
            right,
            0.5 * tolerance,
            depth - 1,
        )
    }
    let (fa, fb) = (f(a), f(b));
    let (m, fm, whole) = simpson(f, a, fa, b, fb);
    recurse(f, (a, fa), (b, fb), (m, fm), whole, tolerance, depth)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn values_and_kind_invert_build() {
        for kind in CrossSectionKind::ALL {
            let built = kind.build(&kind.defaults()).expect("defaults are valid");
            assert_eq!(built.kind(), kind);
            assert_eq!(built.values(), kind.defaults());
        }
    }

    #[test]
    fn gauss_legendre_rule_is_exact_to_degree_fifteen() {
        // An n-point Gauss rule integrates polynomials of degree ≤ 2n − 1 exactly; on [0, 1],
        // ∫ x^k dx = 1/(k + 1).
        for k in 0..=15 {
            let integral = gauss_legendre_8(&|x: f64| x.powi(k), 0.0, 1.0);
            assert_relative_eq!(integral, 1.0 / f64::from(k + 1), max_relative = 1e-14);
        }
    }

    #[test]
    fn fast_average_agrees_with_the_adaptive_reference() {
        let models = [
            CrossSection::fall_off(10.0, 100.0),
            CrossSection::fall_off(50.0, 3.0),
            CrossSection::fall_off(1.0, 5000.0),
            CrossSection::yukawa(10.0, 1.0, 1e-5),
            CrossSection::yukawa(1000.0, 0.01, 1e-6),
            CrossSection::yukawa(0.5, 100.0, 1e-3),
            CrossSection::resonance(10.0, 1e-8, 1e-4, 0.1),
            CrossSection::resonance(10.0, 1e-8, 1e-7, 0.0),
            CrossSection::resonance(100.0, 1e-6, 1e-3, 0.01),
        ];
        for model in models {
            let model = model.expect("valid");
            for sigma0 in [3.0, 10.0, 30.0, 100.0, 300.0, 1000.0] {
                let fast = model.sigma_v_over_m_cm2_g_kms(sigma0);
                let reference = model.sigma_v_over_m_reference_cm2_g_kms(sigma0);
                assert!(
                    (fast - reference).abs() <= 1e-6 * reference.abs(),
                    "{model:?} {sigma0}: {fast} vs {reference}"
                );
            }
        }
    }

    #[test]
    fn constant_average_matches_scipy() {
        // Reference: tests/reference/check_values.md (scipy): σ/m = 3 cm²/g, σ0 = 50 km/s →
        // ⟨v⟩ = 112.837917 km/s, ⟨σv⟩/m = 338.51375 cm²/g·km/s.
        let xs = CrossSection::constant(3.0).expect("valid");
        assert_relative_eq!(
            mean_relative_speed_kms(50.0),
            112.837917,
            max_relative = 1e-8
        );
        assert_relative_eq!(
            xs.sigma_v_over_m_cm2_g_kms(50.0),
            338.51375,
            max_relative = 1e-7
        );
    }

    #[test]
    fn fall_off_average_matches_scipy() {
        // Reference: tests/reference/check_values.md (scipy): σ(v)/m = 10/(1+v²/w²)² cm²/g, w = 100 km/s →
        // ⟨σv⟩/m = 194.951, 217.433, 95.3631, 11.5241, 0.626798 cm²/g·km/s at σ0 = 10, 50, 100,
        // 300, 1000 km/s. Tolerance 1e-5 (values quoted to six figures).
        let xs = CrossSection::fall_off(10.0, 100.0).expect("valid");
        for (sigma0, expected) in [
            (10.0, 194.951),
            (50.0, 217.433),
            (100.0, 95.3631),
            (300.0, 11.5241),
            (1000.0, 0.626798),
        ] {
            assert_relative_eq!(
                xs.sigma_v_over_m_cm2_g_kms(sigma0),
                expected,
                max_relative = 1e-5
            );
        }
    }

    #[test]
    fn quadrature_reproduces_the_constant_closed_form() {
        // A fall-off with w → ∞ is a constant: the quadrature must give (σ/m) 4σ0/√π.
        let flat = CrossSection::fall_off(3.0, 1e12).expect("valid");
        assert_relative_eq!(
            flat.sigma_v_over_m_cm2_g_kms(50.0),
            338.51375,
            max_relative = 1e-9
        );
    }

    #[test]
    fn yukawa_born_transfer_matches_scipy() {
        // Reference: tests/reference/check_values.md (scipy, (ħc)² = 0.389379 mb GeV²): α = 1e-5, m = 10 GeV,
        // m_φ = 1 MeV → σ_T/m = 2.74482, 2.38316, 0.0699671, 2.66781e-5 cm²/g at v → 0, 10, 100,
        // 1000 km/s.
        let xs = CrossSection::yukawa(10.0, 1.0, 1e-5).expect("valid");
        for (v, expected) in [
            (1e-6, 2.74482),
            (10.0, 2.38316),
            (100.0, 0.0699671),
            (1000.0, 2.66781e-5),
        ] {
            assert_relative_eq!(xs.sigma_m_cm2_g(v), expected, max_relative = 2e-5);
        }
    }

    #[test]
    fn resonance_reaches_unitarity_at_its_speed_and_falls_as_v_to_the_minus_four() {
        // Reference: tests/reference/check_values.md: at v = v_R the s-wave resonance reaches 16π/(m² v_R²);
        // far above it falls as v⁻⁴.
        let (m, delta, gamma) = (20.0, 1e-7, 1e-4);
        let xs = CrossSection::resonance(m, delta, gamma, 0.0).expect("valid");
        let v_r = xs.resonance_speed_kms().expect("resonance");
        let v_r_c = v_r / SPEED_OF_LIGHT_KMS;
        let unitarity =
            natural_per_mass_to_cm2_g(16.0 * std::f64::consts::PI / (m * m * v_r_c * v_r_c), m);
        assert_relative_eq!(xs.sigma_m_cm2_g(v_r), unitarity, max_relative = 1e-9);
        let (a, b) = (xs.sigma_m_cm2_g(100.0 * v_r), xs.sigma_m_cm2_g(200.0 * v_r));
        assert_relative_eq!(a / b, 16.0, max_relative = 1e-2);
        // The Maxwellian average integrates across the narrow peak (breakpoint at v_R).
        let average = xs.sigma_v_over_m_cm2_g_kms(v_r / 2.0);
        assert!(average.is_finite() && average > 0.0);
    }

    #[test]
    fn velocity_dependent_rate_condition_inverts() {
        let xs = CrossSection::fall_off(10.0, 100.0).expect("valid");
        let rho1 = xs.rate_density_msun_kpc3(30.0, 10.0);
        let sigma0 = xs
            .sigma0_for_rate_density_kms(rho1, 10.0)
            .expect("invertible");
        assert_relative_eq!(
            xs.rate_density_msun_kpc3(sigma0, 10.0),
            rho1,
            max_relative = 1e-9
        );
    }

    #[test]
    fn rate_density_inverts() {
        let xs = CrossSection::constant(2.0).expect("valid");
        let rho1 = xs.rate_density_msun_kpc3(37.0, 10.0);
        let sigma0 = xs
            .sigma0_for_rate_density_kms(rho1, 10.0)
            .expect("invertible");
        assert_relative_eq!(sigma0, 37.0, max_relative = 1e-12);
    }
}
