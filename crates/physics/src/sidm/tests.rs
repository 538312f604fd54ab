use super::*;
use crate::baryons::{Hernquist, NoBaryons};
use approx::assert_relative_eq;

fn setup(sigma_m: f64, baryons: &dyn EnclosedMass) -> SidmSetup<'_> {
    SidmSetup {
        cross_section: CrossSection::constant(sigma_m).expect("valid"),
        age_gyr: 10.0,
        baryons,
        cosmology: Cosmology::default(),
    }
}

#[test]
fn core_first_matches_scipy_reference_table() {
    // Reference: tests/reference/check_values.md, core-first table from an independent scipy implementation
    // (no baryons, t_age = 10 Gyr).
    for (rho0, sigma0, sigma_m, r1, rho_s, r_s) in [
        (1e8, 40.0, 3.0, 6.1868, 7.4295e7, 2.1559),
        (3e7, 60.0, 1.0, 7.8435, 8.2006e6, 10.280),
        (5e8, 25.0, 0.5, 1.3332, 3.2936e8, 0.63941),
    ] {
        let halo = core_first(&setup(sigma_m, &NoBaryons), rho0, sigma0).expect("solves");
        let s = halo.summary();
        assert_relative_eq!(s.r1_kpc, r1, max_relative = 1e-4);
        assert_relative_eq!(s.rho_s_msun_kpc3, rho_s, max_relative = 1e-4);
        assert_relative_eq!(s.r_s_kpc, r_s, max_relative = 1e-4);
    }
}

#[test]
fn halo_first_matches_scipy_reference_table() {
    // Reference: tests/reference/check_values.md, halo-first table (two independent scipy implementations
    // agree to ~1e-6): M200 = 1e11 Msun, c = 10, H0 = 70, t_age = 10 Gyr.
    let cosmo = Cosmology::default();
    let nfw = Nfw::from_m200_c200(1e11, 10.0, &cosmo).expect("valid");
    let light = Hernquist::new(1e9, 2.0).expect("valid");
    let heavy = Hernquist::new(3e9, 1.5).expect("valid");
    let cases: [(f64, &dyn EnclosedMass, Branch, f64, f64, f64); 5] = [
        (
            3.0,
            &NoBaryons,
            Branch::LowestDensity,
            1.63902e7,
            49.6840,
            10.01079,
        ),
        (
            3.0,
            &light,
            Branch::LowestDensity,
            2.94653e7,
            52.4072,
            10.27757,
        ),
        (
            3.0,
            &heavy,
            Branch::LowestDensity,
            1.39387e8,
            58.6733,
            10.85993,
        ),
        (
            10.0,
            &NoBaryons,
            Branch::LowestDensity,
            1.004189e7,
            50.8630,
            17.6629,
        ),
        (
            10.0,
            &NoBaryons,
            Branch::Index(1),
            2.878857e9,
            59.3214,
            18.8781,
        ),
    ];
    for (sigma_m, baryons, branch, rho0, sigma0, r1) in cases {
        let halo = halo_first(&setup(sigma_m, baryons), &nfw, branch).expect("solves");
        assert_relative_eq!(halo.rho0_msun_kpc3(), rho0, max_relative = 1e-4);
        assert_relative_eq!(halo.sigma0_kms(), sigma0, max_relative = 1e-4);
        assert_relative_eq!(halo.r1_kpc(), r1, max_relative = 1e-4);
    }
}

#[test]
fn halo_first_velocities_match_scipy() {
    // Reference: tests/reference/check_values.md: σ/m = 3, no baryons, M200 = 1e11, c = 10.
    let cosmo = Cosmology::default();
    let nfw = Nfw::from_m200_c200(1e11, 10.0, &cosmo).expect("valid");
    let halo = halo_first(&setup(3.0, &NoBaryons), &nfw, Branch::LowestDensity).expect("solves");
    for (r, v_sidm, v_nfw) in [
        (0.5, 8.554, 27.129),
        (1.0, 16.883, 37.140),
        (2.0, 32.125, 49.418),
        (5.0, 61.834, 66.744),
    ] {
        assert_relative_eq!(halo.v_circ_kms(r), v_sidm, max_relative = 1e-3);
        assert_relative_eq!(nfw.v_circ_kms(r), v_nfw, max_relative = 1e-4);
    }
}

#[test]
fn halo_first_reports_no_solution() {
    // Reference: tests/reference/check_values.md: no solution for σ/m = 100 without baryons, nor for σ/m = 3
    // with a Hernquist M = 5e9, a = 1 kpc.
    let cosmo = Cosmology::default();
    let nfw = Nfw::from_m200_c200(1e11, 10.0, &cosmo).expect("valid");
    assert!(matches!(
        halo_first(&setup(100.0, &NoBaryons), &nfw, Branch::LowestDensity),
        Err(PhysicsError::NoSolution { .. })
    ));
    let dense = Hernquist::new(5e9, 1.0).expect("valid");
    assert!(matches!(
        halo_first(&setup(3.0, &dense), &nfw, Branch::LowestDensity),
        Err(PhysicsError::NoSolution { .. })
    ));
}

#[test]
fn halo_first_finds_three_solutions_for_the_reference_halo() {
    // Reference: tests/reference/check_values.md: the NFW halo matched by (ρ0, σ0) = (7e7, 35) with σ/m = 2,
    // 10 Gyr and no baryons is also matched by about (2.49e10, 40.74) and (2.60e11, 39.18).
    let s = setup(2.0, &NoBaryons);
    let start = core_first(&s, 7e7, 35.0).expect("solves");
    let all = halo_first_all(&s, start.nfw()).expect("solves");
    assert!(all.len() >= 3, "found {} solutions", all.len());
    assert_relative_eq!(all[0].rho0_msun_kpc3(), 7e7, max_relative = 1e-6);
    assert_relative_eq!(all[1].rho0_msun_kpc3(), 2.49e10, max_relative = 1e-2);
    assert_relative_eq!(all[1].sigma0_kms(), 40.74, max_relative = 1e-3);
    assert_relative_eq!(all[2].rho0_msun_kpc3(), 2.60e11, max_relative = 1e-2);
    assert_relative_eq!(all[2].sigma0_kms(), 39.18, max_relative = 1e-3);
    for (k, halo) in all.iter().enumerate() {
        assert_eq!(halo.summary().branch, Some(k));
    }
    assert!(matches!(
        halo_first(&s, start.nfw(), Branch::Index(99)),
        Err(PhysicsError::BranchUnavailable { requested: 99, .. })
    ));
}

#[test]
fn matching_conditions_hold_at_r1() {
    let bulge = Hernquist::new(2e9, 1.0).expect("valid");
    let halo = core_first(&setup(2.0, &bulge), 2e8, 45.0).expect("solves");
    let r1 = halo.r1_kpc();
    let nfw = *halo.nfw();
    let inside = r1 * (1.0 - 1e-12);
    assert_relative_eq!(
        halo.density_msun_kpc3(inside),
        nfw.density_msun_kpc3(r1),
        max_relative = 1e-9
    );
    assert_relative_eq!(
        halo.enclosed_mass_msun(inside),
        nfw.enclosed_mass_msun(r1),
        max_relative = 1e-9
    );
}

#[test]
fn small_cross_section_recovers_nfw() {
    let cosmo = Cosmology::default();
    let nfw = Nfw::from_v200_c200(80.0, 12.0, &cosmo).expect("valid");
    let halo = halo_first(&setup(1e-4, &NoBaryons), &nfw, Branch::LowestDensity).expect("solves");
    assert!(halo.r1_kpc() < 0.05, "r1 = {}", halo.r1_kpc());
    for r in [0.5, 1.0, 3.0, 10.0, 40.0] {
        assert_relative_eq!(halo.v_circ_kms(r), nfw.v_circ_kms(r), max_relative = 1e-3);
    }
}

#[test]
fn bad_inputs_are_typed_errors() {
    let s = setup(1.0, &NoBaryons);
    assert!(matches!(
        core_first(&s, f64::NAN, 30.0),
        Err(PhysicsError::NonFinite { .. })
    ));
    assert!(matches!(
        core_first(&s, 1e7, -3.0),
        Err(PhysicsError::NonPositive { .. })
    ));
    assert!(matches!(
        core_first(&s, 10.0, 30.0),
        Err(PhysicsError::NoCore { .. })
    ));
    assert!(matches!(
        core_first(&setup(0.0, &NoBaryons), 1e8, 30.0),
        Err(PhysicsError::NonPositive { .. })
    ));
}

#[test]
fn curve_is_smooth_in_the_parameters() {
    // An optimiser's finite differences need the model to be smooth in its parameters: no jumps
    // from a changing step count. Across a sweep of ρ0 (and so of r1 moving across grid nodes),
    // derivatives of V_halo(2 kpc) and r1 from steps 1e-6 and 1e-4 in ln ρ0 must agree.
    let bulge = Hernquist::new(1e9, 0.8).expect("valid");
    let s = setup(2.0, &bulge);
    let value = |ln_rho0: f64| {
        let halo = core_first(&s, ln_rho0.exp(), 45.0).expect("solves");
        (halo.v_circ_kms(2.0), halo.r1_kpc())
    };
    let mut worst = 0.0f64;
    for i in 0..200 {
        let ln_rho0 = (2e8f64).ln() + 0.01 * f64::from(i);
        let (small, large) = (1e-6, 1e-4);
        let central = |step: f64| {
            let (plus, minus) = (value(ln_rho0 + step), value(ln_rho0 - step));
            (
                (plus.0 - minus.0) / (2.0 * step),
                (plus.1 - minus.1) / (2.0 * step),
            )
        };
        let (d_small, r_small) = central(small);
        let (d_large, r_large) = central(large);
        worst = worst
            .max((d_small / d_large - 1.0).abs())
            .max((r_small / r_large - 1.0).abs());
    }
    assert!(
        worst < 1e-3,
        "finite-difference derivatives disagree by {worst:e}"
    );
}

#[test]
fn halo_first_near_follows_a_nearby_solution() {
    let bulge = Hernquist::new(1e9, 2.0).expect("valid");
    let s = setup(3.0, &bulge);
    let cosmo = Cosmology::default();
    let nfw = Nfw::from_m200_c200(1e11, 10.0, &cosmo).expect("valid");
    let full = halo_first(&s, &nfw, Branch::LowestDensity).expect("solves");
    // A slightly different halo, started from the first solution, lands on the same solution a
    // full search finds.
    let moved = Nfw::from_m200_c200(1.05e11, 10.2, &cosmo).expect("valid");
    let near =
        halo_first_near(&s, &moved, (full.rho0_msun_kpc3(), full.sigma0_kms())).expect("solves");
    let again = halo_first(&s, &moved, Branch::LowestDensity).expect("solves");
    assert_relative_eq!(
        near.rho0_msun_kpc3(),
        again.rho0_msun_kpc3(),
        max_relative = 1e-7
    );
    assert_relative_eq!(near.sigma0_kms(), again.sigma0_kms(), max_relative = 1e-7);
    assert_eq!(near.summary().branch, None);
}

#[test]
fn velocity_dependent_cross_sections_drive_the_rate_condition() {
    // The rate condition uses ⟨σv⟩/m at the core's σ0: a fall-off with a very large turnover
    // velocity is the constant cross-section, and a genuine fall-off round-trips core-first →
    // halo-first.
    let bulge = Hernquist::new(1e9, 1.5).expect("valid");
    let constant = setup(3.0, &bulge);
    let flat = SidmSetup {
        cross_section: CrossSection::fall_off(3.0, 1e12).expect("valid"),
        ..constant
    };
    let a = core_first(&constant, 1e8, 40.0).expect("solves");
    let b = core_first(&flat, 1e8, 40.0).expect("solves");
    assert_relative_eq!(a.r1_kpc(), b.r1_kpc(), max_relative = 1e-8);

    let falling = SidmSetup {
        cross_section: CrossSection::fall_off(10.0, 60.0).expect("valid"),
        ..constant
    };
    let start = core_first(&falling, 8e7, 45.0).expect("solves");
    let back = halo_first(&falling, start.nfw(), Branch::LowestDensity).expect("solves");
    assert!(back.rho0_msun_kpc3() <= 8e7 * (1.0 + 1e-6));
    assert_relative_eq!(back.nfw().r_s_kpc, start.nfw().r_s_kpc, max_relative = 1e-6);
}

#[test]
fn halo_first_follows_every_root_of_a_velocity_dependent_rate_condition() {
    // For σ0/m = 1.57 cm²/g, w = 300 km/s and this dwarf halo, the rate condition's lower root in
    // σ0 disappears (⟨σv⟩/m peaks and falls) just before the match: the solution lies on the
    // upper root, close to the fold. Every solution found must round-trip core-first with the
    // same σ0 and satisfy the matching (same NFW halo).
    let cosmology = Cosmology::default();
    let nfw = Nfw::from_v200_c200(60.0, 12.0, &cosmology).expect("valid");
    for (sigma0_m, w) in [(0.3, 300.0), (1.57, 300.0), (3.0, 300.0), (1.0, 150.0)] {
        let s = SidmSetup {
            cross_section: CrossSection::fall_off(sigma0_m, w).expect("valid"),
            ..setup(1.0, &NoBaryons)
        };
        let all = halo_first_all(&s, &nfw).expect("a solution");
        for halo in all {
            let again = core_first(&s, halo.rho0_msun_kpc3(), halo.sigma0_kms()).expect("solves");
            assert_relative_eq!(again.nfw().r_s_kpc, nfw.r_s_kpc, max_relative = 1e-5);
            assert_relative_eq!(
                again.nfw().rho_s_msun_kpc3,
                nfw.rho_s_msun_kpc3,
                max_relative = 1e-5
            );
        }
    }
}

/// ∂(ln M200, ln c200)/∂(ln ρ0, ln σ0) by central differences of [`core_first`] (step 1e-4 in
/// each logarithm): the oracle for the variational equations.
fn outer_jacobian_by_differences(setup: &SidmSetup, rho0: f64, sigma0: f64) -> OuterJacobian {
    const STEP: f64 = 1e-4;
    let outer = |ln_rho0: f64, ln_sigma0: f64| {
        let s = core_first(setup, ln_rho0.exp(), ln_sigma0.exp())
            .expect("nudged core solves")
            .summary();
        [s.m200_msun.ln(), s.c200.ln()]
    };
    let (a, b) = (rho0.ln(), sigma0.ln());
    let columns = [
        (outer(a + STEP, b), outer(a - STEP, b)),
        (outer(a, b + STEP), outer(a, b - STEP)),
    ];
    let mut j = [[0.0; 2]; 2];
    for (p, (up, down)) in columns.iter().enumerate() {
        for w in 0..2 {
            j[w][p] = (up[w] - down[w]) / (2.0 * STEP);
        }
    }
    j
}

#[test]
fn outer_jacobian_from_variational_equations_matches_differences() {
    // Oracle: central differences of the core-first solve itself. Cases span no baryons (where the
    // problem is scale-free), a Hernquist bulge, a tabulated gas + disk curve with kinks, and a
    // velocity-dependent cross-section (the rate density's σ0 slope by differences).
    let bulge = Hernquist::new(3e9, 1.5).expect("valid");
    let table = kinked_table();
    let fall_off = CrossSection::fall_off(3.0, 40.0).expect("valid");
    let mut checked = 0;
    let mut worst = 0.0f64;
    let setups: [(SidmSetup, &str); 4] = [
        (setup(2.0, &NoBaryons), "no baryons"),
        (setup(1.0, &bulge), "Hernquist bulge"),
        (setup(0.5, &table), "tabulated baryons"),
        (
            SidmSetup {
                cross_section: fall_off,
                ..setup(1.0, &table)
            },
            "velocity-dependent, tabulated",
        ),
    ];
    for (setup, name) in &setups {
        for (rho0, sigma0) in [
            (1e8, 40.0),
            (3e7, 60.0),
            (5e8, 25.0),
            (2e7, 90.0),
            (3e8, 70.0),
        ] {
            let Ok((halo, j)) = core_first_with_outer_jacobian(setup, rho0, sigma0) else {
                continue;
            };
            // The same halo as the plain solve, bit for bit.
            let plain = core_first(setup, rho0, sigma0).expect("solves");
            assert_eq!(halo.summary(), plain.summary(), "{name}");
            let oracle = outer_jacobian_by_differences(setup, rho0, sigma0);
            let scale = oracle.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
            for w in 0..2 {
                for p in 0..2 {
                    let error = (j[w][p] - oracle[w][p]).abs() / scale;
                    worst = worst.max(error);
                    assert!(
                        error < 1e-6,
                        "{name}, ρ0 {rho0:e}, σ0 {sigma0}: J[{w}][{p}] {} vs differences {}",
                        j[w][p],
                        oracle[w][p]
                    );
                }
            }
            let det = outer_jacobian_det(&j);
            let fd_det = outer_halo_jacobian_det(setup, (rho0, sigma0)).expect("solves");
            assert_relative_eq!(det, fd_det, max_relative = 1e-3);
            checked += 1;
        }
    }
    assert!(checked >= 12, "only {checked} cores had an NFW match");
    eprintln!("worst relative Jacobian error {worst:e} over {checked} cores");
}

#[test]
fn crossing_sensitivities_match_differences() {
    // Oracle: central differences (step 1e-4 in ln ρ0 and ln σ0) of the crossing itself, at the
    // default step and a 4× finer one; a Hernquist bulge and tabulated baryons, whose kinks the
    // grid steps across. The variational equations differentiate the discrete solution itself,
    // the grid's motion with the series start included: to 1e-6 where the start sits at a fixed
    // radius (r_c beyond 1% of the baryons' inner scale). A denser core (ρ0 = 1e10) starts at a
    // fixed ξ instead; there the table's kinks slide across a grid fixed in ξ, the discrete
    // solution is smooth only between stage crossings, and differences over a step of 1e-4 see
    // that (2.7e-4 at most): 1e-3, immaterial for a prior density.
    let bulge = Hernquist::new(3e9, 1.5).expect("valid");
    let table = kinked_table();
    let cases: [(&dyn EnclosedMass, f64, f64, f64); 6] = [
        (&bulge, 2e7, 90.0, 1e-6),
        (&bulge, 1e8, 40.0, 1e-6),
        (&bulge, 1e10, 30.0, 1e-6),
        (&table, 2e7, 90.0, 1e-6),
        (&table, 1e8, 40.0, 1e-6),
        (&table, 1e10, 30.0, 1e-3),
    ];
    for (baryons, rho0, sigma0, tolerance) in cases {
        let s = setup(1.0, baryons);
        for step in [jeans::STEP_LN_XI, jeans::STEP_LN_XI / 4.0] {
            let crossing = |ln_rho0: f64, ln_sigma0: f64| {
                let (rho0, sigma0) = (ln_rho0.exp(), ln_sigma0.exp());
                let rho1 = s.cross_section.rate_density_msun_kpc3(sigma0, s.age_gyr);
                jeans::JeansProblem::new(rho0, sigma0, s.baryons)
                    .with_step(step)
                    // ψ_stop = ln ρ0 − ln ρ1 with ρ1 ∝ 1/σ0.
                    .integrate_with_sensitivity((rho0 / rho1).ln(), [1.0, 1.0], None)
                    .expect("integrates")
                    .expect("crosses")
            };
            let (a, b) = (rho0.ln(), sigma0.ln());
            let at = crossing(a, b);
            const STEP: f64 = 1e-4;
            let nudges = [
                (crossing(a + STEP, b), crossing(a - STEP, b)),
                (crossing(a, b + STEP), crossing(a, b - STEP)),
            ];
            for (p, (up, down)) in nudges.iter().enumerate() {
                let d_ln_xi = (up.crossing.ln_xi - down.crossing.ln_xi) / (2.0 * STEP);
                let d_m = (up.crossing.m - down.crossing.m) / (2.0 * STEP);
                assert_relative_eq!(at.d_ln_xi[p], d_ln_xi, max_relative = tolerance);
                assert_relative_eq!(at.d_m[p], d_m, max_relative = tolerance);
            }
        }
    }
}

/// Tabulated gas + disk masses with kinks at every radius (Msun within kpc).
fn kinked_table() -> crate::baryons::BaryonTable {
    crate::baryons::BaryonTable::from_signed_mass(
        vec![0.3, 0.8, 1.5, 2.5, 4.0, 6.0, 9.0],
        vec![2e7, 2.2e8, 8e8, 1.9e9, 3.1e9, 3.9e9, 4.2e9],
    )
    .expect("valid table")
}
