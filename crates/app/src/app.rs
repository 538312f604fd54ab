//! The desktop app: state that a session saves, runtime handles that it does not, panels that
//! draw and emit commands, and the commands applied after each frame.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use caldera_data::session::{GalaxySettings, HaloModel, save_session};
use caldera_data::{Catalogue, ColumnMapping, DataError, GalaxyTable, ReadOptions, write_atomic};
use caldera_infer::InferError;
use caldera_infer::forecast::{Design, DesignBin, ForecastSettings};
use caldera_infer::population::{
    GalaxyPosterior, PopulationFit, PopulationSettings, VelocityModel, bic_ranking,
};
use caldera_infer::priors::Priors;
use caldera_infer::run_folder::RunFolder;
use caldera_infer::sampler::RunConfig;
use caldera_infer::session::Session;
use caldera_infer::tempering::LadderConfig;
use caldera_infer::{FitConfig, FitSummary};
use caldera_physics::units::DEFAULT_HALO_AGE_GYR;
use caldera_report::figures::{
    PopulationCurve, PopulationFigure, PopulationPoint, RotationCurveFigure, save_figure,
};
use caldera_report::tables::{latex_table, results_table};

use crate::commands::Command;
use crate::jobs::Job;
use crate::live::{LiveCurve, LiveError, quick_live_curve, settings_from_fit};
use crate::population::{ParticleModel, PopulationInputs, linear_curves};
use crate::state::{
    AppOptions, GalaxyEntry, MappingStep, Message, MessageKind, Runtime, SortKey, View,
};
use crate::worker::{
    LiveRequest, start_catalogue_load, start_fit, start_folder_posteriors_load, start_forecast,
    start_live_search, start_population_fit, start_session_load, start_table_load,
};

/// The forecast panel's starting design, and the settings it does not expose (those of
/// `caldera forecast`'s defaults, with a pool of one galaxy per design galaxy and fewer sampled
/// catalogues, so that a forecast takes minutes on a laptop).
pub(crate) const DEFAULT_FORECAST_DESIGN: &str = "30-60:5,60-120:5,120-200:4";
pub(crate) const FORECAST_EXTENT_R200: f64 = 0.1;
pub(crate) const FORECAST_POINTS: usize = 20;
pub(crate) const FORECAST_ERROR_FRACTION: f64 = 0.05;
pub(crate) const FORECAST_ERROR_FLOOR_KMS: f64 = 1.0;
const FORECAST_SCALES: [f64; 4] = [0.5, 1.0, 2.0, 4.0];
const FORECAST_REPLICAS: usize = 200;
const FORECAST_INTERVAL_CATALOGUES: usize = 2;

/// The outputs a job in `slot` has produced since the last frame; the slot empties once the job
/// has finished.
fn take_outputs<P, T>(slot: &mut Option<Job<P, T>>) -> Vec<T> {
    let Some(job) = slot else {
        return Vec::new();
    };
    let outputs = job.poll();
    if job.is_done() {
        *slot = None;
    }
    outputs
}

/// The app: the saved session and the runtime.
pub struct CalderaApp {
    pub session: Session,
    pub(crate) runtime: Runtime,
}

impl CalderaApp {
    /// Creates the app and opens the start-up session or catalogue.
    #[must_use]
    pub fn new(cc: &eframe::CreationContext<'_>, options: AppOptions) -> Self {
        // A light theme, so the curves use the same colours as the exported (white) figures.
        cc.egui_ctx.set_theme(egui::Theme::Light);
        // The figures' font (DejaVu Sans) first: its Greek is unmistakable (ρ, χ, ν, ϒ), where
        // egui's default font draws them much like p, x, v and Y.
        let mut fonts = egui::FontDefinitions::default();
        fonts.font_data.insert(
            "dejavu-sans".into(),
            std::sync::Arc::new(egui::FontData::from_static(caldera_report::FONT_BYTES)),
        );
        if let Some(family) = fonts.families.get_mut(&egui::FontFamily::Proportional) {
            family.insert(0, "dejavu-sans".into());
        }
        cc.egui_ctx.set_fonts(fonts);
        Self::with_options(options)
    }

    /// Creates the app without a window (tests and benchmarks use the same path).
    #[must_use]
    pub fn with_options(options: AppOptions) -> Self {
        let mut app = Self {
            session: Session::default(),
            runtime: Runtime {
                options: options.clone(),
                galaxies: Vec::new(),
                selected: None,
                live: None,
                live_error: None,
                live_key: None,
                last_valid: None,
                live_search: None,
                live_pending: None,
                core_hint: None,
                fit: None,
                fits: BTreeMap::new(),
                messages: Vec::new(),
                sort: SortKey::Name,
                view: View::Galaxy,
                dirty: false,
                confirm_quit: false,
                allowed_to_close: false,
                session_path: None,
                dialog: None,
                mapping: None,
                particle: ParticleModel::default(),
                population_job: None,
                population_partial: Vec::new(),
                exclude_unconverged: true,
                open_text: None,
                recent: Vec::new(),
                show_galaxies: None,
                show_controls: None,
                population: None,
                population_inputs: None,
                loading: None,
                table_load: None,
                session_load: None,
                pending_selection: None,
                folder_load: None,
                folder_posteriors: None,
                forecast_design: DEFAULT_FORECAST_DESIGN.to_string(),
                forecast_stellar_mass: true,
                forecast_job: None,
                forecast: None,
            },
        };
        if let Some(path) = options.session {
            app.open_session(&path);
        } else if let Some(path) = options.catalogue.filter(|p| p.exists()) {
            app.open_catalogue(&path, &ReadOptions::default());
        }
        app
    }

    /// The live curve currently drawn, if any.
    #[must_use]
    pub fn live_curve(&self) -> Option<&LiveCurve> {
        self.runtime.live.as_ref()
    }

    /// The summary of the finished fit of `galaxy` with `model`, if any.
    #[must_use]
    pub fn fit_summary(&self, galaxy: &str, model: HaloModel) -> Option<&FitSummary> {
        self.session.result(galaxy, model)
    }

    /// The settings of the selected galaxy (the controls' values).
    #[must_use]
    pub fn selected_settings(&self) -> Option<GalaxySettings> {
        self.current_settings()
    }

    /// Why there is no live curve, if there is none.
    #[must_use]
    pub fn live_error(&self) -> Option<&LiveError> {
        self.runtime.live_error.as_ref()
    }

    /// True when a fit is running.
    #[must_use]
    pub fn fitting(&self) -> bool {
        self.runtime.fit.is_some()
    }

    /// The population fits of σ(v)/m, once run.
    #[must_use]
    pub fn population_fits(&self) -> Option<&[PopulationFit]> {
        self.runtime.population.as_deref()
    }

    /// True while population fits run.
    #[must_use]
    pub fn fitting_population(&self) -> bool {
        self.runtime.population_job.is_some()
    }

    /// Whether a forecast runs.
    #[must_use]
    pub fn forecasting(&self) -> bool {
        self.runtime.forecast_job.is_some()
    }

    /// The last finished forecast.
    #[must_use]
    pub fn forecast(&self) -> Option<&caldera_infer::forecast::Forecast> {
        self.runtime.forecast.as_ref()
    }

    /// The particle model drawn in the population view.
    #[must_use]
    pub fn particle(&self) -> &ParticleModel {
        &self.runtime.particle
    }

    /// True when the session has changes not yet saved.
    #[must_use]
    pub fn has_unsaved_changes(&self) -> bool {
        self.runtime.dirty
    }

    /// Names of the loaded galaxies, in list order.
    #[must_use]
    pub fn galaxy_names(&self) -> Vec<String> {
        self.runtime
            .galaxies
            .iter()
            .map(GalaxyEntry::name)
            .collect()
    }

    fn say(&mut self, kind: MessageKind, text: impl Into<String>) {
        self.runtime.messages.push(Message {
            kind,
            text: text.into(),
        });
    }

    /// Starts reading a table or catalogue folder off the UI thread.
    fn open_catalogue(&mut self, path: &Path, read: &ReadOptions) {
        self.say(MessageKind::Info, format!("reading {}…", path.display()));
        self.runtime.loading = Some(start_catalogue_load(path.to_path_buf(), read.clone()));
    }

    /// Takes a catalogue that has been read: its tables (a bad one kept with its error), the
    /// warnings, and the first good galaxy selected.
    fn finish_catalogue(
        &mut self,
        path: &Path,
        read: &ReadOptions,
        loaded: Result<Catalogue, DataError>,
    ) {
        match loaded {
            Ok(catalogue) => {
                self.runtime.galaxies.clear();
                self.runtime.fits.clear();
                self.runtime.selected = None;
                for w in &catalogue.warnings {
                    self.say(MessageKind::Warning, format!("warning: {w}"));
                }
                for entry in catalogue.entries {
                    match &entry.table {
                        Ok(t) => {
                            for w in &t.warnings {
                                self.say(MessageKind::Warning, format!("warning: {w}"));
                            }
                        }
                        Err(e) => {
                            self.say(MessageKind::Error, format!("error: {e}"));
                            if matches!(
                                e,
                                DataError::MissingColumn { .. } | DataError::Malformed { .. }
                            ) && self.runtime.mapping.is_none()
                            {
                                self.runtime.mapping = Some(MappingStep {
                                    path: entry.path.clone(),
                                    message: e.to_string(),
                                    roles: BTreeMap::new(),
                                });
                            }
                        }
                    }
                    self.runtime.galaxies.push(GalaxyEntry {
                        path: entry.path,
                        table: entry.table,
                    });
                }
                self.session.catalogue = Some(path.to_path_buf());
                self.session.format = read.format;
                self.session.column_mapping = read.mapping.clone();
                let wanted = self.runtime.pending_selection.take();
                let by_name =
                    wanted.and_then(|name| self.galaxy_names().iter().position(|n| *n == name));
                let first = self.runtime.galaxies.iter().position(|g| g.table.is_ok());
                if let Some(i) = by_name.or(first) {
                    self.select(i);
                }
                self.say(
                    MessageKind::Info,
                    format!(
                        "opened {} ({} galaxies)",
                        path.display(),
                        self.runtime.galaxies.len()
                    ),
                );
            }
            Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
        }
    }

    /// Starts reading a session file off the UI thread.
    fn open_session(&mut self, path: &Path) {
        self.runtime.session_load = Some(start_session_load(path.to_path_buf()));
    }

    /// Takes a session that has been read: its catalogue and run folder are read in turn.
    fn finish_session(&mut self, path: &Path, loaded: Result<Session, DataError>) {
        match loaded {
            Ok(session) => {
                let read = ReadOptions {
                    format: session.format,
                    mapping: session.column_mapping.clone(),
                };
                self.runtime.pending_selection = session.selected.clone();
                if let Some(catalogue) = session.catalogue.clone() {
                    self.open_catalogue(&catalogue, &read);
                }
                self.session = session;
                self.runtime.session_path = Some(path.to_path_buf());
                // A session saved by a catalogue run sits in its run folder: read the chains
                // there for the population view, off the UI thread.
                self.runtime.folder_posteriors = None;
                if let Some(folder) = path.parent()
                    && RunFolder::new(folder).exists()
                {
                    self.runtime.folder_load = Some(start_folder_posteriors_load(
                        folder.to_path_buf(),
                        self.session.fit.priors.cross_section,
                        PopulationSettings::default().max_samples_per_galaxy,
                    ));
                }
                self.runtime.dirty = false;
                self.say(
                    MessageKind::Info,
                    format!("restored session {}", path.display()),
                );
            }
            Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
        }
    }

    fn select(&mut self, index: usize) {
        if index >= self.runtime.galaxies.len() {
            return;
        }
        self.runtime.selected = Some(index);
        let name = self.runtime.galaxies[index].name();
        self.session.selected = Some(name.clone());
        if let Ok(table) = &self.runtime.galaxies[index].table
            && !self.session.galaxies.contains_key(&name)
        {
            let settings = crate::live::starting_settings(table);
            self.session.galaxies.insert(name, settings);
        }
        // Another galaxy's curve is not drawn over this one while its core is searched for.
        self.runtime.last_valid = None;
        self.runtime.live = None;
        self.runtime.live_error = None;
        self.refresh_live();
    }

    /// Whether the selected galaxy's table has a bulge column.
    pub(crate) fn selected_has_bulge(&self) -> bool {
        self.runtime
            .selected
            .and_then(|i| self.runtime.galaxies[i].table.as_ref().ok())
            .is_some_and(|t| t.v_bulge_kms.is_some())
    }

    pub(crate) fn current_settings(&self) -> Option<GalaxySettings> {
        let i = self.runtime.selected?;
        self.session
            .galaxies
            .get(&self.runtime.galaxies[i].name())
            .cloned()
    }

    /// Recomputes the live curve when the galaxy or its settings changed. What is quick (closed-
    /// form halos, an SIDM core followed from the one on screen) is done here; a halo-first
    /// search goes to a background job, the last curve staying drawn until its answer arrives.
    fn refresh_live(&mut self) {
        let (Some(i), Some(settings)) = (self.runtime.selected, self.current_settings()) else {
            return;
        };
        let key = (i, settings);
        if self.runtime.live_key.as_ref() == Some(&key) {
            return;
        }
        let Ok(table) = &self.runtime.galaxies[i].table else {
            return;
        };
        // A best fit just loaded names its own core (the fitted branch); otherwise follow the
        // solution on screen while the same galaxy's controls move.
        let previous = match (
            self.runtime.core_hint.take(),
            &self.runtime.live_key,
            &self.runtime.live,
        ) {
            (Some(core), _, _) => Some(core),
            (None, Some((k, _)), Some(curve)) if *k == i => curve.sidm_core(),
            _ => None,
        };
        let cosmology = self.session.fit.cosmology;
        let quick = quick_live_curve(table, &key.1, &cosmology, previous);
        let request = match quick {
            Ok(Some(curve)) => {
                self.show_live(Ok(curve));
                None
            }
            Err(e) => {
                self.show_live(Err(e));
                None
            }
            Ok(None) => Some(LiveRequest {
                key: key.clone(),
                table: table.clone(),
                cosmology,
                previous,
            }),
        };
        self.runtime.live_key = Some(key);
        // A newer request replaces any waiting one; a search under way finishes (it cannot be
        // interrupted mid-integration) and its answer is dropped unless it is still wanted.
        self.runtime.live_pending = None;
        if let Some(request) = request {
            if self.runtime.live_search.is_some() {
                self.runtime.live_pending = Some(request);
            } else {
                self.runtime.live_search = Some(start_live_search(request));
            }
        }
    }

    /// Shows a live curve (or why there is none).
    fn show_live(&mut self, outcome: Result<LiveCurve, LiveError>) {
        match outcome {
            Ok(curve) => {
                self.runtime.last_valid = Some(curve.clone());
                self.runtime.live = Some(curve);
                self.runtime.live_error = None;
            }
            Err(e) => {
                self.runtime.live = None;
                self.runtime.live_error = Some(e);
            }
        }
    }

    /// Takes the background search's answer when it is still wanted, then starts the waiting
    /// search, if any.
    fn poll_live_search(&mut self) {
        for (key, outcome) in take_outputs(&mut self.runtime.live_search) {
            if self.runtime.live_key.as_ref() == Some(&key) {
                self.show_live(outcome);
            }
        }
        if self.runtime.live_search.is_none()
            && let Some(request) = self.runtime.live_pending.take()
            && self.runtime.live_key.as_ref() == Some(&request.key)
        {
            self.runtime.live_search = Some(start_live_search(request));
        }
    }

    /// Whether the live curve waits for a halo-first search.
    #[must_use]
    pub fn solving_live(&self) -> bool {
        self.runtime.live_search.is_some()
    }

    fn fit_config(&self) -> FitConfig {
        FitConfig {
            run: RunConfig {
                max_steps: self.runtime.options.fit_max_steps,
                min_steps: self
                    .runtime
                    .options
                    .fit_max_steps
                    .min(RunConfig::default().min_steps),
                ..self.session.fit.run
            },
            halo_coordinates_fallback: self.session.fit.halo_coordinates_fallback
                && self.runtime.options.fit_halo_fallback,
            // The step cap holds for the evidence's tempered run too.
            evidence: self.session.fit.evidence.map(|ladder| LadderConfig {
                steps: ladder.steps.min(self.runtime.options.fit_max_steps.max(4)),
                ..ladder
            }),
            ..self.session.fit
        }
    }

    /// Recomputes [`PopulationInputs`] when the SIDM fits in memory or the run folder's
    /// posteriors changed: fits made in this session first, then the chains of the catalogue-run
    /// folder the session was opened from (already read off the UI thread).
    pub(crate) fn refresh_population_inputs(&mut self) {
        let folder_count = self
            .runtime
            .folder_posteriors
            .as_ref()
            .map_or(0, |(_, f)| f.posteriors.len());
        let key = (
            self.runtime
                .fits
                .iter()
                .filter(|((_, model), _)| *model == HaloModel::Sidm)
                .map(|((galaxy, _), fit)| (galaxy.clone(), fit.summary.n_samples))
                .collect::<Vec<_>>(),
            folder_count,
        );
        if self
            .runtime
            .population_inputs
            .as_ref()
            .is_some_and(|inputs| inputs.key == key)
        {
            return;
        }
        let prior = self.session.fit.priors.cross_section;
        let max = PopulationSettings::default().max_samples_per_galaxy;
        let mut posteriors: Vec<(GalaxyPosterior, bool)> = Vec::new();
        let mut problems = Vec::new();
        for ((galaxy, model), fit) in &self.runtime.fits {
            if *model != HaloModel::Sidm {
                continue;
            }
            match GalaxyPosterior::from_fit(fit, &prior, max) {
                Ok(p) => posteriors.push((p, fit.summary.converged)),
                Err(e) => problems.push(format!("{galaxy}: {e}")),
            }
        }
        if let Some((_, loaded)) = &self.runtime.folder_posteriors {
            for (p, &converged) in loaded.posteriors.iter().zip(&loaded.converged) {
                if !posteriors.iter().any(|(q, _)| q.galaxy == p.galaxy) {
                    posteriors.push((p.clone(), converged));
                }
            }
        }
        posteriors.sort_by(|a, b| a.0.galaxy.cmp(&b.0.galaxy));
        let (posteriors, converged) = posteriors.into_iter().unzip();
        self.runtime.population_inputs = Some(PopulationInputs {
            key,
            posteriors,
            converged,
            problems,
        });
    }

    /// Takes what the background jobs finished: a catalogue read, a run folder's posteriors,
    /// fits, population fits, a file picked in the dialog.
    fn poll_jobs(&mut self, ctx: &egui::Context) {
        for (path, (read, loaded)) in take_outputs(&mut self.runtime.loading) {
            self.finish_catalogue(&path, &read, loaded);
        }
        for (folder, loaded) in take_outputs(&mut self.runtime.folder_load) {
            match loaded {
                Ok(posteriors) => {
                    self.say(
                        MessageKind::Info,
                        format!(
                            "read {} SIDM posteriors from {}",
                            posteriors.posteriors.len(),
                            folder.display()
                        ),
                    );
                    self.runtime.folder_posteriors = Some((folder, posteriors));
                }
                Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
            }
        }
        for (path, loaded) in take_outputs(&mut self.runtime.session_load) {
            self.finish_session(&path, loaded);
        }
        for (path, (read, loaded)) in take_outputs(&mut self.runtime.table_load) {
            self.finish_table_with_mapping(path, read, loaded);
        }
        self.poll_worker();
        self.poll_population();
        self.poll_forecast();
        self.poll_live_search();
        if let Some(path) = take_outputs(&mut self.runtime.dialog)
            .into_iter()
            .flatten()
            .next()
        {
            self.apply(Command::OpenPath(path), ctx);
        }
    }

    /// Takes a table re-read with the user's column mapping, or asks again with the error.
    fn finish_table_with_mapping(
        &mut self,
        path: PathBuf,
        read: ReadOptions,
        loaded: Result<GalaxyTable, DataError>,
    ) {
        match loaded {
            Ok(table) => {
                let name = table.meta.name.clone();
                if let Some(entry) = self.runtime.galaxies.iter_mut().find(|g| g.path == path) {
                    entry.table = Ok(table);
                }
                self.session.column_mapping = read.mapping;
                self.say(
                    MessageKind::Info,
                    format!("loaded {name} with the column mapping"),
                );
            }
            Err(e) => {
                self.runtime.mapping = Some(MappingStep {
                    path,
                    message: e.to_string(),
                    roles: read.mapping,
                });
            }
        }
    }

    /// Whether any background job runs (the window then keeps repainting to poll it).
    #[must_use]
    pub fn busy(&self) -> bool {
        let r = &self.runtime;
        r.fit.is_some()
            || r.dialog.is_some()
            || r.population_job.is_some()
            || r.forecast_job.is_some()
            || r.loading.is_some()
            || r.folder_load.is_some()
            || r.table_load.is_some()
            || r.session_load.is_some()
            || r.live_search.is_some()
    }

    fn poll_forecast(&mut self) {
        let Some(job) = &mut self.runtime.forecast_job else {
            return;
        };
        let outputs = job.poll();
        if !job.is_done() {
            return;
        }
        let cancelled = job.cancel_requested();
        self.runtime.forecast_job = None;
        for outcome in outputs {
            match outcome {
                Ok(forecast) => {
                    let at_design = forecast
                        .power
                        .iter()
                        .find(|p| p.n_galaxies == forecast.design.n_galaxies());
                    if let Some(p) = at_design {
                        self.say(
                            MessageKind::Result,
                            format!(
                                "forecast: a catalogue of {} detects {} against a constant σ/m (ΔBIC ≥ 6) in {:.0}% of draws",
                                if p.n_galaxies == 1 {
                                    "1 galaxy".to_string()
                                } else {
                                    format!("{} galaxies", p.n_galaxies)
                                },
                                forecast.alternative.name(),
                                100.0 * p.power_strong
                            ),
                        );
                    }
                    self.runtime.forecast = Some(forecast);
                }
                Err(InferError::Cancelled) => {}
                Err(e) => self.say(MessageKind::Error, format!("forecast failed: {e}")),
            }
        }
        if cancelled {
            self.say(MessageKind::Warning, "forecast cancelled");
        }
    }

    /// Starts a forecast for the particle model and the forecast panel's design.
    fn start_forecast(&mut self) {
        if self.runtime.forecast_job.is_some() {
            return;
        }
        let bins = match DesignBin::parse_list(&self.runtime.forecast_design) {
            Ok(bins) => bins,
            Err(e) => {
                self.say(MessageKind::Error, format!("forecast: {e}"));
                return;
            }
        };
        let truth = match self.runtime.particle.cross_section() {
            Ok(truth) => truth,
            Err(e) => {
                self.say(
                    MessageKind::Error,
                    format!("forecast: the particle model: {e}"),
                );
                return;
            }
        };
        let alternative = match truth.kind() {
            VelocityModel::Constant => VelocityModel::FallOff,
            kind => kind,
        };
        let design = Design {
            bins,
            extent_r200: FORECAST_EXTENT_R200,
            points: FORECAST_POINTS,
            error_fraction: FORECAST_ERROR_FRACTION,
            error_floor_kms: FORECAST_ERROR_FLOOR_KMS,
            age_gyr: self.session.fit.age_gyr.unwrap_or(DEFAULT_HALO_AGE_GYR),
        };
        let yukawa_dm_mass_gev = match truth {
            caldera_physics::CrossSection::Yukawa { dm_mass_gev, .. } => dm_mass_gev,
            _ => caldera_physics::cross_section::DEFAULT_YUKAWA_DM_MASS_GEV,
        };
        let settings = ForecastSettings {
            truth,
            alternative,
            scales: FORECAST_SCALES.to_vec(),
            replicas: FORECAST_REPLICAS,
            pool_factor: 1,
            interval_replicas: FORECAST_INTERVAL_CATALOGUES,
            seed: self.session.fit.seed,
            fit: FitConfig {
                priors: Priors {
                    stellar_mass_halo: self.runtime.forecast_stellar_mass,
                    ..Priors::default()
                },
                seed: self.session.fit.seed,
                ..FitConfig::default()
            },
            population: PopulationSettings {
                yukawa_dm_mass_gev,
                seed: self.session.fit.seed,
                ..PopulationSettings::default()
            },
        };
        self.runtime.forecast_job = Some(start_forecast(design, settings));
    }

    fn poll_population(&mut self) {
        let Some(job) = &mut self.runtime.population_job else {
            return;
        };
        let outputs = job.poll();
        let done = job.is_done();
        let cancelled = job.cancel_requested();
        for outcome in outputs {
            match outcome {
                Ok(fit) => self.runtime.population_partial.push(fit),
                Err(e) => self.say(MessageKind::Error, format!("population fit failed: {e}")),
            }
        }
        if !done {
            return;
        }
        self.runtime.population_job = None;
        let fits = std::mem::take(&mut self.runtime.population_partial);
        if cancelled {
            self.say(MessageKind::Warning, "population fit cancelled");
            return;
        }
        if let Some(sentence) = bic_ranking(&fits) {
            self.say(
                MessageKind::Result,
                format!("population fit by ΔBIC: {sentence}"),
            );
        }
        if !fits.is_empty() {
            self.runtime.population = Some(fits);
        }
    }

    fn poll_worker(&mut self) {
        let Some(job) = &mut self.runtime.fit else {
            return;
        };
        let finished = job.poll();
        let done = job.is_done();
        let galaxy = job.label.clone();
        for (model, result) in finished {
            match result {
                Ok(result) => {
                    if result.summary.cancelled {
                        self.say(
                            MessageKind::Warning,
                            format!("fit of {galaxy} ({}) cancelled", model.name()),
                        );
                        continue;
                    }
                    self.session.store_result(result.summary.clone());
                    self.runtime.fits.insert((galaxy.clone(), model), *result);
                    self.runtime.dirty = true;
                }
                Err(e) => self.say(
                    MessageKind::Error,
                    format!("fit of {galaxy} ({}) failed: {e}", model.name()),
                ),
            }
        }
        if done {
            self.runtime.fit = None;
        }
    }

    fn apply(&mut self, command: Command, ctx: &egui::Context) {
        match command {
            Command::Select(i) => {
                // Looking at another galaxy is not a change worth saving.
                self.select(i);
                self.runtime.view = View::Galaxy;
            }
            Command::Settings(settings) => {
                if let Some(i) = self.runtime.selected {
                    self.session
                        .galaxies
                        .insert(self.runtime.galaxies[i].name(), settings);
                    self.runtime.dirty = true;
                    self.refresh_live();
                }
            }
            Command::Fit(models) => {
                if let Some(i) = self.runtime.selected
                    && let Ok(table) = &self.runtime.galaxies[i].table
                    && self.runtime.fit.is_none()
                {
                    self.runtime.fit = Some(start_fit(table.clone(), models, self.fit_config()));
                }
            }
            Command::CancelFit => {
                if let Some(job) = &self.runtime.fit {
                    job.cancel();
                }
            }
            Command::UseBestFit => self.use_best_fit(),
            Command::Particle(particle) => self.runtime.particle = particle,
            Command::FitPopulation => {
                self.refresh_population_inputs();
                let exclude = self.runtime.exclude_unconverged;
                let posteriors: Vec<GalaxyPosterior> = self
                    .runtime
                    .population_inputs
                    .as_ref()
                    .map(|i| {
                        i.posteriors
                            .iter()
                            .zip(&i.converged)
                            .filter(|(_, converged)| **converged || !exclude)
                            .map(|(p, _)| p.clone())
                            .collect()
                    })
                    .unwrap_or_default();
                if !posteriors.is_empty() && self.runtime.population_job.is_none() {
                    let settings = PopulationSettings {
                        seed: self.session.fit.seed,
                        ..PopulationSettings::default()
                    };
                    self.runtime.population_partial.clear();
                    self.runtime.population_job = Some(start_population_fit(posteriors, settings));
                }
            }
            Command::ExcludeUnconverged(exclude) => self.runtime.exclude_unconverged = exclude,
            Command::Evidence(on) => {
                self.session.fit.evidence = on.then(LadderConfig::default);
                self.runtime.dirty = true;
            }
            Command::StellarMassPrior(on) => {
                self.session.fit.priors.stellar_mass_halo = on;
                self.runtime.dirty = true;
            }
            Command::ForecastDesign(text) => self.runtime.forecast_design = text,
            Command::ForecastStellarMass(on) => self.runtime.forecast_stellar_mass = on,
            Command::Forecast => self.start_forecast(),
            Command::CancelForecast => {
                if let Some(job) = &self.runtime.forecast_job {
                    job.cancel();
                }
            }
            Command::CancelPopulationFit => {
                if let Some(job) = &self.runtime.population_job {
                    job.cancel();
                }
            }
            Command::ExportResults(format) => self.export_results(format),
            Command::ExportFigure(format) => self.export_figure(format),
            Command::SaveSession => {
                self.save_session();
            }
            Command::ShowOpenWindow(show) => {
                self.runtime.open_text = show.then(|| {
                    self.session
                        .catalogue
                        .as_ref()
                        .map(|p| p.display().to_string())
                        .unwrap_or_default()
                });
            }
            Command::OpenText(text) => self.runtime.open_text = Some(text),
            Command::ShowGalaxies(show) => self.runtime.show_galaxies = show,
            Command::ShowControls(show) => self.runtime.show_controls = show,
            Command::OpenDialog => {
                self.runtime.dialog = Some(Job::spawn("file dialog", |ctx| {
                    let picked = rfd::FileDialog::new()
                        .set_title("Open a galaxy table, a catalogue folder's table, or a session")
                        .add_filter(
                            "tables and sessions",
                            &["ecsv", "csv", "dat", "txt", "tsv", "ron"],
                        )
                        .pick_file();
                    ctx.output(picked);
                }));
            }
            Command::OpenPath(path) => {
                self.runtime.open_text = None;
                self.runtime.recent.retain(|p| *p != path);
                self.runtime.recent.insert(0, path.clone());
                self.runtime.recent.truncate(8);
                if path.extension().is_some_and(|e| e == "ron") {
                    self.open_session(&path);
                } else {
                    self.open_catalogue(&path, &ReadOptions::default());
                }
            }
            Command::LoadWithMapping => {
                if let Some(step) = self.runtime.mapping.take() {
                    let mapping: ColumnMapping = step
                        .roles
                        .into_iter()
                        .filter(|(_, v)| !v.trim().is_empty())
                        .collect();
                    let read = ReadOptions {
                        format: None,
                        mapping,
                    };
                    self.runtime.table_load = Some(start_table_load(step.path, read));
                }
            }
            Command::SetView(view) => self.runtime.view = view,
            Command::Sort(key) => self.runtime.sort = key,
            Command::QuitWithoutSaving => {
                self.runtime.allowed_to_close = true;
                ctx.send_viewport_cmd(egui::ViewportCommand::Close);
            }
            Command::SaveAndQuit => {
                if self.save_session() {
                    self.runtime.allowed_to_close = true;
                    ctx.send_viewport_cmd(egui::ViewportCommand::Close);
                }
            }
        }
    }

    fn use_best_fit(&mut self) {
        let (Some(i), Some(settings)) = (self.runtime.selected, self.current_settings()) else {
            return;
        };
        let name = self.runtime.galaxies[i].name();
        let Some(summary) = self.session.result(&name, settings.model) else {
            return;
        };
        let Ok(table) = &self.runtime.galaxies[i].table else {
            return;
        };
        match settings_from_fit(table, &settings, summary, &self.session.fit.cosmology) {
            Ok((settings, core)) => {
                self.session.galaxies.insert(name, settings);
                self.runtime.dirty = true;
                self.runtime.core_hint = core;
                self.refresh_live();
            }
            Err(e) => self.say(
                MessageKind::Error,
                format!("error: cannot load the best fit of {name}: {e}"),
            ),
        }
    }

    fn export_dir(&mut self) -> Option<PathBuf> {
        let dir = self.runtime.options.export_dir.clone();
        match std::fs::create_dir_all(&dir) {
            Ok(()) => Some(dir),
            Err(e) => {
                self.say(
                    MessageKind::Error,
                    format!("error: cannot create {}: {e}", dir.display()),
                );
                None
            }
        }
    }

    fn export_results(&mut self, format: &str) {
        let Some(dir) = self.export_dir() else { return };
        let rows = &self.session.results;
        let path = dir.join(format!("results.{format}"));
        let text = match format {
            "csv" => results_table(rows).to_csv(&path),
            "ecsv" => results_table(rows).to_ecsv(&path),
            _ => Ok(latex_table(rows)),
        };
        match text.and_then(|t| write_atomic(&path, t.as_bytes())) {
            Ok(()) => self.say(MessageKind::Info, format!("wrote {}", path.display())),
            Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
        }
    }

    /// Exports the figure of the view on screen: the rotation curve, or the population plot
    /// with the particle model and the population fits' best curves.
    fn export_figure(&mut self, format: &str) {
        if self.runtime.view == View::Population {
            self.export_population_figure(format);
            return;
        }
        let (Some(curve), Some(settings)) = (self.runtime.live.clone(), self.current_settings())
        else {
            self.say(MessageKind::Warning, "no curve to export");
            return;
        };
        let Some(dir) = self.export_dir() else { return };
        let name = self.session.selected.clone().unwrap_or_default();
        let figure = RotationCurveFigure {
            title: format!("{name} — {} halo", settings.model.name()),
            components: curve.components,
        };
        let file = format!(
            "{}_{}.{format}",
            name.replace([' ', '/'], "_"),
            settings.model.name()
        );
        let path = dir.join(file);
        match save_figure(&figure, &path) {
            Ok(()) => self.say(MessageKind::Info, format!("wrote {}", path.display())),
            Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
        }
    }

    fn export_population_figure(&mut self, format: &str) {
        let points: Vec<PopulationPoint> = self
            .session
            .results
            .iter()
            .filter(|r| r.model == HaloModel::Sidm)
            .filter_map(|r| {
                let name = if r.converged {
                    r.galaxy.clone()
                } else {
                    format!("{} (unconverged)", r.galaxy)
                };
                Some(PopulationPoint::new(
                    &name,
                    r.v_rel_kms.as_ref()?,
                    r.sigma_m_cm2_g.as_ref()?,
                ))
            })
            .collect();
        if points.is_empty() {
            self.say(
                MessageKind::Warning,
                "no SIDM fits to plot: fit SIDM to a galaxy first",
            );
            return;
        }
        let mut curves = Vec::new();
        if let Ok(cross_section) = self.runtime.particle.cross_section() {
            let label = format!("particle: {}", self.runtime.particle.kind.name());
            let (unaveraged, averaged) = linear_curves(&cross_section);
            curves.push(PopulationCurve {
                label: format!("{label}, <σv>/m ÷ <v_rel>"),
                points: averaged,
                dashed: false,
                group: 0,
            });
            curves.push(PopulationCurve {
                label: format!("{label}, σ(v)/m"),
                points: unaveraged,
                dashed: true,
                group: 0,
            });
        }
        for (k, fit) in self.runtime.population.iter().flatten().enumerate() {
            if let Ok(cross_section) = fit.best_cross_section() {
                curves.push(PopulationCurve {
                    label: format!("fit: {} (best-fit parameters)", fit.model.name()),
                    points: linear_curves(&cross_section).1,
                    dashed: false,
                    group: k + 1,
                });
            }
        }
        let Some(dir) = self.export_dir() else { return };
        let figure = PopulationFigure {
            title: "σ/m against collision velocity".into(),
            points,
            curves,
        };
        let path = dir.join(format!("population.{format}"));
        match save_figure(&figure, &path) {
            Ok(()) => self.say(MessageKind::Info, format!("wrote {}", path.display())),
            Err(e) => self.say(MessageKind::Error, format!("error: {e}")),
        }
    }

    fn save_session(&mut self) -> bool {
        let path = match &self.runtime.session_path {
            Some(p) => p.clone(),
            None => match self.export_dir() {
                Some(dir) => dir.join("session.ron"),
                None => return false,
            },
        };
        match save_session(&path, &self.session) {
            Ok(()) => {
                self.runtime.dirty = false;
                self.runtime.session_path = Some(path.clone());
                self.say(
                    MessageKind::Info,
                    format!("saved session {}", path.display()),
                );
                true
            }
            Err(e) => {
                self.say(MessageKind::Error, format!("error: {e}"));
                false
            }
        }
    }
}

impl eframe::App for CalderaApp {
    fn ui(&mut self, ui: &mut egui::Ui, _frame: &mut eframe::Frame) {
        let ctx = ui.ctx().clone();
        self.poll_jobs(&ctx);
        if self.runtime.view == View::Population {
            self.refresh_population_inputs();
        }
        let dropped: Vec<PathBuf> = ctx.input(|i| {
            i.raw
                .dropped_files
                .iter()
                .map(|f| f.path().to_path_buf())
                .filter(|p| !p.as_os_str().is_empty())
                .collect()
        });
        if ctx.input(|i| i.viewport().close_requested())
            && self.runtime.dirty
            && !self.runtime.allowed_to_close
        {
            ctx.send_viewport_cmd(egui::ViewportCommand::CancelClose);
            self.runtime.confirm_quit = true;
        }

        let mut commands: Vec<Command> = dropped.into_iter().map(Command::OpenPath).collect();
        egui::Panel::top("toolbar").show(ui, |ui| self.toolbar_ui(ui, &mut commands));
        egui::Panel::bottom("messages")
            .resizable(true)
            .show(ui, |ui| self.messages_ui(ui));
        // Side panels collapse on narrow windows (or when the user hides them) and take at most
        // a fair share of the width, so the plot always keeps room.
        let (show_galaxies, show_controls) = self.side_panels_shown(&ctx);
        let width = ctx.content_rect().width();
        if show_galaxies {
            egui::Panel::left("galaxies")
                .resizable(true)
                .default_size((0.22 * width).clamp(180.0, 330.0))
                .max_size((0.3 * width).max(180.0))
                .show(ui, |ui| {
                    egui::ScrollArea::vertical()
                        .show(ui, |ui| self.catalogue_ui(ui, &mut commands));
                });
        }
        if show_controls {
            egui::Panel::right("controls")
                .resizable(true)
                .default_size((0.3 * width).clamp(240.0, 330.0))
                .max_size((0.34 * width).max(240.0))
                .show(ui, |ui| {
                    egui::ScrollArea::vertical().show(ui, |ui| match self.runtime.view {
                        View::Galaxy => {
                            self.controls_ui(ui, &mut commands);
                            ui.separator();
                            self.fit_ui(ui, &mut commands);
                        }
                        View::Population => self.population_controls_ui(ui, &mut commands),
                    });
                });
        }
        egui::CentralPanel::default().show(ui, |ui| match self.runtime.view {
            View::Galaxy => self.curve_ui(ui),
            View::Population => self.population_ui(ui, &mut commands),
        });
        self.open_ui(&ctx, &mut commands);
        self.mapping_ui(&ctx, &mut commands);
        self.quit_ui(&ctx, &mut commands);
        for command in commands {
            self.apply(command, &ctx);
        }
        if self.solving_live() {
            // The live curve's answer is shown as soon as it arrives.
            ctx.request_repaint_after(std::time::Duration::from_millis(4));
        } else if self.busy() {
            ctx.request_repaint_after(std::time::Duration::from_millis(100));
        }
    }
}
