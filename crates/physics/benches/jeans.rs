//! Benchmarks of the hot paths every fit and every live curve update goes through:
//! one core-first solve (alone, and with its outer-halo Jacobian from the variational
//! equations against three solves for differences), one halo-first solve of the lowest-density
//! core and one of every core (the full search), and one full curve at 30 radii.

use std::hint::black_box;

use caldera_physics::{
    BaryonTable, BaryonVelocities, Branch, Cosmology, CrossSection, EnclosedMass, HaloProfile, Nfw,
    NoBaryons, SidmSetup, sidm,
};
use criterion::{Criterion, criterion_group, criterion_main};

/// An invented dwarf galaxy's baryons (gas, disk; no bulge) at 20 radii.
fn dwarf_baryons() -> BaryonTable {
    let radii: Vec<f64> = (1..=20).map(|i| 0.4 * f64::from(i)).collect();
    let rows: Vec<BaryonVelocities> = radii
        .iter()
        .map(|&r| BaryonVelocities {
            gas_kms: 12.0 * (r / 3.0) / (1.0 + (r / 3.0).powi(2)).sqrt(),
            disk_kms: 25.0 * (r / 1.2) * (-r / 2.4).exp().sqrt(),
            bulge_kms: 0.0,
        })
        .collect();
    BaryonTable::new(&radii, &rows, 0.5, 0.7).expect("valid invented table")
}

fn setup(baryons: &dyn EnclosedMass) -> SidmSetup<'_> {
    SidmSetup {
        cross_section: CrossSection::constant(3.0).expect("valid"),
        age_gyr: 10.0,
        baryons,
        cosmology: Cosmology::default(),
    }
}

fn benches(c: &mut Criterion) {
    let table = dwarf_baryons();
    let radii: Vec<f64> = (1..=30).map(|i| 0.25 * f64::from(i)).collect();
    let cosmology = Cosmology::default();
    let nfw = Nfw::from_m200_c200(1e11, 10.0, &cosmology).expect("valid");

    c.bench_function("core_first/no_baryons", |b| {
        let s = setup(&NoBaryons);
        b.iter(|| sidm::core_first(&s, black_box(1e8), black_box(40.0)));
    });
    c.bench_function("core_first/table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| sidm::core_first(&s, black_box(1e8), black_box(40.0)));
    });
    c.bench_function("core_first_with_outer_jacobian/table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| sidm::core_first_with_outer_jacobian(&s, black_box(1e8), black_box(40.0)));
    });
    c.bench_function("outer_jacobian_by_differences/table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| sidm::outer_halo_jacobian_det(&s, (black_box(1e8), black_box(40.0))));
    });
    c.bench_function("halo_first/no_baryons", |b| {
        let s = setup(&NoBaryons);
        b.iter(|| sidm::halo_first(&s, black_box(&nfw), Branch::LowestDensity));
    });
    c.bench_function("halo_first/table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| sidm::halo_first(&s, black_box(&nfw), Branch::LowestDensity));
    });
    c.bench_function("halo_first_all/table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| sidm::halo_first_all(&s, black_box(&nfw)));
    });
    c.bench_function("curve_30_radii/core_first_table_baryons", |b| {
        let s = setup(&table);
        b.iter(|| {
            let halo = sidm::core_first(&s, black_box(1e8), black_box(40.0)).expect("solves");
            radii
                .iter()
                .map(|&r| (halo.v_circ_kms(r).powi(2) + table.v_squared_kms2(r)).sqrt())
                .sum::<f64>()
        });
    });
}

criterion_group!(jeans, benches);
criterion_main!(jeans);
