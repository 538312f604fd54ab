//! The jobs the app runs: fits of one galaxy (one model or several for a comparison),
//! population fits, and reading a catalogue or a run folder from disk.

use std::path::PathBuf;

use caldera_data::session::{GalaxySettings, HaloModel, load_session};
use caldera_data::{Catalogue, DataError, GalaxyTable, ReadOptions, load_catalogue, read_table};
use caldera_infer::forecast::{Design, Forecast, ForecastSettings, forecast};
use caldera_infer::population::{
    FolderPosteriors, GalaxyPosterior, PopulationFit, PopulationSettings, Treatment, VelocityModel,
    fit_population, load_folder_posteriors,
};
use caldera_infer::priors::CrossSectionPrior;
use caldera_infer::sampler::{Control, Progress};
use caldera_infer::session::Session;
use caldera_infer::{FitConfig, FitResult, InferError, fit_galaxy};

use caldera_physics::Cosmology;

use crate::jobs::Job;
use crate::live::{LiveCurve, LiveError, SidmCore, live_curve};

/// Progress of a fit: the model being fitted and the sampler's report.
pub type FitProgress = (HaloModel, Progress);

/// One finished model of a fit job.
pub type FitOutput = (HaloModel, Result<Box<FitResult>, InferError>);

/// Fits `models` to `table` in turn.
pub fn start_fit(
    table: GalaxyTable,
    models: Vec<HaloModel>,
    config: FitConfig,
) -> Job<FitProgress, FitOutput> {
    let label = table.meta.name.clone();
    Job::spawn(label, move |ctx| {
        for &model in &models {
            if ctx.cancelled() {
                break;
            }
            let mut observer = |p: &Progress| {
                ctx.progress((model, *p));
                if ctx.cancelled() {
                    Control::Stop
                } else {
                    Control::Continue
                }
            };
            let result = fit_galaxy(&table, model, &config, &mut observer).map(Box::new);
            if !ctx.output((model, result)) {
                return;
            }
        }
    })
}

/// Progress of a population fit: which model (index of how many) and the sampler's report.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PopulationProgress {
    pub model: VelocityModel,
    pub index: usize,
    pub count: usize,
    pub sampler: Progress,
}

/// Fits every population model (marginal treatment) to `posteriors`, one after the other.
pub fn start_population_fit(
    posteriors: Vec<GalaxyPosterior>,
    settings: PopulationSettings,
) -> Job<PopulationProgress, Result<PopulationFit, InferError>> {
    let label = format!("population fit of {} galaxies", posteriors.len());
    Job::spawn(label, move |ctx| {
        let count = VelocityModel::ALL.len();
        for (index, model) in VelocityModel::ALL.into_iter().enumerate() {
            if ctx.cancelled() {
                return;
            }
            let mut observer = |p: &Progress| {
                ctx.progress(PopulationProgress {
                    model,
                    index,
                    count,
                    sampler: *p,
                });
                if ctx.cancelled() {
                    Control::Stop
                } else {
                    Control::Continue
                }
            };
            let fit = fit_population(
                model,
                Treatment::Marginal,
                &posteriors,
                &[],
                &settings,
                &mut observer,
            );
            if ctx.cancelled() || !ctx.output(fit) {
                return;
            }
        }
    })
}

/// A forecast: progress is (invented galaxies fitted, of all).
pub type ForecastJob = Job<(usize, usize), Result<Forecast, InferError>>;

/// Runs a forecast ([`caldera_infer::forecast::forecast`]) off the UI thread.
pub fn start_forecast(design: Design, settings: ForecastSettings) -> ForecastJob {
    let label = format!("forecast for {} galaxies", design.n_galaxies());
    Job::spawn(label, move |ctx| {
        let result = forecast(&design, &settings, &|done, total| {
            ctx.progress((done, total));
            !ctx.cancelled()
        });
        ctx.output(result);
    })
}

/// A catalogue being read off the UI thread.
pub type CatalogueLoad = Job<(), (PathBuf, (ReadOptions, Result<Catalogue, DataError>))>;
/// A session file being read off the UI thread.
pub type SessionLoad = Job<(), (PathBuf, Result<Session, DataError>)>;
/// A table being read off the UI thread with a column mapping.
pub type TableLoad = Job<(), (PathBuf, (ReadOptions, Result<GalaxyTable, DataError>))>;
/// A run folder's posteriors being read off the UI thread.
pub type FolderLoad = Job<(), (PathBuf, Result<FolderPosteriors, InferError>)>;

/// A job that reads `path` with `read` off the UI thread and hands back the path with the
/// result.
fn read_job<T: Send + 'static>(
    path: PathBuf,
    read: impl FnOnce(&PathBuf) -> T + Send + 'static,
) -> Job<(), (PathBuf, T)> {
    Job::spawn(format!("reading {}", path.display()), move |ctx| {
        let loaded = read(&path);
        ctx.output((path, loaded));
    })
}

/// Reads a catalogue (a table or a folder of tables) off the UI thread.
pub fn start_catalogue_load(path: PathBuf, options: ReadOptions) -> CatalogueLoad {
    read_job(path, move |p| {
        let loaded = load_catalogue(p, &options);
        (options, loaded)
    })
}

/// Reads a session file off the UI thread.
pub fn start_session_load(path: PathBuf) -> SessionLoad {
    read_job(path, |p| load_session::<Session>(p))
}

/// Reads one table with explicit read options (a column mapping) off the UI thread.
pub fn start_table_load(path: PathBuf, options: ReadOptions) -> TableLoad {
    read_job(path, move |p| {
        let loaded = read_table(p, &options);
        (options, loaded)
    })
}

/// Reads the SIDM posteriors of a catalogue run's folder off the UI thread.
pub fn start_folder_posteriors_load(
    folder: PathBuf,
    prior: CrossSectionPrior,
    max_samples: usize,
) -> FolderLoad {
    read_job(folder, move |f| {
        load_folder_posteriors(f, &prior, max_samples)
    })
}

/// Which curve a live solve serves: the galaxy's index and the settings it was asked for.
pub type LiveKey = (usize, GalaxySettings);

/// A live-curve solve that needs the halo-first search, run off the UI thread.
pub type LiveSearch = Job<(), (LiveKey, Result<LiveCurve, LiveError>)>;

/// What a live search needs: a copy of the table (small) and the controls.
pub struct LiveRequest {
    pub key: LiveKey,
    pub table: GalaxyTable,
    pub cosmology: Cosmology,
    pub previous: Option<SidmCore>,
}

/// Solves the live curve with the full halo-first search ([`live_curve`]) off the UI thread.
pub fn start_live_search(request: LiveRequest) -> LiveSearch {
    Job::spawn("live curve", move |ctx| {
        let LiveRequest {
            key,
            table,
            cosmology,
            previous,
        } = request;
        let curve = live_curve(&table, &key.1, &cosmology, previous);
        ctx.output((key, curve));
    })
}
