//! The population fits' evidence (parallel tempering, thermodynamic integration) against direct
//! quadrature of the one-parameter constant model, and its verdict on invented galaxies whose
//! σ/m posteriors scatter around one constant value.

use caldera_infer::population::{
    GalaxyPosterior, PopulationLikelihood, PopulationModel as _, PopulationSettings, Treatment,
    VelocityModel, fit_population,
};
use caldera_infer::sampler::Silent;
use caldera_infer::tempering::LadderConfig;

use rand::SeedableRng;
use rand_distr::{Distribution, Normal};
use rand_xoshiro::Xoshiro256PlusPlus;

/// Eight invented galaxies from ⟨v_rel⟩ ≈ 40 to 300 km/s whose log10 σ/m posteriors are normal
/// around log10(2 cm²/g) with 0.35 dex width, each centred off the truth by an invented offset.
fn constant_population() -> Vec<GalaxyPosterior> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(31);
    let offsets = [0.2, -0.1, 0.05, -0.3, 0.15, 0.0, -0.05, 0.25];
    offsets
        .iter()
        .enumerate()
        .map(|(k, offset)| {
            let sigma0 = 20.0 * 1.33f64.powi(k as i32);
            let centre = 2f64.log10() + offset;
            let normal = Normal::new(centre, 0.35).expect("valid");
            let log10_sigma_m: Vec<f64> = (0..1500).map(|_| normal.sample(&mut rng)).collect();
            let sigma0s: Vec<f64> = (0..1500)
                .map(|_| {
                    sigma0 * (1.0 + 0.05 * Normal::new(0.0, 1.0).expect("valid").sample(&mut rng))
                })
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

fn settings() -> PopulationSettings {
    PopulationSettings {
        evidence: Some(LadderConfig {
            rungs: 12,
            steps: 2000,
            ..LadderConfig::default()
        }),
        ..PopulationSettings::default()
    }
}

#[test]
fn constant_model_evidence_matches_quadrature() {
    let galaxies = constant_population();
    let fit = fit_population(
        VelocityModel::Constant,
        Treatment::Marginal,
        &galaxies,
        &[],
        &settings(),
        &mut Silent,
    )
    .expect("fits");
    let (z, z_err) = (
        fit.log_evidence.expect("ln Z"),
        fit.log_evidence_err.expect("its error"),
    );
    // Quadrature: ln ∫ (1/width) L(x) dx over the prior's log10 σ/m range, 20 000 midpoints.
    let likelihood = PopulationLikelihood::new(
        VelocityModel::Constant,
        Treatment::Marginal,
        10.0,
        &galaxies,
        &[],
    );
    let parameter = &VelocityModel::Constant.population_parameters()[0];
    let (a, b) = (parameter.lower, parameter.upper);
    let n = 20_000;
    let h = (b - a) / f64::from(n);
    let values: Vec<f64> = (0..n)
        .map(|i| likelihood.log_likelihood(&[a + h * (f64::from(i) + 0.5)]))
        .collect();
    let top = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let quadrature = top + (values.iter().map(|v| (v - top).exp()).sum::<f64>() * h / (b - a)).ln();
    println!("constant model: ln Z = {z:.3} ± {z_err:.3}, quadrature {quadrature:.3}");
    assert!(
        (z - quadrature).abs() < 3.0 * z_err.max(0.02),
        "{z} ± {z_err} vs quadrature {quadrature}"
    );
}

#[test]
fn a_constant_population_does_not_favour_a_fall_off() {
    let galaxies = constant_population();
    let fit = |model| {
        fit_population(
            model,
            Treatment::Marginal,
            &galaxies,
            &[],
            &settings(),
            &mut Silent,
        )
        .expect("fits")
    };
    let (constant, fall_off) = (fit(VelocityModel::Constant), fit(VelocityModel::FallOff));
    let (zc, zf) = (
        constant.log_evidence.expect("ln Z"),
        fall_off.log_evidence.expect("ln Z"),
    );
    println!(
        "ln Z: constant {zc:.2}, fall-off {zf:.2}, ln B(fall-off/constant) {:.2}",
        zf - zc
    );
    // The fall-off nests the constant (w → ∞) and pays for its extra parameter: no evidence for
    // it (ln B below 1, "not worth more than a bare mention" on the Kass & Raftery scale).
    assert!(zf - zc < 1.0, "ln B(fall-off/constant) = {}", zf - zc);
}
