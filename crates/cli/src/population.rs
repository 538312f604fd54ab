//! `caldera population`: velocity-dependent σ(v)/m models fitted to a catalogue run's SIDM
//! posteriors (and to outside constraints), compared by AIC/BIC, with particle-model curves.

use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Instant;

use anyhow::{Context, bail};
use caldera_data::session::load_session;
use caldera_data::{OutsideConstraint, read_constraints, write_atomic};
use caldera_infer::population::{
    GalaxyPosterior, PopulationFit, PopulationSettings, Treatment, VelocityModel, bic_ranking,
    effective_sigma_m_cm2_g, fit_population, load_folder_posteriors, preferred_by_aic,
    preferred_by_bic,
};
use caldera_infer::run_folder::RunFolder;
use caldera_infer::sampler::Silent;
use caldera_infer::session::Session;
use caldera_infer::summary::Interval;
use caldera_infer::summary::{clearly_preferred, evidence_words};
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::units::BARN_PER_GEV_PER_CM2_PER_G;
use caldera_physics::{CrossSection, CrossSectionKind};
use caldera_report::figures::{PopulationCurve, PopulationFigure, PopulationPoint, save_figure};
use clap::Args;
use serde::Serialize;

use crate::Verbosity;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera population results                      # all four models, marginal and joint fits
  caldera population results --json > population.json
  caldera population results --constraints clusters.csv --models constant,fall-off
  caldera population results --particle yukawa:m_chi=10,m_phi=1.5,alpha=2e-5

Outside constraints: CSV with the columns label, v_rel_kms, sigma_m_cm2_g, error_cm2_g, kind
(kind is `measurement` or `upper95`; v_rel_kms is the mean relative speed 4 sigma0 / sqrt(pi)).
Particle models: constant:sigma_m=CM2/G | fall-off:sigma0_m=CM2/G,w=KM/S |
yukawa:m_chi=GEV,m_phi=MEV,alpha=A | resonance:m_chi=GEV,delta=D,gamma=G,background=CM2/G";

/// Arguments of `caldera population`.
#[derive(Debug, Args)]
pub struct PopulationArgs {
    /// Output folder of a catalogue run (`caldera fit CATALOGUE --models sidm --out DIR`).
    pub results: PathBuf,
    /// Population models to fit, comma-separated.
    #[arg(
        long,
        value_delimiter = ',',
        default_value = "constant,fall-off,yukawa,resonance"
    )]
    pub models: Vec<String>,
    /// A CSV table of outside constraints on σ/m (e.g. cluster analyses) to include.
    #[arg(long, value_name = "FILE")]
    pub constraints: Option<PathBuf>,
    /// Dark-matter mass held fixed in the Yukawa model.
    #[arg(long, default_value_t = 10.0, value_name = "GEV")]
    pub yukawa_dm_mass: f64,
    /// A particle model whose σ(v)/m and velocity-averaged ⟨σv⟩/m are drawn over the data
    /// (repeatable).
    #[arg(long, value_name = "SPEC")]
    pub particle: Vec<String>,
    /// Skip the joint fit (shared σ(v)/m by reweighting each galaxy's chain).
    #[arg(long)]
    pub no_joint: bool,
    /// Skip the hierarchical fits (each model again with an intrinsic scatter τ, in dex, of the
    /// galaxies' σ/m about it; under the joint treatment, or the population one with
    /// --no-joint).
    #[arg(long)]
    pub no_scatter: bool,
    /// Seed of the population samplers.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Step cap of each population sampler.
    #[arg(long, default_value_t = 10_000)]
    pub max_steps: usize,
    /// Folder for the report, table and figure (default: RESULTS/population).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Print the report as JSON.
    #[arg(long)]
    pub json: bool,
    /// Also compute each model's Bayesian evidence ln Z (parallel tempering after each fit of
    /// the population treatment; not the joint one, ten times costlier per evaluation) and
    /// compare the models by ln Bayes factor as well.
    #[arg(long)]
    pub evidence: bool,
}

/// One galaxy as the population fit sees it.
#[derive(Debug, Serialize)]
struct GalaxyEntry {
    galaxy: String,
    v_rel_kms: Option<Interval>,
    sigma_m_cm2_g: Option<Interval>,
    n_samples: usize,
    converged: bool,
}

/// One point of a particle model's curves.
#[derive(Debug, Serialize)]
struct ParticlePoint {
    v_kms: f64,
    sigma_m_cm2_g: f64,
    sigma_m_barn_gev: f64,
    /// ⟨σv⟩/m over a Maxwellian whose mean relative speed is `v_kms`, cm²/g · km/s.
    sigma_v_over_m_cm2_g_kms: f64,
    /// ⟨σv⟩/m / ⟨v_rel⟩ at that Maxwellian, cm²/g (comparable with the galaxies' σ/m).
    effective_sigma_m_cm2_g: f64,
}

#[derive(Debug, Serialize)]
struct ParticleModel {
    spec: String,
    cross_section: CrossSection,
    curve: Vec<ParticlePoint>,
}

#[derive(Debug, Serialize)]
struct Comparison {
    models: Vec<PopulationFit>,
    /// Lowest BIC.
    preferred: Option<VelocityModel>,
    preferred_by_aic: Option<VelocityModel>,
}

#[derive(Debug, Serialize)]
struct Report {
    results: PathBuf,
    galaxies: Vec<GalaxyEntry>,
    skipped: Vec<String>,
    constraints: Vec<OutsideConstraint>,
    /// Population fit (each galaxy one point at its median velocity) — the model comparison.
    models: Vec<PopulationFit>,
    /// Lowest BIC of the population fit.
    preferred: Option<VelocityModel>,
    preferred_by_aic: Option<VelocityModel>,
    /// Joint fit: all galaxies share σ(v)/m, each keeps its own halo and nuisances.
    joint: Option<Comparison>,
    /// Hierarchical fit: the joint fit's models (the population fit's with --no-joint), each
    /// galaxy's σ_eff scattering about the model with an intrinsic scatter τ (dex).
    hierarchical: Option<Comparison>,
    particle_models: Vec<ParticleModel>,
    settings: PopulationSettings,
}

/// Parses `kind:key=value,...` into a cross-section.
pub(crate) fn parse_particle(spec: &str) -> anyhow::Result<CrossSection> {
    let (kind, rest) = spec.split_once(':').unwrap_or((spec, ""));
    let mut values = std::collections::BTreeMap::new();
    for pair in rest.split(',').filter(|p| !p.trim().is_empty()) {
        let (key, value) = pair
            .split_once('=')
            .with_context(|| format!("particle model '{spec}': '{pair}' is not key=value"))?;
        let number: f64 = value
            .trim()
            .parse()
            .with_context(|| format!("particle model '{spec}': '{value}' is not a number"))?;
        values.insert(key.trim().to_string(), number);
    }
    let kinds = || CrossSectionKind::ALL.map(CrossSectionKind::name).join(", ");
    let Some(kind) = CrossSectionKind::from_name(kind) else {
        bail!(
            "particle model '{spec}': unknown kind '{kind}' ({})",
            kinds()
        );
    };
    let wanted: Vec<&str> = kind.parameters().iter().map(|p| p.key).collect();
    if let Some(extra) = values.keys().find(|k| !wanted.contains(&k.as_str())) {
        bail!(
            "particle model '{spec}': unknown parameter '{extra}'; {} takes {}",
            kind.name(),
            wanted.join(", ")
        );
    }
    let mut ordered = Vec::with_capacity(wanted.len());
    for key in &wanted {
        ordered.push(values.get(*key).copied().with_context(|| {
            format!(
                "particle model '{spec}': missing '{key}'; {} takes {}",
                kind.name(),
                wanted.join(", ")
            )
        })?);
    }
    let cross_section = kind.build(&ordered);
    cross_section.with_context(|| format!("particle model '{spec}'"))
}

/// Speeds (km/s) spaced evenly in log between `low` and `high`.
fn log_speeds(low: f64, high: f64, count: usize) -> Vec<f64> {
    (0..count)
        .map(|i| {
            let t = i as f64 / (count - 1).max(1) as f64;
            (low.ln() + (high.ln() - low.ln()) * t).exp()
        })
        .collect()
}

fn particle_curve(cross_section: &CrossSection, speeds: &[f64]) -> Vec<ParticlePoint> {
    speeds
        .iter()
        .map(|&v| {
            let sigma0 = dispersion_from_mean_relative_speed_kms(v);
            let sigma_m = cross_section.sigma_m_cm2_g(v);
            ParticlePoint {
                v_kms: v,
                sigma_m_cm2_g: sigma_m,
                sigma_m_barn_gev: sigma_m * BARN_PER_GEV_PER_CM2_PER_G,
                sigma_v_over_m_cm2_g_kms: cross_section.sigma_v_over_m_cm2_g_kms(sigma0),
                effective_sigma_m_cm2_g: effective_sigma_m_cm2_g(cross_section, sigma0),
            }
        })
        .collect()
}

/// Reads every galaxy's SIDM chain under `results`; galaxies without one are listed as skipped.
fn load_posteriors(
    results: &Path,
    session: &Session,
    max_samples: usize,
) -> anyhow::Result<(Vec<GalaxyPosterior>, Vec<GalaxyEntry>, Vec<String>)> {
    let loaded = load_folder_posteriors(results, &session.fit.priors.cross_section, max_samples)
        .with_context(|| {
            format!(
                "cannot read the SIDM posteriors of {} (the output of `caldera fit CATALOGUE --out DIR`)",
                results.display()
            )
        })?;
    let entries = loaded
        .posteriors
        .iter()
        .zip(&loaded.converged)
        .map(|(posterior, &converged)| GalaxyEntry {
            galaxy: posterior.galaxy.clone(),
            v_rel_kms: posterior.v_rel_kms(),
            sigma_m_cm2_g: posterior.sigma_m_cm2_g(),
            n_samples: posterior.sigma0_kms.len(),
            converged,
        })
        .collect();
    Ok((loaded.posteriors, entries, loaded.skipped))
}

fn fit_all(
    models: &[VelocityModel],
    treatment: Treatment,
    galaxies: &[GalaxyPosterior],
    constraints: &[OutsideConstraint],
    settings: &PopulationSettings,
    verbosity: Verbosity,
) -> anyhow::Result<Vec<PopulationFit>> {
    // The evidence is computed for the marginal treatment only: the joint likelihood costs about
    // ten times more per evaluation, which a tempering ladder multiplies again.
    let settings = &PopulationSettings {
        evidence: settings
            .evidence
            .filter(|_| treatment == Treatment::Marginal),
        ..*settings
    };
    let mut fits = Vec::new();
    for &model in models {
        let started = Instant::now();
        let fit = fit_population(
            model,
            treatment,
            galaxies,
            constraints,
            settings,
            &mut Silent,
        )
        .with_context(|| format!("population model {}", model.name()))?;
        if verbosity != Verbosity::Quiet {
            eprintln!(
                "  {:<18} {:<8} ln L_max {:>9.2}  BIC {:>8.2}  {:.1} s{}",
                fit.label(),
                format!("{treatment:?}").to_lowercase(),
                fit.log_likelihood_max,
                fit.bic,
                started.elapsed().as_secs_f64(),
                if fit.converged { "" } else { "  (unconverged)" }
            );
        }
        fits.push(fit);
    }
    Ok(fits)
}

fn format_interval(interval: Option<&Interval>) -> String {
    match interval {
        None => "—".into(),
        Some(i) => match i.upper95 {
            Some(u) => format!("< {u:.3e} (95%)"),
            None => format!("{:.3e} [{:.3e}, {:.3e}]", i.median, i.p16, i.p84),
        },
    }
}

fn text_report(report: &Report) -> String {
    let mut text = format!(
        "{} galaxies, {} outside constraints\n",
        report.galaxies.len(),
        report.constraints.len()
    );
    let mut section = |title: &str,
                       fits: &[PopulationFit],
                       preferred: Option<VelocityModel>,
                       without_scatter: &[PopulationFit]| {
        text += &format!("\n{title}\n");
        let best_bic = fits.iter().map(|f| f.bic).fold(f64::INFINITY, f64::min);
        let best_log_z = fits
            .iter()
            .filter_map(|f| f.log_evidence)
            .fold(f64::NEG_INFINITY, f64::max);
        let clearly = clearly_preferred(fits, |f| f.bic).is_some();
        for fit in fits {
            let evidence = match (fit.log_evidence, fit.log_evidence_err) {
                (Some(z), Some(e)) => format!(
                    "  ln Z {z:>8.2} ± {e:.2}  ln B {:>6.2} ({})",
                    z - best_log_z,
                    evidence_words(2.0 * (best_log_z - z))
                ),
                _ => String::new(),
            };
            let against_no_scatter = without_scatter
                .iter()
                .find(|f| f.model == fit.model)
                .map(|f| {
                    let delta = fit.bic - f.bic;
                    format!(
                        "  BIC − BIC(no scatter) {delta:>6.2} ({})",
                        if delta <= -2.0 {
                            "scatter needed"
                        } else if delta < 2.0 {
                            "a tie"
                        } else {
                            "no scatter needed"
                        }
                    )
                })
                .unwrap_or_default();
            text += &format!(
                "  {:<18} ln L_max {:>9.2}  AIC {:>8.2}  BIC {:>8.2}  ΔBIC {:>6.2}{against_no_scatter}{evidence}{}\n",
                fit.label(),
                fit.log_likelihood_max,
                fit.aic,
                fit.bic,
                fit.bic - best_bic,
                match (Some(fit.model) == preferred, clearly) {
                    (true, true) => "  preferred by BIC",
                    (true, false) => "  lowest BIC (a tie)",
                    _ => "",
                }
            );
            for p in &fit.parameters {
                text += &format!(
                    "      {:<14} {} {}\n",
                    p.name,
                    format_interval(p.interval.as_ref()),
                    p.unit
                );
            }
            for note in &fit.notes {
                text += &format!("      note: {note}\n");
            }
        }
    };
    section(
        "Population fit (each galaxy at its median velocity; median [16%, 84%]):",
        &report.models,
        report.preferred,
        &[],
    );
    if let Some(joint) = &report.joint {
        section(
            "Joint fit (shared σ(v)/m, each galaxy's halo and nuisances marginalised by reweighting):",
            &joint.models,
            joint.preferred,
            &[],
        );
    }
    if let Some(hierarchical) = &report.hierarchical {
        let (treatment, unscattered) = match &report.joint {
            Some(joint) => ("joint", joint.models.as_slice()),
            None => ("population", report.models.as_slice()),
        };
        section(
            &format!(
                "Hierarchical fit (the {treatment} fit with an intrinsic scatter tau of each galaxy's log sigma/m about the model, dex; ΔBIC ≤ −2 against no scatter: scatter needed):"
            ),
            &hierarchical.models,
            hierarchical.preferred,
            unscattered,
        );
    }
    if let Some(sentence) = bic_ranking(&report.models) {
        text += &format!(
            "\npopulation fit by ΔBIC (Kass & Raftery scale, common practice): {sentence}\n"
        );
    }
    text
}

/// 60 speeds (km/s) spanning the galaxies' 16–84% velocity ranges and the outside constraints,
/// with a margin.
fn plotted_speeds(galaxies: &[GalaxyEntry], constraints: &[OutsideConstraint]) -> Vec<f64> {
    let low = galaxies
        .iter()
        .filter_map(|g| g.v_rel_kms.map(|v| v.p16))
        .chain(constraints.iter().map(|c| c.v_rel_kms))
        .fold(f64::INFINITY, f64::min);
    let high = galaxies
        .iter()
        .filter_map(|g| g.v_rel_kms.map(|v| v.p84))
        .chain(constraints.iter().map(|c| c.v_rel_kms))
        .fold(f64::NEG_INFINITY, f64::max);
    if low.is_finite() && high.is_finite() && low > 0.0 {
        log_speeds(low / 1.5, (high * 1.5).max(low * 2.0), 60)
    } else {
        log_speeds(5.0, 5000.0, 60)
    }
}

fn figure(report: &Report) -> PopulationFigure {
    let points = report
        .galaxies
        .iter()
        .filter_map(|g| {
            Some(PopulationPoint::new(
                &g.galaxy,
                g.v_rel_kms.as_ref()?,
                g.sigma_m_cm2_g.as_ref()?,
            ))
        })
        .collect();
    let speeds = plotted_speeds(&report.galaxies, &report.constraints);
    let fits = report
        .joint
        .as_ref()
        .map_or(report.models.as_slice(), |j| j.models.as_slice());
    let mut curves: Vec<PopulationCurve> = fits
        .iter()
        .enumerate()
        .map(|(group, fit)| PopulationCurve {
            group,
            label: format!(
                "{} ({} fit, median)",
                fit.model.name(),
                match fit.treatment {
                    Treatment::Marginal => "population",
                    Treatment::Joint => "joint",
                }
            ),
            points: speeds
                .iter()
                .zip(fit.effective_band(&speeds, 200))
                .map(|(&v, band)| (v, band.median))
                .collect(),
            dashed: false,
        })
        .collect();
    for (k, particle) in report.particle_models.iter().enumerate() {
        let group = fits.len() + k;
        curves.push(PopulationCurve {
            group,
            label: format!("{}: <σv>/m / <v>", particle.spec),
            points: particle
                .curve
                .iter()
                .map(|p| (p.v_kms, p.effective_sigma_m_cm2_g))
                .collect(),
            dashed: false,
        });
        curves.push(PopulationCurve {
            label: format!("{}: σ(v)/m at speed v", particle.spec),
            points: particle
                .curve
                .iter()
                .map(|p| (p.v_kms, p.sigma_m_cm2_g))
                .collect(),
            dashed: true,
            group,
        });
    }
    PopulationFigure {
        title: "σ/m against collision velocity: population models".into(),
        points,
        curves,
    }
}

/// Runs `caldera population`.
pub(crate) fn run(args: &PopulationArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let models: Vec<VelocityModel> = args
        .models
        .iter()
        .map(|name| {
            VelocityModel::from_name(name.trim()).with_context(|| {
                format!(
                    "unknown population model '{name}' (known: {})",
                    VelocityModel::ALL.map(VelocityModel::name).join(", ")
                )
            })
        })
        .collect::<anyhow::Result<_>>()?;
    if !(args.yukawa_dm_mass.is_finite() && args.yukawa_dm_mass > 0.0) {
        bail!("--yukawa-dm-mass must be a positive number of GeV");
    }
    let particles: Vec<(String, CrossSection)> = args
        .particle
        .iter()
        .map(|spec| Ok((spec.clone(), parse_particle(spec)?)))
        .collect::<anyhow::Result<_>>()?;
    let run = RunFolder::new(&args.results);
    let session_path = run.session_path();
    let session: Session = load_session(&session_path).with_context(|| {
        format!(
            "{} is not the output folder of a catalogue run (no readable session.ron)",
            args.results.display()
        )
    })?;
    let settings = PopulationSettings {
        yukawa_dm_mass_gev: args.yukawa_dm_mass,
        seed: args.seed,
        run: caldera_infer::sampler::RunConfig {
            max_steps: args.max_steps,
            ..PopulationSettings::default().run
        },
        evidence: args
            .evidence
            .then(|| caldera_infer::tempering::LadderConfig {
                rungs: 12,
                steps: 2000,
                ..caldera_infer::tempering::LadderConfig::default()
            }),
        ..PopulationSettings::default()
    };
    let (galaxies, entries, skipped) =
        load_posteriors(&args.results, &session, settings.max_samples_per_galaxy)?;
    let constraints = match &args.constraints {
        Some(path) => read_constraints(path)?,
        None => Vec::new(),
    };
    if galaxies.is_empty() {
        bail!(
            "{}: no galaxy has a finished SIDM fit (run `caldera fit CATALOGUE --models sidm --out {}` first)",
            args.results.display(),
            args.results.display()
        );
    }
    if verbosity != Verbosity::Quiet {
        for line in &skipped {
            eprintln!("skipped {line}");
        }
        eprintln!(
            "fitting {} population model(s) to {} galaxies and {} outside constraints",
            models.len(),
            galaxies.len(),
            constraints.len()
        );
    }
    let marginal = fit_all(
        &models,
        Treatment::Marginal,
        &galaxies,
        &constraints,
        &settings,
        verbosity,
    )?;
    let joint = if args.no_joint {
        None
    } else {
        let fits = fit_all(
            &models,
            Treatment::Joint,
            &galaxies,
            &constraints,
            &settings,
            verbosity,
        )?;
        Some(Comparison {
            preferred: preferred_by_bic(&fits),
            preferred_by_aic: preferred_by_aic(&fits),
            models: fits,
        })
    };
    let hierarchical = if args.no_scatter {
        None
    } else {
        let treatment = if args.no_joint {
            Treatment::Marginal
        } else {
            Treatment::Joint
        };
        let fits = fit_all(
            &models,
            treatment,
            &galaxies,
            &constraints,
            &PopulationSettings {
                scatter: true,
                ..settings
            },
            verbosity,
        )?;
        Some(Comparison {
            preferred: preferred_by_bic(&fits),
            preferred_by_aic: preferred_by_aic(&fits),
            models: fits,
        })
    };
    let speeds = plotted_speeds(&entries, &constraints);
    let report = Report {
        results: args.results.clone(),
        galaxies: entries,
        skipped,
        constraints,
        preferred: preferred_by_bic(&marginal),
        preferred_by_aic: preferred_by_aic(&marginal),
        models: marginal,
        joint,
        hierarchical,
        particle_models: particles
            .into_iter()
            .map(|(spec, cross_section)| ParticleModel {
                curve: particle_curve(&cross_section, &speeds),
                spec,
                cross_section,
            })
            .collect(),
        settings,
    };

    let out = args.out.clone().unwrap_or_else(|| run.population_dir());
    std::fs::create_dir_all(&out).with_context(|| format!("cannot create {}", out.display()))?;
    let json = serde_json::to_string_pretty(&report)? + "\n";
    write_atomic(&out.join("population.json"), json.as_bytes())?;
    let figure = figure(&report);
    save_figure(&figure, &out.join("population_models.svg"))?;
    save_figure(&figure, &out.join("population_models.png"))?;
    if args.json {
        crate::output::print(&json)?;
    } else {
        crate::output::print(&text_report(&report))?;
    }
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "wrote {} (population.json, population_models.svg/png)",
            out.display()
        );
    }
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn particle_specs_parse_and_refuse_clearly() {
        let yukawa = parse_particle("yukawa:m_chi=10,m_phi=1,alpha=1e-5").expect("parses");
        assert_eq!(
            yukawa,
            CrossSection::yukawa(10.0, 1.0, 1e-5).expect("valid")
        );
        let error = parse_particle("yukawa:m_chi=10,alpha=1e-5").expect_err("missing");
        assert!(format!("{error:#}").contains("missing 'm_phi'"));
        let error = parse_particle("fall-off:sigma0_m=3,w=x").expect_err("not a number");
        assert!(format!("{error:#}").contains("'x' is not a number"));
        let error = parse_particle("photon:x=1").expect_err("unknown kind");
        assert!(format!("{error:#}").contains("unknown kind 'photon'"));
        let error = parse_particle("constant:sigma_m=-1").expect_err("negative");
        assert!(format!("{error:#}").contains("sigma/m"));
    }
}
