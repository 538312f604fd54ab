//! Benchmarks of the population hot paths: one Maxwellian average ⟨σv⟩/m per cross-section
//! model, and one population log-likelihood (16 invented galaxies × 600 samples) in the marginal
//! and joint treatments; and one forecast catalogue's ΔBIC (the constant and fall-off models'
//! maximum likelihoods over the same 16 galaxies), what `caldera forecast` repeats
//! replicas × sizes times.

use std::hint::black_box;

use caldera_infer::forecast::delta_bic;
use caldera_infer::population::{
    GalaxyPosterior, PopulationLikelihood, PopulationSettings, Treatment, VelocityModel,
};
use caldera_physics::CrossSection;
use criterion::{Criterion, criterion_group, criterion_main};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// 16 invented galaxies from σ0 = 20 to 150 km/s, each with 600 samples of (σ0, log10 σ/m)
/// around a falling trend.
fn galaxies() -> Vec<GalaxyPosterior> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
    (0..16)
        .map(|g| {
            let sigma0 = 20.0 * (150.0f64 / 20.0).powf(f64::from(g) / 15.0);
            let centre = 1.0 - 1.2 * (sigma0 / 20.0).log10();
            let s0 = Normal::new(sigma0, 0.1 * sigma0).expect("normal");
            let y = Normal::new(centre, 0.4).expect("normal");
            let sigma0s: Vec<f64> = (0..600).map(|_| s0.sample(&mut rng).abs()).collect();
            let ys: Vec<f64> = (0..600).map(|_| y.sample(&mut rng).max(-2.0)).collect();
            GalaxyPosterior::from_samples(&format!("g{g}"), &sigma0s, &ys, (-2.0, 2.0), 600)
                .expect("posterior")
        })
        .collect()
}

fn benches(c: &mut Criterion) {
    let models = [
        ("fall_off", CrossSection::fall_off(10.0, 150.0)),
        ("yukawa", CrossSection::yukawa(10.0, 5.0, 6e-4)),
        ("resonance", CrossSection::resonance(20.0, 1e-8, 1e-4, 0.3)),
    ];
    for (name, model) in models {
        let model = model.expect("valid");
        c.bench_function(&format!("maxwellian_average/{name}"), |b| {
            b.iter(|| black_box(&model).sigma_v_over_m_cm2_g_kms(black_box(60.0)))
        });
    }
    let galaxies = galaxies();
    for (treatment, label) in [
        (Treatment::Marginal, "marginal"),
        (Treatment::Joint, "joint"),
    ] {
        for (model, theta) in [
            (VelocityModel::FallOff, vec![1.0, 2.2]),
            (VelocityModel::Resonance, vec![1.3, -8.0, -4.0, -0.5]),
        ] {
            let likelihood = PopulationLikelihood::new(model, treatment, 10.0, &galaxies, &[]);
            assert!(likelihood.log_likelihood(&theta).is_finite());
            c.bench_function(
                &format!("population_log_likelihood/{label}/{}", model.name()),
                |b| b.iter(|| likelihood.log_likelihood(black_box(&theta))),
            );
        }
    }
    let settings = PopulationSettings::default();
    assert!(delta_bic(&galaxies, VelocityModel::FallOff, &settings).is_ok_and(f64::is_finite));
    c.bench_function("forecast_delta_bic/fall_off/16_galaxies", |b| {
        b.iter(|| delta_bic(black_box(&galaxies), VelocityModel::FallOff, &settings))
    });
}

criterion_group!(population, benches);
criterion_main!(population);
