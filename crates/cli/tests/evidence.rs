//! `caldera fit --evidence` end to end: ln Z in the JSON, the text and the results tables, and a
//! Bayes factor with the sign the demo galaxy's truth implies.

mod common;

use std::path::Path;

use common::caldera;
use serde_json::Value;

fn demo(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../demo_galaxies")
        .join(name)
        .to_string_lossy()
        .into_owned()
}

/// ln Z and its uncertainty from `caldera fit --json --evidence` (a short ladder).
fn log_evidence(galaxy: &str, model: &str) -> (f64, f64) {
    let (code, stdout, stderr) = caldera(&[
        "fit",
        &demo(galaxy),
        "--model",
        model,
        "--json",
        "--evidence",
        "--evidence-rungs",
        "14",
        "--evidence-steps",
        "1500",
    ]);
    assert_eq!(code, 0, "stderr: {stderr}");
    let v: Value = serde_json::from_str(&stdout).expect("valid JSON");
    let z = v["log_evidence"]
        .as_f64()
        .expect("log_evidence in the JSON");
    let e = v["log_evidence_err"]
        .as_f64()
        .expect("log_evidence_err in the JSON");
    assert!(z.is_finite() && e.is_finite() && e > 0.0, "{z} ± {e}");
    (z, e)
}

#[test]
fn evidence_appears_in_the_json_and_prefers_a_cored_halo_for_a_cored_mock() {
    // Kiln D03 was made with an SIDM (cored) halo (demo_galaxies/kiln_d03.truth.json): the
    // cored Burkert halo must beat the cuspy NFW by more than the uncertainties.
    let (nfw, nfw_err) = log_evidence("kiln_d03.ecsv", "nfw");
    let (burkert, burkert_err) = log_evidence("kiln_d03.ecsv", "burkert");
    println!(
        "Kiln D03: ln Z(NFW) = {nfw:.2} ± {nfw_err:.2}, ln Z(Burkert) = {burkert:.2} ± {burkert_err:.2}"
    );
    assert!(
        burkert - nfw > 3.0 * nfw_err.hypot(burkert_err),
        "ln B(Burkert/NFW) = {}",
        burkert - nfw
    );
}

#[test]
fn without_the_flag_the_evidence_is_null_and_the_text_says_nothing() {
    let (code, stdout, stderr) =
        caldera(&["fit", &demo("kiln_d01.ecsv"), "--model", "nfw", "--json"]);
    assert_eq!(code, 0, "stderr: {stderr}");
    let v: Value = serde_json::from_str(&stdout).expect("valid JSON");
    assert!(v["log_evidence"].is_null(), "{}", v["log_evidence"]);
    let (code, text, _) = caldera(&[
        "fit",
        &demo("kiln_d01.ecsv"),
        "--model",
        "nfw",
        "--evidence",
        "--evidence-rungs",
        "8",
        "--evidence-steps",
        "400",
    ]);
    assert_eq!(code, 0);
    assert!(text.contains("ln Z = "), "{text}");
}
