//! Caldera's own writers read back to the same table, in both formats, bit for bit.

use std::path::Path;

use caldera_data::{GalaxyMeta, GalaxyTable, ReadOptions, read_table_from_str, write_atomic};

fn sample() -> GalaxyTable {
    GalaxyTable {
        meta: GalaxyMeta {
            name: "Kiln test \"quoted\" galaxy".into(),
            distance_mpc: Some(7.25),
            distance_err_mpc: Some(0.5),
            inclination_deg: Some(61.0),
            inclination_err_deg: Some(3.0),
            age_gyr: Some(10.0),
            luminosity_lsun: Some(3.25e9),
            notes: "invented: round-trip test".into(),
        },
        source: None,
        radius_kpc: vec![0.1, 0.35, 1.0 / 3.0 + 1.0, 2.0],
        v_obs_kms: vec![10.123456789012345, 20.0, 30.5, 41.0],
        v_err_kms: vec![1.0, 1.5, 2.0, 2.5],
        v_gas_kms: vec![-1.0, 3.0, 5.0, 6.0],
        v_disk_kms: vec![8.0, 12.0, 14.0, 13.0],
        v_bulge_kms: Some(vec![5.0, 4.0, 3.0, 2.0]),
        warnings: Vec::new(),
    }
}

#[test]
fn ecsv_and_csv_round_trip_exactly() {
    let table = sample();
    let output = table.to_output();
    for (text, name) in [
        (
            output.to_ecsv(Path::new("t.ecsv")).expect("writes"),
            "t.ecsv",
        ),
        (output.to_csv(Path::new("t.csv")).expect("writes"), "t.csv"),
    ] {
        let back = read_table_from_str(&text, Path::new(name), &ReadOptions::default())
            .unwrap_or_else(|e| panic!("{name}: {e}\n{text}"));
        assert_eq!(back.meta, table.meta, "{name}");
        assert_eq!(back.radius_kpc, table.radius_kpc, "{name}");
        assert_eq!(back.v_obs_kms, table.v_obs_kms, "{name}");
        assert_eq!(back.v_err_kms, table.v_err_kms, "{name}");
        assert_eq!(back.v_gas_kms, table.v_gas_kms, "{name}");
        assert_eq!(back.v_disk_kms, table.v_disk_kms, "{name}");
        assert_eq!(back.v_bulge_kms, table.v_bulge_kms, "{name}");
        assert!(back.warnings.is_empty(), "{name}: {:?}", back.warnings);
    }
}

#[test]
fn atomic_write_replaces_the_file_and_leaves_no_partial() {
    let dir = std::env::temp_dir().join(format!("caldera-write-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let path = dir.join("out.ecsv");
    write_atomic(&path, b"first").expect("writes");
    write_atomic(&path, b"second").expect("writes");
    assert_eq!(std::fs::read(&path).expect("reads"), b"second");
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .expect("lists")
        .filter_map(Result::ok)
        .filter(|e| e.file_name().to_string_lossy().ends_with(".partial"))
        .collect();
    assert!(leftovers.is_empty());
    // A folder that does not exist is an error naming the path, not a panic.
    let missing = dir.join("no-such-folder").join("x.csv");
    let message = write_atomic(&missing, b"x").expect_err("fails").to_string();
    assert!(message.contains("no-such-folder"), "{message}");
    std::fs::remove_dir_all(&dir).ok();
}
