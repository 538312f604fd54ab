//! The Caldera desktop app (eframe, egui, egui_plot): open a galaxy's table, drag the halo's
//! parameters and watch the curve and residuals follow, fit on a worker thread, read σ/m with
//! its uncertainty, compare models, see the population, export. Drawing and commands only: the
//! computing is in the library crates.
//!
//! Main types: [`CalderaApp`], [`AppOptions`], [`live::live_curve`].

mod app;
mod commands;
pub mod format;
pub mod jobs;
pub mod live;
mod panels;
pub mod population;
mod population_panel;
pub mod state;
pub mod theme;
pub mod worker;

pub use app::CalderaApp;
pub use state::AppOptions;

/// The egui ids of the rotation-curve plot and the residual plot of galaxy number `galaxy`
/// (their memory holds the shown bounds; the two share one radius axis).
#[must_use]
pub fn curve_plot_ids(galaxy: usize) -> (egui::Id, egui::Id) {
    (
        egui::Id::unique(("caldera rotation curve", galaxy)),
        egui::Id::unique(("caldera residuals", galaxy)),
    )
}
