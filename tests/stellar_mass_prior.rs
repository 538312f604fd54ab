//! The stellar-to-halo mass prior (`--stellar-mass-prior`): where the stellar mass at Υ = 1
//! comes from, how good the curves' estimate of it is, and that the prior adds exactly the
//! Moster, Naab & White (2013) relation's log-normal term at the sampled Υ's, distance and halo.

use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{GalaxyMeta, GalaxyTable, ReadOptions, read_table};
use caldera_infer::model::{GalaxyModel, StellarMassUnit};
use caldera_infer::priors::Priors;
use caldera_infer::sampler::LogDensity;
use caldera_physics::{Cosmology, ExponentialDisk, ParamId};
use rand::SeedableRng;
use rand_xoshiro::Xoshiro256PlusPlus;

/// Moster, Naab & White (2013, MNRAS 428, 3121) eq. 2 at z = 0 with their Table 1 values,
/// written out here apart from the library's copy: M*/M = 2N [(M/M1)^−β + (M/M1)^γ]^−1.
fn moster_stellar_mass(m200: f64) -> f64 {
    let x = m200 / 10f64.powf(11.590);
    m200 * 2.0 * 0.0351 / (x.powf(-1.376) + x.powf(0.608))
}

/// A table of one exponential stellar disk (its column at Υ = 1) measured out to `extent`
/// scale lengths.
fn disk_table(mass_msun: f64, scale_kpc: f64, extent: f64) -> GalaxyTable {
    let disk = ExponentialDisk::new(mass_msun, scale_kpc).expect("valid disk");
    let radius_kpc: Vec<f64> = (1..=20)
        .map(|i| extent * scale_kpc * f64::from(i) / 20.0)
        .collect();
    let v_disk_kms: Vec<f64> = radius_kpc
        .iter()
        .map(|&r| disk.v_squared_kms2(r).max(0.0).sqrt())
        .collect();
    GalaxyTable {
        meta: GalaxyMeta {
            name: "invented disk".into(),
            ..GalaxyMeta::default()
        },
        source: None,
        v_obs_kms: v_disk_kms.clone(),
        v_err_kms: vec![5.0; radius_kpc.len()],
        v_gas_kms: vec![0.0; radius_kpc.len()],
        v_disk_kms,
        v_bulge_kms: None,
        radius_kpc,
        warnings: Vec::new(),
    }
}

#[test]
fn the_curves_spherical_estimate_of_a_thin_disks_mass() {
    // V²R/GM of a thin exponential disk is 4y³[I0K0 − I1K1](y), y = R/2R_d (Freeman 1970):
    // 0.83 at 2.2 R_d, 1.19 at 4 R_d, 1.17 at 6 R_d, → 1 far out (Bessel values from
    // Abramowitz & Stegun's tables, from memory). The library's disk is checked against scipy
    // elsewhere; here the estimate the prior uses is measured against the disk's true mass.
    let mass = 1e9;
    for (extent, low, high) in [(2.2, 0.80, 0.86), (4.0, 1.15, 1.22), (6.0, 1.13, 1.20)] {
        let unit = StellarMassUnit::of_table(&disk_table(mass, 2.0, extent)).expect("has stars");
        assert!(!unit.from_metadata);
        let ratio = unit.disk_msun / mass;
        eprintln!("curves' estimate at {extent} scale lengths: {ratio:.3} of the disk's mass");
        assert!(
            (low..=high).contains(&ratio),
            "{extent} R_d: {ratio} outside [{low}, {high}]"
        );
        assert!(unit.bulge_msun.abs() < 1e-300);
    }
}

#[test]
fn metadata_gives_the_stellar_mass_when_present() {
    let mut table = disk_table(1e9, 2.0, 5.0);
    table.meta.luminosity_lsun = Some(2.5e9);
    let unit = StellarMassUnit::of_table(&table).expect("has stars");
    assert!(unit.from_metadata);
    assert!((unit.disk_msun - 2.5e9).abs() < 1.0);
    // No stars at all and no metadata: the prior refuses the table by name.
    let mut empty = disk_table(1e9, 2.0, 5.0);
    empty.v_disk_kms.iter_mut().for_each(|v| *v = 0.0);
    assert!(StellarMassUnit::of_table(&empty).is_none());
    let priors = Priors {
        stellar_mass_halo: true,
        ..Priors::default()
    };
    let Err(error) = GalaxyModel::new(&empty, HaloModel::Nfw, priors, Cosmology::default(), None)
    else {
        panic!("a table without stars was accepted");
    };
    assert!(error.to_string().contains("invented disk"), "{error}");
}

#[test]
fn the_prior_adds_the_moster_relations_log_normal_term() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_galaxies/kiln_s03.ecsv");
    let table = read_table(&path, &ReadOptions::default()).expect("demo table");
    let cosmology = Cosmology::default();
    let off = Priors::default();
    let on = Priors {
        stellar_mass_halo: true,
        ..off
    };
    let without = GalaxyModel::new(&table, HaloModel::Nfw, off, cosmology, None).expect("model");
    let with = GalaxyModel::new(&table, HaloModel::Nfw, on, cosmology, None).expect("model");
    let unit = with.stellar_mass_unit().expect("the prior is on");
    assert!(unit.disk_msun > 0.0 && unit.bulge_msun > 0.0, "{unit:?}");
    let table_distance = table.meta.distance_mpc.expect("distance");
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
    let mut derived = vec![0.0; with.n_derived()];
    let mut checked = 0;
    for _ in 0..200 {
        let theta = with.layout().draw(&mut rng);
        let (a, b) = (
            with.log_density(&theta, &mut derived),
            without.log_density(&theta, &mut derived),
        );
        if !(a.is_finite() && b.is_finite()) {
            continue;
        }
        let values = with.layout().values(&theta);
        let v200 = values.get(ParamId::V200).expect("V200");
        let m200 = v200 * v200 * cosmology.r200_kpc_from_v200(v200) / 4.300917270e-6;
        let distance_factor = values.get(ParamId::Distance).expect("distance") / table_distance;
        let stellar = (values.get(ParamId::UpsilonDisk).expect("Υ disk") * unit.disk_msun
            + values.get(ParamId::UpsilonBulge).expect("Υ bulge") * unit.bulge_msun)
            * distance_factor.powi(2);
        let z = (stellar / moster_stellar_mass(m200)).log10() / 0.15;
        assert!(
            ((a - b) - (-0.5 * z * z)).abs() < 1e-9,
            "at {theta:?}: the prior added {} instead of {}",
            a - b,
            -0.5 * z * z
        );
        checked += 1;
    }
    assert!(checked > 100, "only {checked} draws had a finite density");
}
