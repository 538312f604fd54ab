//! Shared helpers for the workspace-level checks in `tests/`: locating and reading the fixtures
//! that `tests/reference/make_fixtures.py` writes.

use std::path::PathBuf;

/// Path of a fixture file under `tests/reference/fixtures/`.
#[must_use]
pub fn fixture_path(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests")
        .join("reference")
        .join("fixtures")
        .join(name)
}
