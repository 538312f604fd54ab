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

use std::cell::Cell;
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
    /// Where the last baryonic mass was looked up (see [`EnclosedMass::enclosed_mass_walking`]).
    cursor: Cell<usize>,
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
            cursor: Cell::new(0),
        }
    }

    /// The same problem integrated with another step in ln ξ.
    pub fn with_step(self, step_ln_xi: f64) -> Self {
        Self { step_ln_xi, ..self }
    }

    #[inline]
    fn baryon_mass(&self, xi: f64) -> f64 {
        if self.has_baryons {
            self.baryons
                .enclosed_mass_walking(self.core_scale_kpc * xi, &self.cursor)
                / self.mass_unit_msun
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

    /// The series start near the centre (see [`SeriesStart`]).
    fn series_start(&self, psi_stop: f64) -> SeriesStart {
        let inner = 0.01 * self.baryons.inner_scale_kpc() / self.core_scale_kpc;
        // Keep the start well before the stopping point (ψ ≈ ξ²/6 near the centre).
        let by_stop = 0.1 * (6.0 * psi_stop).sqrt();
        let (mut xi, limit) = if inner < MAX_START_XI.min(by_stop) {
            (inner, StartLimit::Radius)
        } else if by_stop < MAX_START_XI {
            (by_stop, StartLimit::Stop)
        } else {
            (MAX_START_XI, StartLimit::Xi)
        };
        loop {
            let (psi_b, power) = self.baryon_series(xi);
            let x2 = xi * xi;
            let psi = x2 / 6.0 - x2 * x2 / 120.0 + psi_b;
            if psi < 0.5 * psi_stop || xi < 1e-8 {
                let m = xi * x2 / 3.0 - xi * x2 * x2 / 30.0;
                return SeriesStart {
                    xi,
                    state: [psi, m],
                    psi_b,
                    power,
                    limit,
                };
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
        let mut psi_b = 0.0;
        for (s, w) in GAUSS_LEGENDRE_NODES.iter().zip(GAUSS_LEGENDRE_WEIGHTS) {
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

    /// The baryonic mass m_b(ξ) and q = ξ dm_b/dξ, both in units of the mass unit.
    #[inline]
    fn baryon_mass_and_log_slope(&self, xi: f64) -> (f64, f64) {
        if self.has_baryons {
            let r = self.core_scale_kpc * xi;
            let (mass, slope) = self
                .baryons
                .enclosed_mass_and_slope_walking(r, &self.cursor);
            (mass / self.mass_unit_msun, r * slope / self.mass_unit_msun)
        } else {
            (0.0, 0.0)
        }
    }

    /// The equations with their variational equations. The state is (ψ, m, ∂ψ/∂p_0, ∂ψ/∂p_1,
    /// ∂m/∂p_0, ∂m/∂p_1) for p = (ln ρ0, ln σ0), the derivatives D taken along the grid, whose
    /// nodes t_i = t_s(p) + i h move with the start by σ = ∂t_s/∂p (`grid_motion`):
    /// dD/dt = (∂f/∂y) D + ∂f/∂p + σ ∂f/∂t. The parameters enter f through m_b(ξ) = M_b(r_c ξ)/M_u:
    /// ∂m_b/∂p = q ∂ln r_c/∂p − m_b ∂ln M_u/∂p with q = ξ dm_b/dξ, so ∂f_ψ/∂p + σ ∂f_ψ/∂t =
    /// [q (∂ln r_c/∂p + σ) − m_b ∂ln M_u/∂p − σ (m + m_b)]/ξ and σ ∂f_m/∂t = 3σ f_m. (When the
    /// start sits at a fixed radius, σ = −∂ln r_c/∂p and the baryons' slope q drops out: the
    /// grid and the baryons' kinks move together.)
    #[inline]
    fn slope_with_sensitivity(&self, xi: f64, y: &[f64; 6], grid_motion: [f64; 2]) -> [f64; 6] {
        let (mb, q) = self.baryon_mass_and_log_slope(xi);
        let psi_slope = (y[1] + mb) / xi;
        let m_slope = xi * xi * xi * (-y[0]).exp();
        let mut out = [psi_slope, m_slope, 0.0, 0.0, 0.0, 0.0];
        for p in 0..2 {
            let sigma = grid_motion[p];
            let forcing_psi = (q * (LN_CORE_SCALE_SLOPES[p] + sigma)
                - mb * LN_MASS_UNIT_SLOPES[p]
                - sigma * (y[1] + mb))
                / xi;
            out[2 + p] = y[4 + p] / xi + forcing_psi;
            out[4 + p] = -m_slope * y[2 + p] + 3.0 * sigma * m_slope;
        }
        out
    }

    /// The sensitivities (∂ψ/∂p, ∂m/∂p) of the series start ξ_s for grid motion σ = ∂ln ξ_s/∂p:
    /// the series' own ξ terms move with ξ_s, and ψ_b(ξ_s) by the quadrature of
    /// [`JeansProblem::baryon_series`] differentiated (Σ w [q (∂ln r_c/∂p + σ) − m_b (∂ln M_u/∂p + σ)]
    /// /(s² ξ)).
    fn series_sensitivity(&self, xi: f64, grid_motion: [f64; 2]) -> [[f64; 2]; 2] {
        let x2 = xi * xi;
        let mut d_psi = grid_motion.map(|sigma| (x2 / 3.0 - x2 * x2 / 30.0) * sigma);
        let d_m = grid_motion.map(|sigma| (xi * x2 - xi * x2 * x2 / 6.0) * sigma);
        if self.has_baryons {
            for (s, w) in GAUSS_LEGENDRE_NODES.iter().zip(GAUSS_LEGENDRE_WEIGHTS) {
                let (mb, q) = self.baryon_mass_and_log_slope(s * xi);
                for p in 0..2 {
                    let sigma = grid_motion[p];
                    d_psi[p] += w
                        * (q * (LN_CORE_SCALE_SLOPES[p] + sigma)
                            - mb * (LN_MASS_UNIT_SLOPES[p] + sigma))
                        / (s * s * xi);
                }
            }
        }
        [d_psi, d_m]
    }

    /// Integrates outward until ψ reaches `psi_stop` or ξ reaches `xi_stop`. Returns the crossing
    /// of `psi_stop` (None if ξ_stop came first). When `store` is given, every node is kept.
    pub fn integrate(
        &self,
        psi_stop: f64,
        xi_stop: f64,
        mut store: Option<&mut GridSolution>,
    ) -> Result<Option<Crossing>, PhysicsError> {
        let start = self.series_start(psi_stop);
        if let Some(grid) = store.as_deref_mut() {
            grid.begin(start.xi.ln(), self.step_ln_xi, start.psi_b, start.power);
        }
        let (xi_start, y) = (start.xi, start.state);
        let slope = |xi: f64, y: &[f64; 2]| self.slope(xi, y);
        let Some(bracket) = self.march(psi_stop, xi_stop, (xi_start, y), slope, store)? else {
            return Ok(None);
        };
        Ok(Some(Crossing {
            ln_xi: bracket.ln_xi(),
            psi: psi_stop,
            m: bracket.at(1),
        }))
    }

    /// [`JeansProblem::integrate`] with the derivatives of the crossing: returns the crossing
    /// and ∂ln ξ1, ∂m(ξ1) with respect to (ln ρ0, ln σ0), given ∂ψ_stop/∂(ln ρ0, ln σ0)
    /// `d_psi_stop`. The variational equations are stepped with the same RK4 steps as the
    /// solution; ψ and m come out bit for bit as from [`JeansProblem::integrate`].
    pub fn integrate_with_sensitivity(
        &self,
        psi_stop: f64,
        d_psi_stop: [f64; 2],
        mut store: Option<&mut GridSolution>,
    ) -> Result<Option<SensitiveCrossing>, PhysicsError> {
        let start = self.series_start(psi_stop);
        if let Some(grid) = store.as_deref_mut() {
            grid.begin(start.xi.ln(), self.step_ln_xi, start.psi_b, start.power);
        }
        // How the grid moves: t_s = ln ξ_s with ξ_s fixed, at a fixed radius (∝ 1/r_c), or
        // ∝ √ψ_stop.
        let grid_motion: [f64; 2] = match start.limit {
            StartLimit::Xi => [0.0; 2],
            StartLimit::Radius => LN_CORE_SCALE_SLOPES.map(|c| -c),
            StartLimit::Stop => d_psi_stop.map(|d| 0.5 * d / psi_stop),
        };
        let [d_psi, d_m] = self.series_sensitivity(start.xi, grid_motion);
        let y = [
            start.state[0],
            start.state[1],
            d_psi[0],
            d_psi[1],
            d_m[0],
            d_m[1],
        ];
        let slope = |xi: f64, y: &[f64; 6]| self.slope_with_sensitivity(xi, y, grid_motion);
        let Some(bracket) = self.march(psi_stop, f64::INFINITY, (start.xi, y), slope, store)?
        else {
            return Ok(None);
        };
        // ψ(ν; p) = ψ_stop(p) at the grid position ν of the crossing: ν moves, and m(ν) with it.
        let psi_rate = bracket.rate(0);
        let m_rate = bracket.rate(1);
        let mut d_ln_xi = [0.0; 2];
        let mut d_m = [0.0; 2];
        for p in 0..2 {
            let d_nu = (d_psi_stop[p] - bracket.at(2 + p)) / psi_rate;
            d_ln_xi[p] = grid_motion[p] + d_nu;
            d_m[p] = bracket.at(4 + p) + m_rate * d_nu;
        }
        Ok(Some(SensitiveCrossing {
            crossing: Crossing {
                ln_xi: bracket.ln_xi(),
                psi: psi_stop,
                m: bracket.at(1),
            },
            d_ln_xi,
            d_m,
        }))
    }

    /// Steps from `start` = (ξ, state) until the state's ψ (component 0) reaches `psi_stop`,
    /// returning the step that crosses it; None when ξ reaches `xi_stop` first.
    fn march<const N: usize>(
        &self,
        psi_stop: f64,
        xi_stop: f64,
        (xi_start, mut y): (f64, [f64; N]),
        slope: impl Fn(f64, &[f64; N]) -> [f64; N],
        mut store: Option<&mut GridSolution>,
    ) -> Result<Option<Bracket<N>>, PhysicsError> {
        let h = self.step_ln_xi;
        let grow_half = (0.5 * h).exp();
        let grow = h.exp();
        let t_start = xi_start.ln();
        let mut xi = xi_start;
        let mut k = slope(xi, &y);
        for step in 0..MAX_STEPS {
            if let Some(grid) = store.as_deref_mut() {
                grid.nodes.push(Node::from_state(&y, &k));
            }
            if xi >= xi_stop {
                return Ok(None);
            }
            let next = rk4_step(&slope, xi * grow_half, xi * grow, &y, &k, h);
            let xi_next = xi * grow;
            let k_next = slope(xi_next, &next);
            if !next.iter().all(|v| v.is_finite()) {
                return Err(PhysicsError::NoConvergence {
                    what: "isothermal Jeans integration",
                });
            }
            if next[0] >= psi_stop {
                if let Some(grid) = store.as_deref_mut() {
                    grid.nodes.push(Node::from_state(&next, &k_next));
                }
                // Scalars, not the arrays: a closure borrowing the loop's state would keep it
                // in memory for the whole loop (measured: 25% slower).
                let (psi_a, rate_a, psi_b, rate_b) = (y[0], k[0], next[0], k_next[0]);
                let s = brent(
                    move |s| hermite(psi_a, rate_a, psi_b, rate_b, h, s) - psi_stop,
                    0.0,
                    1.0,
                    1e-15,
                    "crossing of the rate density",
                )?;
                return Ok(Some(Bracket {
                    t_start,
                    step: step as f64,
                    h,
                    s,
                    a: y,
                    ka: k,
                    b: next,
                    kb: k_next,
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

/// ∂ln r_c/∂(ln ρ0, ln σ0) for r_c = σ0/√(4πGρ0).
pub(crate) const LN_CORE_SCALE_SLOPES: [f64; 2] = [-0.5, 1.0];
/// ∂ln M_u/∂(ln ρ0, ln σ0) for the mass unit M_u = 4πρ0 r_c³.
pub(crate) const LN_MASS_UNIT_SLOPES: [f64; 2] = [-0.5, 3.0];

/// Gauss–Legendre nodes and weights on [0, 1] (Abramowitz & Stegun Table 25.4).
const GAUSS_LEGENDRE_NODES: [f64; 5] = [
    0.046_910_077_030_668,
    0.230_765_344_947_158,
    0.5,
    0.769_234_655_052_842,
    0.953_089_922_969_332,
];
const GAUSS_LEGENDRE_WEIGHTS: [f64; 5] = [
    0.118_463_442_528_095,
    0.239_314_335_249_683,
    0.284_444_444_444_444,
    0.239_314_335_249_683,
    0.118_463_442_528_095,
];

/// What fixes the series start: ξ itself, a fixed radius inside the baryons' inner scale, or
/// the stopping ψ (a start well before it).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum StartLimit {
    Xi,
    Radius,
    Stop,
}

/// The series solution where the integration starts: ξ_s, (ψ, m) there, the baryons' ψ_b(ξ_s)
/// and the power of ξ it follows inside ξ_s, and what fixed ξ_s.
struct SeriesStart {
    xi: f64,
    state: [f64; 2],
    psi_b: f64,
    power: f64,
    limit: StartLimit,
}

/// Where ψ reaches ψ_stop with its derivatives with respect to (ln ρ0, ln σ0).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct SensitiveCrossing {
    pub crossing: Crossing,
    /// ∂ln ξ1/∂(ln ρ0, ln σ0).
    pub d_ln_xi: [f64; 2],
    /// ∂m(ξ1)/∂(ln ρ0, ln σ0), in the mass unit at fixed mass unit.
    pub d_m: [f64; 2],
}

/// The RK4 step in which ψ crosses ψ_stop: the states and slopes at its ends and the fraction
/// `s` of the step where the crossing lies.
struct Bracket<const N: usize> {
    /// t = ln ξ of the first node and the index of the crossing step.
    t_start: f64,
    step: f64,
    h: f64,
    s: f64,
    a: [f64; N],
    ka: [f64; N],
    b: [f64; N],
    kb: [f64; N],
}

impl<const N: usize> Bracket<N> {
    fn ln_xi(&self) -> f64 {
        self.t_start + (self.step + self.s) * self.h
    }

    /// Component `i` of the state at the crossing (cubic Hermite interpolation).
    fn at(&self, i: usize) -> f64 {
        hermite(self.a[i], self.ka[i], self.b[i], self.kb[i], self.h, self.s)
    }

    /// The rate of change in t of component `i`'s interpolant at the crossing.
    fn rate(&self, i: usize) -> f64 {
        let s = self.s;
        let h = self.h;
        ((6.0 * s * s - 6.0 * s) * (self.a[i] - self.b[i])
            + (3.0 * s * s - 4.0 * s + 1.0) * h * self.ka[i]
            + (3.0 * s * s - 2.0 * s) * h * self.kb[i])
            / h
    }
}

impl Node {
    fn from_state<const N: usize>(y: &[f64; N], k: &[f64; N]) -> Self {
        Self {
            psi: y[0],
            m: y[1],
            dpsi_dt: k[0],
            dm_dt: k[1],
        }
    }
}

impl GridSolution {
    /// Clears the nodes for a new solution starting at t = ln ξ `t_start`.
    fn begin(&mut self, t_start: f64, step_ln_xi: f64, baryon_psi_start: f64, power: f64) {
        self.t_start = t_start;
        self.step_ln_xi = step_ln_xi;
        self.baryon_psi_start = baryon_psi_start;
        self.baryon_psi_power = power;
        self.nodes.clear();
    }

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
