//! `caldera check` and `caldera mock` end to end.

mod common;

use common::caldera;
use std::path::{Path, PathBuf};

use serde_json::Value;

fn demo_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_galaxies")
}

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("caldera-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

#[test]
fn check_passes_on_the_demo_catalogue_with_the_promised_json() {
    let demo = demo_dir();
    let (code, stdout, stderr) = caldera(&["check", &demo.to_string_lossy(), "--json"]);
    assert_eq!(code, 0, "{stderr}");
    let report: Value = serde_json::from_str(&stdout).expect("JSON");
    let galaxies = report["galaxies"].as_array().expect("galaxies");
    assert!(
        (12..=20).contains(&galaxies.len()),
        "{} galaxies",
        galaxies.len()
    );
    for g in galaxies {
        for key in [
            "name",
            "n_points",
            "r_min_kpc",
            "r_max_kpc",
            "v_obs_max_kms",
            "warnings",
            "errors",
        ] {
            assert!(!g[key].is_null(), "{key} missing in {g}");
        }
        assert!(g["errors"].as_array().is_some_and(Vec::is_empty));
    }
    // The demo spans dwarfs to spirals.
    let v_max: Vec<f64> = galaxies
        .iter()
        .filter_map(|g| g["v_obs_max_kms"].as_f64())
        .collect();
    assert!(v_max.iter().any(|&v| v < 60.0) && v_max.iter().any(|&v| v > 200.0));
    // The index completes the metadata.
    let (_, text, _) = caldera(&["check", &demo.to_string_lossy()]);
    assert!(text.contains("16 galaxies"), "{text}");
}

#[test]
fn check_reports_a_bad_table_without_hiding_the_good_ones() {
    let dir = temp_dir("check");
    std::fs::write(
        dir.join("good.csv"),
        "r, v, err, gas, disk\n1, 30, 2, 5, 10\n2, 40, 2, 6, 12\n",
    )
    .expect("write");
    std::fs::write(
        dir.join("bad.csv"),
        "r, v, err, gas, disk\n1, 30, 2, 5, 10\n2, forty, 2, 6, 12\n",
    )
    .expect("write");
    let (code, stdout, _) = caldera(&["check", &dir.to_string_lossy(), "--json"]);
    assert_eq!(code, 1);
    let report: Value = serde_json::from_str(&stdout).expect("JSON");
    assert_eq!(report["n_galaxies"], 2);
    assert_eq!(report["n_errors"], 1);
    let bad = &report["galaxies"][0];
    assert_eq!(bad["name"], "bad");
    let message = bad["errors"][0].as_str().unwrap_or_default();
    assert!(
        message.contains("bad.csv:3:2") && message.contains("forty"),
        "{message}"
    );
    assert_eq!(report["galaxies"][1]["n_points"], 2);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn check_of_a_missing_path_fails_with_its_name() {
    let (code, _, stderr) = caldera(&["check", "/nonexistent/kiln"]);
    assert_eq!(code, 1);
    assert!(stderr.contains("/nonexistent/kiln"), "{stderr}");
}

#[test]
fn mock_is_deterministic_writes_truth_and_refuses_to_overwrite() {
    let dir = temp_dir("mock");
    let out = dir.join("m.ecsv");
    let out_text = out.to_string_lossy().into_owned();
    let args = [
        "mock",
        "--name",
        "Kiln T1",
        "--halo",
        "sidm",
        "--v200",
        "45",
        "--c200",
        "14",
        "--cross-section",
        "4",
        "--gas-mass",
        "3e8",
        "--disk-mass",
        "1e8",
        "--r-max",
        "5",
        "--points",
        "12",
        "--seed",
        "9",
        "--out",
        &out_text,
    ];
    let (code, _, stderr) = caldera(&args);
    assert_eq!(code, 0, "{stderr}");
    let first = std::fs::read(&out).expect("table");
    let truth: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("m.truth.json")).expect("truth"))
            .expect("JSON");
    assert_eq!(truth["spec"]["halo"]["sigma_m_cm2_g"], 4.0);
    assert!(truth["sidm"]["r1_kpc"].as_f64().is_some_and(|r| r > 0.0));
    // Refuses to overwrite without --force; with it, the same seed gives the same bytes.
    let (code, _, stderr) = caldera(&args);
    assert_eq!(code, 1);
    assert!(stderr.contains("--force"), "{stderr}");
    let mut forced = args.to_vec();
    forced.push("--force");
    let (code, _, _) = caldera(&forced);
    assert_eq!(code, 0);
    assert_eq!(std::fs::read(&out).expect("table"), first);
    // The table it wrote passes the checker.
    let (code, _, _) = caldera(&["check", &out_text]);
    assert_eq!(code, 0);
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn messages_say_things_once_in_good_english_and_name_the_flag() {
    // A missing file: the reason is printed once.
    let (code, _, stderr) = caldera(&["fit", "/nonexistent/table.csv", "--model", "sidm"]);
    assert_eq!(code, 1);
    assert_eq!(stderr.matches("No such file").count(), 1, "{stderr}");

    // One table: "1 galaxy", not "1 galaxies".
    let dir = temp_dir("messages");
    let good = dir.join("good.csv");
    std::fs::write(
        &good,
        "r_kpc,v_obs,e_vobs,v_gas,v_disk\n0.5,20,2,5,10\n1,30,2,8,15\n2,40,2,10,18\n3,45,2,11,18\n",
    )
    .expect("write");
    let (code, stdout, stderr) = caldera(&["check", &good.to_string_lossy()]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("1 galaxy,"), "{stdout}");
    assert!(stdout.contains("0 errors"), "{stdout}");

    // A table without an error column: the message names the flag that fixes it.
    let bad = dir.join("no_errors.csv");
    std::fs::write(&bad, "r_kpc,v_obs,v_gas,v_disk\n0.5,20,5,10\n1,30,8,15\n").expect("write");
    let (code, stdout, stderr) = caldera(&["check", &bad.to_string_lossy()]);
    assert_eq!(code, 1);
    let said = format!("{stdout}{stderr}");
    assert!(said.contains("--error-column NAME"), "{said}");
    assert!(said.contains("1 error\n"), "{said}");

    // The fit's help shows the singular spelling its examples use.
    let (_, help, _) = caldera(&["fit", "--help"]);
    assert!(help.contains("--model"), "{help}");
    assert!(help.contains("[alias: --model]"), "{help}");
    std::fs::remove_dir_all(&dir).ok();
}
