//! The data crate's error type: every refusal names the file, and where it can, the line and
//! column, and says what was expected.

use std::path::PathBuf;

use thiserror::Error;

/// A place in an input file: 1-based line and column (column counts fields, not characters).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Location {
    pub path: PathBuf,
    pub line: usize,
    pub column: Option<usize>,
}

impl std::fmt::Display for Location {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.column {
            Some(column) => write!(f, "{}:{}:{}", self.path.display(), self.line, column),
            None => write!(f, "{}:{}", self.path.display(), self.line),
        }
    }
}

/// Why a table could not be read.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum DataError {
    /// The file could not be opened or read.
    /// (The reason is part of the message and deliberately not a `source`, so a context chain
    /// prints it once.)
    #[error("{}: cannot read: {reason}", path.display())]
    Io {
        path: PathBuf,
        reason: std::io::Error,
    },
    /// A cell or header is malformed at a known place.
    #[error("{location}: {message}")]
    Malformed { location: Location, message: String },
    /// A required column role was not found among the header names.
    #[error(
        "{}: no column for the {role} (looked for names such as {aliases}); columns present: {present}. Name it with {flag} NAME (or the app's column-mapping window).",
        path.display()
    )]
    MissingColumn {
        path: PathBuf,
        role: &'static str,
        /// The command-line flag that names the column.
        flag: &'static str,
        aliases: String,
        present: String,
    },
    /// The file's format was not recognised.
    #[error("{}: cannot tell the table format; known formats: {known}. Choose one explicitly.", path.display())]
    UnknownFormat { path: PathBuf, known: String },
    /// The table is valid as text but unusable (e.g. no rows).
    #[error("{}: {message}", path.display())]
    Unusable { path: PathBuf, message: String },
}
