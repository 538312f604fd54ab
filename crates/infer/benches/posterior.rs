//! Benchmarks of the inference hot paths: one SIDM log-posterior evaluation for a demo dwarf,
//! and a demo dwarf's and a demo spiral's full SIDM fit (MAP + ensemble sampler to a converged
//! chain) on one core.

use std::hint::black_box;
use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{ReadOptions, read_table};
use caldera_infer::model::GalaxyModel;
use caldera_infer::sampler::{LogDensity, Silent};
use caldera_infer::{FitConfig, fit_galaxy};
use criterion::{Criterion, criterion_group, criterion_main};

fn demo(name: &str) -> caldera_data::GalaxyTable {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../demo_galaxies")
        .join(name);
    read_table(&path, &ReadOptions::default()).expect("demo table")
}

fn benches(c: &mut Criterion) {
    let table = demo("kiln_d03.ecsv");
    let config = FitConfig::default();
    let model = GalaxyModel::new(
        &table,
        HaloModel::Sidm,
        config.priors,
        config.cosmology,
        None,
    )
    .expect("model");
    // A point near the posterior peak: ρ0 = 3.8e7, σ0 = 38, σ/m = 5, Υ = 0.55, D, i at the table's.
    let mut theta = model.centre();
    theta[0] = 3.8e7f64.log10();
    theta[1] = 38f64.log10();
    theta[2] = 5f64.log10();
    theta[3] = 0.55f64.log10();
    let mut derived = vec![0.0; model.n_derived()];
    assert!(model.log_density(&theta, &mut derived).is_finite());
    c.bench_function("log_posterior/sidm_demo_dwarf", |b| {
        b.iter(|| model.log_density(black_box(&theta), &mut derived));
    });

    let one_core = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("thread pool");
    let mut group = c.benchmark_group("fit");
    group.sample_size(10);
    group.bench_function("sidm_demo_dwarf_one_core", |b| {
        b.iter(|| {
            one_core.install(|| {
                let result =
                    fit_galaxy(&table, HaloModel::Sidm, &config, &mut Silent).expect("fit");
                assert!(result.summary.converged);
                result.summary.n_evaluations
            })
        });
    });
    // A demo spiral with a bulge (straightened: τ ≈ 33 steps; unstraightened ≈ 160), see
    // DEVELOPERS.md.
    let spiral = demo("kiln_s01.ecsv");
    group.bench_function("sidm_demo_spiral_one_core", |b| {
        b.iter(|| {
            one_core.install(|| {
                let result =
                    fit_galaxy(&spiral, HaloModel::Sidm, &config, &mut Silent).expect("fit");
                assert!(result.summary.converged);
                result.summary.n_evaluations
            })
        });
    });
    group.finish();
}

criterion_group!(posterior, benches);
criterion_main!(posterior);
