//! `caldera curve` end to end: the JSON it prints, its failures and exit codes.

mod common;

use common::caldera;

use serde_json::Value;

fn json(args: &[&str]) -> Value {
    let (code, stdout, stderr) = caldera(args);
    assert_eq!(code, 0, "stderr: {stderr}");
    serde_json::from_str(&stdout).expect("valid JSON")
}

fn number(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} missing in {v}"))
}

#[test]
fn sidm_core_first_json_matches_the_reference_table() {
    // Reference: tests/reference/check_values.md, core-first table (scipy): ρ0 = 1e8, σ0 = 40, σ/m = 3 →
    // r1 = 6.1868 kpc, ρ_s = 7.4295e7 Msun/kpc³, r_s = 2.1559 kpc.
    let v = json(&[
        "curve",
        "sidm",
        "--rho0",
        "1e8",
        "--sigma0",
        "40",
        "--cross-section",
        "3",
        "--radii",
        "0.5,1,2",
        "--json",
    ]);
    assert!((number(&v, "r1_kpc") / 6.1868 - 1.0).abs() < 1e-4);
    assert!((number(&v, "rho_s_msun_kpc3") / 7.4295e7 - 1.0).abs() < 1e-4);
    assert!((number(&v, "r_s_kpc") / 2.1559 - 1.0).abs() < 1e-4);
    for key in ["rho0_msun_kpc3", "sigma0_kms", "v200_kms", "c200"] {
        assert!(number(&v, key) > 0.0, "{key}");
    }
    assert_eq!(v["radii_kpc"].as_array().map(Vec::len), Some(3));
    assert_eq!(v["v_halo_kms"].as_array().map(Vec::len), Some(3));
    assert!(v["branch"].is_null());
}

#[test]
fn sidm_halo_first_json_matches_the_reference_table() {
    // Reference: tests/reference/check_values.md, halo-first table (scipy): M200 = 1e11, c = 10, σ/m = 3, no
    // baryons → ρ0 = 1.63902e7, σ0 = 49.6840, r1 = 10.01079; V200 = 10 H0 r200 for that halo.
    let r200_kpc = (3.0 * 1e11 / (4.0 * std::f64::consts::PI * 200.0 * 135.99295)).cbrt();
    let v200 = format!("{}", 10.0 * 0.07 * r200_kpc);
    let v = json(&[
        "curve",
        "sidm",
        "--v200",
        &v200,
        "--c200",
        "10",
        "--cross-section",
        "3",
        "--radii",
        "0.5,1,2,5",
        "--json",
    ]);
    assert!((number(&v, "rho0_msun_kpc3") / 1.63902e7 - 1.0).abs() < 1e-4);
    assert!((number(&v, "sigma0_kms") / 49.6840 - 1.0).abs() < 1e-4);
    assert!((number(&v, "r1_kpc") / 10.01079 - 1.0).abs() < 1e-4);
    assert_eq!(v["branch"].as_u64(), Some(0));
    // V_halo(0.5, 1, 2, 5 kpc) = 8.554, 16.883, 32.125, 61.834 km/s (tests/reference/check_values.md).
    let curve: Vec<f64> = v["v_halo_kms"]
        .as_array()
        .expect("array")
        .iter()
        .filter_map(Value::as_f64)
        .collect();
    for (got, want) in curve.iter().zip([8.554, 16.883, 32.125, 61.834]) {
        assert!((got / want - 1.0).abs() < 1e-3, "{got} vs {want}");
    }
}

#[test]
fn nfw_burkert_and_pseudo_isothermal_curves() {
    let nfw = json(&[
        "curve", "nfw", "--v200", "144.3953", "--c200", "10", "--radii", "10", "--json",
    ]);
    // Reference: NFW worked example (scipy): V(10 kpc) = 140.946 km/s for M200 = 1e12, c = 10.
    assert!((nfw["v_halo_kms"][0].as_f64().unwrap_or(0.0) / 140.946 - 1.0).abs() < 1e-5);
    for args in [
        [
            "curve", "burkert", "--rho0", "3e7", "--r0", "2", "--radii", "1,2", "--json",
        ],
        [
            "curve",
            "pseudo-iso",
            "--rho0",
            "3e7",
            "--rc",
            "2",
            "--radii",
            "1,2",
            "--json",
        ],
    ] {
        let v = json(&args);
        let curve = v["v_halo_kms"].as_array().expect("array");
        assert_eq!(curve.len(), 2);
        assert!(curve.iter().all(|x| x.as_f64().is_some_and(|x| x > 0.0)));
    }
}

#[test]
fn table_baryons_enter_the_total() {
    let dir = std::env::temp_dir().join(format!("caldera-curve-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let path = dir.join("galaxy.csv");
    std::fs::write(
        &path,
        "# name: Test dwarf\nr [kpc], v_obs, err, v_gas, v_disk\n0.5, 20, 2, 5, 10\n1.0, 31, 2, 8, 14\n2, 40, 3, 10, 16\n",
    )
    .expect("write table");
    let path_text = path.to_string_lossy().into_owned();
    let v = json(&[
        "curve",
        "sidm",
        "--v200",
        "60",
        "--c200",
        "12",
        "--cross-section",
        "3",
        "--table",
        &path_text,
        "--json",
    ]);
    assert_eq!(v["galaxy"], "Test dwarf");
    assert_eq!(v["radii_kpc"].as_array().map(Vec::len), Some(3));
    let at = |key: &str, i: usize| v[key][i].as_f64().unwrap_or(f64::NAN);
    // V_b² = V_gas² + Υ_disk V_disk² at r = 1 kpc: 64 + 0.5 × 196.
    assert!((at("v_baryon_kms", 1).powi(2) - (64.0 + 0.5 * 196.0)).abs() < 1e-9);
    for i in 0..3 {
        let expected = (at("v_halo_kms", i).powi(2) + at("v_baryon_kms", i).powi(2)).sqrt();
        assert!((at("v_total_kms", i) - expected).abs() < 1e-9);
    }
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn failures_exit_non_zero_with_one_line() {
    let (code, stdout, stderr) = caldera(&[
        "curve",
        "sidm",
        "--v200",
        "60",
        "--c200",
        "12",
        "--cross-section",
        "300",
        "--json",
    ]);
    assert_eq!(code, 1);
    assert!(stdout.is_empty());
    assert_eq!(stderr.lines().count(), 1, "{stderr}");
    assert!(
        stderr.starts_with("error: ") && stderr.contains("no isothermal core"),
        "{stderr}"
    );

    let (code, _, stderr) = caldera(&[
        "curve",
        "sidm",
        "--rho0",
        "10",
        "--sigma0",
        "30",
        "--cross-section",
        "1",
    ]);
    assert_eq!(code, 1);
    assert!(stderr.contains("no thermalised core"), "{stderr}");

    let (code, _, stderr) = caldera(&[
        "curve",
        "sidm",
        "--table",
        "/nonexistent/g.csv",
        "--v200",
        "60",
        "--c200",
        "10",
        "--cross-section",
        "1",
    ]);
    assert_eq!(code, 1);
    assert!(stderr.contains("/nonexistent/g.csv"), "{stderr}");

    // Usage errors exit with 2.
    let (code, _, _) = caldera(&["curve", "nfw", "--v200", "x", "--c200", "3"]);
    assert_eq!(code, 2);
}

/// The demo tables, sorted.
fn demo_tables() -> Vec<std::path::PathBuf> {
    let folder = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_galaxies");
    let mut tables: Vec<_> = std::fs::read_dir(&folder)
        .expect("the demo catalogue")
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| p.extension().is_some_and(|e| e == "ecsv"))
        .collect();
    tables.sort();
    tables
}

/// The `caldera curve` arguments that describe a fit's best sample.
fn curve_arguments(summary: &Value, table: &str) -> Vec<String> {
    let best = &summary["best_fit"];
    let value = |key: &str| best[key].as_f64().map(|v| v.to_string());
    let model = summary["model"].as_str().expect("model").to_string();
    let flags: &[(&str, &str)] = match model.as_str() {
        "sidm" => &[
            ("--rho0", "rho0_msun_kpc3"),
            ("--sigma0", "sigma0_kms"),
            ("--cross-section", "sigma_m_cm2_g"),
        ],
        "nfw" => &[("--v200", "v200_kms"), ("--c200", "c200")],
        "burkert" => &[("--rho0", "rho0_msun_kpc3"), ("--r0", "r0_kpc")],
        "pseudo-iso" => &[("--rho0", "rho0_msun_kpc3"), ("--rc", "rc_kpc")],
        "einasto" => &[
            ("--v200", "v200_kms"),
            ("--c200", "c200"),
            ("--alpha", "einasto_alpha"),
        ],
        other => panic!("no curve flags for model {other}"),
    };
    let mut args = vec!["curve".to_string(), model.clone()];
    for (flag, key) in flags.iter().chain(&[
        ("--upsilon-disk", "upsilon_disk"),
        ("--upsilon-bulge", "upsilon_bulge"),
        ("--distance", "distance_mpc"),
        ("--inclination", "inclination_deg"),
    ]) {
        if let Some(v) = value(key) {
            args.extend([flag.to_string(), v]);
        }
    }
    if model == "sidm" {
        args.extend(["--age".into(), summary["age_gyr"].to_string()]);
    }
    args.extend(["--table".into(), table.into(), "--json".into()]);
    args
}

#[test]
fn curve_reproduces_every_demo_fit_chi2() {
    // One baryonic mass model and one forward model: `caldera curve` at a fit's best-fitting
    // parameters (halo, Υ's, distance, inclination, age) gives that fit's χ² to 1e-9 relative,
    // on every demo galaxy and every halo model. Short chains suffice: the check is about the
    // best sample's χ², not convergence.
    let tables = demo_tables();
    assert_eq!(tables.len(), 16);
    for table in &tables {
        let path = table.to_str().expect("a UTF-8 path");
        for model in ["sidm", "nfw", "burkert", "pseudo-iso", "einasto"] {
            let fit = json(&[
                "--quiet",
                "fit",
                path,
                "--model",
                model,
                "--max-steps",
                "60",
                "--walkers",
                "12",
                "--json",
            ]);
            let args = curve_arguments(&fit, path);
            let refs: Vec<&str> = args.iter().map(String::as_str).collect();
            let curve = json(&refs);
            let (expected, got) = (number(&fit, "chi2"), number(&curve, "chi2"));
            assert!(
                (got - expected).abs() <= 1e-9 * expected,
                "{path} {model}: curve chi2 {got} vs fit chi2 {expected} ({args:?})"
            );
        }
    }
}

#[test]
fn einasto_curve_matches_the_check_values() {
    // Reference: tests/reference/check_values.md (Einasto, scipy gammainc): V200 = 100 km/s,
    // c200 = 10, α = 0.18 → V(1, 5, 20 kpc) = 53.682638, 93.868721, 117.680827 km/s.
    let v = json(&[
        "curve", "einasto", "--v200", "100", "--c200", "10", "--alpha", "0.18", "--radii",
        "1,5,20", "--json",
    ]);
    let halo: Vec<f64> = v["v_halo_kms"]
        .as_array()
        .expect("velocities")
        .iter()
        .filter_map(Value::as_f64)
        .collect();
    for (got, expected) in halo.iter().zip([53.682638, 93.868721, 117.680827]) {
        assert!(
            (got - expected).abs() < 1e-6 * expected,
            "{got} vs {expected}"
        );
    }
    assert_eq!(halo.len(), 3);
    assert!((number(&v, "r200_kpc") - 10.0 * number(&v, "r_minus2_kpc")).abs() < 1e-9);
    assert_eq!(v["model"], "einasto");
}
