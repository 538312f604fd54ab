//! Options shared by commands that read tables: format override and column mapping.

use anyhow::Context;
use caldera_data::{ColumnMapping, ColumnRole, ReadOptions, TableFormat};
use clap::Args;

/// How to read tables.
#[derive(Debug, Args, Default)]
pub struct TableOptions {
    /// Table format: ecsv, csv or whitespace (default: detected from the name and contents).
    #[arg(long, value_name = "NAME")]
    pub format: Option<String>,
    /// Column holding the radius (overrides the guess from the header names).
    #[arg(long, value_name = "HEADER")]
    pub radius_column: Option<String>,
    /// Column holding the observed circular velocity.
    #[arg(long, value_name = "HEADER")]
    pub velocity_column: Option<String>,
    /// Column holding the velocity error.
    #[arg(long, value_name = "HEADER")]
    pub error_column: Option<String>,
    /// Column holding the gas contribution.
    #[arg(long, value_name = "HEADER")]
    pub gas_column: Option<String>,
    /// Column holding the stellar-disk contribution (for Υ = 1).
    #[arg(long, value_name = "HEADER")]
    pub disk_column: Option<String>,
    /// Column holding the bulge contribution (for Υ = 1).
    #[arg(long, value_name = "HEADER")]
    pub bulge_column: Option<String>,
}

impl TableOptions {
    /// The reader options these flags ask for.
    pub fn read_options(&self) -> anyhow::Result<ReadOptions> {
        let format = match &self.format {
            None => None,
            Some(name) => Some(TableFormat::from_name(name).with_context(|| {
                format!(
                    "unknown table format '{name}'; known formats: {}",
                    TableFormat::NAMES.map(|(n, _)| n).join(", ")
                )
            })?),
        };
        let mut mapping = ColumnMapping::new();
        for (role, column) in [
            (ColumnRole::Radius, &self.radius_column),
            (ColumnRole::VelocityObserved, &self.velocity_column),
            (ColumnRole::VelocityError, &self.error_column),
            (ColumnRole::VelocityGas, &self.gas_column),
            (ColumnRole::VelocityDisk, &self.disk_column),
            (ColumnRole::VelocityBulge, &self.bulge_column),
        ] {
            if let Some(name) = column {
                mapping.insert(role, name.clone());
            }
        }
        Ok(ReadOptions { format, mapping })
    }
}
