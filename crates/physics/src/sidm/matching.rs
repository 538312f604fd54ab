//! Matching the isothermal core to an NFW halo: the NFW mass-ratio inversion, the baryon-free
//! candidate scan and the Newton continuation that switches the baryons on.

use std::sync::OnceLock;

use super::jeans::{
    GridSolution, JeansProblem, LN_CORE_SCALE_SLOPES, LN_MASS_UNIT_SLOPES, SEARCH_STEP_LN_XI,
    STEP_LN_XI,
};
use super::{Search, SidmSetup, ln_rate_density_slope};
use crate::baryons::{EnclosedMass, NoBaryons, ScaledMass};
use crate::halo::{HaloProfile, Nfw, nfw_mass_function};
use crate::roots::brent;
use crate::units::G_KPC_KMS2_PER_MSUN;
use crate::{CrossSection, PhysicsError};

/// Largest ξ1 scanned for baryon-free candidates (ρ0/ρ1 up to ~10⁸).
const MAX_SCAN_XI: f64 = 1e4;
/// Newton converges when both log-residuals are below this.
const NEWTON_TOLERANCE: f64 = 1e-10;

/// Solves (1 + x)² f(x) / x² = `mass_ratio` for x = r1/r_s, where the left side is
/// M_NFW(r1) / (4π r1³ ρ_NFW(r1)) and f is [`nfw_mass_function`]. It rises monotonically from
/// 1/2 at x → 0, so a ratio ≤ 1/2 has no NFW match. `guess` warm-starts Newton's method.
pub fn invert_nfw_mass_ratio(mass_ratio: f64, guess: Option<f64>) -> Result<f64, PhysicsError> {
    if !(mass_ratio.is_finite() && mass_ratio > 0.5) {
        return Err(PhysicsError::NoNfwMatch { mass_ratio });
    }
    let ratio = |x: f64| (1.0 + x) * (1.0 + x) * nfw_mass_function(x) / (x * x);
    let mut x = guess.unwrap_or(if mass_ratio < 0.6 {
        3.0 * (mass_ratio - 0.5)
    } else {
        1.0
    });
    for _ in 0..60 {
        // Newton in u = ln x: d(ratio)/du = 1 − 2 (1 + x) f(x) / x².
        let slope = 1.0 - 2.0 * (1.0 + x) * nfw_mass_function(x) / (x * x);
        if slope <= 0.0 || !slope.is_finite() {
            break;
        }
        let step = ((ratio(x) - mass_ratio) / slope).clamp(-1.0, 1.0);
        x *= (-step).exp();
        if step.abs() < 1e-13 {
            return Ok(x);
        }
    }
    // Safeguard: bracketed solve in ln x.
    brent(
        |u: f64| ratio(u.exp()) - mass_ratio,
        -40.0,
        40.0,
        1e-15,
        "NFW mass-ratio inversion",
    )
    .map(f64::exp)
}

/// The universal baryon-free isothermal profile, integrated once, with at each node the NFW
/// radius in units of r_s that a match there implies: x = r1/r_s solves the mass-ratio equation
/// for the node's M(ξ1)/(4π ξ1³ ρ(ξ1)), which depends on the node alone (`None` where no NFW
/// halo matches). Tabulating x removes the NFW inversion, the costly part, from the scan.
struct UniversalProfile {
    grid: GridSolution,
    x: Vec<Option<f64>>,
}

fn universal_profile() -> &'static UniversalProfile {
    static PROFILE: OnceLock<UniversalProfile> = OnceLock::new();
    PROFILE.get_or_init(|| {
        let mut grid = GridSolution::empty();
        // Without baryons the dimensionless problem has no parameters: any (ρ0, σ0) will do.
        let problem = JeansProblem::new(1.0, 1.0, &NoBaryons);
        // This integration has no parameters and cannot fail; an empty grid yields no
        // candidates if it ever did.
        if problem
            .integrate(f64::INFINITY, MAX_SCAN_XI, Some(&mut grid))
            .is_err()
        {
            grid.nodes.clear();
        }
        let mut guess = None;
        let x = grid
            .nodes
            .iter()
            .enumerate()
            .map(|(i, node)| {
                let t = grid.t_start + i as f64 * grid.step_ln_xi;
                let x =
                    invert_nfw_mass_ratio(universal_mass_ratio(t, node.psi, node.m), guess).ok();
                guess = x;
                x
            })
            .collect();
        UniversalProfile { grid, x }
    })
}

/// The folds of the baryon-free matching map, as core contrasts ln(ρ0/ρ1), in increasing order.
///
/// Without baryons, a core matched at ξ1 = e^t on the universal profile solves the halo-first
/// problem when K + g(t) = 0, with K set by the NFW halo, σ/m and the age and g(t) universal
/// (the discrepancy of [`candidate_at`] for a constant σ/m is K + g(t)). The extrema of g are
/// the folds: between two of them the map from cores to outer halos is one-to-one (a sheet),
/// and its orientation alternates from sheet to sheet. g rises to its first maximum, so the
/// first sheet takes every value the later ones take: a core beyond the first fold always has a
/// lower-density partner on the first sheet. ψ = ln(ρ0/ρ1) grows monotonically along the
/// profile, so the folds are listed by ψ.
pub fn baryon_free_fold_contrasts_ln() -> &'static [f64] {
    static FOLDS: OnceLock<Vec<f64>> = OnceLock::new();
    FOLDS.get_or_init(|| {
        let universal = universal_profile();
        let grid = &universal.grid;
        // g(t) up to a constant: the discrepancy for any constant σ/m and NFW halo.
        let g = |t: f64, psi: f64, x: f64| {
            -0.5 * psi + t - x.ln() + 1.5 * (x * (1.0 + x) * (1.0 + x)).ln()
        };
        let mut folds = Vec::new();
        let mut recent: Vec<(f64, f64)> = Vec::with_capacity(3);
        for (i, (node, x)) in grid.nodes.iter().zip(&universal.x).enumerate() {
            let Some(x) = *x else {
                recent.clear();
                continue;
            };
            let t = grid.t_start + i as f64 * grid.step_ln_xi;
            let value = g(t, node.psi, x);
            if let [(_, a), (psi_b, b)] = recent[..]
                && (b - a) * (value - b) < 0.0
            {
                folds.push(psi_b);
            }
            recent.push((node.psi, value));
            if recent.len() > 2 {
                recent.remove(0);
            }
        }
        folds
    })
}

/// M(ξ1) / (4π ξ1³ ρ(ξ1)) on the baryon-free profile at t = ln ξ1, in its own units.
fn universal_mass_ratio(t: f64, psi: f64, m: f64) -> f64 {
    m * psi.exp() / (3.0 * t).exp()
}

/// A baryon-free candidate matched at ξ1 on the universal profile.
struct Candidate {
    /// ln(r_c ξ1 / r1): zero when the candidate is a solution.
    discrepancy: f64,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
}

/// For a match at ξ1 = e^t on the universal profile `grid` (its ψ and m interpolated there): the
/// mass ratio fixes x = r1/r_s, hence r1 and
/// ρ1 on the target NFW; the rate condition gives σ0, and ρ0 = ρ1 e^ψ. The candidate is a
/// solution when the core scale this implies, r_c = σ0/√(4πGρ0), puts ξ1 at r1.
///
/// A velocity-dependent σ(v)/m can satisfy the rate condition at several σ0 (⟨σv⟩/m rises with
/// σ0, then falls where σ(v) does): `root` picks the `root`-th lowest, each a branch of its own.
fn candidate(
    setup: &SidmSetup,
    nfw: &Nfw,
    grid: &GridSolution,
    t: f64,
    root: usize,
) -> Option<Candidate> {
    let (psi, m) = grid.state_at(t);
    let x = invert_nfw_mass_ratio(universal_mass_ratio(t, psi, m), None).ok()?;
    candidate_at(setup, nfw, t, psi, x, root)
}

/// [`candidate`] at a node, with its state (ψ) and x = r1/r_s already known.
fn candidate_at(
    setup: &SidmSetup,
    nfw: &Nfw,
    t: f64,
    psi: f64,
    x: f64,
    root: usize,
) -> Option<Candidate> {
    let xi = t.exp();
    let r1 = x * nfw.r_s_kpc;
    let rho1 = nfw.density_msun_kpc3(r1);
    let sigma0 = *setup
        .cross_section
        .sigma0_roots_for_rate_density_kms(rho1, setup.age_gyr, root + 1)
        .get(root)?;
    let rho0 = rho1 * psi.exp();
    let core_scale = sigma0 / (4.0 * std::f64::consts::PI * G_KPC_KMS2_PER_MSUN * rho0).sqrt();
    Some(Candidate {
        discrepancy: (core_scale * xi / r1).ln(),
        rho0_msun_kpc3: rho0,
        sigma0_kms: sigma0,
    })
}

/// Baryon-free solutions (ρ0, σ0) for `nfw`, in order of increasing ρ0: one scan per root of the
/// rate condition (one for a constant σ/m; a velocity-dependent one may have more).
pub(super) fn baryon_free_seeds(
    setup: &SidmSetup,
    nfw: &Nfw,
    search: Search,
) -> Result<Vec<(f64, f64)>, PhysicsError> {
    let roots = if matches!(setup.cross_section, CrossSection::Constant { .. }) {
        1
    } else {
        MAX_RATE_ROOTS
    };
    let mut seeds = Vec::new();
    for root in 0..roots {
        seeds.extend(baryon_free_seeds_on_root(setup, nfw, root, search));
    }
    seeds.sort_by(|a, b| a.0.total_cmp(&b.0));
    seeds.dedup_by(|a, b| (a.0 / b.0 - 1.0).abs() < 1e-9);
    Ok(seeds)
}

/// Roots of the rate condition followed as separate branches of a velocity-dependent σ(v)/m.
const MAX_RATE_ROOTS: usize = 3;

/// The scan of [`baryon_free_seeds`] along the `root`-th root of the rate condition.
fn baryon_free_seeds_on_root(
    setup: &SidmSetup,
    nfw: &Nfw,
    root: usize,
    search: Search,
) -> Vec<(f64, f64)> {
    let universal = universal_profile();
    let grid = &universal.grid;
    let on_profile = |t: f64| candidate(setup, nfw, grid, t, root);
    let root_between = |t_low: f64, t_high: f64| {
        let root = brent(
            |t| on_profile(t).map_or(f64::NAN, |c| c.discrepancy),
            t_low,
            t_high,
            1e-13,
            "baryon-free matching scan",
        )
        .ok()?;
        on_profile(root).map(|c| (c.rho0_msun_kpc3, c.sigma0_kms))
    };
    let mut seeds = Vec::new();
    // The last two valid (t, discrepancy) pairs, newest last.
    let mut recent: Vec<(f64, f64)> = Vec::with_capacity(3);
    for (i, (node, x)) in grid.nodes.iter().zip(&universal.x).enumerate() {
        let t = grid.t_start + i as f64 * grid.step_ln_xi;
        let Some(here) = x.and_then(|x| candidate_at(setup, nfw, t, node.psi, x, root)) else {
            // Leaving the region where this root exists (a velocity-dependent σ(v)/m whose
            // rate condition loses its roots at a fold): a root may lie between the last node
            // and the edge.
            if let Some(&(t_before, d_before)) = recent.last() {
                seeds.extend(seed_near_edge(
                    &on_profile,
                    &root_between,
                    t_before,
                    d_before,
                    t,
                ));
            }
            recent.clear();
            continue;
        };
        let d = here.discrepancy;
        if recent.is_empty() && i > 0 && d > 0.0 {
            // Entering the matchable region (mass ratio just above 1/2): there x → 0 and the
            // discrepancy → −∞, so a root may lie between the threshold and this node.
            if let Some(seed) = seed_near_threshold(setup, nfw, grid, t - grid.step_ln_xi, t, root)
            {
                seeds.push(seed);
            }
        }
        if let Some(&(t_before, d_before)) = recent.last()
            && (d_before < 0.0) != (d < 0.0)
            && let Some(seed) = root_between(t_before, t)
        {
            seeds.push(seed);
        }
        if let [(t_a, d_a), (_, d_b)] = recent[..]
            && (d_b - d_a) * (d - d_b) < 0.0
            && (d_a < 0.0) == (d_b < 0.0)
            && (d_b < 0.0) == (d < 0.0)
            && (search == Search::Exhaustive || may_reach_zero(d_a, d_b, d))
        {
            // An extremum of the discrepancy between grid nodes that does not change sign there
            // may still touch or cross zero (two close solutions near a fold of the mass ratio).
            seeds.extend(roots_near_extremum(
                &on_profile,
                &root_between,
                t_a,
                t,
                d_b > d_a,
            ));
        }
        recent.push((t, d));
        if recent.len() > 2 {
            recent.remove(0);
        }
    }
    seeds
}

/// Whether the extremum of a smooth function between three equally spaced nodes with values
/// `before`, `middle` (the extreme one) and `after` can reach zero. The parabola through them
/// peaks within half a step of the middle node, at most (|after − before|)/8 beyond `middle`;
/// the test allows eight times that, so only extrema far from zero are skipped (the golden-
/// section search of [`roots_near_extremum`] is the costly part of the scan).
fn may_reach_zero(before: f64, middle: f64, after: f64) -> bool {
    middle.abs() <= (middle - before).abs() + (after - middle).abs()
}

/// Between a node `t_valid` with a candidate (discrepancy `d_valid`) and `t_invalid` without
/// one, finds the edge of the candidates' existence by bisection and returns the root of the
/// discrepancy between `t_valid` and the edge, if it changes sign there.
fn seed_near_edge(
    on_profile: &dyn Fn(f64) -> Option<Candidate>,
    root_between: &dyn Fn(f64, f64) -> Option<(f64, f64)>,
    t_valid: f64,
    d_valid: f64,
    t_invalid: f64,
) -> Option<(f64, f64)> {
    let (mut inside, mut outside) = (t_valid, t_invalid);
    for _ in 0..50 {
        let middle = 0.5 * (inside + outside);
        if on_profile(middle).is_some() {
            inside = middle;
        } else {
            outside = middle;
        }
    }
    let edge = on_profile(inside)?;
    if (edge.discrepancy < 0.0) == (d_valid < 0.0) {
        return None;
    }
    root_between(t_valid, inside)
}

/// Locates the extremum of the discrepancy in [t_low, t_high] by golden-section search; when it
/// reaches zero, returns the roots on either side (or the extremum itself when it touches zero
/// within the interpolation accuracy of the universal profile).
fn roots_near_extremum(
    on_profile: &dyn Fn(f64) -> Option<Candidate>,
    root_between: &dyn Fn(f64, f64) -> Option<(f64, f64)>,
    t_low: f64,
    t_high: f64,
    is_maximum: bool,
) -> Vec<(f64, f64)> {
    let sign = if is_maximum { 1.0 } else { -1.0 };
    let value = |t: f64| on_profile(t).map_or(f64::NEG_INFINITY, |c| sign * c.discrepancy);
    let golden = 0.5 * (5f64.sqrt() - 1.0);
    let (mut a, mut b) = (t_low, t_high);
    for _ in 0..60 {
        let c = b - golden * (b - a);
        let d = a + golden * (b - a);
        if value(c) > value(d) {
            b = d;
        } else {
            a = c;
        }
    }
    let t_peak = 0.5 * (a + b);
    let peak = value(t_peak);
    if peak > 0.0 {
        [root_between(t_low, t_peak), root_between(t_peak, t_high)]
            .into_iter()
            .flatten()
            .collect()
    } else if peak > -1e-6 {
        on_profile(t_peak)
            .map(|c| vec![(c.rho0_msun_kpc3, c.sigma0_kms)])
            .unwrap_or_default()
    } else {
        Vec::new()
    }
}

/// Finds a root of the discrepancy between the point where the universal mass ratio crosses 1/2
/// (inside [t_low, t_high]) and t_high, where the discrepancy is positive.
fn seed_near_threshold(
    setup: &SidmSetup,
    nfw: &Nfw,
    grid: &GridSolution,
    t_low: f64,
    t_high: f64,
    root: usize,
) -> Option<(f64, f64)> {
    let ratio_excess = |t: f64| {
        let (psi, m) = grid.state_at(t);
        universal_mass_ratio(t, psi, m) - 0.5
    };
    let threshold = brent(ratio_excess, t_low, t_high, 1e-15, "mass-ratio threshold").ok()?;
    let on_profile = |t: f64| candidate(setup, nfw, grid, t, root);
    let mut offset = 1e-3 * (t_high - threshold);
    for _ in 0..6 {
        let t = threshold + offset;
        if on_profile(t).is_some_and(|c| c.discrepancy < 0.0) {
            let root = brent(
                |t| on_profile(t).map_or(f64::NAN, |c| c.discrepancy),
                t,
                t_high,
                1e-15,
                "baryon-free matching scan",
            )
            .ok()?;
            return on_profile(root).map(|c| (c.rho0_msun_kpc3, c.sigma0_kms));
        }
        offset *= 1e-3;
    }
    None
}

/// Grid of the baryon search: σ0 values (logarithmic) and ψ1 = ln(ρ0/ρ1) values (geometric).
const GRID_DISPERSIONS: usize = 16;
const GRID_PSI: usize = 20;
const GRID_PSI_RANGE: (f64, f64) = (0.02, 20.0);
const GRID_DISPERSION_RANGE: (f64, f64) = (0.03, 4.0);

/// Solutions with the baryons included from the start. The matching residuals are tabulated on a
/// grid of (ψ1 = ln(ρ0/ρ1), ln σ0) — ψ1 ∈ (0, 20] covers every core from barely thermalised to
/// ρ0/ρ1 ≈ 5·10⁸ — and Newton's method starts from every cell across which both residuals
/// change sign. Slower than continuation (about a thousand integrations), but it finds solutions
/// that exist only because of the baryons or lie on a denser core branch at the same σ0.
///
/// With [`Search::Fast`], a cell holding one of the `known` solutions (found by continuation)
/// starts no Newton iteration — it would return that solution — and the known solution joins the
/// grid's own for the search for close partners.
pub(super) fn grid_search(
    setup: &SidmSetup,
    nfw: &Nfw,
    search: Search,
    known: &[(f64, f64)],
) -> Vec<(f64, f64)> {
    // The halo's and the baryons' velocity scales set the range of σ0.
    let v_halo = nfw.v_circ_kms(2.16258 * nfw.r_s_kpc);
    let v_baryons =
        (G_KPC_KMS2_PER_MSUN * setup.baryons.enclosed_mass_msun(nfw.r_s_kpc) / nfw.r_s_kpc).sqrt();
    let v_scale = v_halo.max(v_baryons);
    let (low, high) = (
        (GRID_DISPERSION_RANGE.0 * v_scale).ln(),
        (GRID_DISPERSION_RANGE.1 * v_scale).ln(),
    );
    let psi_ratio = (GRID_PSI_RANGE.1 / GRID_PSI_RANGE.0).powf(1.0 / (GRID_PSI - 1) as f64);
    // (ln ρ0, ln σ0) at fractional grid position (i, j).
    let point = |i: f64, j: f64| -> [f64; 2] {
        let ln_sigma0 = low + (high - low) * i / (GRID_DISPERSIONS - 1) as f64;
        let psi1 = GRID_PSI_RANGE.0 * psi_ratio.powf(j);
        let rho1 = setup
            .cross_section
            .rate_density_msun_kpc3(ln_sigma0.exp(), setup.age_gyr);
        [rho1.ln() + psi1, ln_sigma0]
    };
    // Fractional grid position (i, j) of a solution (ρ0, σ0): the inverse of `point`.
    let position = |(rho0, sigma0): (f64, f64)| -> (f64, f64) {
        let rho1 = setup
            .cross_section
            .rate_density_msun_kpc3(sigma0, setup.age_gyr);
        let psi1 = (rho0 / rho1).ln();
        (
            (sigma0.ln() - low) / (high - low) * (GRID_DISPERSIONS - 1) as f64,
            (psi1 / GRID_PSI_RANGE.0).ln() / psi_ratio.ln(),
        )
    };
    let known_cells: Vec<(f64, f64)> = match search {
        Search::Fast => known.iter().map(|&k| position(k)).collect(),
        Search::Exhaustive => Vec::new(),
    };
    let mut values = Vec::with_capacity(GRID_DISPERSIONS * GRID_PSI);
    for i in 0..GRID_DISPERSIONS {
        for j in 0..GRID_PSI {
            values.push(matching_residual(
                setup,
                nfw,
                setup.baryons,
                point(i as f64, j as f64),
                SEARCH_STEP_LN_XI,
            ));
        }
    }
    let mut seeds: Vec<(f64, f64)> = Vec::new();
    // Known solutions met in a cell with a sign change (Fast only): partners are sought around
    // them as around the grid's own.
    let mut met: Vec<(f64, f64)> = Vec::new();
    for i in 0..GRID_DISPERSIONS - 1 {
        for j in 0..GRID_PSI - 1 {
            let corners = [
                values[i * GRID_PSI + j],
                values[i * GRID_PSI + j + 1],
                values[(i + 1) * GRID_PSI + j],
                values[(i + 1) * GRID_PSI + j + 1],
            ];
            let Some(corners) = corners.into_iter().collect::<Option<Vec<[f64; 2]>>>() else {
                continue;
            };
            let Some((along_sigma, along_psi)) = bilinear_zero(&corners) else {
                continue;
            };
            let inside = |&(a, b): &(f64, f64)| {
                (i as f64..=(i + 1) as f64).contains(&a) && (j as f64..=(j + 1) as f64).contains(&b)
            };
            if let Some(k) = known_cells.iter().position(inside) {
                if !met.contains(&known[k]) {
                    met.push(known[k]);
                }
                continue;
            }
            let start = point(i as f64 + along_sigma, j as f64 + along_psi);
            if let Some(u) = newton(setup, nfw, setup.baryons, start, 15) {
                let solution = (u[0].exp(), u[1].exp());
                if !seeds.iter().any(|s| (s.0 / solution.0 - 1.0).abs() < 1e-6) {
                    seeds.push(solution);
                }
            }
        }
    }
    let around: Vec<(f64, f64)> = seeds
        .iter()
        .chain(met.iter().filter(|m| {
            !seeds
                .iter()
                .any(|s| (s.0 / m.0 - 1.0).abs() < 1e-6 && (s.1 / m.1 - 1.0).abs() < 1e-6)
        }))
        .copied()
        .collect();
    let partners = partners_of(setup, nfw, &around);
    seeds.extend(partners);
    seeds
}

/// Where both residuals vanish in the bilinear interpolation of a grid cell, as fractions of the
/// cell along its two sides (corners ordered (0,0), (0,1), (1,0), (1,1)); None when the
/// interpolated zero lies outside the cell (with a small margin).
fn bilinear_zero(corners: &[[f64; 2]]) -> Option<(f64, f64)> {
    let [c00, c01, c10, c11] = [corners[0], corners[1], corners[2], corners[3]];
    let value = |a: f64, b: f64, k: usize| {
        c00[k]
            + a * (c10[k] - c00[k])
            + b * (c01[k] - c00[k])
            + a * b * (c11[k] - c10[k] - c01[k] + c00[k])
    };
    let (mut a, mut b) = (0.5, 0.5);
    for _ in 0..20 {
        let f = [value(a, b, 0), value(a, b, 1)];
        let mut jacobian = [[0.0; 2]; 2];
        for k in 0..2 {
            let cross = c11[k] - c10[k] - c01[k] + c00[k];
            jacobian[k] = [c10[k] - c00[k] + b * cross, c01[k] - c00[k] + a * cross];
        }
        let det = jacobian[0][0] * jacobian[1][1] - jacobian[0][1] * jacobian[1][0];
        if !det.is_finite() || det.abs() < 1e-300 {
            return None;
        }
        let da = (jacobian[1][1] * f[0] - jacobian[0][1] * f[1]) / det;
        let db = (-jacobian[1][0] * f[0] + jacobian[0][0] * f[1]) / det;
        a -= da.clamp(-1.0, 1.0);
        b -= db.clamp(-1.0, 1.0);
        if da.abs() + db.abs() < 1e-10 {
            break;
        }
    }
    let inside = |x: f64| (-0.1..=1.1).contains(&x);
    (inside(a) && inside(b)).then_some((a, b))
}

/// The core (ρ0 Msun/kpc³, σ0 km/s) at u = (ln ρ0, ln σ0) and its rate density ρ1, Msun/kpc³;
/// None where ρ1 is undefined or not below ρ0 (no core).
fn core_and_rate_density(setup: &SidmSetup, u: [f64; 2]) -> Option<(f64, f64, f64)> {
    let (rho0, sigma0) = (u[0].exp(), u[1].exp());
    let rho1 = setup
        .cross_section
        .rate_density_msun_kpc3(sigma0, setup.age_gyr);
    (!rho1.is_nan() && rho1 < rho0).then_some((rho0, sigma0, rho1))
}

/// The matching's target at the rate density ρ1: the NFW radius where the density is ρ1 (kpc)
/// and the halo's mass inside it (Msun).
fn target_at_rate_density(nfw: &Nfw, rho1_msun_kpc3: f64) -> (f64, f64) {
    let r1_kpc = nfw.radius_at_density_kpc(rho1_msun_kpc3);
    (r1_kpc, nfw.enclosed_mass_msun(r1_kpc))
}

/// Log-residuals of the matching conditions at u = (ln ρ0, ln σ0): the core's r1 and M(r1)
/// against the target NFW halo's radius and mass at the rate density.
fn matching_residual(
    setup: &SidmSetup,
    nfw: &Nfw,
    baryons: &dyn EnclosedMass,
    u: [f64; 2],
    step_ln_xi: f64,
) -> Option<[f64; 2]> {
    let (rho0, sigma0, rho1) = core_and_rate_density(setup, u)?;
    let problem = JeansProblem::new(rho0, sigma0, baryons).with_step(step_ln_xi);
    let crossing = problem
        .integrate((rho0 / rho1).ln(), f64::INFINITY, None)
        .ok()??;
    let r1 = problem.core_scale_kpc * crossing.ln_xi.exp();
    let m1 = problem.mass_unit_msun * crossing.m;
    let (r1_target, m1_target) = target_at_rate_density(nfw, rho1);
    let residual = [(r1 / r1_target).ln(), (m1 / m1_target).ln()];
    residual.iter().all(|v| v.is_finite()).then_some(residual)
}

/// ∂(matching residual)/∂(ln ρ0, ln σ0): row 0 the r1 residual, row 1 the M(r1) one.
type MatchingJacobian = [[f64; 2]; 2];

/// [`matching_residual`] at [`STEP_LN_XI`] with its Jacobian, from the variational equations of
/// the Jeans integration (one integration instead of three for forward differences). The core's
/// side: r1 = r_c ξ1 and M1 = M_u m(ξ1) with the crossing's derivatives; the target's side moves
/// with σ0 alone, through ρ1(σ0): the NFW radius where the density is ρ1 moves by
/// d ln r1 = d ln ρ1 / (d ln ρ_NFW/d ln r) and its mass by d ln M = (d ln M_NFW/d ln r) d ln r,
/// with d ln ρ_NFW/d ln r = −(1 + 3x)/(1 + x) and d ln M/d ln r = 4π r³ ρ / M.
fn matching_residual_and_jacobian(
    setup: &SidmSetup,
    nfw: &Nfw,
    baryons: &dyn EnclosedMass,
    u: [f64; 2],
) -> Option<([f64; 2], MatchingJacobian)> {
    let (rho0, sigma0, rho1) = core_and_rate_density(setup, u)?;
    let d_ln_rho1 = ln_rate_density_slope(setup, sigma0);
    let problem = JeansProblem::new(rho0, sigma0, baryons);
    let sensitive = problem
        .integrate_with_sensitivity((rho0 / rho1).ln(), [1.0, -d_ln_rho1], None)
        .ok()??;
    let crossing = sensitive.crossing;
    let r1 = problem.core_scale_kpc * crossing.ln_xi.exp();
    let m1 = problem.mass_unit_msun * crossing.m;
    let (r1_target, m1_target) = target_at_rate_density(nfw, rho1);
    let residual = [(r1 / r1_target).ln(), (m1 / m1_target).ln()];
    let x = r1_target / nfw.r_s_kpc;
    let d_ln_r1_target = d_ln_rho1 / (-(1.0 + 3.0 * x) / (1.0 + x));
    let d_ln_m1_target =
        4.0 * std::f64::consts::PI * r1_target.powi(3) * rho1 / m1_target * d_ln_r1_target;
    let mut jacobian = [[0.0; 2]; 2];
    for p in 0..2 {
        let by_sigma0 = if p == 1 { 1.0 } else { 0.0 };
        jacobian[0][p] =
            LN_CORE_SCALE_SLOPES[p] + sensitive.d_ln_xi[p] - by_sigma0 * d_ln_r1_target;
        jacobian[1][p] =
            LN_MASS_UNIT_SLOPES[p] + sensitive.d_m[p] / crossing.m - by_sigma0 * d_ln_m1_target;
    }
    let finite = residual
        .iter()
        .chain(jacobian.iter().flatten())
        .all(|v| v.is_finite());
    finite.then_some((residual, jacobian))
}

fn max_abs(v: [f64; 2]) -> f64 {
    v[0].abs().max(v[1].abs())
}

/// Damped Newton's method on the matching residual, its Jacobian from the variational equations.
fn newton(
    setup: &SidmSetup,
    nfw: &Nfw,
    baryons: &dyn EnclosedMass,
    start: [f64; 2],
    max_iterations: usize,
) -> Option<[f64; 2]> {
    deflated_newton(setup, nfw, baryons, start, max_iterations, &[])
}

/// Newton's method on the residual multiplied by Π_k (1 + 1/|u − u_k|²) over the known roots
/// u_k (deflation, Farrell, Birkisson & Funke 2015): the known roots repel the iteration, so it
/// can find a second root close to a first one (two solutions near a fold). Convergence is
/// judged on the undeflated residual. The deflated Jacobian is D J + F ∇Dᵀ with D the factor and
/// ∇ ln D = Σ_k −2 (u − u_k) / (d_k⁴ + d_k²), d_k = |u − u_k|.
fn deflated_newton(
    setup: &SidmSetup,
    nfw: &Nfw,
    baryons: &dyn EnclosedMass,
    start: [f64; 2],
    max_iterations: usize,
    known: &[[f64; 2]],
) -> Option<[f64; 2]> {
    // (raw residual, deflated residual, deflated Jacobian) at u.
    let evaluate = |u: [f64; 2]| -> Option<([f64; 2], [f64; 2], MatchingJacobian)> {
        let (raw, jacobian) = matching_residual_and_jacobian(setup, nfw, baryons, u)?;
        let mut factor = 1.0;
        let mut grad_ln_factor = [0.0; 2];
        for k in known {
            let offset = [u[0] - k[0], u[1] - k[1]];
            let d2 = offset[0] * offset[0] + offset[1] * offset[1];
            factor *= 1.0 + 1.0 / d2;
            for i in 0..2 {
                grad_ln_factor[i] -= 2.0 * offset[i] / (d2 * d2 + d2);
            }
        }
        let f = [raw[0] * factor, raw[1] * factor];
        let mut deflated = [[0.0; 2]; 2];
        for i in 0..2 {
            for j in 0..2 {
                deflated[i][j] = factor * jacobian[i][j] + f[i] * grad_ln_factor[j];
            }
        }
        Some((raw, f, deflated))
    };
    let mut u = start;
    // A start that already solves the matching (a baryon-free root polished without baryons, a
    // solution followed from the previous one) needs no Jacobian: one plain integration.
    if known.is_empty()
        && matching_residual(setup, nfw, baryons, u, STEP_LN_XI)
            .is_some_and(|raw| max_abs(raw) < NEWTON_TOLERANCE)
    {
        return Some(u);
    }
    let (mut raw, mut f, mut jacobian) = evaluate(u)?;
    for _ in 0..max_iterations {
        if max_abs(raw) < NEWTON_TOLERANCE {
            return Some(u);
        }
        let det = jacobian[0][0] * jacobian[1][1] - jacobian[0][1] * jacobian[1][0];
        if !det.is_finite() || det.abs() < 1e-300 {
            return None;
        }
        let mut step = [
            -(jacobian[1][1] * f[0] - jacobian[0][1] * f[1]) / det,
            -(-jacobian[1][0] * f[0] + jacobian[0][0] * f[1]) / det,
        ];
        let size = max_abs(step);
        if size > 0.5 {
            step = [step[0] * 0.5 / size, step[1] * 0.5 / size];
        }
        // Backtracking to a 1/32 step: a Newton direction that does not reduce the residual by
        // then is not leading to a root (each trial is a Jeans integration).
        let mut alpha = 1.0;
        let mut accepted = false;
        for _ in 0..6 {
            let trial = [u[0] + alpha * step[0], u[1] + alpha * step[1]];
            if let Some((trial_raw, trial_f, trial_jacobian)) = evaluate(trial)
                && max_abs(trial_f) < max_abs(f)
            {
                u = trial;
                raw = trial_raw;
                f = trial_f;
                jacobian = trial_jacobian;
                accepted = true;
                break;
            }
            alpha *= 0.5;
        }
        if !accepted {
            return (max_abs(raw) < 100.0 * NEWTON_TOLERANCE).then_some(u);
        }
    }
    (max_abs(raw) < NEWTON_TOLERANCE).then_some(u)
}

/// Ratio of the smallest to the largest singular value of the matching Jacobian below which a
/// root is treated as close to a fold, where a second root may sit nearby.
const FOLD_CONDITION: f64 = 0.2;
/// Distances in (ln ρ0, ln σ0) along the fold direction from which to look for a partner root.
const PARTNER_OFFSETS: [f64; 2] = [0.05, -0.05];

/// When the matching Jacobian at `root` is nearly singular, the unit vector along which the
/// residual changes least (its right singular vector for the smallest singular value).
fn fold_direction(setup: &SidmSetup, nfw: &Nfw, root: [f64; 2]) -> Option<[f64; 2]> {
    let (_, jacobian) = matching_residual_and_jacobian(setup, nfw, setup.baryons, root)?;
    // Eigen-decomposition of JᵀJ = [[a, b], [b, c]].
    let [[p, q], [r, t]] = jacobian;
    let (a, b, c) = (p * p + r * r, p * q + r * t, q * q + t * t);
    let mean = 0.5 * (a + c);
    let spread = (0.25 * (a - c) * (a - c) + b * b).sqrt();
    let (small, large) = (mean - spread, mean + spread);
    if large.is_nan() || large <= 0.0 || small.max(0.0).sqrt() >= FOLD_CONDITION * large.sqrt() {
        return None;
    }
    let v = if b.abs() > 1e-300 {
        [b, small - a]
    } else if a <= c {
        [1.0, 0.0]
    } else {
        [0.0, 1.0]
    };
    let norm = v[0].hypot(v[1]);
    Some([v[0] / norm, v[1] / norm])
}

/// Looks for further solutions next to the ones already found (pairs of close solutions lie on
/// either side of a fold), by deflated Newton from small offsets along the fold direction.
fn partners_of(setup: &SidmSetup, nfw: &Nfw, found: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut known: Vec<[f64; 2]> = found.iter().map(|s| [s.0.ln(), s.1.ln()]).collect();
    let mut partners = Vec::new();
    for root in known.clone() {
        let Some(direction) = fold_direction(setup, nfw, root) else {
            continue;
        };
        for distance in PARTNER_OFFSETS {
            let start = [
                root[0] + distance * direction[0],
                root[1] + distance * direction[1],
            ];
            if let Some(u) = deflated_newton(setup, nfw, setup.baryons, start, 10, &known)
                && known
                    .iter()
                    .all(|k| (k[0] - u[0]).abs() > 1e-6 || (k[1] - u[1]).abs() > 1e-6)
            {
                known.push(u);
                partners.push((u[0].exp(), u[1].exp()));
            }
        }
    }
    partners
}

/// Newton's method with the full baryons from `guess` = (ρ0, σ0).
pub(super) fn polish(setup: &SidmSetup, nfw: &Nfw, guess: (f64, f64)) -> Option<(f64, f64)> {
    let u = newton(setup, nfw, setup.baryons, [guess.0.ln(), guess.1.ln()], 12)?;
    Some((u[0].exp(), u[1].exp()))
}

/// Follows a baryon-free solution while the baryons are switched on (mass × λ, λ: 0 → 1),
/// halving the λ step when Newton fails to converge within six iterations (each with at most six
/// trial integrations) so that a failing step is abandoned early. Returns (ρ0, σ0) with the
/// full baryons, or None when the branch ends (two solutions merge and vanish) before λ = 1.
pub(super) fn follow_with_baryons(
    setup: &SidmSetup,
    nfw: &Nfw,
    seed: (f64, f64),
) -> Option<(f64, f64)> {
    let start = [seed.0.ln(), seed.1.ln()];
    if setup.baryons.is_massless() {
        let u = newton(setup, nfw, setup.baryons, start, 30)?;
        return Some((u[0].exp(), u[1].exp()));
    }
    let mut u = newton(setup, nfw, &NoBaryons, start, 30)?;
    let mut lambda: f64 = 0.0;
    let mut increment: f64 = 1.0;
    while lambda < 1.0 {
        let target = (lambda + increment).min(1.0);
        let scaled = ScaledMass {
            inner: setup.baryons,
            factor: target,
        };
        if let Some(next) = newton(setup, nfw, &scaled, u, 6) {
            u = next;
            lambda = target;
            increment = (2.0 * increment).min(1.0);
        } else {
            increment *= 0.5;
            if increment < 1.0 / 64.0 {
                return None;
            }
        }
    }
    Some((u[0].exp(), u[1].exp()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn matching_jacobian_from_variational_equations_matches_differences() {
        use crate::baryons::Hernquist;
        use crate::cosmology::Cosmology;
        let cosmology = Cosmology::default();
        let nfw = Nfw::from_m200_c200(3e11, 9.0, &cosmology).expect("valid");
        let bulge = Hernquist::new(5e9, 0.8).expect("valid");
        let falling = CrossSection::FallOff {
            sigma0_cm2_g: 5.0,
            w_kms: 80.0,
        };
        let mut worst: f64 = 0.0;
        for (baryons, cross_section) in [
            (
                &NoBaryons as &dyn EnclosedMass,
                CrossSection::constant(2.0).expect("valid"),
            ),
            (&bulge, CrossSection::constant(2.0).expect("valid")),
            (&bulge, falling),
        ] {
            let setup = SidmSetup {
                cross_section,
                age_gyr: 10.0,
                baryons,
                cosmology,
            };
            for u in [[17.5, 4.3], [18.2, 4.6], [19.5, 4.9], [21.0, 4.5]] {
                let Some((residual, jacobian)) =
                    matching_residual_and_jacobian(&setup, &nfw, baryons, u)
                else {
                    continue;
                };
                let plain = matching_residual(&setup, &nfw, baryons, u, STEP_LN_XI)
                    .expect("the same residual");
                assert!(
                    residual
                        .iter()
                        .zip(&plain)
                        .all(|(a, b)| a.to_bits() == b.to_bits()),
                    "the residual itself, bit for bit: {residual:?} vs {plain:?}"
                );
                const H: f64 = 1e-5;
                for j in 0..2 {
                    let (mut up, mut down) = (u, u);
                    up[j] += H;
                    down[j] -= H;
                    let (Some(a), Some(b)) = (
                        matching_residual(&setup, &nfw, baryons, up, STEP_LN_XI),
                        matching_residual(&setup, &nfw, baryons, down, STEP_LN_XI),
                    ) else {
                        continue;
                    };
                    for i in 0..2 {
                        let difference = (a[i] - b[i]) / (2.0 * H);
                        let error = (jacobian[i][j] - difference).abs() / (1.0 + difference.abs());
                        worst = worst.max(error);
                        assert!(
                            error < 1e-5,
                            "u {u:?}, ∂{i}/∂{j}: {} vs {difference}",
                            jacobian[i][j]
                        );
                    }
                }
            }
        }
        println!("matching Jacobian: worst relative difference {worst:.1e}");
        assert!(worst > 0.0, "some points were compared");
    }

    #[test]
    fn mass_ratio_inversion_round_trips() {
        for x in [1e-6, 1e-3, 0.05, 0.7, 1.0, 3.0, 40.0, 1e4] {
            let q = (1.0 + x) * (1.0 + x) * nfw_mass_function(x) / (x * x);
            assert_relative_eq!(
                invert_nfw_mass_ratio(q, None).expect("invertible"),
                x,
                max_relative = 1e-8
            );
        }
        assert!(matches!(
            invert_nfw_mass_ratio(0.45, None),
            Err(PhysicsError::NoNfwMatch { .. })
        ));
    }
}
