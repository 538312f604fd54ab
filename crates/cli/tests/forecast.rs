//! `caldera forecast` on a tiny design: the pool is fitted, catalogues are compared at each
//! size, the end-to-end reference runs, and the report, figure and errors read as documented.

mod common;

use common::caldera;

#[test]
fn a_tiny_forecast_reports_power_by_catalogue_size() {
    let dir = std::env::temp_dir().join(format!("caldera-forecast-{}", std::process::id()));
    let out = dir.to_string_lossy().into_owned();
    let (code, stdout, stderr) = caldera(&[
        "forecast",
        "--truth",
        "fall-off:sigma0_m=20,w=150",
        "--design",
        "30-60:2,120-200:1",
        "--pool",
        "1",
        "--scales",
        "1,2",
        "--replicas",
        "20",
        "--interval-catalogues",
        "1",
        "--end-to-end",
        "1",
        "--max-steps",
        "6000",
        "--out",
        &out,
        "--json",
    ]);
    assert_eq!(code, 0, "{stderr}");
    let report: serde_json::Value = serde_json::from_str(&stdout).expect("JSON report");
    assert_eq!(report["pool_size"], 3);
    assert_eq!(report["pool"].as_array().map(Vec::len), Some(3));
    assert_eq!(report["alternative"], "fall-off");
    let power = report["power"].as_array().expect("power points");
    assert_eq!(power.len(), 2);
    assert_eq!(power[0]["n_galaxies"], 3);
    assert_eq!(power[1]["n_galaxies"], 6);
    // Twice the design from a pool of one per design galaxy repeats pool galaxies, and says so.
    assert_eq!(power[0]["repeats_pool_galaxies"], false);
    assert_eq!(power[1]["repeats_pool_galaxies"], true);
    for point in power {
        assert_eq!(point["replicas"], 20);
        let strong = point["power_strong"].as_f64().expect("power");
        let positive = point["power_positive"].as_f64().expect("power");
        assert!(
            (0.0..=1.0).contains(&strong) && strong <= positive,
            "{point}"
        );
        let (p16, median, p84) = (
            point["p16_delta_bic"].as_f64().expect("p16"),
            point["median_delta_bic"].as_f64().expect("median"),
            point["p84_delta_bic"].as_f64().expect("p84"),
        );
        assert!(p16 <= median && median <= p84, "{point}");
    }
    // The pool galaxies carry their truths: σ_eff falls with the core's speed (fall-off).
    let mut truths: Vec<(f64, f64)> = report["pool"]
        .as_array()
        .expect("pool")
        .iter()
        .map(|g| {
            (
                g["true_v_rel_kms"].as_f64().expect("v_rel"),
                g["true_sigma_eff_cm2_g"].as_f64().expect("σ_eff"),
            )
        })
        .collect();
    truths.sort_by(|a, b| a.0.total_cmp(&b.0));
    assert!(truths.windows(2).all(|w| w[1].1 < w[0].1), "{truths:?}");
    let reference = &report["end_to_end"];
    assert_eq!(reference["n_galaxies"], 3);
    assert_eq!(reference["replicas"], 1);
    let intervals = report["intervals"].as_array().expect("intervals");
    assert_eq!(intervals.len(), 2);
    assert_eq!(intervals[0]["name"], "sigma0_m");
    assert_eq!(intervals[0]["truth"], 20.0);
    for file in ["forecast.json", "power.svg", "power.png"] {
        let meta = std::fs::metadata(dir.join(file)).expect(file);
        assert!(meta.len() > 0, "{file} is empty");
    }
    // --replot redraws from the JSON without fitting, the same report.
    std::fs::remove_file(dir.join("power.svg")).expect("remove the figure");
    let (code, replotted, stderr) = caldera(&["forecast", "--replot", "--out", &out, "--json"]);
    assert_eq!(code, 0, "{stderr}");
    let again: serde_json::Value = serde_json::from_str(&replotted).expect("JSON report");
    assert_eq!(again, report);
    let svg = std::fs::read_to_string(dir.join("power.svg")).expect("svg");
    assert!(
        svg.contains("Galaxies in the catalogue"),
        "the figure's axis names the galaxies"
    );
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_bad_design_is_refused_by_name() {
    let (code, _, stderr) = caldera(&[
        "forecast",
        "--truth",
        "fall-off:sigma0_m=20,w=150",
        "--design",
        "30-60:5,120:4",
    ]);
    assert_ne!(code, 0);
    assert!(stderr.contains("'120:4'"), "{stderr}");
    let (code, _, stderr) = caldera(&[
        "forecast",
        "--truth",
        "constant:sigma_m=2",
        "--alternative",
        "constant",
    ]);
    assert_ne!(code, 0);
    assert!(stderr.contains("velocity-dependent"), "{stderr}");
}
