//! Parallel tempering switched on where the SIDM posterior has separated branches
//! (`Tempering::Auto`, the default), and off where it has one.
//!
//! The galaxy is an invented concentrated dwarf from the mock generator (V200 = 45 km/s,
//! c200 = 18, σ/m = 10 cm²/g, 10 Gyr): its outer halo is matched by two SIDM cores, the
//! lowest-density one it was made from and a dense one beyond the first fold, both within the
//! default (ρ0, σ0) bounds. With `SidmBranches::All` the posterior then has two branches and the
//! fit runs on the ladder; with the lowest-density branch alone (the default) it has one and the
//! ensemble runs alone. Admitting every branch, the ensemble alone (tempering off) and the ladder
//! sample the same posterior, and here the ensemble reaches all of it (the data leave the dense
//! branch almost no weight), so their σ/m and core-radius medians must agree within their Monte
//! Carlo errors: 0.15 dex, about four standard errors of a median (common practice).

use caldera_data::mock::{MockSpec, generate};
use caldera_data::session::HaloModel;
use caldera_infer::model::GalaxyModel;
use caldera_infer::priors::{Priors, SidmBranches};
use caldera_infer::sampler::Silent;
use caldera_infer::tempering::LadderConfig;
use caldera_infer::{FitConfig, Tempering, fit_galaxy};
use caldera_physics::{ParamId, ParamValues};

const SPEC: &str = r#"{"name": "Tempering check dwarf", "seed": 7,
  "halo": {"kind": "sidm-halo-first", "v200_kms": 45.0, "c200": 18.0, "sigma_m_cm2_g": 10.0, "branch": 0},
  "age_gyr": 10.0, "hubble_kms_mpc": 70.0,
  "gas": {"mass_msun": 2e8, "scale_length_kpc": 1.5}, "stars": {"mass_msun": 1e8, "scale_length_kpc": 0.8},
  "bulge": null, "upsilon_disk": 0.5, "upsilon_bulge": 0.7, "r_min_kpc": 0.3, "r_max_kpc": 6.0,
  "n_points": 18, "error_fraction": 0.05, "error_floor_kms": 2.0, "distance_mpc": 10.0,
  "distance_err_mpc": 1.0, "inclination_deg": 60.0, "inclination_err_deg": 3.0, "notes": ""}"#;

fn config(branches: SidmBranches, tempering: Tempering) -> FitConfig {
    FitConfig {
        priors: Priors {
            sidm_branches: branches,
            ..Priors::default()
        },
        tempering,
        tempering_ladder: Some(LadderConfig {
            rungs: 6,
            steps: 2400,
            ..LadderConfig::default()
        }),
        ..FitConfig::default()
    }
}

#[test]
fn tempering_runs_where_the_posterior_has_two_branches_and_not_otherwise() {
    let spec: MockSpec = serde_json::from_str(SPEC).expect("valid spec");
    let (table, truth) = generate(&spec).expect("the mock");
    let sidm = truth.sidm.expect("an SIDM truth");

    // The truth's outer halo has two cores within the bounds when every branch is admitted.
    let model = GalaxyModel::new(
        &table,
        HaloModel::Sidm,
        config(SidmBranches::All, Tempering::Auto).priors,
        FitConfig::default().cosmology,
        None,
    )
    .expect("the posterior");
    let theta = model.theta_from_values(&ParamValues::from_pairs([
        (ParamId::Rho0, sidm.rho0_msun_kpc3),
        (ParamId::Sigma0, sidm.sigma0_kms),
        (ParamId::SigmaM, 10.0),
        (ParamId::UpsilonDisk, spec.upsilon_disk),
    ]));
    assert_eq!(model.sidm_branches_within_bounds(&theta), Some(2));

    let fit = |branches, tempering| {
        fit_galaxy(
            &table,
            HaloModel::Sidm,
            &config(branches, tempering),
            &mut Silent,
        )
        .expect("the fit")
    };
    let lowest = fit(SidmBranches::LowestDensity, Tempering::Auto);
    let plain = fit(SidmBranches::All, Tempering::Off);
    let ladder = fit(SidmBranches::All, Tempering::Auto);
    assert!(!lowest.summary.tempered, "one branch: no ladder");
    assert!(!plain.summary.tempered, "tempering off");
    assert!(ladder.summary.tempered, "two branches: the ladder runs");
    println!(
        "ladder: τ {:.1} steps, {} samples, ln Z {:?}",
        ladder.summary.tau_max, ladder.summary.n_samples, ladder.summary.log_evidence
    );
    assert!(ladder.summary.converged, "{:?}", ladder.summary.tau_max);
    // The ladder's cold rung: 1200 kept steps of 32 walkers, thinned by half a τ.
    assert!(
        ladder.summary.n_samples > 1000,
        "{}",
        ladder.summary.n_samples
    );
    assert!(ladder.summary.log_evidence.is_some_and(f64::is_finite));
    let medians = |fit: &caldera_infer::FitResult| {
        let s = &fit.summary;
        [
            s.sigma_m_cm2_g.as_ref().map(|i| i.median.log10()),
            s.core_radius_kpc.as_ref().map(|i| i.median.log10()),
        ]
    };
    for (name, (a, b)) in ["log10 σ/m", "log10 core radius"]
        .iter()
        .zip(medians(&plain).into_iter().zip(medians(&ladder)))
    {
        let (a, b) = (a.expect("an interval"), b.expect("an interval"));
        println!("{name}: ensemble {a:.3}, ladder {b:.3}");
        assert!(
            (a - b).abs() < 0.15,
            "{name}: plain {a:.3}, tempered {b:.3}"
        );
    }
}
