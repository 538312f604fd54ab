//! Halo profiles against independent scipy values.
//!
//! Reference: Einasto (1965) profile; enclosed mass by the regularised lower incomplete gamma
//! function (scipy.special.gammainc) and, independently, by scipy.integrate.quad of the density,
//! via tests/reference/make_halo_fixtures.py; fixture tests/reference/fixtures/halo_scipy.json.
//! Tolerance: 1e-9 relative (both routes agree with each other to better than 1e-8).

use caldera_checks::read_fixture;
use caldera_physics::{
    Cosmology, Einasto, HaloContext, HaloModel, HaloProfile, ParamId, ParamValues,
};
use serde::Deserialize;

const TOLERANCE: f64 = 1e-9;

#[derive(Deserialize)]
struct Fixture {
    h0_kms_mpc: f64,
    radii_kpc: Vec<f64>,
    einasto: Vec<EinastoCase>,
}

#[derive(Deserialize)]
struct EinastoCase {
    v200_kms: f64,
    c200: f64,
    alpha: f64,
    rho_minus2_msun_kpc3: f64,
    r_minus2_kpc: f64,
    v_circ_kms: Vec<f64>,
}

fn relative(a: f64, b: f64) -> f64 {
    (a - b).abs() / b.abs()
}

#[test]
fn einasto_circular_velocity_matches_scipy() {
    let fixture: Fixture = read_fixture("halo_scipy.json");
    let cosmology = Cosmology::with_hubble(fixture.h0_kms_mpc).expect("cosmology");
    assert!(!fixture.einasto.is_empty());
    for case in &fixture.einasto {
        let halo = Einasto::from_v200_c200(case.v200_kms, case.c200, case.alpha, &cosmology)
            .expect("an Einasto halo");
        assert!(relative(halo.r_minus2_kpc, case.r_minus2_kpc) < TOLERANCE);
        assert!(
            relative(halo.rho_minus2_msun_kpc3, case.rho_minus2_msun_kpc3) < 1e-8,
            "rho_-2 {} vs scipy {}",
            halo.rho_minus2_msun_kpc3,
            case.rho_minus2_msun_kpc3
        );
        for (&r, &expected) in fixture.radii_kpc.iter().zip(&case.v_circ_kms) {
            let v = halo.v_circ_kms(r);
            assert!(
                relative(v, expected) < TOLERANCE,
                "alpha {} at r = {r} kpc: {v} vs scipy {expected}",
                case.alpha
            );
        }
        // The registered family builds the same halo from (V200, c200, alpha).
        let values = ParamValues::from_pairs([
            (ParamId::V200, case.v200_kms),
            (ParamId::C200, case.c200),
            (ParamId::EinastoAlpha, case.alpha),
        ]);
        let context = HaloContext {
            cosmology,
            ..HaloContext::without_baryons()
        };
        let built = HaloModel::Einasto
            .family()
            .build(&values, &context)
            .expect("the family builds");
        let r = fixture.radii_kpc[3];
        assert!(relative(built.profile.v_circ_kms(r), case.v_circ_kms[3]) < TOLERANCE);
        assert_eq!(built.derived.c200, Some(case.c200));
        assert!(relative(built.derived.r_minus2_kpc.expect("r-2"), case.r_minus2_kpc) < TOLERANCE);
    }
}
