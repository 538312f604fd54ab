//! The population view's side panel: the particle model and the population fits. Draws and
//! emits commands only.

use caldera_infer::population::{VelocityModel, bic_ranking};
use caldera_infer::summary::clearly_preferred;
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::units::BARN_PER_GEV_PER_CM2_PER_G;
use egui::RichText;

use crate::app::CalderaApp;
use crate::commands::Command;
use crate::format::{interval, significant};
use crate::panels::comparison_row_ui;
use crate::population::ParticleModel;
use crate::theme;

/// Above this α m_χ / m_φ the Born-regime Yukawa cross-section is flagged (the population fit
/// uses the same threshold; common practice for "≪ 1").
const BORN_LIMIT: f64 = 0.1;

impl CalderaApp {
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
                if let Some(born) = cross_section.born_parameter()
                    && born > BORN_LIMIT
                {
                    ui.colored_label(
                        theme::WARNING,
                        format!(
                            "Born approximation not valid here: α m_χ / m_φ = {} (needs ≪ 1); these σ/m values are not physical.",
                            significant(born, 2)
                        ),
                    );
                }
                let at = 100.0;
                let s = cross_section.sigma_m_cm2_g(at);
                ui.label(format!(
                    "σ/m at v = {at:.0} km/s: {} cm²/g = {} barn/GeV",
                    significant(s, 3),
                    significant(s * BARN_PER_GEV_PER_CM2_PER_G, 3)
                ));
                let sigma0 = dispersion_from_mean_relative_speed_kms(at);
                ui.label(format!(
                    "<σv>/m at <v_rel> = {at:.0} km/s: {} cm²/g·km/s",
                    significant(cross_section.sigma_v_over_m_cm2_g_kms(sigma0), 3)
                ));
                ui.label(
                    RichText::new(format!(
                        "Solid: <σv>/m ÷ <v_rel>, what a galaxy measures; dashed: σ(v)/m. 1 cm²/g = {BARN_PER_GEV_PER_CM2_PER_G:.2} barn/GeV."
                    ))
                    .small(),
                );
            }
            Err(e) => {
                ui.colored_label(theme::ERROR, e.to_string());
            }
        }
        if particle != *before {
            commands.push(Command::Particle(particle));
        }

        ui.separator();
        ui.heading("Population fit");
        let (all, unconverged, problems) =
            self.runtime
                .population_inputs
                .as_ref()
                .map_or((0, 0, &[][..]), |i| {
                    let unconverged = i.converged.iter().filter(|c| !**c).count();
                    (i.posteriors.len(), unconverged, i.problems.as_slice())
                });
        ui.label(format!(
            "{all} galaxies with an SIDM posterior (fits made here, or chains of an opened catalogue-run folder)"
        ));
        let mut exclude = self.runtime.exclude_unconverged;
        if unconverged > 0 {
            ui.colored_label(
                theme::WARNING,
                format!(
                    "{unconverged} of them come from chains that hit their step cap (unconverged)."
                ),
            );
        }
        if ui
            .checkbox(&mut exclude, "Leave unconverged galaxies out of the fit")
            .changed()
        {
            commands.push(Command::ExcludeUnconverged(exclude));
        }
        let count = if exclude { all - unconverged } else { all };
        for problem in problems {
            ui.colored_label(theme::WARNING, problem);
        }
        if let Some(job) = &self.runtime.population_job {
            let (text, fraction) = match job.latest() {
                Some(p) => {
                    let within = p.sampler.step as f32 / p.sampler.max_steps.max(1) as f32;
                    (
                        format!(
                            "{}: model {} of {} ({}), step {}",
                            job.label,
                            p.index + 1,
                            p.count,
                            p.model.name(),
                            p.sampler.step
                        ),
                        (p.index as f32 + within.min(1.0)) / p.count.max(1) as f32,
                    )
                }
                None => (format!("{}: finding the best fits…", job.label), 0.0),
            };
            ui.add(egui::ProgressBar::new(fraction).text(text));
            if ui.button("Cancel population fit").clicked() {
                commands.push(Command::CancelPopulationFit);
            }
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
            let preferred = clearly_preferred(fits, |f| f.bic).map(|f| f.model);
            let best_bic = fits.iter().map(|f| f.bic).fold(f64::INFINITY, f64::min);
            egui::Grid::new("population fits")
                .striped(true)
                .show(ui, |ui| {
                    ui.strong("model");
                    ui.strong("ln L_max");
                    ui.strong("ΔAIC");
                    ui.strong("ΔBIC");
                    ui.strong("by ΔBIC");
                    ui.end_row();
                    let best_aic = fits.iter().map(|f| f.aic).fold(f64::INFINITY, f64::min);
                    for fit in fits {
                        comparison_row_ui(
                            ui,
                            fit.model.name(),
                            Some(fit.model) == preferred,
                            &[
                                format!("{:.2}", fit.log_likelihood_max),
                                format!("{:.2}", fit.aic - best_aic),
                            ],
                            fit.bic - best_bic,
                        );
                    }
                });
            if let Some(sentence) = bic_ranking(fits) {
                ui.label(format!("By ΔBIC: {sentence}."));
            }
            ui.label(
                RichText::new(
                    "Words on the Kass & Raftery (1995) scale for ΔBIC: < 2 tie, 2–6 positive, 6–10 strong, > 10 very strong (common practice).",
                )
                .small(),
            );
            for fit in fits {
                ui.collapsing(format!("{} parameters", fit.model.name()), |ui| {
                    for p in &fit.parameters {
                        let text = match &p.interval {
                            Some(i) if i.upper95.is_some() => {
                                format!("{} {}", p.name, interval(i, &p.unit))
                            }
                            Some(i) => format!("{} = {}", p.name, interval(i, &p.unit)),
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
        self.forecast_ui(ui, commands);
    }

    /// The forecast section: what a catalogue of a design could detect if the particle model
    /// were true.
    fn forecast_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.separator();
        ui.heading("Forecast");
        let alternative = match self.runtime.particle.kind {
            VelocityModel::Constant => VelocityModel::FallOff,
            kind => kind,
        };
        ui.label(format!(
            "If the particle model above were true, how often would a catalogue of this design prefer {} over a constant σ/m? Invented galaxies are fitted end to end, then catalogues of 0.5–4 times the design are drawn from them and compared by BIC.",
            alternative.name()
        ));
        let mut design = self.runtime.forecast_design.clone();
        ui.horizontal(|ui| {
            ui.label("Galaxies per V200 range [km/s]");
            ui.add(egui::TextEdit::singleline(&mut design).desired_width(200.0))
                .on_hover_text("LOW-HIGH:COUNT, comma-separated, e.g. 30-60:5,60-120:5,120-200:4");
        });
        if design != self.runtime.forecast_design {
            commands.push(Command::ForecastDesign(design));
        }
        ui.label(
            RichText::new(format!(
                "{} points to {} R200, errors {:.0}% ⊕ {} km/s; distance and inclination known (an optimistic case).",
                crate::app::FORECAST_POINTS,
                crate::app::FORECAST_EXTENT_R200,
                100.0 * crate::app::FORECAST_ERROR_FRACTION,
                crate::app::FORECAST_ERROR_FLOOR_KMS
            ))
            .small(),
        );
        let mut stellar = self.runtime.forecast_stellar_mass;
        if ui
            .checkbox(&mut stellar, "Fit with the stellar-to-halo mass prior")
            .on_hover_text("Each invented galaxy is fitted with the Moster et al. (2013) prior on its stellar mass, as a fit with that box ticked in the Fit panel")
            .changed()
        {
            commands.push(Command::ForecastStellarMass(stellar));
        }
        if let Some(job) = &self.runtime.forecast_job {
            let (done, total) = job.latest().copied().unwrap_or((0, 0));
            let fraction = if total > 0 {
                done as f32 / total as f32
            } else {
                0.0
            };
            ui.add(
                egui::ProgressBar::new(fraction)
                    .text(format!("{}: {done} of {total} invented galaxies fitted", job.label)),
            );
            if ui.button("Cancel forecast").clicked() {
                commands.push(Command::CancelForecast);
            }
        } else if ui
            .button("Run forecast")
            .on_hover_text("Minutes: one SIDM fit per design galaxy (a few seconds each on all cores), then 200 catalogues per size")
            .clicked()
        {
            commands.push(Command::Forecast);
        }
        let Some(forecast) = &self.runtime.forecast else {
            return;
        };
        ui.label(format!(
            "{} against a constant σ/m; {} invented galaxies{}",
            forecast.alternative.name(),
            forecast.pool_size,
            if forecast.pool_unconverged > 0 {
                format!(" ({} unconverged)", forecast.pool_unconverged)
            } else {
                String::new()
            }
        ));
        egui::Grid::new("forecast power")
            .striped(true)
            .show(ui, |ui| {
                ui.strong("galaxies");
                ui.strong("ΔBIC median [16–84%]");
                ui.strong("P(ΔBIC ≥ 6)");
                ui.strong("P(ΔBIC ≥ 2)");
                ui.end_row();
                for p in &forecast.power {
                    ui.label(format!(
                        "{}{}",
                        p.n_galaxies,
                        if p.repeats_pool_galaxies { " *" } else { "" }
                    ));
                    ui.label(format!(
                        "{:.1} [{:.1}, {:.1}]",
                        p.median_delta_bic, p.p16_delta_bic, p.p84_delta_bic
                    ));
                    ui.label(format!("{:.2}", p.power_strong));
                    ui.label(format!("{:.2}", p.power_positive));
                    ui.end_row();
                }
            });
        ui.label(
            RichText::new(
                "ΔBIC = BIC(constant) − BIC(model): ≥ 6 strong, ≥ 2 positive (Kass & Raftery scale, common practice). * the catalogue repeats invented galaxies (its spread is too narrow).",
            )
            .small(),
        );
        let parameters = forecast.alternative.parameters();
        for i in &forecast.intervals {
            let symbol = parameters
                .iter()
                .find(|p| p.key == i.name)
                .map_or(i.name.as_str(), |p| p.symbol);
            ui.label(format!(
                "{symbol}: expected ±{:.2} dex (16–84%), median {} {}{} over {} sampled catalogues",
                i.median_half_width_dex,
                significant(i.median_of_medians, 3),
                i.unit,
                i.truth
                    .map(|t| format!(" (truth {} {})", significant(t, 3), i.unit))
                    .unwrap_or_default(),
                i.catalogues
            ));
        }
    }
}
