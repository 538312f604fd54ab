//! Recovery of a known velocity-dependent σ(v)/m by `caldera population`: a mock catalogue made
//! by `caldera mock` with one fall-off cross-section for every galaxy, each galaxy fitted with
//! the constant-σ/m SIDM model by `caldera fit`, then the population and joint fits.

mod common;

use common::caldera;

/// The mock catalogue's truth: σ(v)/m = σ0/m (1 + v²/w²)⁻² with these values.
const TRUE_SIGMA0_CM2_G: f64 = 20.0;
const TRUE_W_KMS: f64 = 150.0;

/// (name, V200 km/s, c200, gas mass Msun, gas scale kpc, disk mass Msun, disk scale kpc,
/// r_max kpc, seed) of one invented galaxy.
type MockGalaxy = (&'static str, f64, f64, f64, f64, f64, f64, f64, u64);

/// Invented galaxies from dwarfs to small spirals.
const GALAXIES: [MockGalaxy; 8] = [
    ("Mock P1", 35.0, 15.0, 1.5e8, 1.3, 4e7, 0.6, 4.0, 7101),
    ("Mock P2", 50.0, 13.0, 4e8, 2.0, 1.5e8, 1.0, 6.0, 7102),
    ("Mock P3", 70.0, 12.0, 1e9, 3.0, 5e8, 2.0, 10.0, 7103),
    ("Mock P4", 90.0, 11.0, 2e9, 4.0, 1.5e9, 2.5, 13.0, 7104),
    ("Mock P5", 110.0, 10.0, 3e9, 5.0, 4e9, 2.8, 17.0, 7105),
    ("Mock P6", 140.0, 9.5, 4e9, 6.0, 1e10, 3.0, 22.0, 7106),
    ("Mock P7", 170.0, 9.0, 5e9, 7.0, 2e10, 3.2, 26.0, 7107),
    ("Mock P8", 200.0, 8.5, 6e9, 8.0, 3e10, 3.5, 30.0, 7108),
];

fn parameter<'a>(fit: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    fit["parameters"]
        .as_array()
        .and_then(|ps| ps.iter().find(|p| p["name"] == name))
        .unwrap_or_else(|| panic!("parameter {name} in {fit}"))
}

fn assert_covers(fit: &serde_json::Value, name: &str, truth: f64) {
    let interval = &parameter(fit, name)["interval"];
    let (low, high) = (
        interval["p2_5"].as_f64().expect("p2_5"),
        interval["p97_5"].as_f64().expect("p97_5"),
    );
    eprintln!(
        "{} {name}: median {} 95% [{low}, {high}], truth {truth}",
        fit["treatment"], interval["median"]
    );
    assert!(
        low <= truth && truth <= high,
        "{} {name}: truth {truth} outside the 95% interval [{low}, {high}]",
        fit["treatment"]
    );
}

#[test]
fn population_and_joint_fits_recover_a_mock_catalogues_fall_off() {
    let dir = std::env::temp_dir().join(format!("caldera-population-{}", std::process::id()));
    let catalogue = dir.join("catalogue");
    std::fs::create_dir_all(&catalogue).expect("temporary folder");
    let sigma0 = TRUE_SIGMA0_CM2_G.to_string();
    let w = TRUE_W_KMS.to_string();
    for (name, v200, c200, gas, gas_scale, disk, disk_scale, r_max, seed) in GALAXIES {
        let file = catalogue.join(format!("{}.ecsv", name.to_lowercase().replace(' ', "_")));
        let args: Vec<String> = vec![
            "--quiet".into(),
            "mock".into(),
            "--name".into(),
            name.into(),
            "--halo".into(),
            "sidm".into(),
            "--v200".into(),
            v200.to_string(),
            "--c200".into(),
            c200.to_string(),
            "--cross-section".into(),
            sigma0.clone(),
            "--fall-off-w".into(),
            w.clone(),
            "--gas-mass".into(),
            gas.to_string(),
            "--gas-scale".into(),
            gas_scale.to_string(),
            "--disk-mass".into(),
            disk.to_string(),
            "--disk-scale".into(),
            disk_scale.to_string(),
            "--r-min".into(),
            (r_max / 20.0).to_string(),
            "--r-max".into(),
            r_max.to_string(),
            "--points".into(),
            "24".into(),
            "--error-fraction".into(),
            "0.03".into(),
            "--error-floor".into(),
            "1.5".into(),
            "--seed".into(),
            seed.to_string(),
            "--out".into(),
            file.to_string_lossy().into_owned(),
        ];
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let (code, _, stderr) = caldera(&args);
        assert_eq!(code, 0, "mock {name}: {stderr}");
    }
    let results = dir.join("results");
    let (catalogue_arg, results_arg) = (
        catalogue.to_string_lossy().into_owned(),
        results.to_string_lossy().into_owned(),
    );
    let (code, _, stderr) = caldera(&[
        "--quiet",
        "fit",
        &catalogue_arg,
        "--models",
        "sidm",
        "--max-steps",
        "8000",
        "--no-figures",
        "--out",
        &results_arg,
    ]);
    assert_eq!(code, 0, "catalogue fit: {stderr}");

    // An outside constraint consistent with the truth: at ⟨v_rel⟩ = 1500 km/s the fall-off
    // gives σ_eff ≈ 0.003 cm²/g, well below this limit.
    let constraints = dir.join("outside.csv");
    std::fs::write(
        &constraints,
        "label,v_rel_kms,sigma_m_cm2_g,error_cm2_g,kind\ninvented cluster,1500,0.5,,upper95\n",
    )
    .expect("constraints file");
    let (code, stdout, stderr) = caldera(&[
        "--quiet",
        "population",
        &results_arg,
        "--models",
        "constant,fall-off",
        "--constraints",
        &constraints.to_string_lossy(),
        "--json",
    ]);
    assert_eq!(code, 0, "population: {stderr}");
    let report: serde_json::Value = serde_json::from_str(&stdout).expect("JSON report");
    assert_eq!(report["galaxies"].as_array().map(Vec::len), Some(8));
    assert_eq!(report["constraints"].as_array().map(Vec::len), Some(1));
    let find = |fits: &serde_json::Value, model: &str| -> serde_json::Value {
        fits.as_array()
            .and_then(|fs| fs.iter().find(|f| f["name"] == model))
            .cloned()
            .unwrap_or_else(|| panic!("model {model} in {fits}"))
    };
    for fits in [&report["models"], &report["joint"]["models"]] {
        let fall_off = find(fits, "fall-off");
        assert_covers(&fall_off, "sigma0_m", TRUE_SIGMA0_CM2_G);
        assert_covers(&fall_off, "w", TRUE_W_KMS);
        let constant = find(fits, "constant");
        let delta_bic =
            constant["bic"].as_f64().expect("bic") - fall_off["bic"].as_f64().expect("bic");
        eprintln!(
            "{}: BIC(constant) - BIC(fall-off) = {delta_bic}",
            fall_off["treatment"]
        );
        assert!(
            delta_bic > 2.0,
            "the velocity-independent model should be disfavoured: ΔBIC = {delta_bic}"
        );
    }
    assert_eq!(report["preferred"], "fall-off");
    assert_eq!(report["joint"]["preferred"], "fall-off");
    // The hierarchical fits: every galaxy shares one σ(v)/m, so the intrinsic scatter τ is not
    // called for — BIC does not drop by 2 when it is added — and the fall-off still covers the
    // truth with it.
    let hierarchical = &report["hierarchical"]["models"];
    for model in ["constant", "fall-off"] {
        let scattered = find(hierarchical, model);
        assert_eq!(scattered["scatter"], true);
        assert_eq!(scattered["treatment"], "joint");
        let tau = &parameter(&scattered, "tau")["interval"];
        let unscattered = find(&report["joint"]["models"], model);
        let delta_bic =
            scattered["bic"].as_f64().expect("bic") - unscattered["bic"].as_f64().expect("bic");
        eprintln!("{model}: tau {tau}, BIC(with scatter) - BIC(without) = {delta_bic}");
        assert!(
            delta_bic > -2.0,
            "{model}: scatter called for, ΔBIC {delta_bic}"
        );
    }
    let fall_off = find(hierarchical, "fall-off");
    assert_covers(&fall_off, "sigma0_m", TRUE_SIGMA0_CM2_G);
    assert_covers(&fall_off, "w", TRUE_W_KMS);
    assert!(results.join("population/population_models.svg").exists());
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn mocks_take_any_cross_section_model() {
    let dir = std::env::temp_dir().join(format!("caldera-velocity-mock-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temporary folder");
    let table = dir.join("mock_y.ecsv");
    let table_arg = table.to_string_lossy().into_owned();
    let mock = |spec: &str| {
        caldera(&[
            "--quiet",
            "mock",
            "--name",
            "Mock Y",
            "--halo",
            "sidm",
            "--v200",
            "60",
            "--c200",
            "12",
            "--velocity-model",
            spec,
            "--r-max",
            "8",
            "--force",
            "--out",
            &table_arg,
        ])
    };
    let (code, _, stderr) = mock("yukawa:m_chi=10,m_phi=5,alpha=1e-4");
    assert_eq!(code, 0, "{stderr}");
    let truth: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.join("mock_y.truth.json")).expect("truth file"),
    )
    .expect("truth JSON");
    assert_eq!(
        truth["spec"]["velocity_dependence"]["Yukawa"]["alpha"].as_f64(),
        Some(1e-4)
    );
    // The truth's rate is the model's Maxwellian average at the core's σ0.
    let model = caldera_physics::CrossSection::yukawa(10.0, 5.0, 1e-4).expect("valid");
    let sigma0 = truth["sidm"]["sigma0_kms"].as_f64().expect("sigma0");
    let rate = truth["sidm"]["sigma_v_over_m_cm2_g_kms"]
        .as_f64()
        .expect("rate");
    let expected = model.sigma_v_over_m_cm2_g_kms(sigma0);
    assert!((rate / expected - 1.0).abs() < 1e-9, "{rate} vs {expected}");

    let (code, _, stderr) = mock("yukawa:m_chi=10,alpha=1e-4");
    assert_eq!(code, 1);
    assert!(stderr.contains("missing 'm_phi'"), "{stderr}");
    std::fs::remove_dir_all(&dir).ok();
}
