//! Recovery: fitting the SIDM model to every SIDM galaxy of the demo catalogue, the true σ/m and
//! ⟨v_rel⟩ (from each galaxy's .truth.json, made by the mock generator) fall inside the 95%
//! posterior intervals, allowing the expected few misses.
//!
//! With 14 galaxies × 2 quantities = 28 checks at 95% each, about 1.4 misses are expected;
//! the test allows up to 4 (binomial probability of more than 4 misses ≈ 2.5%; the run is seeded,
//! so the outcome is fixed). Chains are capped at 8,000 steps here to keep CI short; a capped
//! chain still counts (its interval is printed with its convergence flag).
//!
//! The same posteriors then go through the population fit: the demo's truths fall with velocity
//! (7 → 0.2 cm²/g, see demo_galaxies/make_demo.sh), so a velocity-dependent σ(v)/m must be
//! preferred over a constant σ/m by BIC.

use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{ReadOptions, read_table};
use caldera_infer::population::{
    GalaxyPosterior, PopulationSettings, Treatment, VelocityModel, fit_population, preferred_by_bic,
};
use caldera_infer::sampler::{RunConfig, Silent};
use caldera_infer::{FitConfig, fit_galaxy};
use serde_json::Value;

#[test]
fn demo_truths_fall_inside_their_95_percent_intervals() {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_galaxies");
    let mut tables: Vec<_> = std::fs::read_dir(&demo)
        .expect("demo folder")
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|e| e == "ecsv"))
        .collect();
    tables.sort();
    let config = FitConfig {
        run: RunConfig {
            max_steps: 8_000,
            ..RunConfig::default()
        },
        seed: 2026,
        ..FitConfig::default()
    };
    let (mut checks, mut misses) = (0, 0);
    let mut posteriors = Vec::new();
    for path in tables {
        let truth_path = path.with_file_name(format!(
            "{}.truth.json",
            path.file_stem().expect("stem").to_string_lossy()
        ));
        let truth: Value =
            serde_json::from_str(&std::fs::read_to_string(&truth_path).expect("truth"))
                .expect("truth JSON");
        let Some(sigma_true) = truth["spec"]["halo"]["sigma_m_cm2_g"].as_f64() else {
            continue; // not an SIDM galaxy
        };
        let v_rel_true = truth["sidm"]["v_rel_kms"].as_f64().expect("v_rel truth");
        let table = read_table(&path, &ReadOptions::default()).expect("demo table");
        let result = fit_galaxy(&table, HaloModel::Sidm, &config, &mut Silent).expect("fit");
        posteriors.push(
            GalaxyPosterior::from_fit(&result, &config.priors.cross_section, 600)
                .expect("posterior samples"),
        );
        let s = &result.summary;
        for (name, truth, interval) in [
            ("sigma/m", sigma_true, s.sigma_m_cm2_g.expect("sigma/m")),
            ("<v_rel>", v_rel_true, s.v_rel_kms.expect("v_rel")),
        ] {
            checks += 1;
            let inside = truth >= interval.p2_5 && truth <= interval.p97_5;
            if !inside {
                misses += 1;
            }
            eprintln!(
                "{:<9} {name:<8} truth {truth:>8.3}  95% [{:>8.3}, {:>8.3}]  median {:>8.3}  {}  converged {} tau {:.0}",
                s.galaxy,
                interval.p2_5,
                interval.p97_5,
                interval.median,
                if inside { "inside" } else { "MISS" },
                s.converged,
                s.tau_max
            );
        }
    }
    eprintln!("{misses} misses in {checks} checks");
    assert!(checks >= 28, "only {checks} checks");
    assert!(
        misses <= 4,
        "{misses} of {checks} truths outside their 95% intervals"
    );

    let settings = PopulationSettings::default();
    for treatment in [Treatment::Marginal, Treatment::Joint] {
        let fits: Vec<_> = VelocityModel::ALL
            .into_iter()
            .map(|model| {
                fit_population(model, treatment, &posteriors, &[], &settings, &mut Silent)
                    .expect("population fit")
            })
            .collect();
        for fit in &fits {
            eprintln!(
                "{treatment:?} {:<10} ln L_max {:>8.2}  AIC {:>7.2}  BIC {:>7.2}  converged {}",
                fit.model.name(),
                fit.log_likelihood_max,
                fit.aic,
                fit.bic,
                fit.converged
            );
            assert!(fit.bic.is_finite() && fit.aic.is_finite());
            assert_eq!(fit.n_data, posteriors.len());
        }
        let preferred = preferred_by_bic(&fits).expect("a preferred model");
        assert_ne!(
            preferred,
            VelocityModel::Constant,
            "{treatment:?}: the demo's falling σ/m should not prefer a constant"
        );
    }
}
