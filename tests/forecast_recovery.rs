//! Recovery on invented populations of the forecast's default design (14 galaxies with V200
//! from 30 to 200 km/s, 20 points to 0.1 R200, 5% errors), each galaxy made by the mock
//! generator and fitted end to end with the stellar-to-halo mass prior:
//! - with a fall-off σ(v)/m (σ0/m = 20 cm²/g, w = 150 km/s), where `caldera forecast` expects
//!   detection (ΔBIC ≥ 6 in 81% of catalogues, ≥ 2 in 97%; README), the fall-off model is
//!   preferred and its 95% intervals hold the truth;
//! - with a constant σ/m = 2 cm²/g, the constant model is not rejected (ΔBIC < 6) and its 95%
//!   interval holds the truth.
//!
//! Both catalogues are fresh galaxies (seeds apart from any forecast pool's); one catalogue
//! each, so these check one honest draw, not the power itself (the forecast's job).

use caldera_infer::FitConfig;
use caldera_infer::forecast::{Design, DesignBin, ForecastSettings, delta_bic, fit_mocks};
use caldera_infer::population::{
    GalaxyPosterior, PopulationFit, PopulationSettings, Treatment, VelocityModel, fit_population,
};
use caldera_infer::priors::Priors;
use caldera_infer::sampler::Silent;
use caldera_physics::CrossSection;

fn design() -> Design {
    Design {
        bins: DesignBin::parse_list("30-60:5,60-120:5,120-200:4").expect("design"),
        extent_r200: 0.1,
        points: 20,
        error_fraction: 0.05,
        error_floor_kms: 1.0,
        age_gyr: 10.0,
    }
}

fn settings(truth: CrossSection) -> ForecastSettings {
    ForecastSettings {
        truth,
        alternative: VelocityModel::FallOff,
        scales: vec![1.0],
        replicas: 1,
        pool_factor: 1,
        interval_replicas: 0,
        seed: 0x7e57_0015,
        fit: FitConfig {
            priors: Priors {
                stellar_mass_halo: true,
                ..Priors::default()
            },
            ..FitConfig::default()
        },
        population: PopulationSettings::default(),
    }
}

fn catalogue(settings: &ForecastSettings) -> Vec<GalaxyPosterior> {
    let design = design();
    let counts: Vec<usize> = design.bins.iter().map(|b| b.count).collect();
    let mocks = fit_mocks(&design, &counts, settings, settings.seed, &|_, _| true).expect("fits");
    let unconverged = mocks.iter().filter(|m| !m.converged).count();
    assert_eq!(unconverged, 0, "every invented galaxy's chain converges");
    mocks.into_iter().map(|m| m.posterior).collect()
}

fn fitted(model: VelocityModel, galaxies: &[GalaxyPosterior]) -> PopulationFit {
    fit_population(
        model,
        Treatment::Marginal,
        galaxies,
        &[],
        &PopulationSettings::default(),
        &mut Silent,
    )
    .expect("population fit")
}

fn assert_covers(fit: &PopulationFit, name: &str, truth: f64) {
    let parameter = fit
        .parameters
        .iter()
        .find(|p| p.name == name)
        .expect("parameter");
    let interval = parameter.interval.expect("interval");
    eprintln!(
        "{name}: median {:.3}, 95% [{:.3}, {:.3}], truth {truth}",
        interval.median, interval.p2_5, interval.p97_5
    );
    assert!(
        interval.p2_5 <= truth && truth <= interval.p97_5,
        "{name}: truth {truth} outside [{}, {}]",
        interval.p2_5,
        interval.p97_5
    );
}

#[test]
fn a_fall_off_population_is_detected_where_the_forecast_expects_it() {
    let settings = settings(CrossSection::fall_off(20.0, 150.0).expect("valid"));
    let galaxies = catalogue(&settings);
    let delta = delta_bic(&galaxies, VelocityModel::FallOff, &settings.population).expect("ΔBIC");
    eprintln!("fall-off population: BIC(constant) − BIC(fall-off) = {delta:.2}");
    assert!(delta >= 2.0, "fall-off not preferred: ΔBIC {delta}");
    let fit = fitted(VelocityModel::FallOff, &galaxies);
    assert_covers(&fit, "sigma0_m", 20.0);
    assert_covers(&fit, "w", 150.0);
}

#[test]
fn a_constant_population_is_not_rejected() {
    let settings = settings(CrossSection::constant(2.0).expect("valid"));
    let galaxies = catalogue(&settings);
    let delta = delta_bic(&galaxies, VelocityModel::FallOff, &settings.population).expect("ΔBIC");
    eprintln!("constant population: BIC(constant) − BIC(fall-off) = {delta:.2}");
    assert!(delta < 6.0, "constant rejected: ΔBIC {delta}");
    let fit = fitted(VelocityModel::Constant, &galaxies);
    assert_covers(&fit, "sigma_m", 2.0);
}
