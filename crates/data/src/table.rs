//! The galaxy table: a rotation curve with its baryonic contributions and metadata, in the
//! internal units (kpc, km/s), with the warnings raised while reading it.

use std::path::PathBuf;

use caldera_physics::{BaryonRows, BaryonTable, BaryonVelocities, PhysicsError};
use serde::{Deserialize, Serialize};

use crate::error::Location;

/// Per-galaxy metadata. Every field may come from the table file or from a catalogue index.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct GalaxyMeta {
    pub name: String,
    pub distance_mpc: Option<f64>,
    pub distance_err_mpc: Option<f64>,
    pub inclination_deg: Option<f64>,
    pub inclination_err_deg: Option<f64>,
    /// Halo age for the SIDM rate condition, Gyr.
    pub age_gyr: Option<f64>,
    /// Luminosity of the stellar disk and bulge in the band of their mass-to-light ratios Υ, at
    /// the table's distance, Lsun: the stellar mass is Υ times it (the disk and bulge columns
    /// are at Υ = 1 Msun/Lsun). Used by the stellar-to-halo mass prior.
    #[serde(default)]
    pub luminosity_lsun: Option<f64>,
    pub notes: String,
}

/// Something accepted but worth the user's attention (sorted rows, assumed units, ...).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TableWarning {
    pub location: Option<String>,
    pub message: String,
}

impl TableWarning {
    pub(crate) fn at(location: Option<&Location>, message: impl Into<String>) -> Self {
        Self {
            location: location.map(ToString::to_string),
            message: message.into(),
        }
    }
}

impl std::fmt::Display for TableWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match &self.location {
            Some(location) => write!(f, "{location}: {}", self.message),
            None => f.write_str(&self.message),
        }
    }
}

/// A galaxy's rotation curve in kpc and km/s, sorted by radius.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct GalaxyTable {
    pub meta: GalaxyMeta,
    /// The file it was read from, if any.
    pub source: Option<PathBuf>,
    pub radius_kpc: Vec<f64>,
    pub v_obs_kms: Vec<f64>,
    pub v_err_kms: Vec<f64>,
    pub v_gas_kms: Vec<f64>,
    pub v_disk_kms: Vec<f64>,
    /// None when the galaxy has no bulge column.
    pub v_bulge_kms: Option<Vec<f64>>,
    pub warnings: Vec<TableWarning>,
}

impl GalaxyTable {
    /// Number of data points.
    #[must_use]
    pub fn len(&self) -> usize {
        self.radius_kpc.len()
    }

    /// True when the table has no rows.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.radius_kpc.is_empty()
    }

    /// The baryonic velocities of row `i` (bulge zero when absent).
    #[must_use]
    pub fn baryon_velocities(&self, i: usize) -> BaryonVelocities {
        BaryonVelocities {
            gas_kms: self.v_gas_kms[i],
            disk_kms: self.v_disk_kms[i],
            bulge_kms: self.v_bulge_kms.as_ref().map_or(0.0, |b| b[i]),
        }
    }

    /// The table's baryonic rows: the one way a table becomes a baryonic mass model (see
    /// [`BaryonRows`] for the sign rule, repeated radii and rows at r = 0).
    pub fn baryon_rows(&self) -> Result<BaryonRows, PhysicsError> {
        BaryonRows::new(
            &self.radius_kpc,
            &self.v_gas_kms,
            &self.v_disk_kms,
            self.v_bulge_kms.as_deref(),
        )
    }

    /// The baryonic mass model for mass-to-light ratios Υ_disk and Υ_bulge at the table's
    /// distance.
    pub fn baryons(
        &self,
        upsilon_disk: f64,
        upsilon_bulge: f64,
    ) -> Result<BaryonTable, PhysicsError> {
        self.baryon_rows()?
            .mass_model_at(upsilon_disk, upsilon_bulge, 1.0)
    }

    /// Refuses a fit with at least as many free parameters as data points (no degrees of
    /// freedom left), naming the file.
    pub fn check_enough_points(&self, free_parameters: usize) -> Result<(), crate::DataError> {
        if self.len() > free_parameters {
            return Ok(());
        }
        Err(crate::DataError::Unusable {
            path: self
                .source
                .clone()
                .unwrap_or_else(|| PathBuf::from(&self.meta.name)),
            message: format!(
                "{} data points cannot constrain {free_parameters} free parameters; at least {} points are needed",
                self.len(),
                free_parameters + 1
            ),
        })
    }

    /// Largest observed velocity, km/s.
    #[must_use]
    pub fn v_obs_max_kms(&self) -> f64 {
        self.v_obs_kms.iter().copied().fold(f64::NAN, f64::max)
    }
}
