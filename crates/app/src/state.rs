//! The app's state, with no egui in it: what a session saves lives in [`Session`] (infer crate);
//! the runtime holds what is never saved — loaded tables, the live curve, background jobs,
//! caches and messages. Panels read it; only commands change it.

use std::collections::BTreeMap;
use std::path::PathBuf;

use caldera_data::session::HaloModel;
use caldera_data::{ColumnRole, DataError, GalaxyTable};
use caldera_infer::population::{FolderPosteriors, PopulationFit};
use caldera_infer::sampler::RunConfig;
use caldera_infer::{FitResult, InferError};

use crate::jobs::Job;
use crate::live::{LiveCurve, LiveError, SidmCore};
use crate::population::{ParticleModel, PopulationInputs};
use crate::worker::{
    CatalogueLoad, FitOutput, FitProgress, FolderLoad, ForecastJob, LiveKey, LiveRequest,
    LiveSearch, PopulationProgress, SessionLoad, TableLoad,
};

/// How serious a message is (the theme gives each its colour).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MessageKind {
    Info,
    Result,
    Warning,
    Error,
}

/// One line of the message log.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Message {
    pub kind: MessageKind,
    pub text: String,
}

/// How the app starts.
#[derive(Debug, Clone, PartialEq)]
pub struct AppOptions {
    /// A table or catalogue folder to open at start-up.
    pub catalogue: Option<PathBuf>,
    /// A session file to restore at start-up (takes precedence over `catalogue`).
    pub session: Option<PathBuf>,
    /// Where exports are written.
    pub export_dir: PathBuf,
    /// Step cap of fits started from the app.
    pub fit_max_steps: usize,
    /// Whether an SIDM fit that ends unconverged in core coordinates is sampled again in
    /// outer-halo coordinates (`FitConfig::halo_coordinates_fallback`; the session's setting
    /// must allow it too).
    pub fit_halo_fallback: bool,
}

impl Default for AppOptions {
    fn default() -> Self {
        Self {
            catalogue: Some(PathBuf::from("demo_galaxies")),
            session: None,
            export_dir: PathBuf::from("caldera-exports"),
            fit_max_steps: RunConfig::default().max_steps,
            fit_halo_fallback: true,
        }
    }
}

/// One loaded galaxy, or why it could not be loaded.
pub struct GalaxyEntry {
    pub path: PathBuf,
    pub table: Result<GalaxyTable, DataError>,
}

impl GalaxyEntry {
    pub(crate) fn name(&self) -> String {
        match &self.table {
            Ok(t) => t.meta.name.clone(),
            Err(_) => self
                .path
                .file_stem()
                .map_or_else(String::new, |s| s.to_string_lossy().into_owned()),
        }
    }
}

/// Columns of the catalogue list that can sort it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SortKey {
    Name,
    VMax,
    Points,
    SigmaM,
}

/// The main view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum View {
    Galaxy,
    Population,
}

/// A table waiting for the user to confirm its column roles.
pub(crate) struct MappingStep {
    pub(crate) path: PathBuf,
    pub(crate) message: String,
    pub(crate) roles: BTreeMap<ColumnRole, String>,
}

/// Runtime handles and caches: never saved.
pub(crate) struct Runtime {
    pub(crate) options: AppOptions,
    pub(crate) galaxies: Vec<GalaxyEntry>,
    pub(crate) selected: Option<usize>,
    pub(crate) live: Option<LiveCurve>,
    pub(crate) live_error: Option<LiveError>,
    /// The galaxy and settings the shown curve (or the search under way) is for.
    pub(crate) live_key: Option<LiveKey>,
    pub(crate) last_valid: Option<LiveCurve>,
    /// The halo-first search running off the UI thread when the live curve needs one.
    pub(crate) live_search: Option<LiveSearch>,
    /// The newest search waiting for that one to finish (an older waiting one is dropped).
    pub(crate) live_pending: Option<LiveRequest>,
    /// The SIDM core the next live curve should follow (a best fit's branch).
    pub(crate) core_hint: Option<SidmCore>,
    pub(crate) fit: Option<Job<FitProgress, FitOutput>>,
    pub(crate) fits: BTreeMap<(String, HaloModel), FitResult>,
    pub(crate) messages: Vec<Message>,
    pub(crate) sort: SortKey,
    pub(crate) view: View,
    pub(crate) dirty: bool,
    pub(crate) confirm_quit: bool,
    pub(crate) allowed_to_close: bool,
    pub(crate) session_path: Option<PathBuf>,
    pub(crate) dialog: Option<Job<(), Option<PathBuf>>>,
    /// A catalogue being read.
    pub(crate) loading: Option<CatalogueLoad>,
    /// A session file being read.
    pub(crate) session_load: Option<SessionLoad>,
    /// A table being re-read with the user's column mapping.
    pub(crate) table_load: Option<TableLoad>,
    /// The galaxy to select once the catalogue being read arrives (a restored session's).
    pub(crate) pending_selection: Option<String>,
    /// The SIDM posteriors of the opened run folder: being read, or read (with the folder).
    pub(crate) folder_load: Option<FolderLoad>,
    pub(crate) folder_posteriors: Option<(PathBuf, FolderPosteriors)>,
    pub(crate) mapping: Option<MappingStep>,
    pub(crate) particle: ParticleModel,
    pub(crate) population_job: Option<Job<PopulationProgress, Result<PopulationFit, InferError>>>,
    /// The Open window's path field, while the window is open.
    pub(crate) open_text: Option<String>,
    /// Tables, folders and sessions opened in this run, newest first.
    pub(crate) recent: Vec<PathBuf>,
    /// Side panels shown or hidden by the user (None: by the window's width).
    pub(crate) show_galaxies: Option<bool>,
    pub(crate) show_controls: Option<bool>,
    /// Leave galaxies whose SIDM chain did not converge out of population fits.
    pub(crate) exclude_unconverged: bool,
    /// Population fits finished so far by the running job.
    pub(crate) population_partial: Vec<PopulationFit>,
    pub(crate) population: Option<Vec<PopulationFit>>,
    pub(crate) population_inputs: Option<PopulationInputs>,
    /// The forecast panel: its design (galaxies per V200 range), whether its fits use the
    /// stellar-to-halo mass prior, the running job and the last result.
    pub(crate) forecast_design: String,
    pub(crate) forecast_stellar_mass: bool,
    pub(crate) forecast_job: Option<ForecastJob>,
    pub(crate) forecast: Option<caldera_infer::forecast::Forecast>,
}
