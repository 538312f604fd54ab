//! The panels: each `*_ui` function only draws and pushes [`Command`]s.

use caldera_data::session::HaloModel;
use caldera_infer::summary::{clearly_preferred, evidence_words};
use caldera_physics::ParamId;
use caldera_physics::units::BARN_PER_GEV_PER_CM2_PER_G;
use std::path::PathBuf;

use egui::{Color32, RichText};
use egui_plot::{
    Bar, BarChart, Corner, Legend, Line, LineStyle, MarkerShape, Plot, PlotPoints, Points, VLine,
};

use crate::app::CalderaApp;
use crate::commands::Command;
use crate::format::{interval, significant};
use crate::population::log_curves;
use crate::state::{SortKey, View};
use crate::theme;

/// Tick labels for axes that plot log10 values: the value itself.
fn power_of_ten(mark: egui_plot::GridMark, _range: &std::ops::RangeInclusive<f64>) -> String {
    significant(10f64.powf(mark.value), 2)
}

/// Width of the y axes of the rotation curve and of its residuals, in ui points: one width for
/// both, so that their radius axes line up (with widths set by their own tick labels, "300"
/// against "3", Kiln S03's residuals sat 12 px left of its curve).
const CURVE_Y_AXIS_WIDTH: f32 = 48.0;

/// Head-room above the highest error bar on the rotation-curve plot, as a factor on its top:
/// the legend sits there, above the data, instead of over it (a legend in the emptiest corner
/// still hid points of a flat curve: on Kiln D02 it covered four).
const LEGEND_HEADROOM: f64 = 1.4;

/// The top corner for the legend: the one whose outer 45% of the radius axis has fewer of
/// `points` (x, y, weight) in the head-room above `y_top` (model curves that overshoot the
/// data); ties go to the upper left, above the rising part of a rotation curve.
fn legend_corner(points: &[(f64, f64, usize)], x_max: f64, y_top: f64) -> Corner {
    let crowd = |left: bool| -> usize {
        points
            .iter()
            .filter(|&&(px, py, _)| {
                let fx = px / x_max;
                py > y_top && if left { fx < 0.45 } else { fx > 0.55 }
            })
            .map(|p| p.2)
            .sum()
    };
    if crowd(false) < crowd(true) {
        Corner::RightTop
    } else {
        Corner::LeftTop
    }
}

impl CalderaApp {
    pub(crate) fn toolbar_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.horizontal_wrapped(|ui| {
            if ui.button("Open…").on_hover_text("Open a galaxy table (ECSV, CSV, whitespace), a catalogue folder or a session: type its path, browse, or drop files on the window").clicked() {
                commands.push(Command::ShowOpenWindow(true));
            }
            if ui.button("Save session").clicked() {
                commands.push(Command::SaveSession);
            }
            ui.separator();
            ui.label("Export results:");
            for (label, format) in [("CSV", "csv"), ("ECSV", "ecsv"), ("LaTeX", "tex")] {
                if ui.button(label).on_hover_text(format!("Write results.{format} to the export folder")).clicked() {
                    commands.push(Command::ExportResults(format));
                }
            }
            ui.label("Export figure:");
            for (label, format) in [("SVG", "svg"), ("PNG", "png")] {
                if ui.button(label).clicked() {
                    commands.push(Command::ExportFigure(format));
                }
            }
            ui.separator();
            let view = self.runtime.view;
            if ui.selectable_label(view == View::Galaxy, "Rotation curve").clicked() {
                commands.push(Command::SetView(View::Galaxy));
            }
            if ui.selectable_label(view == View::Population, "Population").clicked() {
                commands.push(Command::SetView(View::Population));
            }
            ui.separator();
            let (galaxies, controls) = self.side_panels_shown(ui.ctx());
            if ui
                .selectable_label(galaxies, "Galaxies")
                .on_hover_text("Show or hide the galaxy list")
                .clicked()
            {
                commands.push(Command::ShowGalaxies(Some(!galaxies)));
            }
            if ui
                .selectable_label(controls, "Controls")
                .on_hover_text("Show or hide the side panel of controls")
                .clicked()
            {
                commands.push(Command::ShowControls(Some(!controls)));
            }
            if self.runtime.dirty {
                ui.label(RichText::new("unsaved changes").color(theme::WARNING));
            }
        });
    }

    /// Whether the galaxy list and the controls show: as the user chose, else by the window's
    /// width (narrow windows keep the plot and the controls, then the plot alone).
    pub(crate) fn side_panels_shown(&self, ctx: &egui::Context) -> (bool, bool) {
        let width = ctx.content_rect().width();
        (
            self.runtime.show_galaxies.unwrap_or(width >= 1100.0),
            self.runtime.show_controls.unwrap_or(width >= 760.0),
        )
    }

    /// The Open window: a path field (always works), a file dialog (where the desktop offers
    /// one), and the paths opened in this run.
    pub(crate) fn open_ui(&self, ctx: &egui::Context, commands: &mut Vec<Command>) {
        let Some(text) = &self.runtime.open_text else {
            return;
        };
        let mut open = true;
        let mut typed = text.clone();
        egui::Window::new("Open")
            .open(&mut open)
            .collapsible(false)
            .show(ctx, |ui| {
                ui.label("A galaxy table, a catalogue folder, or a session (.ron):");
                let field = ui.add(
                    egui::TextEdit::singleline(&mut typed)
                        .desired_width(420.0)
                        .hint_text("path/to/galaxy.ecsv or path/to/folder"),
                );
                let entered = field.lost_focus() && ui.input(|i| i.key_pressed(egui::Key::Enter));
                ui.horizontal(|ui| {
                    if (ui.button("Open this path").clicked() || entered) && !typed.trim().is_empty() {
                        commands.push(Command::OpenPath(PathBuf::from(typed.trim())));
                    }
                    if ui
                        .button("Browse…")
                        .on_hover_text("The desktop's file dialog (through its portal or zenity)")
                        .clicked()
                    {
                        commands.push(Command::OpenDialog);
                    }
                });
                if self.runtime.dialog.is_some() {
                    ui.label("Waiting for the file dialog… If none appears, this desktop offers none: type the path above.");
                }
                if !self.runtime.recent.is_empty() {
                    ui.separator();
                    ui.label("Opened in this run:");
                    for path in &self.runtime.recent {
                        if ui.link(path.display().to_string()).clicked() {
                            commands.push(Command::OpenPath(path.clone()));
                        }
                    }
                }
            });
        if !open {
            commands.push(Command::ShowOpenWindow(false));
        } else if typed != *text {
            commands.push(Command::OpenText(typed));
        }
    }

    pub(crate) fn messages_ui(&self, ui: &mut egui::Ui) {
        egui::ScrollArea::vertical()
            .max_height(90.0)
            .stick_to_bottom(true)
            .show(ui, |ui| {
                for message in &self.runtime.messages {
                    ui.label(
                        RichText::new(&message.text).color(theme::message_colour(message.kind)),
                    );
                }
            });
    }

    pub(crate) fn catalogue_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.heading("Galaxies");
        let mut order: Vec<usize> = (0..self.runtime.galaxies.len()).collect();
        let v_max = |i: usize| {
            self.runtime.galaxies[i]
                .table
                .as_ref()
                .map_or(f64::NAN, |t| t.v_obs_max_kms())
        };
        let sigma = |i: usize| {
            self.session
                .result(&self.runtime.galaxies[i].name(), HaloModel::Sidm)
                .and_then(|r| r.sigma_m_cm2_g)
                .map_or(f64::NAN, |s| s.median)
        };
        match self.runtime.sort {
            SortKey::Name => order.sort_by_key(|&i| self.runtime.galaxies[i].name()),
            SortKey::VMax => order.sort_by(|&a, &b| v_max(a).total_cmp(&v_max(b))),
            SortKey::Points => order.sort_by_key(|&i| {
                self.runtime.galaxies[i]
                    .table
                    .as_ref()
                    .map_or(0, |t| t.len())
            }),
            SortKey::SigmaM => order.sort_by(|&a, &b| sigma(a).total_cmp(&sigma(b))),
        }
        egui::ScrollArea::vertical().show(ui, |ui| {
            egui::Grid::new("galaxy list").striped(true).show(ui, |ui| {
                for (label, key) in [
                    ("Name", SortKey::Name),
                    ("V_max [km/s]", SortKey::VMax),
                    ("Points", SortKey::Points),
                    ("SIDM σ/m [cm²/g]", SortKey::SigmaM),
                ] {
                    if ui
                        .selectable_label(self.runtime.sort == key, label)
                        .on_hover_text("Sort by this column")
                        .clicked()
                    {
                        commands.push(Command::Sort(key));
                    }
                }
                ui.label("Fit");
                ui.end_row();
                for i in order {
                    let entry = &self.runtime.galaxies[i];
                    let name = entry.name();
                    let selected = self.runtime.selected == Some(i);
                    if ui.selectable_label(selected, &name).clicked() {
                        commands.push(Command::Select(i));
                    }
                    match &entry.table {
                        Ok(t) => {
                            ui.label(format!("{:.0}", t.v_obs_max_kms()));
                            ui.label(t.len().to_string());
                        }
                        Err(_) => {
                            ui.label(RichText::new("error").color(theme::ERROR));
                            ui.label("-");
                        }
                    }
                    let sidm = self.session.result(&name, HaloModel::Sidm);
                    match sidm.and_then(|r| r.sigma_m_cm2_g) {
                        Some(s) => {
                            let text = match s.upper95 {
                                Some(limit) => format!("< {} (95%)", significant(limit, 2)),
                                None => format!("{} (median)", significant(s.median, 2)),
                            };
                            if sidm.is_some_and(|r| !r.converged) {
                                ui.label(
                                    RichText::new(format!("{text} unconverged"))
                                        .color(theme::WARNING),
                                )
                                .on_hover_text(
                                    "The chain hit its step cap: do not publish this value",
                                );
                            } else {
                                ui.label(text);
                            }
                        }
                        None => {
                            ui.label("-");
                        }
                    };
                    let fitted: Vec<&str> = HaloModel::ALL
                        .iter()
                        .filter(|m| self.session.result(&name, **m).is_some())
                        .map(|m| m.name())
                        .collect();
                    // One model by name; several as a count (the list would widen the panel),
                    // named on hover.
                    match fitted.as_slice() {
                        [] => {
                            ui.label("-");
                        }
                        [one] => {
                            ui.label(*one);
                        }
                        several => {
                            ui.label(format!("{} models", several.len()))
                                .on_hover_text(several.join(", "));
                        }
                    }
                    ui.end_row();
                }
            });
        });
    }

    pub(crate) fn controls_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.heading("Halo model");
        // Wide sliders: σ/m spans four decades, and each should get a usable stretch of slider.
        ui.spacing_mut().slider_width = (ui.available_width() - 130.0).clamp(120.0, 260.0);
        let Some(before) = self.current_settings() else {
            ui.label("Open a galaxy table to start.");
            return;
        };
        let mut s = before.clone();
        egui::ComboBox::from_label("Model")
            .selected_text(s.model.label())
            .show_ui(ui, |ui| {
                for m in HaloModel::ALL {
                    ui.selectable_value(&mut s.model, m, m.label());
                }
            });
        for &id in s.model.family().controls() {
            if let Some(mut value) = s.value(id) {
                parameter_slider(ui, id, &mut value);
                s.set_value(id, value);
            }
        }
        let mut upsilon_disk = s.upsilon_disk;
        parameter_slider(ui, ParamId::UpsilonDisk, &mut upsilon_disk);
        s.upsilon_disk = upsilon_disk;
        if self.selected_has_bulge() {
            let mut upsilon_bulge = s.upsilon_bulge;
            parameter_slider(ui, ParamId::UpsilonBulge, &mut upsilon_bulge);
            s.upsilon_bulge = upsilon_bulge;
        }
        if let Some(d) = s.distance_mpc.as_mut() {
            parameter_slider(ui, ParamId::Distance, d);
        }
        if let Some(i) = s.inclination_deg.as_mut() {
            parameter_slider(ui, ParamId::Inclination, i);
        }
        if s.model == HaloModel::Sidm {
            ui.add(egui::Slider::new(&mut s.age_gyr, 1.0..=13.5).text("Halo age [Gyr]"));
        }
        if s != before {
            commands.push(Command::Settings(s.clone()));
        }
        ui.separator();
        if self.solving_live() {
            ui.label(
                egui::RichText::new(
                    "searching for the isothermal core that matches this halo; the curve shown is the last one…",
                )
                .italics(),
            );
        }
        match (&self.runtime.live, &self.runtime.live_error) {
            (Some(curve), _) => {
                ui.label(format!(
                    "χ²/ν = {:.2} (χ² = {:.1})",
                    curve.chi2_nu, curve.chi2
                ));
                if let (Some(core), Some(v)) = (curve.sidm_core(), curve.components.halo.v_rel_kms)
                {
                    ui.label(format!(
                        "core: ρ0 = {} Msun/kpc³, σ0 = {} km/s",
                        significant(core.rho0_msun_kpc3, 3),
                        significant(core.sigma0_kms, 3)
                    ));
                    ui.label(format!("<v_rel> = {} km/s", significant(v, 3)));
                }
                if let Some(r1) = curve.components.r1_kpc {
                    ui.label(format!("r1 = {} kpc", significant(r1, 3)))
                        .on_hover_text(
                            "r1: the radius inside which each dark-matter particle has scattered \
                         about once over the halo age (dashed line on the plot)",
                        );
                }
            }
            (None, Some(error)) => {
                ui.label(
                    RichText::new(format!("No curve for these values: {error}"))
                        .color(theme::WARNING),
                );
                ui.label(RichText::new("The last valid curve is shown dimmed.").small());
            }
            _ => {}
        }
    }

    pub(crate) fn fit_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.heading("Fit");
        let Some(settings) = self.current_settings() else {
            return;
        };
        let name = self.session.selected.clone().unwrap_or_default();
        match &self.runtime.fit {
            Some(job) => {
                let (text, fraction) = match job.latest() {
                    Some((model, p)) => (
                        format!(
                            "{} ({}): step {} of at most {}, τ {}",
                            job.label,
                            model.name(),
                            p.step,
                            p.max_steps,
                            p.tau_max.map_or("-".into(), |t| format!("{t:.0}"))
                        ),
                        // Towards the steps the chain needs (50 τ), never past the cap.
                        p.step as f32
                            / p.target_steps
                                .map_or(p.max_steps, |t| t.min(p.max_steps))
                                .max(1) as f32,
                    ),
                    None => ("finding the best fit…".to_string(), 0.0),
                };
                ui.add(egui::ProgressBar::new(fraction.min(1.0)).text(text));
                if ui.button("Cancel fit").clicked() {
                    commands.push(Command::CancelFit);
                }
            }
            None => {
                ui.horizontal(|ui| {
                    if ui
                        .button("Fit")
                        .on_hover_text("Sample the posterior of the chosen model")
                        .clicked()
                    {
                        commands.push(Command::Fit(vec![settings.model]));
                    }
                    if ui
                        .button("Compare models")
                        .on_hover_text("Fit SIDM, NFW and Burkert halos")
                        .clicked()
                    {
                        commands.push(Command::Fit(vec![
                            HaloModel::Sidm,
                            HaloModel::Nfw,
                            HaloModel::Burkert,
                        ]));
                    }
                });
                let mut evidence = self.session.fit.evidence.is_some();
                if ui
                    .checkbox(&mut evidence, "Bayesian evidence ln Z (slower)")
                    .on_hover_text(
                        "After each posterior run, a parallel-tempering ladder computes ln Z by thermodynamic integration: about ten times the fit's time",
                    )
                    .changed()
                {
                    commands.push(Command::Evidence(evidence));
                }
                let mut stellar = self.session.fit.priors.stellar_mass_halo;
                if ui
                    .checkbox(&mut stellar, "Stellar-to-halo mass prior")
                    .on_hover_text(
                        "log10 of the stellar mass at the sampled ϒ's normal around the Moster, Naab & White (2013) relation at the halo's M200, 0.15 dex scatter. The stellar mass at ϒ = 1 is the table's luminosity_lsun, else V²r/G of the disk and bulge curves at the last radius (a spherical estimate). Not applied to halos without M200 (pseudo-isothermal).",
                    )
                    .changed()
                {
                    commands.push(Command::StellarMassPrior(stellar));
                }
            }
        }
        if let Some(result) = self.session.result(&name, settings.model) {
            ui.separator();
            ui.label(RichText::new(format!("{} fit of {name}", settings.model.label())).strong());
            if let Some(s) = &result.sigma_m_cm2_g {
                let shown = interval(s, "cm²/g");
                if s.upper95.is_some() {
                    ui.label(format!("σ/m {shown}"));
                } else {
                    ui.label(format!("σ/m = {shown}"));
                }
            }
            if let Some(v) = &result.v_rel_kms {
                ui.label(format!("<v_rel> = {}", interval(v, "km/s")));
            }
            ui.label(format!(
                "χ²/ν = {:.2} (best sample); halo age {:.1} Gyr",
                result.chi2_nu, result.age_gyr
            ));
            if let (Some(z), Some(e)) = (result.log_evidence, result.log_evidence_err) {
                ui.label(format!("ln Z = {z:.2} ± {e:.2}")).on_hover_text(
                    "The Bayesian evidence under the stated priors (thermodynamic integration over a parallel-tempering ladder). Only differences between models of the same galaxy mean something: Compare models shows ln Z and ln B side by side.",
                );
            }
            if result.resampled_in_halo_coordinates {
                ui.label("sampled again in outer-halo coordinates")
                    .on_hover_text(
                        "The chain in core coordinates (ρ0, σ0) ended unconverged at the step cap, so the same posterior was sampled again in the outer halo's coordinates (V200, c200), which mix far better where the core sits deep in the NFW cusp. τ below is that run's.",
                    );
            }
            if result.tempered {
                ui.label("sampled on a parallel-tempering ladder (separated SIDM branches)")
                    .on_hover_text(
                        "Every SIDM branch is admitted and more than one core matches the best-fitting outer halo within the bounds: the sample is the cold rung of a tempering ladder, whose hot rungs carry walkers between branches. τ below is that rung's.",
                    );
            }
            if result.converged {
                ui.label(format!("converged (τ = {:.0} steps)", result.tau_max));
            } else {
                ui.label(
                    RichText::new(format!(
                        "NOT converged (τ = {:.0} steps after {} steps; 50 τ needed): do not trust these intervals",
                        result.tau_max, result.n_steps
                    ))
                    .color(theme::ERROR),
                )
                .on_hover_text(
                    "The chain stopped at the step cap before it was 50 autocorrelation times long. A catalogue run can raise the cap: caldera fit TABLE --max-steps N",
                );
            }
            ui.label(RichText::new(prior_summary(&self.session.fit.priors, settings.model)).weak())
                .on_hover_text(PRIOR_HOVER);
            if ui.button("Use best fit").clicked() {
                commands.push(Command::UseBestFit);
            }
        }
        let rows: Vec<_> = HaloModel::ALL
            .iter()
            .filter_map(|m| self.session.result(&name, *m))
            .collect();
        if !rows.is_empty() {
            ui.separator();
            ui.label(RichText::new("Model comparison").strong());
            let best_bic = rows.iter().map(|r| r.bic).fold(f64::INFINITY, f64::min);
            let best_aic = rows.iter().map(|r| r.aic).fold(f64::INFINITY, f64::min);
            let preferred = clearly_preferred(&rows, |r| r.bic).map(|r| r.model);
            // ln Z, when every compared fit has it: ln B against the best model and its words
            // on the same (Kass & Raftery) scale as ΔBIC, which approximates 2 ln B.
            let with_evidence = rows.len() > 1 && rows.iter().all(|r| r.log_evidence.is_some());
            let best_log_z = rows
                .iter()
                .filter_map(|r| r.log_evidence)
                .fold(f64::NEG_INFINITY, f64::max);
            egui::Grid::new("comparison").striped(true).show(ui, |ui| {
                for h in ["Model", "χ²/ν", "ΔAIC", "ΔBIC", "by ΔBIC"] {
                    ui.label(h);
                }
                ui.end_row();
                for r in &rows {
                    comparison_row_ui(
                        ui,
                        r.model.name(),
                        Some(r.model) == preferred,
                        &[
                            format!("{:.2}", r.chi2_nu),
                            format!("{:.1}", r.aic - best_aic),
                        ],
                        r.bic - best_bic,
                    );
                }
            });
            // The evidence in a table of its own, so neither table widens the panel.
            if with_evidence {
                ui.add_space(4.0);
                egui::Grid::new("evidence").striped(true).show(ui, |ui| {
                    for h in ["Model", "ln Z", "ln B vs best", "by ln B"] {
                        ui.label(h);
                    }
                    ui.end_row();
                    for r in &rows {
                        let (Some(z), Some(e)) = (r.log_evidence, r.log_evidence_err) else {
                            continue;
                        };
                        ui.label(r.model.name());
                        ui.label(format!("{z:.2} ± {e:.2}"));
                        ui.label(format!("{:.2}", z - best_log_z));
                        ui.label(evidence_words(2.0 * (best_log_z - z)));
                        ui.end_row();
                    }
                });
            }
            ui.label(
                RichText::new(
                    "Words: the Kass & Raftery (1995) scale for 2 ln B (ΔBIC approximates it); conventions, common practice.",
                )
                .small(),
            );
        }
        if let Some(result) = self.runtime.fits.get(&(name.clone(), settings.model)) {
            ui.separator();
            ui.label(RichText::new("Posterior").strong());
            let kept: Vec<(usize, usize)> =
                result.chain.kept(result.burn_in, result.thin).collect();
            for (p, parameter) in result.parameters.iter().enumerate() {
                let values: Vec<f64> = kept
                    .iter()
                    .map(|&(s, w)| result.chain.position(s, w, p))
                    .collect();
                histogram_ui(ui, &parameter.label(), &values);
            }
        }
    }

    pub(crate) fn curve_ui(&self, ui: &mut egui::Ui) {
        let (curve, dim) = match (&self.runtime.live, &self.runtime.last_valid) {
            (Some(c), _) => (c, false),
            (None, Some(c)) => (c, true),
            _ => {
                ui.label(if self.solving_live() {
                    "Searching for the isothermal core that matches this halo…"
                } else {
                    "No curve to show."
                });
                return;
            }
        };
        let shade = |c: Color32| if dim { theme::dimmed(c) } else { c };
        let c = &curve.components;
        let height = ui.available_height();
        let pairs = |r: &[f64], v: &[f64]| -> Vec<[f64; 2]> {
            r.iter().zip(v).map(|(&x, &y)| [x, y]).collect()
        };
        // One radius axis for the curve and the residuals, set by the data alone (0 to 8% past
        // the last point) so it neither jumps while dragging nor stretches to reach r1; per
        // galaxy, so a new galaxy starts from its own range.
        let galaxy = self.runtime.selected.unwrap_or(0);
        let link = egui::Id::unique(("caldera radius axis", galaxy));
        let x_max = c.radius_kpc.iter().copied().fold(0.0, f64::max).max(1e-3) * 1.08;
        let y_top = c
            .v_obs_kms
            .iter()
            .zip(&c.v_err_kms)
            .map(|(v, e)| v + e)
            .fold(0.0, f64::max);
        // A data point weighs five curve samples (the curves are sampled at the data radii and
        // on the fine grid of the halo and total): hiding data is worse than crossing a curve.
        let mut crowd: Vec<(f64, f64, usize)> = Vec::new();
        let mut add = |radii: &[f64], values: &[f64], weight: usize| {
            crowd.extend(radii.iter().zip(values).map(|(&r, &v)| (r, v, weight)));
        };
        add(&c.radius_kpc, &c.v_obs_kms, 5);
        add(&c.radius_kpc, &c.v_gas_kms, 1);
        add(&c.radius_kpc, &c.v_disk_kms, 1);
        if let Some(bulge) = &c.v_bulge_kms {
            add(&c.radius_kpc, bulge, 1);
        }
        let stride = (c.fine_radius_kpc.len() / c.radius_kpc.len().max(1)).max(1);
        let every = |v: &[f64]| v.iter().step_by(stride).copied().collect::<Vec<f64>>();
        let fine = every(&c.fine_radius_kpc);
        add(&fine, &every(&c.v_halo_fine_kms), 1);
        add(&fine, &every(&c.v_total_fine_kms), 1);
        let legend_corner = legend_corner(&crowd, x_max, y_top);
        let (curve_id, residual_id) = crate::curve_plot_ids(galaxy);
        Plot::new(("rotation curve", galaxy))
            .id(curve_id)
            .height(height * 0.68)
            .legend(Legend::default().position(legend_corner))
            .x_axis_label("Radius [kpc]")
            .y_axis_label("Circular velocity [km/s]")
            .y_axis_min_width(CURVE_Y_AXIS_WIDTH)
            .link_axis(link, [true, false])
            .default_x_bounds(0.0, x_max)
            .include_y(0.0)
            .include_y(y_top * LEGEND_HEADROOM)
            .show_crosshair(false)
            .show(ui, |plot| {
                for (k, ((&r, &v), &e)) in c
                    .radius_kpc
                    .iter()
                    .zip(&c.v_obs_kms)
                    .zip(&c.v_err_kms)
                    .enumerate()
                {
                    plot.line(
                        Line::new("observed", PlotPoints::from(vec![[r, v - e], [r, v + e]]))
                            .color(shade(theme::DATA))
                            .id(("error bar", k)),
                    );
                }
                plot.points(
                    Points::new(
                        "observed",
                        PlotPoints::from(pairs(&c.radius_kpc, &c.v_obs_kms)),
                    )
                    .color(shade(theme::DATA))
                    .radius(3.5)
                    .filled(true)
                    .id("observed"),
                );
                plot.line(
                    Line::new("gas", PlotPoints::from(pairs(&c.radius_kpc, &c.v_gas_kms)))
                        .color(shade(theme::GAS))
                        .id("gas"),
                );
                plot.line(
                    Line::new(
                        "stellar disk",
                        PlotPoints::from(pairs(&c.radius_kpc, &c.v_disk_kms)),
                    )
                    .color(shade(theme::DISK))
                    .id("disk"),
                );
                if let Some(bulge) = &c.v_bulge_kms {
                    plot.line(
                        Line::new("bulge", PlotPoints::from(pairs(&c.radius_kpc, bulge)))
                            .color(shade(theme::BULGE))
                            .id("bulge"),
                    );
                }
                plot.line(
                    Line::new(
                        "dark halo",
                        PlotPoints::from(pairs(&c.fine_radius_kpc, &c.v_halo_fine_kms)),
                    )
                    .color(shade(theme::HALO))
                    .width(2.5)
                    .id("halo"),
                );
                plot.line(
                    Line::new(
                        "total",
                        PlotPoints::from(pairs(&c.fine_radius_kpc, &c.v_total_fine_kms)),
                    )
                    .color(shade(theme::TOTAL))
                    .width(3.0)
                    .id("total"),
                );
                // Markers: r1 long-dashed, the core radius dotted, both thicker than the grid;
                // beyond the data they become an edge label with their value.
                let markers = [
                    (
                        "r1 (dashed)",
                        "r1",
                        c.r1_kpc,
                        egui_plot::LineStyle::dashed_loose(),
                    ),
                    (
                        "core radius r0 (dotted)",
                        "core radius",
                        c.core_radius_kpc,
                        egui_plot::LineStyle::dotted_dense(),
                    ),
                ];
                for (k, (name, short, radius, style)) in markers.into_iter().enumerate() {
                    let Some(r) = radius else { continue };
                    if r <= x_max {
                        plot.vline(
                            VLine::new(name, r)
                                .color(shade(theme::MARKER))
                                .width(2.0)
                                .style(style)
                                .id(("marker", k)),
                        );
                    } else {
                        let y = y_top * (0.95 - 0.08 * k as f64);
                        plot.text(
                            egui_plot::Text::new(
                                name,
                                [x_max * 0.99, y].into(),
                                format!("{short} = {} kpc →", crate::format::significant(r, 3)),
                            )
                            .anchor(egui::Align2::RIGHT_CENTER)
                            .color(shade(theme::MARKER))
                            .id(("marker label", k)),
                        );
                    }
                }
            });
        let residuals: Vec<[f64; 2]> = c
            .radius_kpc
            .iter()
            .zip(c.v_obs_kms.iter().zip(&c.v_model_kms).zip(&c.v_err_kms))
            .map(|(&r, ((&o, &m), &e))| [r, (o - m) / e])
            .collect();
        Plot::new(("residuals", galaxy))
            .id(residual_id)
            .height(ui.available_height())
            .x_axis_label("Radius [kpc]")
            .y_axis_label("(V_obs − V_model)/σ")
            .y_axis_min_width(CURVE_Y_AXIS_WIDTH)
            .link_axis(link, [true, false])
            .default_x_bounds(0.0, x_max)
            .show_crosshair(false)
            .include_y(-3.0)
            .include_y(3.0)
            .show(ui, |plot| {
                plot.points(
                    Points::new("residual", PlotPoints::from(residuals))
                        .color(shade(theme::DATA))
                        .radius(3.5)
                        .filled(true)
                        .id("residuals"),
                );
            });
    }

    pub(crate) fn population_ui(&self, ui: &mut egui::Ui, commands: &mut Vec<Command>) {
        ui.label("σ/m against <v_rel> for every galaxy fitted with SIDM (log axes). Click a point to open its galaxy.");
        let names = self.galaxy_names();
        let mut points: Vec<(usize, [f64; 2])> = Vec::new();
        // The lower left (slow collisions, small σ/m) is where no galaxy sits.
        let response = Plot::new("population")
            .legend(Legend::default().position(Corner::LeftBottom))
            .x_axis_label("<v_rel> [km/s] (σ(v)/m: relative speed v)")
            .y_axis_label(format!(
                "σ/m [cm²/g]  (1 cm²/g = {BARN_PER_GEV_PER_CM2_PER_G:.2} barn/GeV)"
            ))
            .x_axis_formatter(power_of_ten)
            .y_axis_formatter(power_of_ten)
            .show(ui, |plot| {
                for r in self
                    .session
                    .results
                    .iter()
                    .filter(|r| r.model == HaloModel::Sidm)
                {
                    let (Some(v), Some(s)) = (r.v_rel_kms, r.sigma_m_cm2_g) else {
                        continue;
                    };
                    let Some(index) = names.iter().position(|n| *n == r.galaxy) else {
                        continue;
                    };
                    let x = v.median.log10();
                    let id = ("population", index);
                    // One legend entry per kind of point, not per galaxy; unconverged chains
                    // stand out in their own colour and entry.
                    let (measured, limits, colour, limit_colour) = if r.converged {
                        (
                            "galaxies: σ/m median, 16–84%",
                            "galaxies: 95% upper limit",
                            theme::DATA,
                            theme::LIMIT,
                        )
                    } else {
                        (
                            "unconverged chains (do not publish)",
                            "unconverged chains (do not publish)",
                            theme::WARNING,
                            theme::WARNING,
                        )
                    };
                    plot.line(
                        Line::new(
                            if s.upper95.is_some() {
                                limits
                            } else {
                                measured
                            },
                            PlotPoints::from(vec![
                                [v.p16.log10(), s.median.log10()],
                                [v.p84.log10(), s.median.log10()],
                            ]),
                        )
                        .color(if s.upper95.is_some() {
                            limit_colour
                        } else {
                            colour
                        })
                        .id((id, "x")),
                    );
                    match s.upper95 {
                        Some(limit) => {
                            let y = limit.log10();
                            plot.line(
                                Line::new(limits, PlotPoints::from(vec![[x, y], [x, y - 0.4]]))
                                    .color(limit_colour)
                                    .id((id, "limit")),
                            );
                            plot.points(
                                Points::new(limits, PlotPoints::from(vec![[x, y - 0.4]]))
                                    .shape(MarkerShape::Down)
                                    .radius(6.0)
                                    .color(limit_colour)
                                    .id((id, "arrow")),
                            );
                            points.push((index, [x, y]));
                        }
                        None => {
                            let y = s.median.log10();
                            plot.line(
                                Line::new(
                                    measured,
                                    PlotPoints::from(vec![[x, s.p16.log10()], [x, s.p84.log10()]]),
                                )
                                .color(colour)
                                .id((id, "y")),
                            );
                            plot.points(
                                Points::new(measured, PlotPoints::from(vec![[x, y]]))
                                    .radius(5.0)
                                    .filled(r.converged)
                                    .color(colour)
                                    .id((id, "point")),
                            );
                            points.push((index, [x, y]));
                        }
                    }
                }
                let particle = &self.runtime.particle;
                if let Ok(cross_section) = particle.cross_section() {
                    let (unaveraged, averaged) = log_curves(&cross_section);
                    let name = format!("particle: {}", particle.kind.name());
                    plot.line(
                        Line::new(
                            format!("{name}, <σv>/m ÷ <v_rel>"),
                            PlotPoints::from(averaged),
                        )
                        .color(theme::CURVES[4])
                        .width(2.5)
                        .id("particle averaged"),
                    );
                    plot.line(
                        Line::new(format!("{name}, σ(v)/m"), PlotPoints::from(unaveraged))
                            .color(theme::CURVES[4])
                            .width(2.0)
                            .style(LineStyle::dashed_loose())
                            .id("particle unaveraged"),
                    );
                }
                for (k, fit) in self.runtime.population.iter().flatten().enumerate() {
                    if let Ok(cross_section) = fit.best_cross_section() {
                        plot.line(
                            Line::new(
                                format!("fit: {} (best-fit parameters)", fit.model.name()),
                                PlotPoints::from(log_curves(&cross_section).1),
                            )
                            .color(theme::CURVES[k % 4])
                            .width(2.0)
                            .id(("population fit", k)),
                        );
                    }
                }
                plot.pointer_coordinate()
            });
        // A click opens the galaxy whose point is under the pointer (within 0.1 dex), not the
        // nearest one to a click in empty space.
        let distance =
            |p: &[f64; 2], x: f64, y: f64| ((p[0] - x).powi(2) + (p[1] - y).powi(2)).sqrt();
        if response.response.clicked()
            && let Some(pointer) = response.inner
            && let Some((index, point)) = points.iter().min_by(|a, b| {
                distance(&a.1, pointer.x, pointer.y)
                    .total_cmp(&distance(&b.1, pointer.x, pointer.y))
            })
            && distance(point, pointer.x, pointer.y) < 0.1
        {
            commands.push(Command::Select(*index));
        }
    }

    pub(crate) fn mapping_ui(&mut self, ctx: &egui::Context, commands: &mut Vec<Command>) {
        let Some(step) = &mut self.runtime.mapping else {
            return;
        };
        let mut open = true;
        egui::Window::new("Column mapping")
            .open(&mut open)
            .show(ctx, |ui| {
                ui.label(format!(
                    "{} could not be read as it is:",
                    step.path.display()
                ));
                ui.label(RichText::new(&step.message).color(theme::WARNING));
                ui.label(
                    "Name the column that holds each quantity (leave empty to keep the guess):",
                );
                for role in caldera_data::ColumnRole::ALL {
                    let mut text = step.roles.get(&role).cloned().unwrap_or_default();
                    ui.horizontal(|ui| {
                        ui.label(role.describe());
                        ui.add(egui::TextEdit::singleline(&mut text).desired_width(120.0));
                    });
                    step.roles.insert(role, text);
                }
                if ui.button("Load with this mapping").clicked() {
                    commands.push(Command::LoadWithMapping);
                }
            });
        if !open {
            self.runtime.mapping = None;
        }
    }

    pub(crate) fn quit_ui(&mut self, ctx: &egui::Context, commands: &mut Vec<Command>) {
        if !self.runtime.confirm_quit {
            return;
        }
        egui::Window::new("Unsaved changes")
            .collapsible(false)
            .resizable(false)
            .show(ctx, |ui| {
                ui.label("The session has changes that are not saved.");
                ui.horizontal(|ui| {
                    if ui.button("Save and quit").clicked() {
                        commands.push(Command::SaveAndQuit);
                    }
                    if ui.button("Quit without saving").clicked() {
                        commands.push(Command::QuitWithoutSaving);
                    }
                    if ui.button("Keep working").clicked() {
                        self.runtime.confirm_quit = false;
                    }
                });
            });
    }
}

/// One row of a model-comparison grid: the model's name (marked when clearly preferred), its
/// `cells`, then ΔBIC and its words on the Kass–Raftery scale.
pub(crate) fn comparison_row_ui(
    ui: &mut egui::Ui,
    name: &str,
    preferred: bool,
    cells: &[String],
    delta_bic: f64,
) {
    if preferred {
        ui.label(RichText::new(format!("{name} (preferred)")).strong());
    } else {
        ui.label(name);
    }
    for cell in cells {
        ui.label(cell);
    }
    ui.label(format!("{delta_bic:.2}"));
    ui.label(evidence_words(delta_bic));
    ui.end_row();
}

/// A logarithmic or linear slider over the parameter's hand-exploration range, labelled with its
/// symbol and unit.
fn parameter_slider(ui: &mut egui::Ui, id: ParamId, value: &mut f64) {
    let (low, high, logarithmic) = id.control_range();
    ui.add(
        egui::Slider::new(value, low..=high)
            .logarithmic(logarithmic)
            .custom_formatter(|v, _| crate::format::editable(v))
            .custom_parser(|text| text.trim().parse().ok())
            .text(id.label()),
    )
    .on_hover_text(id.description());
}

fn histogram_ui(ui: &mut egui::Ui, name: &str, values: &[f64]) {
    let finite: Vec<f64> = values.iter().copied().filter(|v| v.is_finite()).collect();
    let (lo, hi) = finite
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    if finite.is_empty() || lo >= hi {
        return;
    }
    let bins = 30;
    let width = (hi - lo) / bins as f64;
    let mut counts = vec![0usize; bins];
    for v in &finite {
        counts[(((v - lo) / width) as usize).min(bins - 1)] += 1;
    }
    let bars: Vec<Bar> = counts
        .iter()
        .enumerate()
        .map(|(k, &c)| Bar::new(lo + width * (k as f64 + 0.5), c as f64).width(width))
        .collect();
    Plot::new(("posterior", name))
        .height(90.0)
        .show_axes([true, false])
        .x_axis_label(name.to_string())
        .allow_drag(false)
        .allow_zoom(false)
        .allow_scroll(false)
        .allow_boxed_zoom(false)
        .show_crosshair(false)
        .show(ui, |plot| {
            plot.bar_chart(
                BarChart::new(name, bars)
                    .color(theme::POSTERIOR)
                    .id(("histogram", name)),
            );
        });
}

/// One line naming the fit's priors on the halo.
fn prior_summary(priors: &caldera_infer::priors::Priors, model: HaloModel) -> String {
    let (v_lo, v_hi) = priors.halo.log10_v200;
    let outer = if priors.concentration_mass {
        format!(
            "V200 log-uniform {}–{} km/s, log c200 ~ Dutton–Macciò ± {} dex",
            crate::format::significant(10f64.powf(v_lo), 2),
            crate::format::significant(10f64.powf(v_hi), 2),
            priors.concentration_scatter_dex
        )
    } else {
        format!(
            "V200 and c200 log-uniform (V200 {}–{} km/s)",
            crate::format::significant(10f64.powf(v_lo), 2),
            crate::format::significant(10f64.powf(v_hi), 2)
        )
    };
    let stellar = if priors.stellar_mass_halo && model != HaloModel::PseudoIsothermal {
        "; M* ~ Moster et al. (2013) ± 0.15 dex"
    } else {
        ""
    };
    match model {
        HaloModel::Sidm => {
            let xs = priors.cross_section;
            format!(
                "Prior: {outer}{stellar}; σ/m {} {}–{} cm²/g; {} core",
                if xs.logarithmic {
                    "log-uniform"
                } else {
                    "uniform"
                },
                xs.min_cm2_g,
                xs.max_cm2_g,
                match priors.sidm_branches {
                    caldera_infer::priors::SidmBranches::LowestDensity => "lowest-density",
                    caldera_infer::priors::SidmBranches::All => "every matching",
                }
            )
        }
        HaloModel::PseudoIsothermal => {
            "Prior: log ρ0 and log r_c uniform (no c200, no concentration prior)".to_string()
        }
        _ => format!("Prior: {outer}{stellar}"),
    }
}

/// What the prior line means, on hover.
const PRIOR_HOVER: &str = "The outer halo's prior is the same for NFW, Einasto, Burkert and SIDM: log-uniform V200 and log c200 normal around the Dutton & Macciò (2014) relation. SIDM and Burkert halos are sampled in their own coordinates and carry this prior there by the Jacobian. When several SIDM cores match one outer halo, the prior admits the lowest-density one (the core-expansion solution). ϒ's, distance and inclination have their own priors (README).";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_legend_takes_the_top_corner_with_less_overshoot() {
        // A flat curve whose model overshoots the data at small radii: the upper right is
        // freer.
        let overshoot: Vec<(f64, f64, usize)> = (0..10)
            .map(|k| (0.3 * f64::from(k), 120.0, 1))
            .chain([(8.0, 101.0, 1)])
            .collect();
        assert_eq!(legend_corner(&overshoot, 10.0, 100.0), Corner::RightTop);
        // Nothing above the data: the upper left, above a curve's rise.
        let below = [(1.0, 50.0, 5), (9.0, 99.0, 5)];
        assert_eq!(legend_corner(&below, 10.0, 100.0), Corner::LeftTop);
    }
}
