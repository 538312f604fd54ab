//! Every colour the app uses, in one place: the figure palette of the report crate as egui
//! colours, so the window and the exported figures agree.

use caldera_report::theme::{self as figure, rgb};
use egui::Color32;

const fn from_figure((r, g, b): (u8, u8, u8)) -> Color32 {
    Color32::from_rgb(r, g, b)
}

/// Observed points and error bars.
pub const DATA: Color32 = from_figure(rgb(figure::DATA));
/// Gas contribution.
pub const GAS: Color32 = from_figure(rgb(figure::GAS));
/// Stellar-disk contribution.
pub const DISK: Color32 = from_figure(rgb(figure::DISK));
/// Bulge contribution.
pub const BULGE: Color32 = from_figure(rgb(figure::BULGE));
/// Dark halo.
pub const HALO: Color32 = from_figure(rgb(figure::HALO));
/// Total model.
pub const TOTAL: Color32 = from_figure(rgb(figure::TOTAL));
/// r1 and core-radius markers.
pub const MARKER: Color32 = from_figure(rgb(figure::MARKER));
/// Posterior histograms.
pub const POSTERIOR: Color32 = from_figure(rgb(figure::POSTERIOR));
/// Upper limits in the population view.
pub const LIMIT: Color32 = from_figure(rgb(figure::LIMIT));
/// Population-fit and particle-model curves, cycled (as the exported figures).
pub const CURVES: [Color32; 5] = [
    from_figure(rgb(figure::CURVES[0])),
    from_figure(rgb(figure::CURVES[1])),
    from_figure(rgb(figure::CURVES[2])),
    from_figure(rgb(figure::CURVES[3])),
    from_figure(rgb(figure::CURVES[4])),
];
/// Warnings.
pub const WARNING: Color32 = Color32::from_rgb(200, 120, 20);
/// Failures.
pub const ERROR: Color32 = Color32::from_rgb(200, 40, 40);

/// The dimmed version of a colour (the last valid curve while no solution exists).
#[must_use]
pub fn dimmed(c: Color32) -> Color32 {
    c.gamma_multiply(0.3)
}

/// The colour of a message of `kind` in the log.
#[must_use]
pub fn message_colour(kind: crate::state::MessageKind) -> Color32 {
    use crate::state::MessageKind;
    match kind {
        MessageKind::Info => Color32::DARK_GRAY,
        MessageKind::Result => DATA,
        MessageKind::Warning => WARNING,
        MessageKind::Error => ERROR,
    }
}
