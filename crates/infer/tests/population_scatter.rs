//! The hierarchical population model: an intrinsic scatter τ of the galaxies' log10 σ/m about
//! the population model, recovered from invented galaxies whose true σ/m scatter by a known τ,
//! and not called for when they do not scatter.
//!
//! Each invented galaxy i has a true log10 σ/m y_i = log10(2 cm²/g) + ε_i, ε_i ~ N(0, τ²); its
//! measurement m_i = y_i + N(0, s²) and its posterior (flat prior in log10 σ/m) N(m_i, s²) — the
//! exact posterior of that Gaussian measurement, so the population likelihood has a known form
//! and a correct fit covers τ.

use caldera_infer::population::{
    GalaxyPosterior, PopulationFit, PopulationSettings, Treatment, VelocityModel, fit_population,
};
use caldera_infer::sampler::Silent;

use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Galaxies per invented population.
const GALAXIES: usize = 30;
/// Width of each galaxy's σ/m posterior, dex.
const POSTERIOR_WIDTH_DEX: f64 = 0.25;

fn population(tau_dex: f64, seed: u64) -> Vec<GalaxyPosterior> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let unit = Normal::new(0.0, 1.0).expect("valid");
    (0..GALAXIES)
        .map(|k| {
            let sigma0 = 15.0 * 1.09f64.powi(k as i32);
            let truth = 2f64.log10() + tau_dex * unit.sample(&mut rng);
            let measured = truth + POSTERIOR_WIDTH_DEX * unit.sample(&mut rng);
            let log10_sigma_m: Vec<f64> = (0..1000)
                .map(|_| measured + POSTERIOR_WIDTH_DEX * unit.sample(&mut rng))
                .collect();
            let sigma0s: Vec<f64> = (0..1000)
                .map(|_| sigma0 * (1.0 + 0.05 * unit.sample(&mut rng)))
                .collect();
            GalaxyPosterior::from_samples(
                &format!("G{k}"),
                &sigma0s,
                &log10_sigma_m,
                (-2.0, 2.0),
                600,
            )
            .expect("valid posterior")
        })
        .collect()
}

fn fit(galaxies: &[GalaxyPosterior], treatment: Treatment, scatter: bool) -> PopulationFit {
    fit_population(
        VelocityModel::Constant,
        treatment,
        galaxies,
        &[],
        &PopulationSettings {
            scatter,
            ..PopulationSettings::default()
        },
        &mut Silent,
    )
    .expect("fits")
}

#[test]
fn a_scattered_population_needs_its_scatter_and_recovers_it() {
    let true_tau = 0.5;
    let galaxies = population(true_tau, 7);
    for treatment in [Treatment::Marginal, Treatment::Joint] {
        let plain = fit(&galaxies, treatment, false);
        let scattered = fit(&galaxies, treatment, true);
        assert!(scattered.converged && plain.converged);
        let tau = scattered
            .scatter_dex()
            .and_then(|p| p.interval)
            .expect("a tau interval");
        println!(
            "{treatment:?}: tau {:.3} [{:.3}, {:.3}] (95% {:.3}–{:.3}), BIC with {:.2} without {:.2}",
            tau.median, tau.p16, tau.p84, tau.p2_5, tau.p97_5, scattered.bic, plain.bic
        );
        assert!(tau.upper95.is_none(), "a measured scatter, not a limit");
        assert!(
            tau.p2_5 <= true_tau && true_tau <= tau.p97_5,
            "true tau {true_tau} outside [{}, {}]",
            tau.p2_5,
            tau.p97_5
        );
        assert!(
            scattered.bic < plain.bic - 2.0,
            "BIC should call for the scatter: {} vs {}",
            scattered.bic,
            plain.bic
        );
        // The constant is recovered either way, but only the scattered fit's interval is honest
        // about the spread: it is wider.
        let width = |f: &PopulationFit| {
            let i = f.parameters[0].interval.expect("interval");
            i.p84.log10() - i.p16.log10()
        };
        assert!(width(&scattered) > 1.3 * width(&plain));
        let sigma_m = scattered.parameters[0].interval.expect("interval");
        assert!(sigma_m.p2_5 <= 2.0 && 2.0 <= sigma_m.p97_5);
    }
}

#[test]
fn a_population_without_scatter_does_not_call_for_it() {
    let galaxies = population(0.0, 11);
    let plain = fit(&galaxies, Treatment::Marginal, false);
    let scattered = fit(&galaxies, Treatment::Marginal, true);
    let tau = scattered
        .scatter_dex()
        .and_then(|p| p.interval)
        .expect("a tau interval");
    println!(
        "tau: median {:.3}, upper95 {:?}, BIC with {:.2} without {:.2}",
        tau.median, tau.upper95, scattered.bic, plain.bic
    );
    // The extra parameter earns nothing: BIC rises by about ln N.
    assert!(
        scattered.bic > plain.bic,
        "{} vs {}",
        scattered.bic,
        plain.bic
    );
    // No scatter is resolved beyond the posteriors' own width.
    let bound = tau.upper95.unwrap_or(tau.p97_5);
    assert!(bound < POSTERIOR_WIDTH_DEX, "tau 95% bound {bound}");
}
