//! Writers for Caldera's own outputs (results, model curves, mock tables): CSV with units in the
//! header names, and ECSV with units and metadata in the YAML header. Files are written
//! atomically: to a temporary file beside the target, then renamed.

use std::io::Write as _;
use std::path::{Path, PathBuf};

use crate::error::DataError;
use crate::table::GalaxyTable;

/// A named column with its unit (an astropy unit string, e.g. `"km / s"`).
#[derive(Debug, Clone, PartialEq)]
pub struct OutputColumn {
    pub name: String,
    pub unit: Option<String>,
    pub values: ColumnValues,
}

/// The cells of a column.
#[derive(Debug, Clone, PartialEq)]
pub enum ColumnValues {
    Numbers(Vec<f64>),
    Text(Vec<String>),
    Flags(Vec<bool>),
}

impl ColumnValues {
    fn len(&self) -> usize {
        match self {
            Self::Numbers(v) => v.len(),
            Self::Text(v) => v.len(),
            Self::Flags(v) => v.len(),
        }
    }

    fn datatype(&self) -> &'static str {
        match self {
            Self::Numbers(_) => "float64",
            Self::Text(_) => "string",
            Self::Flags(_) => "bool",
        }
    }

    /// Cell `row` as text: numbers in their shortest round-trip form; text quoted when `quote`
    /// says it must be; flags as astropy writes them in ECSV (`True`/`False`).
    fn cell(&self, row: usize, quote: &dyn Fn(&str) -> bool) -> String {
        match self {
            Self::Numbers(v) => format_number(v[row]),
            Self::Flags(v) => if v[row] { "True" } else { "False" }.to_string(),
            Self::Text(v) => {
                let t = &v[row];
                if quote(t) {
                    format!("\"{}\"", t.replace('"', "\"\""))
                } else {
                    t.clone()
                }
            }
        }
    }
}

/// A table to write: columns of equal length plus ordered metadata.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct OutputTable {
    pub columns: Vec<OutputColumn>,
    pub meta: Vec<(String, MetaValue)>,
}

/// A metadata value.
#[derive(Debug, Clone, PartialEq)]
pub enum MetaValue {
    Number(f64),
    Text(String),
}

impl OutputTable {
    /// Adds a column of numbers.
    #[must_use]
    pub fn with_column(mut self, name: &str, unit: Option<&str>, values: Vec<f64>) -> Self {
        self.columns.push(OutputColumn {
            name: name.to_string(),
            unit: unit.map(str::to_string),
            values: ColumnValues::Numbers(values),
        });
        self
    }

    /// Adds a column of text.
    #[must_use]
    pub fn with_text_column(mut self, name: &str, values: Vec<String>) -> Self {
        self.columns.push(OutputColumn {
            name: name.to_string(),
            unit: None,
            values: ColumnValues::Text(values),
        });
        self
    }

    /// Adds a column of true/false flags.
    #[must_use]
    pub fn with_flag_column(mut self, name: &str, values: Vec<bool>) -> Self {
        self.columns.push(OutputColumn {
            name: name.to_string(),
            unit: None,
            values: ColumnValues::Flags(values),
        });
        self
    }

    /// Adds a metadata entry.
    #[must_use]
    pub fn with_meta(mut self, key: &str, value: MetaValue) -> Self {
        self.meta.push((key.to_string(), value));
        self
    }

    fn rows(&self) -> usize {
        self.columns.first().map_or(0, |c| c.values.len())
    }

    fn check(&self, path: &Path) -> Result<(), DataError> {
        let rows = self.rows();
        if let Some(bad) = self.columns.iter().find(|c| c.values.len() != rows) {
            return Err(DataError::Unusable {
                path: path.to_path_buf(),
                message: format!(
                    "column '{}' has {} values but the table has {rows} rows",
                    bad.name,
                    bad.values.len()
                ),
            });
        }
        Ok(())
    }

    /// The table as CSV text: a header row of `name [unit]`, then the rows; metadata as
    /// `# key: value` lines first.
    pub fn to_csv(&self, path: &Path) -> Result<String, DataError> {
        self.check(path)?;
        let mut out = String::new();
        for (key, value) in &self.meta {
            out.push_str(&format!("# {key}: {}\n", meta_plain(value)));
        }
        let header: Vec<String> = self
            .columns
            .iter()
            .map(|c| match &c.unit {
                Some(unit) => format!("{} [{unit}]", c.name),
                None => c.name.clone(),
            })
            .collect();
        out.push_str(&header.join(","));
        out.push('\n');
        self.push_rows(&mut out, ",");
        Ok(out)
    }

    /// The table as ECSV 1.0 text (space-delimited; float64, string and bool columns).
    pub fn to_ecsv(&self, path: &Path) -> Result<String, DataError> {
        self.check(path)?;
        let mut out = String::from("# %ECSV 1.0\n# ---\n# datatype:\n");
        for column in &self.columns {
            match &column.unit {
                Some(unit) => out.push_str(&format!(
                    "# - {{name: {}, unit: {}, datatype: {}}}\n",
                    column.name,
                    yaml_string(unit),
                    column.values.datatype()
                )),
                None => out.push_str(&format!(
                    "# - {{name: {}, datatype: {}}}\n",
                    column.name,
                    column.values.datatype()
                )),
            }
        }
        if !self.meta.is_empty() {
            out.push_str("# meta: !!omap\n");
            for (key, value) in &self.meta {
                let shown = match value {
                    MetaValue::Number(n) => format_number(*n),
                    MetaValue::Text(t) => yaml_string(t),
                };
                out.push_str(&format!("# - {{{key}: {shown}}}\n"));
            }
        }
        out.push_str("# schema: astropy-2.0\n");
        let names: Vec<&str> = self.columns.iter().map(|c| c.name.as_str()).collect();
        out.push_str(&names.join(" "));
        out.push('\n');
        self.push_rows(&mut out, " ");
        Ok(out)
    }

    fn push_rows(&self, out: &mut String, separator: &str) {
        // Quote text containing the separator, a quote, or (space-separated) nothing at all.
        let quote =
            |t: &str| t.is_empty() || t.contains(separator) || t.contains('"') || t.contains(',');
        for row in 0..self.rows() {
            let cells: Vec<String> = self
                .columns
                .iter()
                .map(|c| c.values.cell(row, &quote))
                .collect();
            out.push_str(&cells.join(separator));
            out.push('\n');
        }
    }
}

/// Shortest text that reads back to the same f64.
fn format_number(value: f64) -> String {
    if value.is_finite() {
        format!("{value:?}")
    } else {
        "nan".into()
    }
}

fn meta_plain(value: &MetaValue) -> String {
    match value {
        MetaValue::Number(n) => format_number(*n),
        MetaValue::Text(t) => t.replace('\n', " "),
    }
}

/// A YAML double-quoted string.
fn yaml_string(text: &str) -> String {
    let mut out = String::from("\"");
    for c in text.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

impl GalaxyTable {
    /// The table in Caldera's output form: kpc and km/s, with its metadata.
    #[must_use]
    pub fn to_output(&self) -> OutputTable {
        let mut table = OutputTable::default()
            .with_column("radius", Some("kpc"), self.radius_kpc.clone())
            .with_column("v_obs", Some("km / s"), self.v_obs_kms.clone())
            .with_column("e_v_obs", Some("km / s"), self.v_err_kms.clone())
            .with_column("v_gas", Some("km / s"), self.v_gas_kms.clone())
            .with_column("v_disk", Some("km / s"), self.v_disk_kms.clone());
        if let Some(bulge) = &self.v_bulge_kms {
            table = table.with_column("v_bulge", Some("km / s"), bulge.clone());
        }
        table = table.with_meta("name", MetaValue::Text(self.meta.name.clone()));
        for (key, value) in [
            ("distance_mpc", self.meta.distance_mpc),
            ("distance_err_mpc", self.meta.distance_err_mpc),
            ("inclination_deg", self.meta.inclination_deg),
            ("inclination_err_deg", self.meta.inclination_err_deg),
            ("age_gyr", self.meta.age_gyr),
            ("luminosity_lsun", self.meta.luminosity_lsun),
        ] {
            if let Some(v) = value {
                table = table.with_meta(key, MetaValue::Number(v));
            }
        }
        if !self.meta.notes.is_empty() {
            table = table.with_meta("notes", MetaValue::Text(self.meta.notes.clone()));
        }
        table
    }
}

/// Writes `contents` to `path` atomically: a temporary file in the same folder is written,
/// flushed to disk and renamed over the target, so a crash never leaves a half-written file.
pub fn write_atomic(path: &Path, contents: &[u8]) -> Result<(), DataError> {
    let io_error = |source| DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    };
    let folder = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let file_name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    let temporary = folder.join(format!(".{file_name}.{}.partial", std::process::id()));
    let result = (|| {
        let mut file = std::fs::File::create(&temporary)?;
        file.write_all(contents)?;
        file.sync_all()?;
        std::fs::rename(&temporary, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&temporary);
    }
    result.map_err(io_error)
}
