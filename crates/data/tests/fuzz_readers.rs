//! Property-based fuzzing of the table readers: 100,000 generated inputs in total (40,000
//! arbitrary texts, 30,000 mutated CSV/whitespace tables, 30,000 mutated ECSV files) must each
//! load or be refused with an error — never panic. Seeded, so CI runs the same inputs every time;
//! set PROPTEST_CASES to change the count per property.

use std::path::Path;

use caldera_data::{ReadOptions, TableFormat, read_table_from_str};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngSeed};

fn config(cases: u32) -> Config {
    Config {
        cases,
        rng_seed: RngSeed::Fixed(20_261_202),
        failure_persistence: None,
        ..Config::default()
    }
}

fn read_all_ways(text: &str) {
    for (name, format) in [
        ("fuzz.csv", None),
        ("fuzz.ecsv", None),
        ("fuzz.dat", None),
        ("fuzz.txt", Some(TableFormat::Whitespace)),
        ("fuzz.txt", Some(TableFormat::Ecsv)),
    ] {
        let options = ReadOptions {
            format,
            ..ReadOptions::default()
        };
        // Either outcome is fine; a panic fails the property.
        let _ = read_table_from_str(text, Path::new(name), &options);
    }
}

const HEADERS: [&str; 14] = [
    "r",
    "radius [kpc]",
    "R_pc",
    "r (arcsec)",
    "v_obs",
    "Vobs [m/s]",
    "err",
    "e_vobs",
    "v_gas",
    "gas",
    "v_disk",
    "disk",
    "v_bulge",
    "notes",
];
const CELLS: [&str; 16] = [
    "1",
    "2.5",
    "-3",
    "0",
    "1e308",
    "1e-320",
    "NaN",
    "inf",
    "-inf",
    "",
    "abc",
    "\"q, t\"",
    "1,5",
    "   ",
    "0x10",
    "9999999999999999999999",
];

fn table_text() -> impl Strategy<Value = String> {
    let meta = prop::collection::vec(
        (
            prop::sample::select(vec![
                "name",
                "distance_mpc",
                "inclination_deg",
                "age_gyr",
                "x",
                "",
            ]),
            prop::sample::select(CELLS.to_vec()),
        ),
        0..4,
    );
    let header = prop::collection::vec(prop::sample::select(HEADERS.to_vec()), 0..8);
    let rows = prop::collection::vec(
        prop::collection::vec(prop::sample::select(CELLS.to_vec()), 0..9),
        0..12,
    );
    let separator = prop::sample::select(vec![",", " ", "\t", ", ", "  "]);
    (meta, header, rows, separator).prop_map(|(meta, header, rows, sep)| {
        let mut text = String::new();
        for (k, v) in meta {
            text.push_str(&format!("# {k}: {v}\n"));
        }
        text.push_str(&header.join(sep));
        text.push('\n');
        for row in rows {
            text.push_str(&row.join(sep));
            text.push('\n');
        }
        text
    })
}

fn ecsv_text() -> impl Strategy<Value = String> {
    let yaml_line = prop::sample::select(vec![
        "# - {name: r, unit: kpc, datatype: float64}",
        "# - {name: v_obs, unit: km / s, datatype: float64}",
        "# - {name: err, unit: m / s, datatype: float64}",
        "# - {name: v_gas, datatype: float64}",
        "# - {name: v_disk, unit: km / s, datatype: string}",
        "# - {name: v_bulge, unit: furlong, datatype: float64}",
        "# - {name: , unit: kpc}",
        "# datatype:",
        "# delimiter: ','",
        "# delimiter: '|'",
        "# meta: !!omap",
        "# - {name: Kiln fuzz}",
        "# - {distance_mpc: abc}",
        "# meta: {distance_mpc: 5, name: [1, 2]}",
        "# ---",
        "# %ECSV 1.0",
        "# : : :",
        "# - [",
        "# {{{",
        "#",
    ]);
    let lines = prop::collection::vec(yaml_line, 0..10);
    let body = prop::collection::vec(
        prop::collection::vec(prop::sample::select(CELLS.to_vec()), 0..7),
        0..8,
    );
    let names = prop::collection::vec(
        prop::sample::select(vec!["r", "v_obs", "err", "v_gas", "v_disk", "x"]),
        0..6,
    );
    (lines, names, body).prop_map(|(lines, names, body)| {
        let mut text = String::from("# %ECSV 1.0\n# ---\n");
        for l in lines {
            text.push_str(l);
            text.push('\n');
        }
        text.push_str(&names.join(" "));
        text.push('\n');
        for row in body {
            text.push_str(&row.join(" "));
            text.push('\n');
        }
        text
    })
}

proptest! {
    #![proptest_config(config(40_000))]
    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,200}") {
        read_all_ways(&text);
    }
}

proptest! {
    #![proptest_config(config(30_000))]
    #[test]
    fn mutated_tables_never_panic(text in table_text()) {
        read_all_ways(&text);
    }
}

proptest! {
    #![proptest_config(config(30_000))]
    #[test]
    fn mutated_ecsv_never_panics(text in ecsv_text()) {
        read_all_ways(&text);
    }
}
