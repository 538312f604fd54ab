//! The isothermal Jeans equation with baryons, integrated on a fixed grid in ln ξ.
//!
//! With the core scale r_c = σ0 / √(4πGρ0), ξ = r / r_c, ρ = ρ0 e^{−ψ} and the dark mass in units
//! of 4πρ0 r_c³, m, the equations d ln ρ/dr = −G (M_dm + M_b) / (σ0² r²) and dM_dm/dr = 4πr²ρ
//! become, in t = ln ξ,
//!
//! ```text
//! dψ/dt = (m + m_b(ξ)) / ξ,    dm/dt = ξ³ e^{−ψ},
//! ```
//!
//! Why this form: in ln ξ the core (ψ ≈ ξ²/6) and the power-law envelope (ρ ∝ ξ⁻²) both need
//! only a few steps per e-fold, so a fixed step covers ξ from 10⁻² to 10⁴ in a few hundred steps;
//! and a grid fixed in ln ξ makes the solution a smooth function of (ρ0, σ0), which the
//! optimiser's finite differences need (an adaptive controller would change its step count as
//! parameters move). The integration starts from the series solution near the centre
//! (ψ = ξ²/6 − ξ⁴/120, m = ξ³/3 − ξ⁵/30, plus the baryons' potential), because the equations are
//! singular at ξ = 0. Accuracy is checked against the adaptive Dormand–Prince oracle in
//! [`crate::ode::integrate_adaptive`] (see the tests below).

use std::f64::consts::PI;

use crate::PhysicsError;
use crate::baryons::EnclosedMass;
use crate::ode::rk4_step;
use crate::roots::brent;
use crate::units::G_KPC_KMS2_PER_MSUN;

/// Step in ln ξ for solutions that are reported. With RK4 this keeps the circular velocity
/// within ~1e-7 of the oracle (the requirement is 1e-4) and the derived NFW parameters within
/// ~3e-5 of scipy even across the kinks of a tabulated baryon profile.
pub(crate) const STEP_LN_XI: f64 = 0.05;
/// Coarser step for tabulating candidates in the halo-first search (each is then polished at
/// [`STEP_LN_XI`]).
pub(crate) const SEARCH_STEP_LN_XI: f64 = 0.25;
/// Largest ξ at which the series start may sit.
const MAX_START_XI: f64 = 1e-2;
/// Hard cap on steps: ξ from 10⁻⁶ to 10¹⁵ at the step above.
const MAX_STEPS: usize = 1000;

/// State and slope at one grid node.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Node {
    pub psi: f64,
    pub m: f64,
    pub dpsi_dt: f64,
    pub dm_dt: f64,
}

/// The dimensionless problem for one (ρ0, σ0) and one set of baryons.
pub(crate) struct JeansProblem<'a> {
    pub core_scale_kpc: f64,
    pub mass_unit_msun: f64,
    baryons: &'a dyn EnclosedMass,
    has_baryons: bool,
    step_ln_xi: f64,
}

/// Where the profile reaches a given ψ.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Crossing {
    pub ln_xi: f64,
    pub psi: f64,
    pub m: f64,
}

/// A stored solution on the grid `t_start + i · step_ln_xi`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct GridSolution {
    pub t_start: f64,
    pub step_ln_xi: f64,
    /// ψ contributed by the baryons at the start, and the power of ξ it follows inside the start.
    pub baryon_psi_start: f64,
    pub baryon_psi_power: f64,
    pub nodes: Vec<Node>,
}

impl<'a> JeansProblem<'a> {
    pub fn new(rho0_msun_kpc3: f64, sigma0_kms: f64, baryons: &'a dyn EnclosedMass) -> Self {
        let core_scale_kpc = sigma0_kms / (4.0 * PI * G_KPC_KMS2_PER_MSUN * rho0_msun_kpc3).sqrt();
        Self {
            core_scale_kpc,
            mass_unit_msun: 4.0 * PI * rho0_msun_kpc3 * core_scale_kpc.powi(3),
            baryons,
            has_baryons: !baryons.is_massless(),
            step_ln_xi: STEP_LN_XI,
        }
    }

    /// The same problem integrated with another step in ln ξ.
    pub fn with_step(self, step_ln_xi: f64) -> Self {
        Self { step_ln_xi, ..self }
    }

    #[inline]
    fn baryon_mass(&self, xi: f64) -> f64 {
        if self.has_baryons {
            self.baryons.enclosed_mass_msun(self.core_scale_kpc * xi) / self.mass_unit_msun
        } else {
            0.0
        }
    }

    #[inline]
    fn slope(&self, xi: f64, y: &[f64; 2]) -> [f64; 2] {
        [
            (y[1] + self.baryon_mass(xi)) / xi,
            xi * xi * xi * (-y[0]).exp(),
        ]
    }

    /// Series start: returns (ξ_s, ψ_s, m_s, ψ_b(ξ_s), power).
    fn series_start(&self, psi_stop: f64) -> (f64, [f64; 2], f64, f64) {
        let inner = 0.01 * self.baryons.inner_scale_kpc() / self.core_scale_kpc;
        // Keep the start well before the stopping point (ψ ≈ ξ²/6 near the centre).
        let mut xi = MAX_START_XI.min(inner).min(0.1 * (6.0 * psi_stop).sqrt());
        loop {
            let (psi_b, power) = self.baryon_series(xi);
            let x2 = xi * xi;
            let psi = x2 / 6.0 - x2 * x2 / 120.0 + psi_b;
            if psi < 0.5 * psi_stop || xi < 1e-8 {
                let m = xi * x2 / 3.0 - xi * x2 * x2 / 30.0;
                return (xi, [psi, m], psi_b, power);
            }
            xi *= 0.1;
        }
    }

    /// ψ_b(ξ) = ∫₀^ξ m_b(ξ')/ξ'² dξ' by 5-point Gauss–Legendre quadrature in ξ'/ξ (the
    /// integrand is bounded for m_b ∝ ξ^p with p ≥ 2), and the local power p of m_b, used only to
    /// extrapolate inside the start.
    fn baryon_series(&self, xi: f64) -> (f64, f64) {
        if !self.has_baryons {
            return (0.0, 3.0);
        }
        // Gauss–Legendre nodes and weights on [0, 1] (Abramowitz & Stegun Table 25.4).
        const NODES: [f64; 5] = [
            0.046_910_077_030_668,
            0.230_765_344_947_158,
            0.5,
            0.769_234_655_052_842,
            0.953_089_922_969_332,
        ];
        const WEIGHTS: [f64; 5] = [
            0.118_463_442_528_095,
            0.239_314_335_249_683,
            0.284_444_444_444_444,
            0.239_314_335_249_683,
            0.118_463_442_528_095,
        ];
        let mut psi_b = 0.0;
        for (s, w) in NODES.iter().zip(WEIGHTS) {
            psi_b += w * self.baryon_mass(s * xi) / (s * s);
        }
        psi_b /= xi;
        let mb = self.baryon_mass(xi);
        let mb_half = self.baryon_mass(0.5 * xi);
        let power = if mb > 0.0 && mb_half > 0.0 {
            (mb / mb_half).log2().clamp(1.2, 4.0)
        } else {
            3.0
        };
        (psi_b, power)
    }

    /// Integrates outward until ψ reaches `psi_stop` or ξ reaches `xi_stop`. Returns the crossing
    /// of `psi_stop` (None if ξ_stop came first). When `store` is given, every node is kept.
    pub fn integrate(
        &self,
        psi_stop: f64,
        xi_stop: f64,
        mut store: Option<&mut GridSolution>,
    ) -> Result<Option<Crossing>, PhysicsError> {
        let h = self.step_ln_xi;
        let grow_half = (0.5 * h).exp();
        let grow = h.exp();
        let (xi_start, mut y, psi_b, power) = self.series_start(psi_stop);
        let slope = |xi: f64, y: &[f64; 2]| self.slope(xi, y);
        let t_start = xi_start.ln();
        if let Some(grid) = store.as_deref_mut() {
            grid.t_start = t_start;
            grid.step_ln_xi = h;
            grid.baryon_psi_start = psi_b;
            grid.baryon_psi_power = power;
            grid.nodes.clear();
        }
        let mut xi = xi_start;
        let mut k = slope(xi, &y);
        for step in 0..MAX_STEPS {
            if let Some(grid) = store.as_deref_mut() {
                grid.nodes.push(Node {
                    psi: y[0],
                    m: y[1],
                    dpsi_dt: k[0],
                    dm_dt: k[1],
                });
            }
            if xi >= xi_stop {
                return Ok(None);
            }
            let next = rk4_step(&slope, xi * grow_half, xi * grow, &y, &k, h);
            let xi_next = xi * grow;
            let k_next = slope(xi_next, &next);
            if !(next[0].is_finite() && next[1].is_finite()) {
                return Err(PhysicsError::NoConvergence {
                    what: "isothermal Jeans integration",
                });
            }
            if next[0] >= psi_stop {
                let a = Node {
                    psi: y[0],
                    m: y[1],
                    dpsi_dt: k[0],
                    dm_dt: k[1],
                };
                let b = Node {
                    psi: next[0],
                    m: next[1],
                    dpsi_dt: k_next[0],
                    dm_dt: k_next[1],
                };
                if let Some(grid) = store.as_deref_mut() {
                    grid.nodes.push(b);
                }
                let s = brent(
                    |s| hermite(a.psi, a.dpsi_dt, b.psi, b.dpsi_dt, h, s) - psi_stop,
                    0.0,
                    1.0,
                    1e-15,
                    "crossing of the rate density",
                )?;
                let t = t_start + (step as f64 + s) * h;
                return Ok(Some(Crossing {
                    ln_xi: t,
                    psi: psi_stop,
                    m: hermite(a.m, a.dm_dt, b.m, b.dm_dt, h, s),
                }));
            }
            y = next;
            k = k_next;
            xi = xi_next;
        }
        Err(PhysicsError::NoConvergence {
            what: "isothermal Jeans integration (step limit)",
        })
    }
}

impl GridSolution {
    pub fn empty() -> Self {
        Self {
            t_start: 0.0,
            step_ln_xi: STEP_LN_XI,
            baryon_psi_start: 0.0,
            baryon_psi_power: 3.0,
            nodes: Vec::new(),
        }
    }

    /// (ψ, m) at t = ln ξ, by cubic Hermite interpolation between nodes (series inside the start).
    pub fn state_at(&self, t: f64) -> (f64, f64) {
        let h = self.step_ln_xi;
        if t <= self.t_start || self.nodes.len() < 2 {
            let xi = t.exp();
            let x2 = xi * xi;
            let xi_start = self.t_start.exp();
            let psi_b = self.baryon_psi_start * (xi / xi_start).powf(self.baryon_psi_power - 1.0);
            return (
                x2 / 6.0 - x2 * x2 / 120.0 + psi_b,
                xi * x2 / 3.0 - xi * x2 * x2 / 30.0,
            );
        }
        let position = (t - self.t_start) / h;
        let last = self.nodes.len() - 2;
        // Truncation toward zero is intended: position ≥ 0 here.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let i = (position.floor() as usize).min(last);
        let s = position - i as f64;
        let (a, b) = (self.nodes[i], self.nodes[i + 1]);
        (
            hermite(a.psi, a.dpsi_dt, b.psi, b.dpsi_dt, h, s),
            hermite(a.m, a.dm_dt, b.m, b.dm_dt, h, s),
        )
    }
}

/// Cubic Hermite interpolation on [0, 1] of a step of size h with end values and slopes.
#[inline]
fn hermite(p0: f64, d0: f64, p1: f64, d1: f64, h: f64, s: f64) -> f64 {
    let s2 = s * s;
    let s3 = s2 * s;
    (2.0 * s3 - 3.0 * s2 + 1.0) * p0
        + (s3 - 2.0 * s2 + s) * h * d0
        + (-2.0 * s3 + 3.0 * s2) * p1
        + (s3 - s2) * h * d1
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::baryons::{Hernquist, NoBaryons};
    use crate::ode::integrate_adaptive;
    use approx::assert_relative_eq;

    #[test]
    fn isothermal_sphere_matches_scipy_table() {
        // Reference: isothermal sphere ρ/ρ0 at ξ = 1, 2, 3, 5, 10, 20, 50 (scipy, rtol 1e-12;
        // ψ(1) agrees with Chandrasekhar's 1939 table, from memory) — tests/reference/check_values.md.
        let problem = JeansProblem::new(1e7, 30.0, &NoBaryons);
        let mut grid = GridSolution::empty();
        let crossing = problem
            .integrate(f64::INFINITY, 60.0, Some(&mut grid))
            .expect("integrates");
        assert!(crossing.is_none());
        for (xi, ratio) in [
            (1.0f64, 0.853143),
            (2.0, 0.571310),
            (3.0, 0.345302),
            (5.0, 0.129498),
            (10.0, 0.0238360),
            (20.0, 0.00449906),
            (50.0, 0.000674005),
        ] {
            let (psi, _) = grid.state_at(xi.ln());
            // Tolerance 5e-6: the table is rounded to six significant figures.
            assert_relative_eq!((-psi).exp(), ratio, max_relative = 5e-6);
        }
    }

    /// Oracle: the same equations in physical radius, integrated adaptively at rtol 1e-12.
    fn oracle_mass(problem: &JeansProblem, r_kpc: f64) -> f64 {
        let g = G_KPC_KMS2_PER_MSUN;
        // ρ0 and σ0 follow from the core scale and mass unit: ρ0 = M_u / (4π r_c³),
        // σ0² = 4πGρ0 r_c².
        let rc = problem.core_scale_kpc;
        let rho0 = problem.mass_unit_msun / (4.0 * PI * rc.powi(3));
        let s2 = 4.0 * PI * g * rho0 * rc * rc;
        let r0 = 1e-9 * rc;
        let start = [0.0, 4.0 / 3.0 * PI * rho0 * r0.powi(3)];
        let f = |r: f64, y: &[f64; 2]| {
            let mb = problem.baryons.enclosed_mass_msun(r);
            [
                -g * (y[1] + mb) / (s2 * r * r),
                4.0 * PI * r * r * rho0 * y[0].exp(),
            ]
        };
        let (_, y) = integrate_adaptive(f, r0, start, r_kpc, 1e-12, 1e-300, |_, _| false)
            .expect("oracle integrates");
        y[1]
    }

    #[test]
    fn fixed_grid_matches_adaptive_oracle_within_1e_minus_4() {
        // Requirement: circular velocity within 1e-4 of the oracle everywhere inside 50 kpc.
        let bulge = Hernquist::new(3e9, 1.5).expect("valid");
        let cases: [(f64, f64, &dyn EnclosedMass); 4] = [
            (1e8, 40.0, &NoBaryons),
            (3e7, 60.0, &bulge),
            (5e8, 25.0, &NoBaryons),
            (2.6e11, 39.18, &NoBaryons),
        ];
        let mut worst = 0.0f64;
        for (rho0, sigma0, baryons) in cases {
            let problem = JeansProblem::new(rho0, sigma0, baryons);
            let mut grid = GridSolution::empty();
            let xi_max = 50.0 / problem.core_scale_kpc;
            problem
                .integrate(f64::INFINITY, xi_max, Some(&mut grid))
                .expect("integrates");
            for i in 1..=100 {
                let r = 0.5 * f64::from(i);
                let (_, m) = grid.state_at((r / problem.core_scale_kpc).ln());
                let v_grid = (G_KPC_KMS2_PER_MSUN * m * problem.mass_unit_msun / r).sqrt();
                let v_oracle = (G_KPC_KMS2_PER_MSUN * oracle_mass(&problem, r) / r).sqrt();
                worst = worst.max((v_grid / v_oracle - 1.0).abs());
            }
        }
        assert!(worst < 1e-4, "worst relative velocity error {worst:e}");
    }

    #[test]
    fn baryon_dominated_limit_matches_analytic_profile() {
        // Reference: Kaplinghat, Keeley, Linden & Yu (2014): when the dark matter's own gravity is
        // negligible, ρ/ρ0 = exp[−(GM/σ0²)(1/a − 1/(r+a))] for a Hernquist potential. Check values
        // for M = 1e10, a = 1 kpc, σ0 = 100 km/s, ρ0 = 1 Msun/kpc³ (tests/reference/check_values.md).
        let bulge = Hernquist::new(1e10, 1.0).expect("valid");
        let problem = JeansProblem::new(1.0, 100.0, &bulge);
        let mut grid = GridSolution::empty();
        problem
            .integrate(
                f64::INFINITY,
                10.0 / problem.core_scale_kpc * 1.01,
                Some(&mut grid),
            )
            .expect("integrates");
        for (r, ratio) in [
            (0.5, 0.238440),
            (1.0, 0.116431),
            (2.0, 0.056853),
            (10.0, 0.020042),
        ] {
            let (psi, _) = grid.state_at((r / problem.core_scale_kpc).ln());
            assert_relative_eq!((-psi).exp(), ratio, max_relative = 1e-5);
        }
    }
}
