//! ECSV tables written by astropy itself load with their units.
//!
//! Reference: astropy.table.Table.write(format="ascii.ecsv") and astropy.units conversions, via
//! tests/reference/make_ecsv_tables.py (fixtures under tests/reference/fixtures/ecsv/).

use caldera_checks::{fixture_path, read_fixture};
use caldera_data::{ReadOptions, read_table};
use serde::Deserialize;

#[derive(Deserialize)]
struct Expected {
    file: String,
    name: String,
    radius_kpc: Vec<f64>,
    v_obs_kms: Vec<f64>,
    v_err_kms: Vec<f64>,
    v_gas_kms: Vec<f64>,
    v_disk_kms: Vec<f64>,
    v_bulge_kms: Option<Vec<f64>>,
    distance_mpc: Option<f64>,
    inclination_deg: Option<f64>,
}

fn same(name: &str, got: &[f64], want: &[f64]) {
    assert_eq!(got.len(), want.len(), "{name}: lengths");
    for (g, w) in got.iter().zip(want) {
        assert!(
            (g - w).abs() <= 1e-12 * w.abs().max(1.0),
            "{name}: {g} vs astropy {w}"
        );
    }
}

#[test]
fn astropy_written_tables_load_with_their_units() {
    let cases: Vec<Expected> = read_fixture("ecsv/expected.json");
    assert!(cases.len() >= 3);
    for case in cases {
        let path = fixture_path("ecsv").join(&case.file);
        let table = read_table(&path, &ReadOptions::default())
            .unwrap_or_else(|e| panic!("{} does not load: {e}", case.file));
        assert_eq!(table.meta.name, case.name);
        assert_eq!(table.meta.distance_mpc, case.distance_mpc);
        assert_eq!(table.meta.inclination_deg, case.inclination_deg);
        same("radius", &table.radius_kpc, &case.radius_kpc);
        same("v_obs", &table.v_obs_kms, &case.v_obs_kms);
        same("v_err", &table.v_err_kms, &case.v_err_kms);
        same("v_gas", &table.v_gas_kms, &case.v_gas_kms);
        same("v_disk", &table.v_disk_kms, &case.v_disk_kms);
        match (&table.v_bulge_kms, &case.v_bulge_kms) {
            (Some(got), Some(want)) => same("v_bulge", got, want),
            (None, None) => {}
            _ => panic!("{}: bulge column presence differs", case.file),
        }
        assert!(
            table.warnings.is_empty(),
            "{}: {:?}",
            case.file,
            table.warnings
        );
    }
}
