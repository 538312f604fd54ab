//! What the panels ask for. Panels only push commands; the app applies them after the frame.

use std::path::PathBuf;

use caldera_data::session::{GalaxySettings, HaloModel};

use crate::population::ParticleModel;
use crate::state::{SortKey, View};

/// What the panels ask for; applied after the frame is drawn.
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    Select(usize),
    Settings(GalaxySettings),
    Fit(Vec<HaloModel>),
    CancelFit,
    UseBestFit,
    ExportResults(&'static str),
    ExportFigure(&'static str),
    SaveSession,
    OpenDialog,
    OpenPath(PathBuf),
    LoadWithMapping,
    SetView(View),
    Sort(SortKey),
    QuitWithoutSaving,
    SaveAndQuit,
    Particle(ParticleModel),
    FitPopulation,
    CancelPopulationFit,
    ExcludeUnconverged(bool),
}
