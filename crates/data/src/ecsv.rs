//! Reader for ECSV, astropy's "Enhanced CSV" text-table standard (ECSV 1.0): a YAML header in
//! `# ` comment lines gives each column's name, unit and datatype, an optional delimiter (space by
//! default) and free-form `meta`; then come a header row and the data rows.

use std::path::Path;

use yaml_rust2::{Yaml, YamlLoader};

use crate::columns::parse_unit;
use crate::error::DataError;
use crate::table::{GalaxyMeta, TableWarning};
use crate::text::{RawColumn, RawTable, apply_meta, location, split_cells};

/// Reads an ECSV table into raw columns with their units.
pub(crate) fn read_ecsv(text: &str, path: &Path) -> Result<RawTable, DataError> {
    let mut yaml_lines = Vec::new();
    let mut body_start = None;
    let mut first_header_line = 0;
    for (index, line) in text.lines().enumerate() {
        if let Some(rest) = line.strip_prefix('#') {
            if yaml_lines.is_empty() {
                first_header_line = index + 1;
                if !rest.trim_start().starts_with("%ECSV") {
                    return Err(DataError::Malformed {
                        location: location(path, index + 1, None),
                        message: "an ECSV file starts with '# %ECSV <version>'".into(),
                    });
                }
            }
            yaml_lines.push(rest.strip_prefix(' ').unwrap_or(rest));
        } else if !line.trim().is_empty() {
            body_start = Some(index);
            break;
        }
    }
    if yaml_lines.is_empty() {
        return Err(DataError::Malformed {
            location: location(path, 1, None),
            message: "no ECSV header: expected '# %ECSV 1.0' then a YAML block in '# ' lines"
                .into(),
        });
    }
    // The first line is the version marker, not YAML.
    let yaml_text = yaml_lines[1..].join("\n");
    let docs = YamlLoader::load_from_str(&yaml_text).map_err(|e| DataError::Malformed {
        location: location(path, first_header_line + 1 + e.marker().line(), None),
        message: format!("the ECSV YAML header does not parse: {}", e.info()),
    })?;
    let header = docs.first().ok_or_else(|| DataError::Malformed {
        location: location(path, first_header_line, None),
        message: "the ECSV YAML header is empty".into(),
    })?;
    let datatype = header["datatype"]
        .as_vec()
        .ok_or_else(|| DataError::Malformed {
            location: location(path, first_header_line, None),
            message: "the ECSV header has no 'datatype' list of columns".into(),
        })?;
    let delimiter = match header["delimiter"].as_str() {
        None | Some(" ") => ' ',
        Some(",") => ',',
        Some(other) => {
            return Err(DataError::Malformed {
                location: location(path, first_header_line, None),
                message: format!("ECSV delimiter '{other}' is not allowed (space or comma)"),
            });
        }
    };
    let mut meta = GalaxyMeta::default();
    let mut warnings = Vec::new();
    let meta_at = location(path, first_header_line, None);
    for (key, value) in meta_entries(&header["meta"]) {
        apply_meta(&mut meta, &key, &value, &meta_at, &mut warnings)?;
    }

    let mut declared = Vec::new();
    for entry in datatype {
        let name = entry["name"].as_str().unwrap_or_default().to_string();
        let kind = entry["datatype"].as_str().unwrap_or("string").to_string();
        let unit_text = entry["unit"].as_str().map(str::to_string);
        declared.push((name, kind, unit_text));
    }

    let Some(body_start) = body_start else {
        return Err(DataError::Unusable {
            path: path.to_path_buf(),
            message: "the ECSV file has a header but no column-name row".into(),
        });
    };
    let mut lines = text.lines().enumerate().skip(body_start);
    let Some((header_index, header_row)) = lines.next() else {
        return Err(DataError::Unusable {
            path: path.to_path_buf(),
            message: "no column-name row".into(),
        });
    };
    let names = split_cells(header_row, Some(delimiter), path, header_index + 1)?;
    let declared_names: Vec<&str> = declared.iter().map(|d| d.0.as_str()).collect();
    if names
        .iter()
        .map(String::as_str)
        .ne(declared_names.iter().copied())
    {
        return Err(DataError::Malformed {
            location: location(path, header_index + 1, None),
            message: format!(
                "column names {names:?} differ from the header's datatype list {declared_names:?}"
            ),
        });
    }
    let mut columns: Vec<RawColumn> = declared
        .iter()
        .map(|(name, _, unit_text)| RawColumn {
            header: name.clone(),
            unit: unit_text.as_deref().and_then(parse_unit),
            unit_text: unit_text.clone(),
            cells: Vec::new(),
        })
        .collect();
    for (column, (name, kind, unit_text)) in declared.iter().enumerate() {
        if let Some(unit) = unit_text
            && parse_unit(unit).is_none()
        {
            warnings.push(TableWarning::at(
                Some(&location(path, header_index + 1, Some(column + 1))),
                format!("column '{name}' has unit '{unit}', which Caldera does not convert"),
            ));
        }
        if !(kind.starts_with("float") || kind.starts_with("int") || kind.starts_with("uint")) {
            warnings.push(TableWarning::at(
                Some(&location(path, header_index + 1, Some(column + 1))),
                format!("column '{name}' holds {kind} values and cannot be a velocity or radius"),
            ));
        }
    }
    let mut row_lines = Vec::new();
    for (index, line) in lines {
        if line.trim().is_empty() || line.starts_with('#') {
            continue;
        }
        let cells = split_cells(line, Some(delimiter), path, index + 1)?;
        if cells.len() != columns.len() {
            return Err(DataError::Malformed {
                location: location(path, index + 1, Some(cells.len().min(columns.len()) + 1)),
                message: format!(
                    "expected {} columns as in the header, found {}",
                    columns.len(),
                    cells.len()
                ),
            });
        }
        for (cell, column) in cells.into_iter().zip(&mut columns) {
            column.cells.push(cell);
        }
        row_lines.push(index + 1);
    }
    Ok(RawTable {
        columns,
        header_line: header_index + 1,
        row_lines,
        meta,
        warnings,
    })
}

/// Key–value pairs of an ECSV `meta` block, which astropy writes either as a mapping or as an
/// ordered map (`!!omap`: a list of one-entry mappings).
fn meta_entries(meta: &Yaml) -> Vec<(String, String)> {
    let mut out = Vec::new();
    let mut push_hash = |hash: &yaml_rust2::yaml::Hash| {
        for (k, v) in hash {
            if let (Some(key), Some(value)) = (scalar_text(k), scalar_text(v)) {
                out.push((key, value));
            }
        }
    };
    match meta {
        Yaml::Hash(hash) => push_hash(hash),
        Yaml::Array(items) => {
            for item in items {
                if let Yaml::Hash(hash) = item {
                    push_hash(hash);
                }
            }
        }
        _ => {}
    }
    out
}

fn scalar_text(value: &Yaml) -> Option<String> {
    match value {
        Yaml::String(s) | Yaml::Real(s) => Some(s.clone()),
        Yaml::Integer(i) => Some(i.to_string()),
        Yaml::Boolean(b) => Some(b.to_string()),
        _ => None,
    }
}
