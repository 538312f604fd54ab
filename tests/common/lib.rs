//! Shared helpers for the workspace-level checks in `tests/`: locating and reading the fixtures
//! that `tests/reference/make_fixtures.py` writes, and turning their baryon records into the
//! physics crate's types.

use std::path::PathBuf;

use caldera_physics::{BaryonTable, BaryonVelocities, EnclosedMass, Hernquist, NoBaryons};
use serde::Deserialize;

/// Path of a fixture file under `tests/reference/fixtures/`.
#[must_use]
pub fn fixture_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("reference")
        .join("fixtures")
        .join(name)
}

/// Reads and parses a JSON fixture.
///
/// # Panics
/// When the fixture is missing or malformed: these helpers serve tests only.
#[must_use]
pub fn read_fixture<T: for<'de> Deserialize<'de>>(name: &str) -> T {
    let path = fixture_path(name);
    let text = std::fs::read_to_string(&path)
        .unwrap_or_else(|e| panic!("cannot read fixture {}: {e}", path.display()));
    serde_json::from_str(&text)
        .unwrap_or_else(|e| panic!("cannot parse fixture {}: {e}", path.display()))
}

/// A baryon description as the reference script writes it.
#[derive(Debug, Clone, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum BaryonRecord {
    None,
    Hernquist {
        mass_msun: f64,
        scale_radius_kpc: f64,
    },
    Table {
        radii_kpc: Vec<f64>,
        v_gas_kms: Vec<f64>,
        v_disk_kms: Vec<f64>,
        v_bulge_kms: Vec<f64>,
        upsilon_disk: f64,
        upsilon_bulge: f64,
    },
}

impl BaryonRecord {
    /// The physics crate's enclosed mass for this record.
    ///
    /// # Panics
    /// When the record is invalid (tests only).
    #[must_use]
    pub fn to_mass(&self) -> Box<dyn EnclosedMass> {
        match self {
            Self::None => Box::new(NoBaryons),
            Self::Hernquist {
                mass_msun,
                scale_radius_kpc,
            } => Box::new(Hernquist::new(*mass_msun, *scale_radius_kpc).expect("valid record")),
            Self::Table {
                radii_kpc,
                v_gas_kms,
                v_disk_kms,
                v_bulge_kms,
                upsilon_disk,
                upsilon_bulge,
            } => {
                let rows: Vec<BaryonVelocities> = (0..radii_kpc.len())
                    .map(|i| BaryonVelocities {
                        gas_kms: v_gas_kms[i],
                        disk_kms: v_disk_kms[i],
                        bulge_kms: v_bulge_kms[i],
                    })
                    .collect();
                Box::new(
                    BaryonTable::new(radii_kpc, &rows, *upsilon_disk, *upsilon_bulge)
                        .expect("valid record"),
                )
            }
        }
    }
}
