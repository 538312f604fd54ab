//! The SIDM fit samples core-first coordinates (log ρ0, log σ0, log σ/m) and carries the outer
//! halo's prior over with a Jacobian; with the default branch choice it admits only the
//! lowest-density core of each outer halo, recognised by a test on the core itself (the sign of
//! the Jacobian and the core contrast, `caldera_physics::sidm::is_lowest_density_core`). Here that test
//! is checked against an independent path, the halo-first search (every core matching a given
//! outer halo): for halos drawn from the stated prior with each demo galaxy's baryons (Υ at the
//! prior medians), the fit's prior must be finite at the halo-first search's lowest-density core
//! and zero at every other core it finds, wherever the core lies within the sampled bounds.

use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{ReadOptions, read_table};
use caldera_infer::model::GalaxyModel;
use caldera_infer::priors::Priors;
use caldera_infer::sampler::LogDensity;
use caldera_physics::{
    Cosmology, CrossSection, Nfw, ParamId, ParamValues, Search, SidmSetup, sidm,
};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal, Uniform};
use rand_xoshiro::Xoshiro256PlusPlus;

#[test]
fn the_first_sheet_rule_admits_exactly_the_lowest_density_core() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_galaxies");
    let mut names: Vec<_> = std::fs::read_dir(&dir)
        .expect("demo folder")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "ecsv"))
        .collect();
    names.sort();
    assert_eq!(names.len(), 16);
    let priors = Priors::default();
    let cosmology = Cosmology::default();
    let (v_lo, v_hi) = priors.halo.log10_v200;
    let (s_lo, s_hi) = (
        priors.cross_section.min_cm2_g.log10(),
        priors.cross_section.max_cm2_g.log10(),
    );
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(2026);
    let unit = Uniform::new(0.0f64, 1.0).expect("valid range");
    let normal = Normal::new(0.0f64, 1.0).expect("valid");
    // (halos, with a core in bounds, with several cores, cores checked, disagreements)
    let (mut halos, mut lowest_in_bounds, mut several, mut checked) = (0, 0, 0, 0);
    let mut disagreements = Vec::new();
    for path in &names {
        let table = read_table(path, &ReadOptions::default()).expect("demo table");
        let model =
            GalaxyModel::new(&table, HaloModel::Sidm, priors, cosmology, None).expect("model");
        let baryons = model
            .baryons_at_values(&ParamValues::default())
            .expect("baryons");
        for _ in 0..120 {
            let v200 = 10f64.powf(v_lo + (v_hi - v_lo) * unit.sample(&mut rng));
            let nfw0 = Nfw::from_v200_c200(v200, 10.0, &cosmology).expect("halo");
            let m200 = nfw0.virial(&cosmology).expect("virial").m200_msun;
            let log_c = cosmology.dutton_maccio_c200(m200).log10()
                + priors.concentration_scatter_dex * normal.sample(&mut rng);
            let sigma_m = 10f64.powf(s_lo + (s_hi - s_lo) * unit.sample(&mut rng));
            let nfw = Nfw::from_v200_c200(v200, 10f64.powf(log_c), &cosmology).expect("halo");
            let setup = SidmSetup {
                cross_section: CrossSection::constant(sigma_m).expect("valid"),
                age_gyr: model.age_gyr,
                baryons: &baryons,
                cosmology,
            };
            halos += 1;
            let Ok(cores) = sidm::halo_first_all_with(&setup, &nfw, Search::Fast) else {
                continue;
            };
            if cores.len() > 1 {
                several += 1;
            }
            for (k, core) in cores.iter().enumerate() {
                let mut values = ParamValues::default();
                values.set(ParamId::Rho0, core.rho0_msun_kpc3());
                values.set(ParamId::Sigma0, core.sigma0_kms());
                values.set(ParamId::SigmaM, sigma_m);
                let theta = model.theta_from_values(&values);
                if !model.in_bounds(&theta) {
                    continue;
                }
                if k == 0 {
                    lowest_in_bounds += 1;
                }
                checked += 1;
                let mut derived = vec![0.0; model.n_derived()];
                let admitted = model.log_density(&theta, &mut derived).is_finite();
                if admitted != (k == 0) {
                    disagreements.push(format!(
                        "{}: V200 {v200:.1} km/s, log c200 {log_c:.3}, sigma/m {sigma_m:.3}: core {k} of {} (log rho0 {:.3}, contrast {:.2}) admitted = {admitted}",
                        path.display(),
                        cores.len(),
                        core.rho0_msun_kpc3().log10(),
                        core.core_contrast_ln()
                    ));
                }
            }
        }
    }
    println!(
        "{halos} halos, {lowest_in_bounds} with the lowest-density core in bounds, {several} with several cores; {checked} cores checked, {} disagreements",
        disagreements.len()
    );
    assert!(
        several > 50,
        "too few multi-core halos to test the rule: {several}"
    );
    assert!(
        disagreements.is_empty(),
        "{} disagreements:\n{}",
        disagreements.len(),
        disagreements.join("\n")
    );
}
