//! Catalogues: a folder of galaxy tables plus an optional index file, `index.csv`, whose rows
//! override or complete each table's metadata.
//!
//! The index is CSV with a header; the `file` column names a table in the folder; the optional
//! columns `name`, `distance_mpc`, `distance_err_mpc`, `inclination_deg`, `inclination_err_deg`,
//! `age_gyr` and `notes` replace the table's values when the cell is not empty.

use std::path::{Path, PathBuf};

use crate::error::DataError;
use crate::table::{GalaxyTable, TableWarning};
use crate::text::{apply_meta, location, split_cells};
use crate::{ReadOptions, read_table};

/// File name of a catalogue's index.
pub const INDEX_FILE: &str = "index.csv";

/// Extensions of files taken as galaxy tables in a catalogue folder.
pub const TABLE_EXTENSIONS: [&str; 5] = ["ecsv", "csv", "dat", "txt", "tsv"];

/// One galaxy of a catalogue: its file and the table, or why it could not be read.
#[derive(Debug)]
pub struct CatalogueEntry {
    pub path: PathBuf,
    pub table: Result<GalaxyTable, DataError>,
}

impl CatalogueEntry {
    /// The galaxy's name: from the table when it loaded, else the file name.
    #[must_use]
    pub fn name(&self) -> String {
        match &self.table {
            Ok(table) => table.meta.name.clone(),
            Err(_) => self
                .path
                .file_stem()
                .map_or_else(String::new, |s| s.to_string_lossy().into_owned()),
        }
    }
}

/// A set of galaxies read from one table or one folder.
#[derive(Debug)]
pub struct Catalogue {
    pub root: PathBuf,
    pub entries: Vec<CatalogueEntry>,
    /// Warnings about the catalogue as a whole (index rows naming no table, ...).
    pub warnings: Vec<TableWarning>,
}

/// Reads a catalogue from a table file or a folder. A table that fails to load is kept as an
/// entry with its error, so one bad file never hides the others; only an unreadable folder or
/// index is an error of the whole catalogue.
pub fn load_catalogue(path: &Path, options: &ReadOptions) -> Result<Catalogue, DataError> {
    let io_error = |source| DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    };
    if !std::fs::metadata(path).map_err(io_error)?.is_dir() {
        let table = read_table(path, options);
        return Ok(Catalogue {
            root: path.to_path_buf(),
            entries: vec![CatalogueEntry {
                path: path.to_path_buf(),
                table,
            }],
            warnings: Vec::new(),
        });
    }
    let mut files: Vec<PathBuf> = std::fs::read_dir(path)
        .map_err(io_error)?
        .filter_map(Result::ok)
        .map(|entry| entry.path())
        .filter(|p| p.is_file() && is_table_file(p))
        .collect();
    files.sort();
    let mut entries: Vec<CatalogueEntry> = files
        .into_iter()
        .map(|file| {
            let table = read_table(&file, options);
            CatalogueEntry { path: file, table }
        })
        .collect();
    let mut warnings = Vec::new();
    let index = path.join(INDEX_FILE);
    if index.is_file() {
        apply_index(&index, &mut entries, &mut warnings)?;
    }
    Ok(Catalogue {
        root: path.to_path_buf(),
        entries,
        warnings,
    })
}

fn is_table_file(path: &Path) -> bool {
    let Some(name) = path.file_name().and_then(|n| n.to_str()) else {
        return false;
    };
    if name == INDEX_FILE || name.starts_with('.') {
        return false;
    }
    path.extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| TABLE_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

fn apply_index(
    index: &Path,
    entries: &mut [CatalogueEntry],
    warnings: &mut Vec<TableWarning>,
) -> Result<(), DataError> {
    let text = std::fs::read_to_string(index).map_err(|source| DataError::Io {
        path: index.to_path_buf(),
        reason: source,
    })?;
    let mut header: Option<Vec<String>> = None;
    for (i, line) in text.lines().enumerate() {
        let line_number = i + 1;
        if line.trim().is_empty() || line.trim_start().starts_with('#') {
            continue;
        }
        let cells = split_cells(line, Some(','), index, line_number)?;
        let Some(names) = &header else {
            if !cells.iter().any(|c| c == "file") {
                return Err(DataError::Malformed {
                    location: location(index, line_number, None),
                    message: "the index needs a 'file' column naming each table".into(),
                });
            }
            header = Some(cells);
            continue;
        };
        if cells.len() != names.len() {
            return Err(DataError::Malformed {
                location: location(index, line_number, Some(cells.len().min(names.len()) + 1)),
                message: format!(
                    "expected {} columns as in the header, found {}",
                    names.len(),
                    cells.len()
                ),
            });
        }
        let file = names
            .iter()
            .position(|n| n == "file")
            .map(|k| cells[k].clone())
            .unwrap_or_default();
        let Some(entry) = entries.iter_mut().find(|e| {
            e.path
                .file_name()
                .is_some_and(|n| n.to_string_lossy() == file)
        }) else {
            warnings.push(TableWarning::at(
                Some(&location(index, line_number, None)),
                format!("the index names '{file}', which is not a table in this folder"),
            ));
            continue;
        };
        let Ok(table) = &mut entry.table else {
            continue;
        };
        for (column, (key, value)) in names.iter().zip(&cells).enumerate() {
            if key == "file" || value.is_empty() {
                continue;
            }
            let at = location(index, line_number, Some(column + 1));
            apply_meta(&mut table.meta, key, value, &at, &mut table.warnings)?;
        }
    }
    Ok(())
}
