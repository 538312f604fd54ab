//! The time from a parameter change to the new curve: the app's live-curve computation (SIDM
//! halo-first with the galaxy's baryons, then the model curve and χ²) over a sweep of σ/m for a
//! demo dwarf and a demo spiral. The target is one frame, 16 ms.

use std::hint::black_box;
use std::path::Path;
use std::time::Instant;

use caldera_app::live::live_curve;
use caldera_data::session::GalaxySettings;
use caldera_data::{ReadOptions, read_table};
use caldera_physics::Cosmology;
use criterion::{Criterion, criterion_group, criterion_main};

fn benches(c: &mut Criterion) {
    let cosmology = Cosmology::default();
    for (file, v200) in [("kiln_d03.ecsv", 45.0), ("kiln_s02.ecsv", 165.0)] {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../../demo_galaxies")
            .join(file);
        let table = read_table(&path, &ReadOptions::default()).expect("demo table");
        let settings = GalaxySettings {
            v200_kms: v200,
            c200: 12.0,
            distance_mpc: table.meta.distance_mpc,
            inclination_deg: table.meta.inclination_deg,
            ..GalaxySettings::default()
        };
        // A sweep like a slider drag: 60 values of σ/m from 0.1 to 30 cm²/g; report mean and worst.
        let sweep: Vec<f64> = (0..60)
            .map(|i| 0.1 * 300f64.powf(f64::from(i) / 59.0))
            .collect();
        // As in the app, each step of the drag follows the previous step's solution.
        let mut worst = 0.0f64;
        let mut total = 0.0;
        let mut previous = None;
        for &sigma in &sweep {
            let start = Instant::now();
            let changed = GalaxySettings {
                sigma_m_cm2_g: sigma,
                ..settings.clone()
            };
            let curve = live_curve(&table, &changed, &cosmology, previous);
            previous = curve.ok().and_then(|c| c.sidm_core());
            let ms = start.elapsed().as_secs_f64() * 1e3;
            worst = worst.max(ms);
            total += ms;
        }
        println!(
            "{file}: σ/m sweep of {}: mean {:.2} ms, worst {:.2} ms per change",
            sweep.len(),
            total / sweep.len() as f64,
            worst
        );
        // One drag step (σ/m from 1 to 1.02 cm²/g) following the previous solution, and the same
        // change solved afresh.
        let base = live_curve(&table, &settings, &cosmology, None).expect("a curve");
        let guess = base.sidm_core();
        let step = GalaxySettings {
            sigma_m_cm2_g: 1.02,
            ..settings.clone()
        };
        c.bench_function(&format!("live_curve_drag_step/{file}"), |b| {
            b.iter(|| live_curve(&table, black_box(&step), &cosmology, guess));
        });
        c.bench_function(&format!("live_curve_fresh/{file}"), |b| {
            b.iter(|| live_curve(&table, black_box(&step), &cosmology, None));
        });
    }
}

criterion_group!(live, benches);
criterion_main!(live);
