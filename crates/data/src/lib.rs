//! Caldera's data layer: galaxy rotation-curve tables read from CSV or whitespace-separated
//! text (with units taken from headers), validated with errors that name the file, line and
//! column, and converted once to kpc and km/s.
//!
//! Main types: [`GalaxyTable`], [`GalaxyMeta`], [`TableFormat`], [`ReadOptions`],
//! [`DataError`].
//!
//! ```
//! use caldera_data::{ReadOptions, TableFormat, read_table_from_str};
//!
//! let text = "# name: Example dwarf\n\
//!             radius [kpc], v_obs, err, v_gas, v_disk\n\
//!             0.5, 20, 2, 5, 10\n\
//!             1.0, 31, 2, 8, 14\n";
//! let options = ReadOptions { format: Some(TableFormat::Csv), ..ReadOptions::default() };
//! let table = read_table_from_str(text, "example.csv".as_ref(), &options)?;
//! assert_eq!(table.meta.name, "Example dwarf");
//! assert_eq!(table.len(), 2);
//! # Ok::<(), caldera_data::DataError>(())
//! ```

pub mod catalogue;
pub mod columns;
mod ecsv;
mod error;
pub mod mock;
pub mod numeric;
pub mod session;
mod table;
mod text;
mod write;

use std::path::Path;

pub use catalogue::{Catalogue, CatalogueEntry, load_catalogue};
pub use columns::ColumnRole;
pub use error::{DataError, Location};
pub use numeric::{
    ConstraintValue, NumericTable, OutsideConstraint, read_constraints, read_numeric_csv,
};
pub use table::{GalaxyMeta, GalaxyTable, TableWarning};
pub use text::ColumnMapping;
pub use write::{ColumnValues, MetaValue, OutputColumn, OutputTable, write_atomic};

/// The table formats Caldera reads.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[non_exhaustive]
pub enum TableFormat {
    /// astropy's ECSV: a YAML header with column units and metadata, then the rows.
    Ecsv,
    /// Comma-separated values with a header row.
    Csv,
    /// Columns separated by runs of spaces or tabs, with a header row.
    Whitespace,
}

impl TableFormat {
    /// Every format, by the name users give it.
    pub const NAMES: [(&'static str, Self); 3] = [
        ("ecsv", Self::Ecsv),
        ("csv", Self::Csv),
        ("whitespace", Self::Whitespace),
    ];

    /// The format called `name` (case-insensitive).
    #[must_use]
    pub fn from_name(name: &str) -> Option<Self> {
        Self::NAMES
            .iter()
            .find(|(n, _)| n.eq_ignore_ascii_case(name))
            .map(|(_, f)| *f)
    }

    /// Guesses the format from the file name and, failing that, from the header line.
    #[must_use]
    pub fn detect(path: &Path, text: &str) -> Option<Self> {
        match path
            .extension()
            .and_then(|e| e.to_str())
            .map(str::to_ascii_lowercase)
            .as_deref()
        {
            Some("ecsv") => return Some(Self::Ecsv),
            Some("csv") => return Some(Self::Csv),
            Some("tsv") => return Some(Self::Whitespace),
            _ => {}
        }
        if text.trim_start().starts_with("# %ECSV") {
            return Some(Self::Ecsv);
        }
        let header = text
            .lines()
            .map(str::trim)
            .find(|l| !l.is_empty() && !l.starts_with('#'))?;
        if header.contains(',') {
            Some(Self::Csv)
        } else if header.split_whitespace().count() > 1 {
            Some(Self::Whitespace)
        } else {
            None
        }
    }
}

/// How to read a table: an explicit format (else detected) and column-role overrides.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    pub format: Option<TableFormat>,
    pub mapping: ColumnMapping,
}

/// Reads a galaxy table from a file.
pub fn read_table(path: &Path, options: &ReadOptions) -> Result<GalaxyTable, DataError> {
    let text = std::fs::read_to_string(path).map_err(|source| DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    })?;
    read_table_from_str(&text, path, options)
}

/// Reads a galaxy table from text; `path` names it in messages.
pub fn read_table_from_str(
    text: &str,
    path: &Path,
    options: &ReadOptions,
) -> Result<GalaxyTable, DataError> {
    let format = options
        .format
        .or_else(|| TableFormat::detect(path, text))
        .ok_or_else(|| DataError::UnknownFormat {
            path: path.to_path_buf(),
            known: TableFormat::NAMES.map(|(n, _)| n).join(", "),
        })?;
    let raw = match format {
        TableFormat::Ecsv => ecsv::read_ecsv(text, path)?,
        TableFormat::Csv => text::read_delimited(text, path, Some(','))?,
        TableFormat::Whitespace => text::read_delimited(text, path, None)?,
    };
    text::build_table(raw, path, &options.mapping)
}
