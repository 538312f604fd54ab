//! Reading tables: good inputs in every supported shape, and every bad input refused with its
//! precise place.

use std::path::Path;

use caldera_data::{
    ColumnMapping, ColumnRole, DataError, ReadOptions, TableFormat, read_table_from_str,
};

fn read(text: &str, name: &str) -> Result<caldera_data::GalaxyTable, DataError> {
    read_table_from_str(text, Path::new(name), &ReadOptions::default())
}

fn error_text(text: &str, name: &str) -> String {
    match read(text, name) {
        Ok(_) => panic!("expected {name} to be refused"),
        Err(e) => e.to_string(),
    }
}

const GOOD_CSV: &str = "\
# name: Test galaxy A
# distance_mpc: 8.0
# inclination_deg: 55
radius [kpc], v_obs [km/s], err, v_gas, v_disk, v_bulge
0.5, 20, 2, 5, 10, 12
1.0, 31, 2, 8, 14, 11
2.0, 40, 3, 10, 16, 9
";

#[test]
fn reads_csv_with_units_and_metadata() {
    let table = read(GOOD_CSV, "a.csv").expect("reads");
    assert_eq!(table.meta.name, "Test galaxy A");
    assert_eq!(table.meta.distance_mpc, Some(8.0));
    assert_eq!(table.meta.inclination_deg, Some(55.0));
    assert_eq!(table.radius_kpc, vec![0.5, 1.0, 2.0]);
    assert_eq!(table.v_bulge_kms.as_deref(), Some(&[12.0, 11.0, 9.0][..]));
    assert!(table.warnings.is_empty(), "{:?}", table.warnings);
}

#[test]
fn reads_whitespace_columns_and_converts_units() {
    let text = "R_pc  Vobs_m/s  e_Vobs  Vgas  Vdisk\n\
                500   20000     2000    5     10\n\
                1000  31000     2000    8     14\n";
    let table = read(text, "b.dat").expect("reads");
    assert_eq!(table.radius_kpc, vec![0.5, 1.0]);
    assert_eq!(table.v_obs_kms, vec![20.0, 31.0]);
    // The error column has no unit: velocities default to km/s.
    assert_eq!(table.v_err_kms, vec![2000.0, 2000.0]);
    assert!(table.v_bulge_kms.is_none());
}

#[test]
fn converts_arcseconds_with_the_distance() {
    let text = "# distance: 10\nr [arcsec], v, err, gas, disk\n20.626480624709636, 30, 2, 5, 10\n";
    let table = read(text, "c.csv").expect("reads");
    // 20.6265 arcsec at 10 Mpc is 1 kpc (small-angle, exact definition of the arcsecond).
    assert!((table.radius_kpc[0] - 1.0).abs() < 1e-12);
    let no_distance = error_text("r [arcsec], v, err, gas, disk\n20, 30, 2, 5, 10\n", "d.csv");
    assert!(
        no_distance.contains("d.csv:1:1") && no_distance.contains("distance"),
        "{no_distance}"
    );
}

#[test]
fn sorts_unsorted_rows_and_warns() {
    let text = "r, v, err, gas, disk\n2, 40, 3, 10, 16\n1, 31, 2, 8, 14\n1, 32, 2, 8, 14\n";
    let table = read(text, "e.csv").expect("reads");
    assert_eq!(table.radius_kpc, vec![1.0, 1.0, 2.0]);
    assert_eq!(table.v_obs_kms, vec![31.0, 32.0, 40.0]);
    let messages: Vec<String> = table.warnings.iter().map(ToString::to_string).collect();
    assert!(
        messages.iter().any(|m| m.contains("sorted")),
        "{messages:?}"
    );
    assert!(
        messages
            .iter()
            .any(|m| m.contains("e.csv:4:1") && m.contains("repeats line 3")),
        "{messages:?}"
    );
    // Duplicate radii are averaged for the baryonic mass model, which needs increasing radii.
    let baryons = table.baryons(0.5, 0.7).expect("builds");
    assert_eq!(baryons.radii_kpc(), &[1.0, 2.0]);
}

#[test]
fn every_bad_input_names_its_place() {
    let cases = [
        (
            "r, v, err, gas, disk\n1, abc, 2, 5, 10\n",
            "f.csv",
            "f.csv:2:2",
            "expected a number, found 'abc'",
        ),
        (
            "r, v, err, gas, disk\n1, 30, 0, 5, 10\n",
            "g.csv",
            "g.csv:2:3",
            "not positive",
        ),
        (
            "r, v, err, gas, disk\n1, 30, -1, 5, 10\n",
            "h.csv",
            "h.csv:2:3",
            "not positive",
        ),
        (
            "r, v, err, gas, disk\n-1, 30, 2, 5, 10\n",
            "i.csv",
            "i.csv:2:1",
            "negative",
        ),
        (
            "r, v, err, gas, disk\n1, NaN, 2, 5, 10\n",
            "j.csv",
            "j.csv:2:2",
            "not a finite number",
        ),
        (
            "r, v, err, gas, disk\n1, inf, 2, 5, 10\n",
            "k.csv",
            "k.csv:2:2",
            "not a finite number",
        ),
        (
            "r, v, err, gas, disk\n1, 30, 2, 5\n",
            "l.csv",
            "l.csv:2:5",
            "expected 5 columns",
        ),
        (
            "r, v, err, gas, disk\n1, 30, , 5, 10\n",
            "m.csv",
            "m.csv:2:3",
            "empty",
        ),
        (
            "r, v, gas, disk\n1, 30, 5, 10\n",
            "n.csv",
            "n.csv",
            "velocity error",
        ),
        ("r, v, err, gas, disk\n", "o.csv", "o.csv", "no data rows"),
        ("# only a comment\n", "p.csv", "p.csv", "no header row"),
        (
            "r [km/s], v, err, gas, disk\n1, 30, 2, 5, 10\n",
            "q.csv",
            "q.csv:1:1",
            "does not fit",
        ),
        (
            "r, rad, v, err, gas, disk\n1, 1, 30, 2, 5, 10\n",
            "s.csv",
            "s.csv:1:2",
            "both look like the radius",
        ),
        (
            "# distance: far\nr, v, err, gas, disk\n1, 30, 2, 5, 10\n",
            "t.csv",
            "t.csv:1",
            "expected a number",
        ),
    ];
    for (text, name, place, what) in cases {
        let message = error_text(text, name);
        assert!(
            message.starts_with(place),
            "{name}: '{message}' should start with {place}"
        );
        assert!(
            message.contains(what),
            "{name}: '{message}' should say '{what}'"
        );
    }
}

#[test]
fn unknown_format_lists_the_known_ones() {
    let message = error_text("justoneword\n", "u.txt");
    assert!(message.contains("ecsv, csv, whitespace"), "{message}");
}

#[test]
fn explicit_mapping_overrides_the_guess() {
    let text = "r, v, err, gas, disk, vflat\n1, 30, 2, 5, 10, 33\n";
    let mut mapping = ColumnMapping::new();
    mapping.insert(ColumnRole::VelocityObserved, "vflat".into());
    let options = ReadOptions {
        format: Some(TableFormat::Csv),
        mapping,
    };
    let table = read_table_from_str(text, Path::new("w.csv"), &options).expect("reads");
    assert_eq!(table.v_obs_kms, vec![33.0]);
}

#[test]
fn too_few_points_for_the_free_parameters_is_refused() {
    let table = read(GOOD_CSV, "a.csv").expect("reads");
    assert!(table.check_enough_points(2).is_ok());
    let message = table
        .check_enough_points(3)
        .expect_err("refused")
        .to_string();
    assert!(
        message.starts_with("a.csv") && message.contains("3 data points cannot constrain 3"),
        "{message}"
    );
}

#[test]
fn ecsv_errors_name_their_place() {
    let cases = [
        (
            "# %ECSV 1.0\n# ---\n# datatype: [\nr v\n",
            "x.ecsv:",
            "YAML header does not parse",
        ),
        (
            "# ECSV 1.0\n# ---\nr v\n",
            "y.ecsv:1",
            "starts with '# %ECSV",
        ),
        (
            "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: r, unit: kpc, datatype: float64}\nradius\n1\n",
            "z.ecsv:5",
            "differ from the header",
        ),
        (
            "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: r, unit: kpc, datatype: float64}\n# - {name: v, unit: km / s, datatype: float64}\n# - {name: err, unit: km / s, datatype: float64}\n# - {name: gas, unit: km / s, datatype: float64}\n# - {name: disk, unit: km / s, datatype: float64}\nr v err gas disk\n1 2 x 4 5\n",
            "w.ecsv:10:3",
            "expected a number, found 'x'",
        ),
    ];
    for (text, place, what) in cases {
        let name = place.split(':').next().unwrap_or_default();
        let message = error_text(text, name);
        assert!(
            message.starts_with(place),
            "'{message}' should start with {place}"
        );
        assert!(message.contains(what), "'{message}' should say '{what}'");
    }
}
