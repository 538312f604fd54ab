//! The default halo-first search against the exhaustive one it was cut down from (the oracle):
//! over 3000 random halos with baryons (Hernquist bulges and tabulated gas + disk) and 1000
//! without, both find the same solutions — every branch, in the same order, to 1e-6 — or both
//! report none; and the lowest-density solve (`Branch::LowestDensity`, which skips the search
//! when the sheet rule recognises a followed baryon-free core) returns the oracle's first. Random halos: M200 10^9.5–10^12.5 Msun, c200 4–30, σ/m 0.05–50 cm²/g
//! (log-uniform), halo age 5–13 Gyr; bulges 10^7.5–10^10.5 Msun with scale 0.2–4 kpc.

use caldera_physics::{
    BaryonTable, BaryonVelocities, Branch, Cosmology, CrossSection, EnclosedMass, Hernquist, Nfw,
    NoBaryons, PhysicsError, Search, SidmHalo, SidmSetup, sidm,
};
use rand::SeedableRng;
use rand_distr::{Distribution, Uniform};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Invented gas + stellar disk velocity curves of a galaxy with maximum disk speed `v_disk`
/// (km/s) and disk scale `h` (kpc), at 24 radii.
fn table_baryons(v_disk: f64, h: f64, upsilon: f64) -> BaryonTable {
    let radii: Vec<f64> = (1..=24).map(|i| 0.35 * h * f64::from(i)).collect();
    let rows: Vec<BaryonVelocities> = radii
        .iter()
        .map(|&r| BaryonVelocities {
            gas_kms: 0.5 * v_disk * (r / (3.0 * h)) / (1.0 + (r / (3.0 * h)).powi(2)).sqrt(),
            disk_kms: v_disk * (r / h) * (-r / (2.0 * h)).exp().sqrt() / 1.2,
            bulge_kms: 0.0,
        })
        .collect();
    BaryonTable::new(&radii, &rows, upsilon, 0.0).expect("valid invented table")
}

/// (ρ0, σ0) of every solution, or the error.
fn solutions(
    setup: &SidmSetup,
    nfw: &Nfw,
    search: Search,
) -> Result<Vec<(f64, f64)>, PhysicsError> {
    sidm::halo_first_all_with(setup, nfw, search).map(|all: Vec<SidmHalo>| {
        all.iter()
            .map(|h| (h.rho0_msun_kpc3(), h.sigma0_kms()))
            .collect()
    })
}

fn agree(case: usize, setup: &SidmSetup, nfw: &Nfw, counts: &mut [usize; 4]) -> Result<(), String> {
    let fast = solutions(setup, nfw, Search::Fast);
    let oracle = solutions(setup, nfw, Search::Exhaustive);
    // The lowest-density solve, which skips the search where the sheet rule recognises a
    // followed baryon-free core, must return the oracle's lowest-density core.
    let lowest = sidm::halo_first(setup, nfw, Branch::LowestDensity)
        .map(|h| (h.rho0_msun_kpc3(), h.sigma0_kms()));
    match (&lowest, oracle.as_ref().map(|all| all.first())) {
        (Ok(x), Ok(Some(y)))
            if (x.0 / y.0 - 1.0).abs() <= 1e-6 && (x.1 / y.1 - 1.0).abs() <= 1e-6 => {}
        (Err(_), Err(_)) => {}
        _ => {
            return Err(format!(
                "case {case}: lowest-density {lowest:?} vs the oracle's {oracle:?} ({setup:?}, {nfw:?})"
            ));
        }
    }
    match (&fast, &oracle) {
        (Ok(a), Ok(b)) => {
            if a.len() != b.len() {
                return Err(format!(
                    "case {case}: {} solutions, the oracle {}: {a:?} vs {b:?} ({setup:?}, {nfw:?})",
                    a.len(),
                    b.len()
                ));
            }
            for (x, y) in a.iter().zip(b) {
                if (x.0 / y.0 - 1.0).abs() > 1e-6 || (x.1 / y.1 - 1.0).abs() > 1e-6 {
                    return Err(format!("case {case}: {a:?} vs the oracle's {b:?}"));
                }
            }
            counts[a.len().min(3)] += 1;
            Ok(())
        }
        (Err(_), Err(_)) => {
            counts[0] += 1;
            Ok(())
        }
        _ => Err(format!(
            "case {case}: {fast:?} vs the oracle's {oracle:?} ({setup:?}, {nfw:?})"
        )),
    }
}

fn sweep(cases: usize, seed: u64, baryons_kind: usize) -> [usize; 4] {
    let cosmology = Cosmology::default();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let unit = Uniform::new(0.0f64, 1.0).expect("valid range");
    let mut u = || unit.sample(&mut rng);
    // Solutions found: none, one, two, three or more.
    let mut counts = [0usize; 4];
    let mut failures = Vec::new();
    for case in 0..cases {
        let m200 = 10f64.powf(9.5 + 3.0 * u());
        let c200 = 4.0 + 26.0 * u();
        let sigma_m = 10f64.powf(-1.3 + 3.0 * u());
        let age = 5.0 + 8.0 * u();
        let nfw = Nfw::from_m200_c200(m200, c200, &cosmology).expect("valid halo");
        let bulge = Hernquist::new(10f64.powf(7.5 + 3.0 * u()), 0.2 + 3.8 * u()).expect("valid");
        let v_disk = 15.0 + 185.0 * u();
        let table = table_baryons(v_disk, 0.4 + 3.6 * u(), 0.2 + 1.3 * u());
        let baryons: &dyn EnclosedMass = match baryons_kind {
            0 => &NoBaryons,
            1 => &bulge,
            _ => &table,
        };
        let setup = SidmSetup {
            cross_section: CrossSection::constant(sigma_m).expect("valid"),
            age_gyr: age,
            baryons,
            cosmology,
        };
        if let Err(e) = agree(case, &setup, &nfw, &mut counts) {
            failures.push(e);
        }
    }
    assert!(
        failures.is_empty(),
        "{} of {cases} disagree:\n{}",
        failures.len(),
        failures.join("\n")
    );
    counts
}

#[test]
fn fast_search_agrees_with_the_exhaustive_one_without_baryons() {
    let counts = sweep(1000, 11, 0);
    println!("no baryons: solutions none/1/2/≥3: {counts:?}");
    assert!(counts[1] > 0, "{counts:?}");
}

#[test]
fn fast_search_agrees_with_the_exhaustive_one_with_a_bulge() {
    let counts = sweep(1500, 12, 1);
    println!("Hernquist bulge: solutions none/1/2/≥3: {counts:?}");
    assert!(counts[1] > 0, "{counts:?}");
}

#[test]
fn fast_search_agrees_with_the_exhaustive_one_with_tabulated_baryons() {
    let counts = sweep(1500, 13, 2);
    println!("tabulated gas + disk: solutions none/1/2/≥3: {counts:?}");
    assert!(counts[1] > 0, "{counts:?}");
}
