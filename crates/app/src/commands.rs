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
    /// Show (true) or close the Open window with its path field and recent paths.
    ShowOpenWindow(bool),
    /// The text of the Open window's path field.
    OpenText(String),
    /// Show or hide a side panel (None: by the window's width).
    ShowGalaxies(Option<bool>),
    ShowControls(Option<bool>),
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
    /// Compute the Bayesian evidence in the next fits (or not).
    Evidence(bool),
    /// Apply the stellar-to-halo mass prior in the next fits (or not).
    StellarMassPrior(bool),
    /// The forecast panel's design text and prior choice.
    ForecastDesign(String),
    ForecastStellarMass(bool),
    /// Run a forecast for the particle model, or stop the running one.
    Forecast,
    CancelForecast,
}
