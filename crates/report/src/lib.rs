//! Caldera's reports without a window: figures (SVG, PNG) drawn with plotters using the bundled
//! DejaVu Sans font (no system font set-up needed), and result tables (CSV, ECSV, LaTeX).
//!
//! Main items: [`figures::RotationCurveFigure`], [`figures::CornerFigure`],
//! [`figures::PopulationFigure`], [`figures::save_figure`], [`tables::ResultRow`],
//! [`tables::results_table`], [`tables::latex_table`]; colours in [`theme`].
//!
//! ```
//! use caldera_report::tables::{ResultRow, latex_table};
//! let rows: Vec<ResultRow> = Vec::new();
//! assert!(latex_table(&rows).contains("\\begin{tabular}"));
//! ```

pub mod figures;
pub mod tables;
pub mod theme;

use std::path::PathBuf;
use std::sync::Once;

use thiserror::Error;

/// What can go wrong while writing a report.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum ReportError {
    #[error("cannot draw the figure: {0}")]
    Draw(String),
    #[error("{}: {reason}", path.display())]
    Io {
        path: PathBuf,
        reason: std::io::Error,
    },
    #[error(transparent)]
    Data(#[from] caldera_data::DataError),
}

/// The bundled font (DejaVu Sans; licence in assets/fonts/DejaVuSans-LICENSE.txt).
pub const FONT_BYTES: &[u8] = include_bytes!("../../../assets/fonts/DejaVuSans.ttf");

/// Registers the bundled font under the family name [`theme::FONT`] (once per process).
pub fn register_font() {
    static REGISTER: Once = Once::new();
    REGISTER.call_once(|| {
        // Registration only fails on a malformed font; the bundled one is known to load (tested).
        let _ = plotters::style::register_font(
            theme::FONT,
            plotters::style::FontStyle::Normal,
            FONT_BYTES,
        );
    });
}
