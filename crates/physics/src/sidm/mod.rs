//! The SIDM halo: an isothermal core, with the baryons inside it, matched to an NFW halo at the
//! radius r1 where each particle has scattered about once over the halo's age.
//!
//! Published method: Kaplinghat, Tulin & Yu (2016); with baryons, Kamada, Kaplinghat, Pace & Yu
//! (2017).
//! 1. Rate condition: ρ(r1) · ⟨σv⟩/m · t_age = 1, with ⟨σv⟩/m = (σ/m) · 4σ0/√π.
//! 2. Inside r1: d ln ρ/dr = −G [M_dm(r) + M_b(r)] / (σ0² r²), dM_dm/dr = 4πr²ρ, ρ(0) = ρ0.
//! 3. Matching at r1: ρ_iso(r1) = ρ_NFW(r1) and M_iso(r1) = M_NFW(r1).
//!
//! Two parameterisations:
//! - [`core_first`] (ρ0, σ0) → r1 and the matched NFW halo: one integration and one 1-D root.
//! - [`halo_first`] (NFW halo) → (ρ0, σ0): a 2-D root-find with several solutions in general
//!   (the isothermal sphere's mass–density relation oscillates). Candidates come from two
//!   searches. (a) The baryon-free problem is scale-free, so its solutions are the roots of a
//!   1-D function along one universal isothermal profile; each is followed by Newton's method
//!   while the baryons are switched on in steps (continuation). (b) With baryons, the matching
//!   residuals are tabulated on a grid of (ln(ρ0/ρ1), ln σ0) and Newton's method starts in
//!   every cell where both change sign; this catches solutions that exist only because of the
//!   baryons. Solutions are ordered by central density;
//!   [`Branch::LowestDensity`] (the default, the core-expansion phase) is branch 0.

mod jeans;
mod matching;

use std::f64::consts::PI;

use crate::PhysicsError;
use crate::baryons::EnclosedMass;
use crate::cosmology::Cosmology;
use crate::cross_section::{CrossSection, mean_relative_speed_kms};
use crate::error::require_positive;
use crate::halo::{HaloProfile, Nfw, VirialQuantities};

pub use matching::{baryon_free_fold_contrasts_ln, invert_nfw_mass_ratio};

use jeans::{
    GridSolution, JeansProblem, LN_CORE_SCALE_SLOPES, LN_MASS_UNIT_SLOPES, SensitiveCrossing,
};

/// Everything an SIDM halo needs besides its own parameters.
#[derive(Clone, Copy)]
pub struct SidmSetup<'a> {
    pub cross_section: CrossSection,
    /// Halo age t_age over which each particle scatters about once, Gyr.
    pub age_gyr: f64,
    /// Baryonic enclosed mass seen by the Jeans equation.
    pub baryons: &'a dyn EnclosedMass,
    pub cosmology: Cosmology,
}

impl std::fmt::Debug for SidmSetup<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("SidmSetup")
            .field("cross_section", &self.cross_section)
            .field("age_gyr", &self.age_gyr)
            .field("has_baryons", &!self.baryons.is_massless())
            .field("cosmology", &self.cosmology)
            .finish()
    }
}

/// How hard the halo-first solve looks for solutions.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Search {
    /// The default: the exhaustive search's steps, minus work that cannot change its answer
    /// (extrema of the baryon-free scan far from zero, Newton starts in a grid cell that
    /// already holds a solution). Checked against [`Search::Exhaustive`] over thousands of halos.
    #[default]
    Fast,
    /// Every step of the original search: a golden-section search at every extremum of the
    /// baryon-free scan, Newton's method from every grid cell where both residuals change sign.
    /// The test oracle; about ten times slower with baryons.
    Exhaustive,
}

/// Which halo-first solution to return.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum Branch {
    /// The lowest-central-density (largest) core: the usual physical choice.
    #[default]
    LowestDensity,
    /// The k-th solution in order of increasing central density (0 = lowest density).
    Index(usize),
}

/// An SIDM halo: isothermal core inside r1, NFW outside.
#[derive(Debug, Clone, PartialEq)]
pub struct SidmHalo {
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
    core_scale_kpc: f64,
    mass_unit_msun: f64,
    r1_kpc: f64,
    /// ln ξ at r1.
    ln_xi1: f64,
    /// ln(ρ0/ρ1): how far the core's density falls before it meets the NFW halo.
    core_contrast_ln: f64,
    grid: GridSolution,
    nfw: Nfw,
    virial: VirialQuantities,
    sigma_v_over_m_cm2_g_kms: f64,
    branch: Option<usize>,
}

/// The derived quantities of an SIDM halo, in the units their names state.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct SidmSummary {
    pub rho0_msun_kpc3: f64,
    pub sigma0_kms: f64,
    pub r1_kpc: f64,
    /// King radius r0 = 3σ0 / √(4πGρ0), kpc.
    pub core_radius_kpc: f64,
    /// ⟨v_rel⟩ = 4σ0/√π, the velocity at which this halo measures σ/m, km/s.
    pub v_rel_kms: f64,
    pub sigma_v_over_m_cm2_g_kms: f64,
    pub rho_s_msun_kpc3: f64,
    pub r_s_kpc: f64,
    pub v200_kms: f64,
    pub c200: f64,
    pub r200_kpc: f64,
    pub m200_msun: f64,
    /// Halo-first solution index in order of increasing central density (None for core-first).
    pub branch: Option<usize>,
}

fn validate_setup(setup: &SidmSetup) -> Result<(), PhysicsError> {
    require_positive("halo age [Gyr]", setup.age_gyr)?;
    if setup.cross_section.is_zero() {
        return Err(PhysicsError::NonPositive {
            what: "sigma/m [cm2/g] (an SIDM halo needs sigma/m > 0; sigma/m = 0 is the NFW halo)",
            value: 0.0,
        });
    }
    Ok(())
}

/// Core-first solve: from the central density ρ0 (Msun/kpc³) and dispersion σ0 (km/s), find r1
/// where ρ falls to the rate density and the NFW halo that continues the core there.
///
/// Errors: [`PhysicsError::NoCore`] when ρ1 ≥ ρ0, [`PhysicsError::NoNfwMatch`] when the core's
/// mass at r1 is too small for any NFW halo.
pub fn core_first(
    setup: &SidmSetup,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
) -> Result<SidmHalo, PhysicsError> {
    solve_core(setup, rho0_msun_kpc3, sigma0_kms, false).map(|(halo, _)| halo)
}

/// The Jacobian ∂(ln M200, ln c200)/∂(ln ρ0, ln σ0) of the map from an SIDM core to its outer
/// NFW halo: row 0 is ln M200, row 1 ln c200; column 0 is ln ρ0, column 1 ln σ0.
pub type OuterJacobian = [[f64; 2]; 2];

/// The determinant of an [`OuterJacobian`] (the same in any base of logarithm).
#[must_use]
pub fn outer_jacobian_det(j: &OuterJacobian) -> f64 {
    j[0][0] * j[1][1] - j[0][1] * j[1][0]
}

/// [`core_first`] with the Jacobian of the map from the core to its outer NFW halo, from the
/// variational equations of the Jeans integration and the closed-form derivatives of the NFW
/// match: one integration of six equations instead of three integrations of two for forward
/// differences. The halo is the same, bit for bit.
pub fn core_first_with_outer_jacobian(
    setup: &SidmSetup,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
) -> Result<(SidmHalo, OuterJacobian), PhysicsError> {
    let (halo, jacobian) = solve_core(setup, rho0_msun_kpc3, sigma0_kms, true)?;
    let jacobian = jacobian.ok_or(PhysicsError::NoConvergence {
        what: "outer-halo Jacobian of the SIDM core",
    })?;
    Ok((halo, jacobian))
}

fn solve_core(
    setup: &SidmSetup,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
    with_jacobian: bool,
) -> Result<(SidmHalo, Option<OuterJacobian>), PhysicsError> {
    validate_setup(setup)?;
    require_positive("central density rho0 [Msun/kpc3]", rho0_msun_kpc3)?;
    require_positive("velocity dispersion sigma0 [km/s]", sigma0_kms)?;
    let rho1 = setup
        .cross_section
        .rate_density_msun_kpc3(sigma0_kms, setup.age_gyr);
    if rho1 >= rho0_msun_kpc3 {
        return Err(PhysicsError::NoCore {
            rho0_msun_kpc3,
            rho1_msun_kpc3: rho1,
        });
    }
    let problem = JeansProblem::new(rho0_msun_kpc3, sigma0_kms, setup.baryons);
    let mut grid = GridSolution::empty();
    let psi_stop = (rho0_msun_kpc3 / rho1).ln();
    let no_crossing = PhysicsError::NoConvergence {
        what: "isothermal Jeans integration",
    };
    let (crossing, sensitivity) = if with_jacobian {
        // ψ_stop = ln ρ0 − ln ρ1(σ0).
        let d_ln_rho1 = ln_rate_density_slope(setup, sigma0_kms);
        let d_psi_stop = [1.0, -d_ln_rho1];
        let sensitive = problem
            .integrate_with_sensitivity(psi_stop, d_psi_stop, Some(&mut grid))?
            .ok_or(no_crossing)?;
        (sensitive.crossing, Some((sensitive, d_ln_rho1)))
    } else {
        let crossing = problem
            .integrate(psi_stop, f64::INFINITY, Some(&mut grid))?
            .ok_or(no_crossing)?;
        (crossing, None)
    };
    let r1_kpc = problem.core_scale_kpc * crossing.ln_xi.exp();
    let m1_msun = problem.mass_unit_msun * crossing.m;
    let mass_ratio = m1_msun / (4.0 * PI * r1_kpc.powi(3) * rho1);
    let x = invert_nfw_mass_ratio(mass_ratio, None)?;
    let nfw = Nfw::from_rho_s_r_s(rho1 * x * (1.0 + x) * (1.0 + x), r1_kpc / x)?;
    let virial = nfw.virial(&setup.cosmology)?;
    let jacobian = sensitivity
        .map(|(sensitive, d_ln_rho1)| outer_jacobian(&sensitive, d_ln_rho1, x, virial.c200));
    let halo = SidmHalo {
        rho0_msun_kpc3,
        sigma0_kms,
        core_scale_kpc: problem.core_scale_kpc,
        mass_unit_msun: problem.mass_unit_msun,
        r1_kpc,
        ln_xi1: crossing.ln_xi,
        core_contrast_ln: psi_stop,
        grid,
        nfw,
        virial,
        sigma_v_over_m_cm2_g_kms: setup.cross_section.sigma_v_over_m_cm2_g_kms(sigma0_kms),
        branch: None,
    };
    Ok((halo, jacobian))
}

/// d ln ρ1/d ln σ0 of the rate density: −1 for a constant σ/m (ρ1 ∝ 1/σ0), else a central
/// difference.
pub(super) fn ln_rate_density_slope(setup: &SidmSetup, sigma0_kms: f64) -> f64 {
    if matches!(setup.cross_section, CrossSection::Constant { .. }) {
        return -1.0;
    }
    const STEP: f64 = 1e-5;
    let ln_rho1 = |ln_sigma0: f64| {
        setup
            .cross_section
            .rate_density_msun_kpc3(ln_sigma0.exp(), setup.age_gyr)
            .ln()
    };
    let ln_sigma0 = sigma0_kms.ln();
    (ln_rho1(ln_sigma0 + STEP) - ln_rho1(ln_sigma0 - STEP)) / (2.0 * STEP)
}

/// ∂(ln M200, ln c200)/∂(ln ρ0, ln σ0) from the crossing's derivatives, d ln ρ1/d ln σ0,
/// the matched NFW radius x = r1/r_s and c200. Each step of the match is differentiated in
/// closed form, with the NFW mass function g(x) = ln(1+x) − x/(1+x), g'(x) = x/(1+x)²:
/// - r1 = r_c ξ1, M1 = M_u m(ξ1), and ρ1(σ0) the rate density;
/// - μ = M1/(4π r1³ ρ1) = g(x)(1+x)²/x² fixes x;
/// - ρ_s = ρ1 x(1+x)², r_s = r1/x;
/// - ρ_s ∝ c³/g(c) fixes c200, and M200 ∝ r200³ = (c200 r_s)³.
fn outer_jacobian(
    sensitive: &SensitiveCrossing,
    d_ln_rho1: f64,
    x: f64,
    c200: f64,
) -> OuterJacobian {
    let g = |x: f64| (1.0 + x).ln() - x / (1.0 + x);
    let x_g_slope = |x: f64| x * x / ((1.0 + x) * (1.0 + x));
    let dln_mu_dln_x = x_g_slope(x) / g(x) + 2.0 * x / (1.0 + x) - 2.0;
    let dln_rho_s_dln_c = 3.0 - x_g_slope(c200) / g(c200);
    let m1 = sensitive.crossing.m;
    let mut d_ln_m200 = [0.0; 2];
    let mut d_ln_c200 = [0.0; 2];
    for p in 0..2 {
        let d_ln_r1 = LN_CORE_SCALE_SLOPES[p] + sensitive.d_ln_xi[p];
        let d_ln_m1 = LN_MASS_UNIT_SLOPES[p] + sensitive.d_m[p] / m1;
        // ρ1 is the rate density, a function of σ0 alone.
        let d_ln_rho1 = if p == 0 { 0.0 } else { d_ln_rho1 };
        let d_ln_x = (d_ln_m1 - 3.0 * d_ln_r1 - d_ln_rho1) / dln_mu_dln_x;
        let d_ln_rho_s = d_ln_rho1 + (1.0 + 2.0 * x / (1.0 + x)) * d_ln_x;
        let d_ln_r_s = d_ln_r1 - d_ln_x;
        d_ln_c200[p] = d_ln_rho_s / dln_rho_s_dln_c;
        d_ln_m200[p] = 3.0 * (d_ln_c200[p] + d_ln_r_s);
    }
    [d_ln_m200, d_ln_c200]
}

/// Halo-first solve: the isothermal core (ρ0, σ0) that matches the NFW halo `nfw` for this
/// cross-section, age and baryons. `branch` picks among several solutions.
///
/// Errors: [`PhysicsError::NoSolution`] when none exists, [`PhysicsError::BranchUnavailable`]
/// when fewer solutions than the requested index exist.
pub fn halo_first(setup: &SidmSetup, nfw: &Nfw, branch: Branch) -> Result<SidmHalo, PhysicsError> {
    validate_setup(setup)?;
    let wanted = match branch {
        Branch::LowestDensity => 0,
        Branch::Index(k) => k,
    };
    if wanted == 0
        && let Some(halo) = lowest_density_by_continuation(setup, nfw)
    {
        return Ok(halo);
    }
    let found = all_solutions(setup, nfw, Search::Fast)?;
    let Some(&(rho0, sigma0)) = found.get(wanted) else {
        return Err(PhysicsError::BranchUnavailable {
            requested: wanted,
            found: found.len(),
        });
    };
    let mut halo = core_first(setup, rho0, sigma0)?;
    halo.branch = Some(wanted);
    Ok(halo)
}

/// The lowest-density core matching `nfw` without the search for solutions that exist only
/// because of the baryons: the baryon-free solutions, lowest density first, are followed while
/// the baryons are switched on, and the first one that the sheet rule recognises as its halo's
/// lowest-density core ([`lowest_density_by_sheet`]: a negative outer-halo Jacobian and a core
/// contrast below the baryon-free second fold) is the answer — the rule the fit's prior uses,
/// checked against the full search in `tests/halo_first_oracle.rs` (the same lowest-density core
/// on every random halo) and `tests/outer_halo_prior.rs`. None when no followed core is
/// recognised (the full search decides), without baryons (there the baryon-free solutions are
/// all there is) and for a velocity-dependent σ(v)/m (its folds are not the baryon-free
/// constant-σ/m ones the rule reads).
///
/// Why: the grid of the full search costs ≈ 320 Jeans integrations with tabulated baryons and,
/// over the random halos of the oracle test, changes the lowest-density answer only where no
/// baryon-free solution could be followed to the full baryons; this path costs a few.
fn lowest_density_by_continuation(setup: &SidmSetup, nfw: &Nfw) -> Option<SidmHalo> {
    if setup.baryons.is_massless() || !matches!(setup.cross_section, CrossSection::Constant { .. })
    {
        return None;
    }
    let seeds = matching::baryon_free_seeds(setup, nfw, Search::Fast).ok()?;
    seeds
        .into_iter()
        .filter_map(|seed| matching::follow_with_baryons(setup, nfw, seed))
        .find_map(|(rho0, sigma0)| {
            let (mut halo, jacobian) = core_first_with_outer_jacobian(setup, rho0, sigma0).ok()?;
            (lowest_density_by_sheet(halo.core_contrast_ln, outer_jacobian_det(&jacobian))
                == Some(true))
            .then(|| {
                halo.branch = Some(0);
                halo
            })
        })
}

/// Halo-first solve started from a nearby solution `guess` = (ρ0 Msun/kpc³, σ0 km/s), e.g. the
/// one found a moment ago before a control moved: Newton's method with the full baryons, a few
/// integrations instead of a global search. It follows the guess's branch, so it reports no
/// branch index; call [`halo_first`] for the guaranteed lowest-density solution.
pub fn halo_first_near(
    setup: &SidmSetup,
    nfw: &Nfw,
    guess: (f64, f64),
) -> Result<SidmHalo, PhysicsError> {
    validate_setup(setup)?;
    require_positive("central density guess [Msun/kpc3]", guess.0)?;
    require_positive("dispersion guess [km/s]", guess.1)?;
    let (rho0, sigma0) =
        matching::polish(setup, nfw, guess).ok_or_else(|| PhysicsError::NoSolution {
            reason: "Newton's method from the previous solution did not converge".into(),
        })?;
    core_first(setup, rho0, sigma0)
}

/// Whether the core (ρ0 Msun/kpc³, σ0 km/s) with core contrast ln(ρ0/ρ1) `core_contrast_ln` is
/// the lowest-density core matching its own outer NFW halo, given the determinant of the map
/// from (ln ρ0, ln σ0) to (ln M200, ln c200) there, `outer_jacobian_det`.
///
/// The map's sheets alternate in orientation and are ordered by the core contrast (see
/// [`baryon_free_fold_contrasts_ln`]); the first sheet, where every halo's lowest-density core
/// lies, has a negative determinant. A core with a negative determinant and a contrast below
/// the baryon-free second fold is on the first sheet. Beyond it, baryons may have stretched the
/// first sheet that far or the core may lie on the third: the halo-first search decides.
pub fn is_lowest_density_core(
    setup: &SidmSetup,
    (rho0_msun_kpc3, sigma0_kms): (f64, f64),
    core_contrast_ln: f64,
    outer_jacobian_det: f64,
) -> bool {
    if let Some(decided) = lowest_density_by_sheet(core_contrast_ln, outer_jacobian_det) {
        return decided;
    }
    let lowest = core_first(setup, rho0_msun_kpc3, sigma0_kms)
        .and_then(|halo| halo_first(setup, halo.nfw(), Branch::LowestDensity));
    lowest.is_ok_and(|h| (h.rho0_msun_kpc3 / rho0_msun_kpc3 - 1.0).abs() < 1e-6)
}

/// [`is_lowest_density_core`] where the core alone decides: false on a sheet with a
/// non-negative determinant, true on the first sheet below the baryon-free second fold; None
/// where only the halo-first search can decide.
#[must_use]
pub fn lowest_density_by_sheet(core_contrast_ln: f64, outer_jacobian_det: f64) -> Option<bool> {
    if outer_jacobian_det >= 0.0 {
        Some(false)
    } else if before_second_fold(core_contrast_ln) {
        Some(true)
    } else {
        None
    }
}

/// Whether a core contrast ln(ρ0/ρ1) lies below the baryon-free map's second fold, where a core
/// with a negative outer-halo Jacobian is on the first sheet ([`is_lowest_density_core`]).
fn before_second_fold(core_contrast_ln: f64) -> bool {
    baryon_free_fold_contrasts_ln()
        .get(1)
        .is_none_or(|&second| core_contrast_ln < second)
}

/// The outer NFW halo's (M200 Msun, c200) that the core (ρ0, σ0) matches: [`core_first`]
/// without storing the core's profile, for derivatives of the map.
fn outer_halo_of_core(
    setup: &SidmSetup,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
) -> Result<(f64, f64), PhysicsError> {
    let rho1 = setup
        .cross_section
        .rate_density_msun_kpc3(sigma0_kms, setup.age_gyr);
    if rho1 >= rho0_msun_kpc3 {
        return Err(PhysicsError::NoCore {
            rho0_msun_kpc3,
            rho1_msun_kpc3: rho1,
        });
    }
    let problem = JeansProblem::new(rho0_msun_kpc3, sigma0_kms, setup.baryons);
    let crossing = problem
        .integrate((rho0_msun_kpc3 / rho1).ln(), f64::INFINITY, None)?
        .ok_or(PhysicsError::NoConvergence {
            what: "isothermal Jeans integration",
        })?;
    let r1_kpc = problem.core_scale_kpc * crossing.ln_xi.exp();
    let m1_msun = problem.mass_unit_msun * crossing.m;
    let x = invert_nfw_mass_ratio(m1_msun / (4.0 * PI * r1_kpc.powi(3) * rho1), None)?;
    let virial = Nfw::from_rho_s_r_s(rho1 * x * (1.0 + x) * (1.0 + x), r1_kpc / x)?
        .virial(&setup.cosmology)?;
    Ok((virial.m200_msun, virial.c200))
}

/// det ∂(ln M200, ln c200)/∂(ln ρ0, ln σ0) of the core-first map at (ρ0 Msun/kpc³, σ0 km/s), by
/// forward differences (three integrations); None when a nudged core has no NFW match. The
/// oracle for [`core_first_with_outer_jacobian`], which fits use.
pub fn outer_halo_jacobian_det(setup: &SidmSetup, (rho0, sigma0): (f64, f64)) -> Option<f64> {
    const STEP: f64 = 1e-6;
    let outer = |rho0: f64, sigma0: f64| -> Option<(f64, f64)> {
        let (m200, c200) = outer_halo_of_core(setup, rho0, sigma0).ok()?;
        Some((m200.ln(), c200.ln()))
    };
    let base = outer(rho0, sigma0)?;
    let by_rho0 = outer(rho0 * STEP.exp(), sigma0)?;
    let by_sigma0 = outer(rho0, sigma0 * STEP.exp())?;
    let (dm_dr, dc_dr) = ((by_rho0.0 - base.0) / STEP, (by_rho0.1 - base.1) / STEP);
    let (dm_ds, dc_ds) = ((by_sigma0.0 - base.0) / STEP, (by_sigma0.1 - base.1) / STEP);
    Some(dm_dr * dc_ds - dm_ds * dc_dr)
}

/// Every halo-first solution found, in order of increasing central density.
pub fn halo_first_all(setup: &SidmSetup, nfw: &Nfw) -> Result<Vec<SidmHalo>, PhysicsError> {
    halo_first_all_with(setup, nfw, Search::Fast)
}

/// [`halo_first_all`] with a chosen [`Search`].
pub fn halo_first_all_with(
    setup: &SidmSetup,
    nfw: &Nfw,
    search: Search,
) -> Result<Vec<SidmHalo>, PhysicsError> {
    validate_setup(setup)?;
    all_solutions(setup, nfw, search)?
        .into_iter()
        .enumerate()
        .map(|(k, (rho0, sigma0))| {
            let mut halo = core_first(setup, rho0, sigma0)?;
            halo.branch = Some(k);
            Ok(halo)
        })
        .collect()
}

/// (ρ0, σ0) of every solution found, in order of increasing ρ0; an error when there is none.
fn all_solutions(
    setup: &SidmSetup,
    nfw: &Nfw,
    search: Search,
) -> Result<Vec<(f64, f64)>, PhysicsError> {
    let mut found: Vec<(f64, f64)> = matching::baryon_free_seeds(setup, nfw, search)?
        .into_iter()
        .filter_map(|seed| matching::follow_with_baryons(setup, nfw, seed))
        .collect();
    if !setup.baryons.is_massless() {
        let from_grid = matching::grid_search(setup, nfw, search, &found);
        found.extend(from_grid);
    }
    found.sort_by(|a, b| a.0.total_cmp(&b.0));
    found.dedup_by(|a, b| (a.0 / b.0 - 1.0).abs() < 1e-6);
    if found.is_empty() {
        let reason = if setup.baryons.is_massless() {
            "the rate condition puts r1 where the NFW halo's mass is too large for any isothermal core; lower sigma/m or the halo age"
        } else {
            "with these baryons no isothermal core continues this NFW halo; lower sigma/m, the halo age or the baryonic mass"
        };
        return Err(PhysicsError::NoSolution {
            reason: reason.into(),
        });
    }
    Ok(found)
}

impl SidmHalo {
    /// The radius where each particle has scattered once, kpc.
    #[must_use]
    pub fn r1_kpc(&self) -> f64 {
        self.r1_kpc
    }

    /// The NFW halo outside r1.
    #[must_use]
    pub fn nfw(&self) -> &Nfw {
        &self.nfw
    }

    /// Central density ρ0, Msun/kpc³.
    #[must_use]
    pub fn rho0_msun_kpc3(&self) -> f64 {
        self.rho0_msun_kpc3
    }

    /// Core velocity dispersion σ0, km/s.
    #[must_use]
    pub fn sigma0_kms(&self) -> f64 {
        self.sigma0_kms
    }

    /// ln(ρ0/ρ1), the core's density contrast from its centre to r1: it orders the sheets of
    /// the matching map (see [`baryon_free_fold_contrasts_ln`]).
    #[must_use]
    pub fn core_contrast_ln(&self) -> f64 {
        self.core_contrast_ln
    }

    /// All derived quantities.
    #[must_use]
    pub fn summary(&self) -> SidmSummary {
        SidmSummary {
            rho0_msun_kpc3: self.rho0_msun_kpc3,
            sigma0_kms: self.sigma0_kms,
            r1_kpc: self.r1_kpc,
            core_radius_kpc: 3.0 * self.core_scale_kpc,
            v_rel_kms: mean_relative_speed_kms(self.sigma0_kms),
            sigma_v_over_m_cm2_g_kms: self.sigma_v_over_m_cm2_g_kms,
            rho_s_msun_kpc3: self.nfw.rho_s_msun_kpc3,
            r_s_kpc: self.nfw.r_s_kpc,
            v200_kms: self.virial.v200_kms,
            c200: self.virial.c200,
            r200_kpc: self.virial.r200_kpc,
            m200_msun: self.virial.m200_msun,
            branch: self.branch,
        }
    }

    fn core_state(&self, radius_kpc: f64) -> (f64, f64) {
        self.grid
            .state_at((radius_kpc / self.core_scale_kpc).ln().min(self.ln_xi1))
    }
}

impl HaloProfile for SidmHalo {
    fn density_msun_kpc3(&self, radius_kpc: f64) -> f64 {
        if radius_kpc > self.r1_kpc {
            return self.nfw.density_msun_kpc3(radius_kpc);
        }
        let (psi, _) = self.core_state(radius_kpc);
        self.rho0_msun_kpc3 * (-psi).exp()
    }

    fn enclosed_mass_msun(&self, radius_kpc: f64) -> f64 {
        if radius_kpc > self.r1_kpc {
            return self.nfw.enclosed_mass_msun(radius_kpc);
        }
        if radius_kpc <= 0.0 {
            return 0.0;
        }
        let (_, m) = self.core_state(radius_kpc);
        self.mass_unit_msun * m
    }
}

#[cfg(test)]
mod tests;
