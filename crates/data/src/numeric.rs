//! Plain numeric CSV files that Caldera itself writes (posterior chains) and small user tables
//! of outside constraints on σ/m.

use std::path::Path;

use crate::error::DataError;
use crate::text::{location, split_cells};

/// A CSV table of numbers with a header row; `#` lines are comments. Cells may be `nan` (a chain
/// writes NaN for quantities a model does not have).
#[derive(Debug, Clone, PartialEq)]
pub struct NumericTable {
    pub headers: Vec<String>,
    /// One vector per column, all of the same length.
    pub columns: Vec<Vec<f64>>,
}

impl NumericTable {
    /// The values of the column named `name`, if present.
    #[must_use]
    pub fn column(&self, name: &str) -> Option<&[f64]> {
        self.headers
            .iter()
            .position(|h| h == name)
            .map(|i| self.columns[i].as_slice())
    }

    /// Number of data rows.
    #[must_use]
    pub fn len(&self) -> usize {
        self.columns.first().map_or(0, Vec::len)
    }

    /// True when the table has no rows.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

fn read_text(path: &Path) -> Result<String, DataError> {
    std::fs::read_to_string(path).map_err(|source| DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    })
}

/// The comma-separated records of `text` with their 1-based line numbers, skipping blank lines
/// and `#` comments.
fn csv_records<'a>(
    text: &'a str,
    path: &'a Path,
) -> impl Iterator<Item = Result<(usize, Vec<String>), DataError>> + 'a {
    text.lines()
        .enumerate()
        .map(|(index, line)| (index + 1, line.trim()))
        .filter(|(_, line)| !line.is_empty() && !line.starts_with('#'))
        .map(move |(line_number, line)| {
            split_cells(line, Some(','), path, line_number).map(|cells| (line_number, cells))
        })
}

/// Reads a numeric CSV file (a posterior chain).
pub fn read_numeric_csv(path: &Path) -> Result<NumericTable, DataError> {
    parse_numeric_csv(&read_text(path)?, path)
}

/// Parses numeric CSV text; `path` only names the source in errors.
pub fn parse_numeric_csv(text: &str, path: &Path) -> Result<NumericTable, DataError> {
    let mut headers: Option<Vec<String>> = None;
    let mut columns: Vec<Vec<f64>> = Vec::new();
    for record in csv_records(text, path) {
        let (line_number, cells) = record?;
        let Some(names) = &headers else {
            columns = vec![Vec::new(); cells.len()];
            headers = Some(cells.iter().map(|c| c.trim().to_string()).collect());
            continue;
        };
        if cells.len() != names.len() {
            return Err(DataError::Malformed {
                location: location(path, line_number, None),
                message: format!(
                    "{} cells, but the header names {} columns",
                    cells.len(),
                    names.len()
                ),
            });
        }
        for (column, (cell, name)) in cells.iter().zip(names).enumerate() {
            let value: f64 = cell.trim().parse().map_err(|_| DataError::Malformed {
                location: location(path, line_number, Some(column + 1)),
                message: format!(
                    "column '{name}': expected a number, found '{}'",
                    cell.trim()
                ),
            })?;
            columns[column].push(value);
        }
    }
    let headers = headers.ok_or_else(|| DataError::Unusable {
        path: path.to_path_buf(),
        message: "no header row".into(),
    })?;
    Ok(NumericTable { headers, columns })
}

/// What an outside constraint says about σ/m at its velocity.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum ConstraintValue {
    /// σ/m = value ± error (cm²/g, Gaussian).
    Measurement {
        sigma_m_cm2_g: f64,
        error_cm2_g: f64,
    },
    /// σ/m below this value at 95% confidence (cm²/g).
    Upper95 { sigma_m_cm2_g: f64 },
}

/// One outside constraint on the velocity-averaged σ/m (e.g. from a cluster analysis).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct OutsideConstraint {
    pub label: String,
    /// Mean relative speed of the colliding pairs, ⟨v_rel⟩ = 4σ0/√π, km/s.
    pub v_rel_kms: f64,
    pub value: ConstraintValue,
}

/// Header of an outside-constraints table.
pub const CONSTRAINT_COLUMNS: [&str; 5] =
    ["label", "v_rel_kms", "sigma_m_cm2_g", "error_cm2_g", "kind"];

// Positions in CONSTRAINT_COLUMNS.
const LABEL: usize = 0;
const V_REL: usize = 1;
const SIGMA_M: usize = 2;
const ERROR: usize = 3;
const KIND: usize = 4;

/// Reads a table of outside constraints: CSV with the columns of [`CONSTRAINT_COLUMNS`]; `kind`
/// is `measurement` (value ± error) or `upper95` (a 95% upper limit; error left empty).
pub fn read_constraints(path: &Path) -> Result<Vec<OutsideConstraint>, DataError> {
    parse_constraints(&read_text(path)?, path)
}

/// Parses an outside-constraints table; `path` only names the source in errors.
pub fn parse_constraints(text: &str, path: &Path) -> Result<Vec<OutsideConstraint>, DataError> {
    let mut positions: Option<[usize; 5]> = None;
    let mut constraints = Vec::new();
    for record in csv_records(text, path) {
        let (line_number, cells) = record?;
        let Some(at) = positions else {
            let names: Vec<String> = cells.iter().map(|c| c.trim().to_lowercase()).collect();
            let mut found = [0; 5];
            for (slot, wanted) in found.iter_mut().zip(CONSTRAINT_COLUMNS) {
                *slot = names.iter().position(|n| n == wanted).ok_or_else(|| {
                    DataError::Malformed {
                        location: location(path, line_number, None),
                        message: format!(
                            "no column '{wanted}'; an outside-constraints table has the columns {}",
                            CONSTRAINT_COLUMNS.join(", ")
                        ),
                    }
                })?;
            }
            positions = Some(found);
            continue;
        };
        let cell = |k: usize| cells.get(at[k]).map_or("", |c| c.trim());
        let number = |k: usize| -> Result<f64, DataError> {
            let text = cell(k);
            match text.parse::<f64>() {
                Ok(v) if v.is_finite() && v > 0.0 => Ok(v),
                _ => Err(DataError::Malformed {
                    location: location(path, line_number, Some(at[k] + 1)),
                    message: format!(
                        "column '{}': expected a positive number, found '{text}'",
                        CONSTRAINT_COLUMNS[k]
                    ),
                }),
            }
        };
        let value = match cell(KIND).to_lowercase().as_str() {
            "measurement" => ConstraintValue::Measurement {
                sigma_m_cm2_g: number(SIGMA_M)?,
                error_cm2_g: number(ERROR)?,
            },
            "upper95" => ConstraintValue::Upper95 {
                sigma_m_cm2_g: number(SIGMA_M)?,
            },
            other => {
                return Err(DataError::Malformed {
                    location: location(path, line_number, Some(at[KIND] + 1)),
                    message: format!(
                        "column 'kind': expected 'measurement' or 'upper95', found '{other}'"
                    ),
                });
            }
        };
        constraints.push(OutsideConstraint {
            label: cell(LABEL).to_string(),
            v_rel_kms: number(V_REL)?,
            value,
        });
    }
    if positions.is_none() {
        return Err(DataError::Unusable {
            path: path.to_path_buf(),
            message: "no header row".into(),
        });
    }
    Ok(constraints)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn chains_keep_nan_cells_and_name_bad_cells() {
        let path = Path::new("chain.csv");
        let table = parse_numeric_csv("# comment\na,b\n1,nan\n2,3.5\n", path).expect("parses");
        assert_eq!(table.len(), 2);
        assert_eq!(table.column("a"), Some(&[1.0, 2.0][..]));
        assert!(table.column("b").is_some_and(|b| b[0].is_nan()));
        let error = parse_numeric_csv("a,b\n1,2\n3,x\n", path).expect_err("bad cell");
        assert_eq!(
            error.to_string(),
            "chain.csv:3:2: column 'b': expected a number, found 'x'"
        );
        let error = parse_numeric_csv("a,b\n1\n", path).expect_err("short row");
        assert!(error.to_string().starts_with("chain.csv:2: 1 cells"));
    }

    #[test]
    fn constraints_read_measurements_and_limits() {
        let path = Path::new("outside.csv");
        let text = "label,v_rel_kms,sigma_m_cm2_g,error_cm2_g,kind\n\
                    cluster A,1500,0.1,0.05,measurement\n\
                    # a limit\n\
                    cluster B,2000,0.3,,upper95\n";
        let constraints = parse_constraints(text, path).expect("parses");
        assert_eq!(constraints.len(), 2);
        assert_eq!(
            constraints[1].value,
            ConstraintValue::Upper95 { sigma_m_cm2_g: 0.3 }
        );
        let bad = "label,v_rel_kms,sigma_m_cm2_g,error_cm2_g,kind\nx,1500,0.1,,measurement\n";
        let error = parse_constraints(bad, path).expect_err("missing error");
        assert_eq!(
            error.to_string(),
            "outside.csv:2:4: column 'error_cm2_g': expected a positive number, found ''"
        );
        let error = parse_constraints("label,v\n", path).expect_err("bad header");
        assert!(error.to_string().contains("no column 'v_rel_kms'"));
    }
}
