//! The SIDM Jeans solver against an independent scipy implementation.
//!
//! Reference: Kaplinghat, Tulin & Yu (2016) and Kamada et al. (2017) method; values from scipy
//! (solve_ivp DOP853 at rtol 1e-12, brentq, root/hybr) via tests/reference/make_fixtures.py,
//! fixture tests/reference/fixtures/jeans_scipy.json. Tolerance: 1e-4 relative.

use caldera_checks::{BaryonRecord, read_fixture};
use caldera_physics::{Branch, Cosmology, CrossSection, HaloProfile, Nfw, SidmSetup, sidm, units};
use serde::Deserialize;

const TOLERANCE: f64 = 1e-4;

#[derive(Deserialize)]
struct Fixture {
    #[serde(rename = "G_kpc_kms2_per_msun")]
    g: f64,
    cm2_per_g_in_kpc2_per_msun: f64,
    core_first: Vec<CoreCase>,
    halo_first: Vec<HaloCase>,
}

#[derive(Deserialize)]
struct CoreCase {
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
    sigma_m_cm2_g: f64,
    age_gyr: f64,
    baryons: BaryonRecord,
    r1_kpc: f64,
    rho_s_msun_kpc3: f64,
    r_s_kpc: f64,
    v200_kms: f64,
    c200: f64,
    radii_kpc: Vec<f64>,
    v_halo_kms: Vec<f64>,
}

#[derive(Deserialize)]
struct HaloCase {
    m200_msun: f64,
    c200: f64,
    sigma_m_cm2_g: f64,
    age_gyr: f64,
    baryons: BaryonRecord,
    rho0_msun_kpc3: f64,
    sigma0_kms: f64,
    r1_kpc: f64,
    radii_kpc: Vec<f64>,
    v_halo_kms: Vec<f64>,
}

fn fixture() -> Fixture {
    read_fixture("jeans_scipy.json")
}

fn close(name: &str, got: f64, want: f64) {
    let err = (got / want - 1.0).abs();
    eprintln!("{name}: relative error {err:.2e}");
    assert!(
        err < TOLERANCE,
        "{name}: got {got}, scipy {want} (rel. error {err:e})"
    );
}

#[test]
fn constants_agree_with_astropy() {
    let f = fixture();
    close("G", units::G_KPC_KMS2_PER_MSUN, f.g);
    close(
        "cm2/g",
        units::KPC2_PER_MSUN_PER_CM2_PER_G,
        f.cm2_per_g_in_kpc2_per_msun,
    );
}

#[test]
fn core_first_agrees_with_scipy() {
    for case in fixture().core_first {
        let baryons = case.baryons.to_mass();
        let setup = SidmSetup {
            cross_section: CrossSection::constant(case.sigma_m_cm2_g).expect("valid"),
            age_gyr: case.age_gyr,
            baryons: baryons.as_ref(),
            cosmology: Cosmology::default(),
        };
        let halo = sidm::core_first(&setup, case.rho0_msun_kpc3, case.sigma0_kms).expect("solves");
        let s = halo.summary();
        close("r1", s.r1_kpc, case.r1_kpc);
        close("rho_s", s.rho_s_msun_kpc3, case.rho_s_msun_kpc3);
        close("r_s", s.r_s_kpc, case.r_s_kpc);
        close("V200", s.v200_kms, case.v200_kms);
        close("c200", s.c200, case.c200);
        for (r, v) in case.radii_kpc.iter().zip(&case.v_halo_kms) {
            close(&format!("V_halo({r} kpc)"), halo.v_circ_kms(*r), *v);
        }
    }
}

#[test]
fn halo_first_agrees_with_scipy() {
    let cosmology = Cosmology::default();
    for case in fixture().halo_first {
        let baryons = case.baryons.to_mass();
        let setup = SidmSetup {
            cross_section: CrossSection::constant(case.sigma_m_cm2_g).expect("valid"),
            age_gyr: case.age_gyr,
            baryons: baryons.as_ref(),
            cosmology,
        };
        let nfw = Nfw::from_m200_c200(case.m200_msun, case.c200, &cosmology).expect("valid");
        let halo = sidm::halo_first(&setup, &nfw, Branch::LowestDensity).expect("solves");
        close("rho0", halo.rho0_msun_kpc3(), case.rho0_msun_kpc3);
        close("sigma0", halo.sigma0_kms(), case.sigma0_kms);
        close("r1", halo.r1_kpc(), case.r1_kpc);
        for (r, v) in case.radii_kpc.iter().zip(&case.v_halo_kms) {
            close(&format!("V_halo({r} kpc)"), halo.v_circ_kms(*r), *v);
        }
    }
}
