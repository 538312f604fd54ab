//! The time from a parameter change to the new curve, as the app spends it.
//!
//! 1. The sweep: on every demo galaxy, σ/m, V200 and c200 each dragged over their whole slider
//!    range (60 steps up, from the galaxy's starting controls), as the app does it: each change
//!    is first tried on the UI thread with [`quick_live_curve`] (closed form, or the SIDM core
//!    followed from the one on screen); when that is not enough, the halo-first search runs in
//!    the background ([`live_curve`]) and the next change follows its answer. Printed: the UI
//!    thread's time per change (mean and worst; the target is a frame, 16 ms, worst and 2 ms
//!    mean) and how many changes needed a background search and how long those took.
//! 2. Criterion benches of one drag step (followed) and the same change solved afresh.

use std::hint::black_box;
use std::path::Path;
use std::time::Instant;

use caldera_app::live::{live_curve, quick_live_curve, starting_settings};
use caldera_data::session::{GalaxySettings, HaloModel};
use caldera_data::{GalaxyTable, ReadOptions, load_catalogue};
use caldera_physics::{Cosmology, ParamId};
use criterion::{Criterion, criterion_group, criterion_main};

/// Per-change timings of the sweep, in milliseconds.
#[derive(Default)]
struct Sweep {
    ui_ms: Vec<f64>,
    search_ms: Vec<f64>,
}

fn sweep_galaxy(table: &GalaxyTable, cosmology: &Cosmology, out: &mut Sweep) {
    let start = GalaxySettings {
        model: HaloModel::Sidm,
        ..starting_settings(table)
    };
    for id in [ParamId::SigmaM, ParamId::V200, ParamId::C200] {
        let (low, high, _) = id.control_range();
        // The galaxy opens with its starting curve (found by a search, as in the app).
        let mut previous = live_curve(table, &start, cosmology, None)
            .ok()
            .and_then(|c| c.sidm_core());
        for k in 0..60 {
            let value = low * (high / low).powf(f64::from(k) / 59.0);
            let mut changed = start.clone();
            changed.set_value(id, value);
            let clock = Instant::now();
            let quick = quick_live_curve(table, &changed, cosmology, previous);
            out.ui_ms.push(clock.elapsed().as_secs_f64() * 1e3);
            match quick {
                Ok(Some(curve)) => previous = curve.sidm_core(),
                Ok(None) => {
                    let clock = Instant::now();
                    let searched = live_curve(table, &changed, cosmology, previous);
                    out.search_ms.push(clock.elapsed().as_secs_f64() * 1e3);
                    // A value with no solution keeps the last core to follow from.
                    if let Ok(curve) = searched {
                        previous = curve.sidm_core();
                    }
                }
                Err(_) => {}
            }
        }
    }
}

fn summary(values: &[f64]) -> String {
    if values.is_empty() {
        return "none".into();
    }
    let mean = values.iter().sum::<f64>() / values.len() as f64;
    let worst = values.iter().copied().fold(0.0, f64::max);
    format!("mean {mean:.3} ms, worst {worst:.2} ms")
}

fn benches(c: &mut Criterion) {
    let cosmology = Cosmology::default();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_galaxies");
    let catalogue = load_catalogue(&demo, &ReadOptions::default()).expect("the demo catalogue");
    let tables: Vec<&GalaxyTable> = catalogue
        .entries
        .iter()
        .filter_map(|e| e.table.as_ref().ok())
        .collect();
    let mut sweep = Sweep::default();
    for table in &tables {
        sweep_galaxy(table, &cosmology, &mut sweep);
    }
    println!(
        "live sweep over {} demo galaxies × (σ/m, V200, c200) × 60 steps = {} changes:\n  UI thread per change: {}\n  background halo-first searches: {} ({})",
        tables.len(),
        sweep.ui_ms.len(),
        summary(&sweep.ui_ms),
        sweep.search_ms.len(),
        summary(&sweep.search_ms)
    );

    for (file, v200) in [("kiln_d03.ecsv", 45.0), ("kiln_s02.ecsv", 165.0)] {
        let Some(table) = tables
            .iter()
            .find(|t| t.source.as_ref().is_some_and(|p| p.ends_with(file)))
        else {
            continue;
        };
        let settings = GalaxySettings {
            v200_kms: v200,
            c200: 12.0,
            ..starting_settings(table)
        };
        // One drag step (σ/m from 1 to 1.02 cm²/g) following the previous solution, and the same
        // change solved afresh.
        let base = live_curve(table, &settings, &cosmology, None).expect("a curve");
        let guess = base.sidm_core();
        let step = GalaxySettings {
            sigma_m_cm2_g: 1.02,
            ..settings.clone()
        };
        c.bench_function(&format!("live_curve_drag_step/{file}"), |b| {
            b.iter(|| live_curve(table, black_box(&step), &cosmology, guess));
        });
        c.bench_function(&format!("live_curve_fresh/{file}"), |b| {
            b.iter(|| live_curve(table, black_box(&step), &cosmology, None));
        });
    }
}

criterion_group!(live, benches);
criterion_main!(live);
