//! Readers for plain text tables: comma-separated (CSV) and whitespace-separated columns with a
//! header row. Metadata may precede the header as `# key: value` comment lines.

use std::collections::BTreeMap;
use std::path::Path;

use caldera_physics::units::KPC_PER_ARCSEC_PER_MPC;

use crate::columns::{
    ColumnRole, LengthUnit, Unit, VelocityUnit, guess_role, normalise, split_header,
};
use crate::error::{DataError, Location};
use crate::table::{GalaxyMeta, GalaxyTable, TableWarning};

/// Which header names the user has assigned to which roles, overriding the guesses.
pub type ColumnMapping = BTreeMap<ColumnRole, String>;

/// One column as read: its header, the unit it stated and its cells as text (parsed only when
/// the column is used, so unused text columns do no harm).
pub(crate) struct RawColumn {
    pub header: String,
    pub unit: Option<Unit>,
    pub unit_text: Option<String>,
    pub cells: Vec<String>,
}

/// A table as read from any format, before roles and units are resolved.
pub(crate) struct RawTable {
    pub columns: Vec<RawColumn>,
    /// File line of the header row (1-based).
    pub header_line: usize,
    /// File line of each data row (1-based).
    pub row_lines: Vec<usize>,
    pub meta: GalaxyMeta,
    pub warnings: Vec<TableWarning>,
}

pub(crate) fn location(path: &Path, line: usize, column: Option<usize>) -> Location {
    Location {
        path: path.to_path_buf(),
        line,
        column,
    }
}

/// Parses a numeric cell, naming the place and the column on failure.
pub(crate) fn parse_cell(
    text: &str,
    path: &Path,
    line: usize,
    column: usize,
    header: &str,
) -> Result<f64, DataError> {
    let trimmed = text.trim().trim_matches('"');
    if trimmed.is_empty() {
        return Err(DataError::Malformed {
            location: location(path, line, Some(column)),
            message: format!("column '{header}' is empty; expected a number"),
        });
    }
    let value: f64 = trimmed.parse().map_err(|_| DataError::Malformed {
        location: location(path, line, Some(column)),
        message: format!("column '{header}': expected a number, found '{trimmed}'"),
    })?;
    if !value.is_finite() {
        return Err(DataError::Malformed {
            location: location(path, line, Some(column)),
            message: format!("column '{header}': {trimmed} is not a finite number"),
        });
    }
    Ok(value)
}

/// Applies one `# key: value` metadata line.
pub(crate) fn apply_meta(
    meta: &mut GalaxyMeta,
    key: &str,
    value: &str,
    at: &Location,
    warnings: &mut Vec<TableWarning>,
) -> Result<(), DataError> {
    let number = |value: &str| -> Result<f64, DataError> {
        let v: f64 = value.trim().parse().map_err(|_| DataError::Malformed {
            location: at.clone(),
            message: format!(
                "metadata '{key}': expected a number, found '{}'",
                value.trim()
            ),
        })?;
        if v.is_finite() {
            Ok(v)
        } else {
            Err(DataError::Malformed {
                location: at.clone(),
                message: format!("metadata '{key}': {v} is not a finite number"),
            })
        }
    };
    match normalise(key).as_str() {
        "name" | "galaxy" | "object" => meta.name = value.trim().to_string(),
        "distance" | "distancempc" | "dmpc" | "d" => meta.distance_mpc = Some(number(value)?),
        "distanceerr" | "distanceerrmpc" | "edistance" | "ed" | "derr" => {
            meta.distance_err_mpc = Some(number(value)?);
        }
        "inclination" | "inclinationdeg" | "inc" | "incl" | "i" => {
            meta.inclination_deg = Some(number(value)?);
        }
        "inclinationerr" | "inclinationerrdeg" | "einclination" | "einc" | "incerr" => {
            meta.inclination_err_deg = Some(number(value)?);
        }
        "age" | "agegyr" | "haloage" | "haloagegyr" => meta.age_gyr = Some(number(value)?),
        "luminosity" | "luminositylsun" | "stellarluminosity" | "stellarluminositylsun" => {
            meta.luminosity_lsun = Some(number(value)?);
        }
        "notes" | "note" | "comment" => {
            if !meta.notes.is_empty() {
                meta.notes.push('\n');
            }
            meta.notes.push_str(value.trim());
        }
        _ => warnings.push(TableWarning::at(
            Some(at),
            format!("metadata key '{}' is not used", key.trim()),
        )),
    }
    Ok(())
}

/// Reads a CSV (`separator = Some(',')`) or whitespace-separated (`None`) table.
pub(crate) fn read_delimited(
    text: &str,
    path: &Path,
    separator: Option<char>,
) -> Result<RawTable, DataError> {
    let mut meta = GalaxyMeta::default();
    let mut warnings = Vec::new();
    let mut headers: Option<Vec<String>> = None;
    let mut header_line = 0;
    let mut columns: Vec<RawColumn> = Vec::new();
    let mut row_lines = Vec::new();
    for (index, raw_line) in text.lines().enumerate() {
        let line_number = index + 1;
        let line = raw_line.trim();
        if line.is_empty() {
            continue;
        }
        if let Some(comment) = line.strip_prefix('#') {
            if headers.is_none()
                && let Some((key, value)) = comment.split_once(':')
            {
                apply_meta(
                    &mut meta,
                    key,
                    value,
                    &location(path, line_number, None),
                    &mut warnings,
                )?;
            }
            continue;
        }
        let cells = split_cells(line, separator, path, line_number)?;
        match &headers {
            None => {
                columns = cells
                    .iter()
                    .map(|h| {
                        let (_, unit, unit_text) = split_header(h);
                        RawColumn {
                            header: h.trim().to_string(),
                            unit,
                            unit_text,
                            cells: Vec::new(),
                        }
                    })
                    .collect();
                headers = Some(cells);
                header_line = line_number;
            }
            Some(names) => {
                if cells.len() != names.len() {
                    return Err(DataError::Malformed {
                        location: location(
                            path,
                            line_number,
                            Some(cells.len().min(names.len()) + 1),
                        ),
                        message: format!(
                            "expected {} columns as in the header, found {}",
                            names.len(),
                            cells.len()
                        ),
                    });
                }
                for (cell, column) in cells.into_iter().zip(&mut columns) {
                    column.cells.push(cell);
                }
                row_lines.push(line_number);
            }
        }
    }
    if headers.is_none() {
        return Err(DataError::Unusable {
            path: path.to_path_buf(),
            message: "no header row: the first non-comment line must name the columns".into(),
        });
    }
    Ok(RawTable {
        columns,
        header_line,
        row_lines,
        meta,
        warnings,
    })
}

pub(crate) fn split_cells(
    line: &str,
    separator: Option<char>,
    path: &Path,
    line_number: usize,
) -> Result<Vec<String>, DataError> {
    match separator {
        None => Ok(line.split_whitespace().map(str::to_string).collect()),
        Some(' ') => split_quoted(line, b' ', path, line_number).map(|cells| {
            // Runs of spaces make empty fields; a space-delimited file has none of its own.
            cells.into_iter().filter(|c| !c.is_empty()).collect()
        }),
        Some(sep) => split_quoted(line, u8::try_from(sep).unwrap_or(b','), path, line_number),
    }
}

fn split_quoted(
    line: &str,
    delimiter: u8,
    path: &Path,
    line_number: usize,
) -> Result<Vec<String>, DataError> {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .delimiter(delimiter)
        .from_reader(line.as_bytes());
    let mut record = csv::StringRecord::new();
    match reader.read_record(&mut record) {
        Ok(_) => Ok(record.iter().map(|c| c.trim().to_string()).collect()),
        Err(e) => Err(DataError::Malformed {
            location: location(path, line_number, None),
            message: format!("cannot split the line into fields: {e}"),
        }),
    }
}

/// Resolves column roles and units and validates the rows, producing the galaxy table.
pub(crate) fn build_table(
    raw: RawTable,
    path: &Path,
    mapping: &ColumnMapping,
) -> Result<GalaxyTable, DataError> {
    let RawTable {
        columns,
        header_line,
        row_lines,
        mut meta,
        mut warnings,
    } = raw;
    if meta.name.is_empty() {
        meta.name = path.file_stem().map_or_else(
            || "unnamed".to_string(),
            |s| s.to_string_lossy().into_owned(),
        );
    }
    // Assign roles: explicit mapping first, then guesses from the names.
    let mut assigned: BTreeMap<ColumnRole, usize> = BTreeMap::new();
    for (role, wanted) in mapping {
        let found = columns
            .iter()
            .position(|c| c.header == *wanted || normalise(&c.header) == normalise(wanted))
            .ok_or_else(|| DataError::MissingColumn {
                path: path.to_path_buf(),
                role: role.describe(),
                flag: role.flag(),
                aliases: format!("'{wanted}' (from the column mapping)"),
                present: present(&columns),
            })?;
        assigned.insert(*role, found);
    }
    for (index, column) in columns.iter().enumerate() {
        if assigned.values().any(|&i| i == index) {
            continue;
        }
        let (name, _, _) = split_header(&column.header);
        if let Some(role) = guess_role(&name) {
            if let Some(&other) = assigned.get(&role) {
                if mapping.contains_key(&role) {
                    continue;
                }
                return Err(DataError::Malformed {
                    location: location(path, header_line, Some(index + 1)),
                    message: format!(
                        "columns '{}' and '{}' both look like the {}; say which one with {} NAME (or the app's column-mapping window)",
                        columns[other].header,
                        column.header,
                        role.describe(),
                        role.flag()
                    ),
                });
            }
            assigned.insert(role, index);
        } else {
            warnings.push(TableWarning::at(
                Some(&location(path, header_line, Some(index + 1))),
                format!("column '{}' is not used", column.header),
            ));
        }
    }
    for role in ColumnRole::ALL {
        if role.is_required() && !assigned.contains_key(&role) {
            return Err(DataError::MissingColumn {
                path: path.to_path_buf(),
                role: role.describe(),
                flag: role.flag(),
                aliases: role.aliases().join(", "),
                present: present(&columns),
            });
        }
    }
    if row_lines.is_empty() {
        return Err(DataError::Unusable {
            path: path.to_path_buf(),
            message: "the table has a header but no data rows".into(),
        });
    }

    let converted = |role: ColumnRole,
                     warnings: &mut Vec<TableWarning>|
     -> Result<Option<Vec<f64>>, DataError> {
        let Some(&index) = assigned.get(&role) else {
            return Ok(None);
        };
        let column = &columns[index];
        let at = location(path, header_line, Some(index + 1));
        let factor = match (role, column.unit) {
            (ColumnRole::Radius, None) => {
                warnings.push(TableWarning::at(
                    Some(&at),
                    format!(
                        "no unit for radius column '{}'; assuming kpc",
                        column.header
                    ),
                ));
                1.0
            }
            (ColumnRole::Radius, Some(Unit::Length(unit))) => match unit {
                LengthUnit::Kpc => 1.0,
                LengthUnit::Pc => 1e-3,
                LengthUnit::Arcsec | LengthUnit::Arcmin => {
                    let distance = meta.distance_mpc.ok_or_else(|| DataError::Malformed {
                        location: at.clone(),
                        message: format!(
                            "radius column '{}' is angular; a distance (Mpc) is needed to convert it to kpc",
                            column.header
                        ),
                    })?;
                    let per_arcsec = KPC_PER_ARCSEC_PER_MPC * distance;
                    if unit == LengthUnit::Arcmin {
                        60.0 * per_arcsec
                    } else {
                        per_arcsec
                    }
                }
            },
            (ColumnRole::Radius, Some(Unit::Velocity(_))) | (_, Some(Unit::Length(_))) => {
                return Err(DataError::Malformed {
                    location: at,
                    message: format!(
                        "column '{}' holds the {} but its unit '{}' does not fit",
                        column.header,
                        role.describe(),
                        column.unit_text.as_deref().unwrap_or("?")
                    ),
                });
            }
            (_, None) => 1.0,
            (_, Some(Unit::Velocity(VelocityUnit::KmPerS))) => 1.0,
            (_, Some(Unit::Velocity(VelocityUnit::MPerS))) => 1e-3,
        };
        let mut values = Vec::with_capacity(column.cells.len());
        for (cell, &line) in column.cells.iter().zip(&row_lines) {
            values.push(factor * parse_cell(cell, path, line, index + 1, &column.header)?);
        }
        Ok(Some(values))
    };
    let required =
        |role: ColumnRole, warnings: &mut Vec<TableWarning>| -> Result<Vec<f64>, DataError> {
            converted(role, warnings)?.ok_or_else(|| DataError::MissingColumn {
                path: path.to_path_buf(),
                role: role.describe(),
                flag: role.flag(),
                aliases: role.aliases().join(", "),
                present: present(&columns),
            })
        };
    let radius = required(ColumnRole::Radius, &mut warnings)?;
    let v_obs = required(ColumnRole::VelocityObserved, &mut warnings)?;
    let v_err = required(ColumnRole::VelocityError, &mut warnings)?;
    let v_gas = required(ColumnRole::VelocityGas, &mut warnings)?;
    let v_disk = required(ColumnRole::VelocityDisk, &mut warnings)?;
    let v_bulge = converted(ColumnRole::VelocityBulge, &mut warnings)?;
    let column_of = |role: ColumnRole| assigned.get(&role).map(|i| i + 1);

    for (row, &line) in row_lines.iter().enumerate() {
        if radius[row] < 0.0 {
            return Err(DataError::Malformed {
                location: location(path, line, column_of(ColumnRole::Radius)),
                message: format!("radius {} is negative; radii must be ≥ 0", radius[row]),
            });
        }
        if v_err[row] <= 0.0 {
            return Err(DataError::Malformed {
                location: location(path, line, column_of(ColumnRole::VelocityError)),
                message: format!(
                    "velocity error {} is not positive; every point needs an error > 0",
                    v_err[row]
                ),
            });
        }
        if radius[row] == 0.0 {
            warnings.push(TableWarning::at(
                Some(&location(path, line, column_of(ColumnRole::Radius))),
                "a point at radius 0 carries no rotation information; it is kept but the model is zero there",
            ));
        }
    }

    // Sort by radius (stable), warning when the file was not sorted.
    let mut order: Vec<usize> = (0..radius.len()).collect();
    order.sort_by(|&a, &b| radius[a].total_cmp(&radius[b]));
    if order.iter().enumerate().any(|(i, &o)| i != o) {
        warnings.push(TableWarning::at(
            Some(&location(path, row_lines[0], column_of(ColumnRole::Radius))),
            "rows were not sorted by radius; they have been sorted",
        ));
    }
    let permute = |values: &[f64]| order.iter().map(|&i| values[i]).collect::<Vec<f64>>();
    let sorted_radius = permute(&radius);
    for pair in order.windows(2) {
        if radius[pair[0]].total_cmp(&radius[pair[1]]).is_eq() {
            warnings.push(TableWarning::at(
                Some(&location(
                    path,
                    row_lines[pair[1]],
                    column_of(ColumnRole::Radius),
                )),
                format!(
                    "radius {} kpc repeats line {}; both points are kept",
                    radius[pair[1]], row_lines[pair[0]]
                ),
            ));
        }
    }
    Ok(GalaxyTable {
        meta,
        source: Some(path.to_path_buf()),
        radius_kpc: sorted_radius,
        v_obs_kms: permute(&v_obs),
        v_err_kms: permute(&v_err),
        v_gas_kms: permute(&v_gas),
        v_disk_kms: permute(&v_disk),
        v_bulge_kms: v_bulge.as_deref().map(permute),
        warnings,
    })
}

fn present(columns: &[RawColumn]) -> String {
    columns
        .iter()
        .map(|c| format!("'{}'", c.header))
        .collect::<Vec<_>>()
        .join(", ")
}
