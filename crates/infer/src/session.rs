//! The application's session: everything a user set up and obtained — catalogue, column
//! mapping, per-galaxy settings, priors and sampler settings, models, seeds and fit results —
//! stored with the versioning and safety rules of [`caldera_data::session`].

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use caldera_data::session::{GalaxySettings, HaloModel, SESSION_VERSION, SessionFile};
use caldera_data::{ColumnMapping, TableFormat};
use serde::{Deserialize, Serialize};

use crate::fit::{FitConfig, FitSummary};

/// A saved session.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Session {
    pub version: u32,
    /// The table or catalogue folder the session works on.
    pub catalogue: Option<PathBuf>,
    #[serde(default)]
    pub format: Option<TableFormat>,
    #[serde(default)]
    pub column_mapping: ColumnMapping,
    /// Per-galaxy settings, by galaxy name (sorted, so files diff cleanly).
    #[serde(default)]
    pub galaxies: BTreeMap<String, GalaxySettings>,
    /// The galaxy shown last.
    #[serde(default)]
    pub selected: Option<String>,
    /// Priors, sampler settings, cosmology, halo age and the seed of every fit.
    #[serde(default)]
    pub fit: FitConfig,
    /// Halo models fitted to each galaxy.
    #[serde(default = "default_models")]
    pub models: Vec<HaloModel>,
    /// Fit results, one per galaxy and model.
    #[serde(default)]
    pub results: Vec<FitSummary>,
    #[serde(default)]
    pub notes: String,
}

fn default_models() -> Vec<HaloModel> {
    vec![HaloModel::Sidm]
}

impl Default for Session {
    fn default() -> Self {
        Self {
            version: SESSION_VERSION,
            catalogue: None,
            format: None,
            column_mapping: ColumnMapping::new(),
            galaxies: BTreeMap::new(),
            selected: None,
            fit: FitConfig::default(),
            models: default_models(),
            results: Vec::new(),
            notes: String::new(),
        }
    }
}

impl SessionFile for Session {
    fn catalogue(&self) -> Option<&Path> {
        self.catalogue.as_deref()
    }
}

impl Session {
    /// The stored result of `model` for `galaxy`, if any.
    #[must_use]
    pub fn result(&self, galaxy: &str, model: HaloModel) -> Option<&FitSummary> {
        self.results
            .iter()
            .find(|r| r.galaxy == galaxy && r.model == model)
    }

    /// Stores a result, replacing an earlier one for the same galaxy and model.
    pub fn store_result(&mut self, summary: FitSummary) {
        self.results
            .retain(|r| !(r.galaxy == summary.galaxy && r.model == summary.model));
        self.results.push(summary);
        self.results.sort_by(|a, b| {
            a.galaxy
                .cmp(&b.galaxy)
                .then_with(|| a.model.name().cmp(b.model.name()))
        });
    }
}
