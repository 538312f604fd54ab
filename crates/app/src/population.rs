//! The population view's controls: a particle model drawn over the data, and population fits of
//! σ(v)/m run on a worker thread over the SIDM posteriors at hand.

use std::sync::mpsc::{Receiver, channel};

use caldera_data::session::HaloModel;
use caldera_infer::population::{
    GalaxyPosterior, PopulationFit, PopulationSettings, Treatment, VelocityModel,
    effective_sigma_m_cm2_g, fit_population, load_folder_posteriors, preferred_by_bic,
};
use caldera_infer::run_folder::RunFolder;
use caldera_infer::sampler::Silent;
use caldera_physics::CrossSection;
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::units::BARN_PER_GEV_PER_CM2_PER_G;
use egui::RichText;

use crate::app::{CalderaApp, Command};
use crate::theme;

/// A particle model chosen in the population view: its kind and the log10 of each parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct ParticleModel {
    pub kind: VelocityModel,
    pub log10_values: Vec<f64>,
}

impl ParticleModel {
    /// The model of this kind at its default parameters.
    #[must_use]
    pub fn new(kind: VelocityModel) -> Self {
        Self {
            kind,
            log10_values: kind
                .parameters()
                .iter()
                .map(|p| p.default.log10())
                .collect(),
        }
    }

    /// The cross-section, or why the parameters are refused.
    pub fn cross_section(&self) -> Result<CrossSection, String> {
        let values: Vec<f64> = self.log10_values.iter().map(|x| 10f64.powf(*x)).collect();
        self.kind.build(&values).map_err(|e| e.to_string())
    }
}

impl Default for ParticleModel {
    fn default() -> Self {
        Self::new(VelocityModel::Yukawa)
    }
}

/// Population fits running on a worker thread.
pub struct PopulationJob {
    pub receiver: Receiver<Result<Vec<PopulationFit>, String>>,
    pub n_galaxies: usize,
}

impl PopulationJob {
    /// Fits every population model (marginal treatment) to `posteriors` on a new thread.
    #[must_use]
    pub fn start(posteriors: Vec<GalaxyPosterior>, settings: PopulationSettings) -> Self {
        let (sender, receiver) = channel();
        let n_galaxies = posteriors.len();
        std::thread::spawn(move || {
            let fits: Result<Vec<PopulationFit>, String> = VelocityModel::ALL
                .into_iter()
                .map(|model| {
                    fit_population(
                        model,
                        Treatment::Marginal,
                        &posteriors,
                        &[],
                        &settings,
                        &mut Silent,
                    )
                    .map_err(|e| format!("{}: {e}", model.name()))
                })
                .collect();
            // The app may have closed: nobody left to tell.
            let _ = sender.send(fits);
        });
        Self {
            receiver,
            n_galaxies,
        }
    }
}

/// Mean relative speeds (km/s) at which curves are drawn.
#[must_use]
pub fn curve_speeds() -> Vec<f64> {
    (0..=80)
        .map(|i| 10f64.powf(0.5 + 3.0 * f64::from(i) / 80.0))
        .collect()
}

/// A cross-section's curves in log10 plot coordinates: (unaveraged σ(v)/m at v,
/// velocity-averaged <σv>/m / <v_rel> at <v_rel>).
#[must_use]
pub fn log_curves(cross_section: &CrossSection) -> (Vec<[f64; 2]>, Vec<[f64; 2]>) {
    let mut unaveraged = Vec::new();
    let mut averaged = Vec::new();
    for v in curve_speeds() {
        let sigma0 = dispersion_from_mean_relative_speed_kms(v);
        let (s, e) = (
            cross_section.sigma_m_cm2_g(v),
            effective_sigma_m_cm2_g(cross_section, sigma0),
        );
        if s > 0.0 {
            unaveraged.push([v.log10(), s.log10()]);
        }
        if e > 0.0 {
            averaged.push([v.log10(), e.log10()]);
        }
    }
    (unaveraged, averaged)
}

/// The SIDM posteriors the population fit would use, cached until the fits or the session's
/// folder change (reading a catalogue run's chains every frame would stall the window).
pub struct PopulationInputs {
    key: (Vec<(String, usize)>, Option<std::path::PathBuf>),
    pub posteriors: Vec<GalaxyPosterior>,
    pub problems: Vec<String>,
}

impl CalderaApp {
    /// Recomputes [`PopulationInputs`] when the SIDM fits in memory or the session's folder
    /// changed: fits made in this session first, then the chains of a catalogue run's folder
    /// when the session was opened from one.
    pub(crate) fn refresh_population_inputs(&mut self) {
        let key = (
            self.runtime
                .fits
                .iter()
                .filter(|((_, model), _)| *model == HaloModel::Sidm)
                .map(|((galaxy, _), fit)| (galaxy.clone(), fit.summary.n_samples))
                .collect::<Vec<_>>(),
            self.runtime.session_path.clone(),
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
        let mut posteriors: Vec<GalaxyPosterior> = Vec::new();
        let mut problems = Vec::new();
        for ((galaxy, model), fit) in &self.runtime.fits {
            if *model != HaloModel::Sidm {
                continue;
            }
            match GalaxyPosterior::from_fit(fit, &prior, max) {
                Ok(p) => posteriors.push(p),
                Err(e) => problems.push(format!("{galaxy}: {e}")),
            }
        }
        if let Some(folder) = key.1.as_ref().and_then(|p| p.parent())
            && RunFolder::new(folder).exists()
        {
            match load_folder_posteriors(folder, &prior, max) {
                Ok(loaded) => {
                    for p in loaded.posteriors {
                        if !posteriors.iter().any(|q| q.galaxy == p.galaxy) {
                            posteriors.push(p);
                        }
                    }
                }
                Err(e) => problems.push(format!("{}: {e}", folder.display())),
            }
        }
        posteriors.sort_by(|a, b| a.galaxy.cmp(&b.galaxy));
        self.runtime.population_inputs = Some(PopulationInputs {
            key,
            posteriors,
            problems,
        });
    }

    /// The population view's side panel.
    pub(crate) fn population_controls_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.heading("Particle model");
        let before = &self.runtime.particle;
        let mut particle = before.clone();
        egui::ComboBox::from_label("σ(v)/m")
            .selected_text(particle.kind.name())
            .show_ui(ui, |ui| {
                for kind in VelocityModel::ALL {
                    if ui
                        .selectable_label(particle.kind == kind, kind.name())
                        .clicked()
                        && kind != particle.kind
                    {
                        particle = ParticleModel::new(kind);
                    }
                }
            });
        for (k, spec) in particle.kind.parameters().iter().enumerate() {
            let (lower, upper) = spec.log10_bounds;
            let mut value = 10f64.powf(particle.log10_values[k]);
            ui.add(
                egui::Slider::new(&mut value, 10f64.powf(lower)..=10f64.powf(upper))
                    .logarithmic(true)
                    .text(spec.label()),
            );
            particle.log10_values[k] = value.log10();
        }
        match particle.cross_section() {
            Ok(cross_section) => {
                let at = 100.0;
                let s = cross_section.sigma_m_cm2_g(at);
                ui.label(format!(
                    "σ/m at v = {at:.0} km/s: {s:.3} cm²/g = {:.3} barn/GeV",
                    s * BARN_PER_GEV_PER_CM2_PER_G
                ));
                let sigma0 = dispersion_from_mean_relative_speed_kms(at);
                ui.label(format!(
                    "<σv>/m at <v_rel> = {at:.0} km/s: {:.4} cm²/g·km/s",
                    cross_section.sigma_v_over_m_cm2_g_kms(sigma0)
                ));
                ui.label(
                    RichText::new(
                        "Solid: <σv>/m ÷ <v_rel>, what a galaxy measures; dashed: σ(v)/m. 1 cm²/g = 1.78 barn/GeV.",
                    )
                    .small(),
                );
            }
            Err(e) => {
                ui.colored_label(theme::ERROR, e);
            }
        }
        if particle != *before {
            commands.push(Command::Particle(particle));
        }

        ui.separator();
        ui.heading("Population fit");
        let (count, problems) = self
            .runtime
            .population_inputs
            .as_ref()
            .map_or((0, &[][..]), |i| {
                (i.posteriors.len(), i.problems.as_slice())
            });
        ui.label(format!(
            "{count} galaxies with an SIDM posterior (fits made here, or chains of an opened catalogue-run folder)"
        ));
        for problem in problems {
            ui.colored_label(theme::WARNING, problem);
        }
        if let Some(job) = &self.runtime.population_job {
            ui.horizontal(|ui| {
                ui.spinner();
                ui.label(format!(
                    "fitting the four σ(v)/m models to {} galaxies…",
                    job.n_galaxies
                ));
            });
        } else if ui
            .add_enabled(
                count > 0,
                egui::Button::new("Fit population models"),
            )
            .on_hover_text("Constant, fall-off, Yukawa and resonance σ(v)/m fitted to every galaxy's σ/m posterior at its velocity; compared by BIC")
            .on_disabled_hover_text("Fit SIDM to at least one galaxy first (or open a catalogue run's session.ron)")
            .clicked()
        {
            commands.push(Command::FitPopulation);
        }
        if let Some(fits) = &self.runtime.population {
            let preferred = preferred_by_bic(fits);
            let best_bic = fits.iter().map(|f| f.bic).fold(f64::INFINITY, f64::min);
            egui::Grid::new("population fits")
                .striped(true)
                .show(ui, |ui| {
                    ui.strong("model");
                    ui.strong("ln L_max");
                    ui.strong("ΔBIC");
                    ui.strong("ΔAIC");
                    ui.end_row();
                    let best_aic = fits.iter().map(|f| f.aic).fold(f64::INFINITY, f64::min);
                    for fit in fits {
                        let name = if Some(fit.model) == preferred {
                            format!("{} (preferred)", fit.model.name())
                        } else {
                            fit.model.name().to_string()
                        };
                        ui.label(name);
                        ui.label(format!("{:.2}", fit.log_likelihood_max));
                        ui.label(format!("{:.2}", fit.bic - best_bic));
                        ui.label(format!("{:.2}", fit.aic - best_aic));
                        ui.end_row();
                    }
                });
            for fit in fits {
                ui.collapsing(format!("{} parameters", fit.model.name()), |ui| {
                    for p in &fit.parameters {
                        let text = match &p.interval {
                            Some(i) => match i.upper95 {
                                Some(u) => format!("{} < {u:.3e} {} (95%)", p.name, p.unit),
                                None => format!(
                                    "{} = {:.3e} [{:.3e}, {:.3e}] {}",
                                    p.name, i.median, i.p16, i.p84, p.unit
                                ),
                            },
                            None => format!("{}: no samples", p.name),
                        };
                        ui.label(text);
                    }
                    for note in &fit.notes {
                        ui.colored_label(theme::WARNING, note);
                    }
                });
            }
        }
    }
}
