//! Catalogue runs end to end: outputs, resuming, sharding and merging (bit for bit), and a clean
//! stop on Ctrl-C (SIGINT) that keeps finished results.

mod common;

use common::caldera;
use std::path::{Path, PathBuf};
use std::process::Command;

fn temp_dir(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("caldera-batch-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    dir
}

/// A small catalogue: three demo galaxies (one with a bulge).
fn small_catalogue(dir: &Path) -> PathBuf {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo_galaxies");
    let catalogue = dir.join("catalogue");
    std::fs::create_dir_all(&catalogue).expect("catalogue dir");
    for name in ["kiln_d01.ecsv", "kiln_d06.ecsv", "kiln_s02.ecsv"] {
        std::fs::copy(demo.join(name), catalogue.join(name)).expect("copy");
    }
    catalogue
}

fn fit(catalogue: &Path, out: &Path, extra: &[&str]) -> (i32, String) {
    let (c, o) = (catalogue.to_string_lossy(), out.to_string_lossy());
    let mut args = vec![
        "fit",
        &c,
        "--models",
        "sidm,nfw",
        "--out",
        &o,
        "--max-steps",
        "1200",
        "--walkers",
        "24",
    ];
    args.extend_from_slice(extra);
    let (code, _, stderr) = caldera(&args);
    (code, stderr)
}

/// Names of the files in every galaxy folder of an output's `galaxies/`.
fn galaxy_files(galaxies: &Path) -> Vec<String> {
    std::fs::read_dir(galaxies)
        .into_iter()
        .flatten()
        .filter_map(Result::ok)
        .flat_map(|e| {
            std::fs::read_dir(e.path())
                .into_iter()
                .flatten()
                .filter_map(Result::ok)
        })
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect()
}

fn read(path: &Path) -> Vec<u8> {
    std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

#[test]
fn catalogue_run_writes_everything_resumes_and_merges_shards_bit_for_bit() {
    let dir = temp_dir("run");
    let catalogue = small_catalogue(&dir);
    let whole = dir.join("whole");
    let (code, stderr) = fit(&catalogue, &whole, &[]);
    assert_eq!(code, 0, "{stderr}");
    for file in [
        "results.csv",
        "results.ecsv",
        "results.tex",
        "population.svg",
        "population.png",
        "session.ron",
    ] {
        assert!(whole.join(file).is_file(), "{file} missing");
    }
    for galaxy in ["kiln_d01", "kiln_d06", "kiln_s02"] {
        for model in ["sidm", "nfw"] {
            for suffix in [
                "summary.json",
                "chain.csv",
                "curve.svg",
                "curve.png",
                "corner.svg",
                "corner.png",
            ] {
                let path = whole
                    .join("galaxies")
                    .join(galaxy)
                    .join(format!("{model}.{suffix}"));
                assert!(path.is_file(), "{} missing", path.display());
            }
        }
    }
    let csv = String::from_utf8(read(&whole.join("results.csv"))).expect("text");
    assert_eq!(
        csv.lines().filter(|l| !l.starts_with('#')).count(),
        1 + 6,
        "{csv}"
    );
    // The halo age is quoted with every result (the SIDM σ/m scales almost as 1/age).
    let header = csv.lines().find(|l| !l.starts_with('#')).expect("a header");
    assert!(header.split(',').any(|c| c == "age [Gyr]"), "{header}");
    let tex = String::from_utf8(read(&whole.join("results.tex"))).expect("text");
    assert!(tex.contains("\\begin{tabular}"));
    assert!(tex.contains("t_{\\rm age}"), "{tex}");

    // Re-running skips finished galaxies and leaves the outputs as they were.
    let before = read(&whole.join("results.csv"));
    let (code, stderr) = fit(&catalogue, &whole, &[]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stderr.contains("0 fits"), "{stderr}");
    assert_eq!(read(&whole.join("results.csv")), before);

    // Two shards merged equal the unsharded run, bit for bit.
    let shard_1 = dir.join("shard1");
    let shard_2 = dir.join("shard2");
    assert_eq!(
        fit(&catalogue, &shard_1, &["--shard", "1/2", "--no-figures"]).0,
        0
    );
    assert_eq!(
        fit(&catalogue, &shard_2, &["--shard", "2/2", "--no-figures"]).0,
        0
    );
    let merged = dir.join("merged");
    let (code, _, stderr) = caldera(&[
        "merge",
        &shard_1.to_string_lossy(),
        &shard_2.to_string_lossy(),
        "--out",
        &merged.to_string_lossy(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    for file in [
        "results.csv",
        "results.ecsv",
        "results.tex",
        "population.svg",
        "session.ron",
    ] {
        assert_eq!(
            read(&merged.join(file)),
            read(&whole.join(file)),
            "{file} differs"
        );
    }
    for galaxy in ["kiln_d01", "kiln_d06", "kiln_s02"] {
        for name in ["sidm.summary.json", "nfw.summary.json", "sidm.chain.csv"] {
            let relative = Path::new("galaxies").join(galaxy).join(name);
            assert_eq!(
                read(&merged.join(&relative)),
                read(&whole.join(&relative)),
                "{}",
                relative.display()
            );
        }
    }
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn ctrl_c_stops_cleanly_and_a_rerun_finishes_the_work() {
    let dir = temp_dir("interrupt");
    let catalogue = small_catalogue(&dir);
    let out = dir.join("out");
    let child = Command::new(env!("CARGO_BIN_EXE_caldera"))
        .args([
            "fit",
            &catalogue.to_string_lossy(),
            "--models",
            "sidm,nfw,burkert",
            "--out",
            &out.to_string_lossy(),
            "--max-steps",
            "20000",
            "--no-figures",
        ])
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("starts");
    // Wait for the first finished result, then interrupt.
    let galaxies = out.join("galaxies");
    let deadline = std::time::Instant::now() + std::time::Duration::from_secs(120);
    let finished = || {
        galaxy_files(&galaxies)
            .iter()
            .filter(|name| name.ends_with(".summary.json"))
            .count()
    };
    while finished() == 0 && std::time::Instant::now() < deadline {
        std::thread::sleep(std::time::Duration::from_millis(50));
    }
    let status = Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .expect("kill runs");
    assert!(status.success());
    let output = child.wait_with_output().expect("exits");
    let stderr = String::from_utf8_lossy(&output.stderr);
    let kept = finished();
    assert!(kept >= 1, "{stderr}");
    if kept < 9 {
        assert_eq!(output.status.code(), Some(1), "{stderr}");
        assert!(stderr.contains("stopped by Ctrl-C"), "{stderr}");
    }
    assert!(
        out.join("results.csv").is_file(),
        "tables are written for the finished fits"
    );
    // No half-written files are left behind.
    let partial = galaxy_files(&galaxies)
        .iter()
        .any(|name| name.contains(".partial"));
    assert!(!partial);
    // Running again completes the rest.
    let (code, stderr) = fit(
        &catalogue,
        &out,
        &["--models", "sidm,nfw,burkert", "--no-figures"],
    );
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(finished(), 9);
    std::fs::remove_dir_all(&dir).ok();
}
