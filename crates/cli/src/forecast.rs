//! `caldera forecast`: what a catalogue of a given design can tell about a σ(v)/m model —
//! detection power against a constant σ/m by the number of galaxies, and the expected intervals
//! on the model's parameters, from invented galaxies fitted end to end.

use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, bail};
use caldera_data::write_atomic;
use caldera_infer::FitConfig;
use caldera_infer::forecast::{
    Design, DesignBin, Forecast, ForecastSettings, POSITIVE_DELTA_BIC, PowerPoint,
    STRONG_DELTA_BIC, end_to_end, forecast,
};
use caldera_infer::population::{PopulationSettings, VelocityModel};
use caldera_infer::sampler::RunConfig;
use caldera_physics::CrossSectionKind;
use caldera_physics::units::DEFAULT_HALO_AGE_GYR;
use caldera_report::figures::{PowerCurve, PowerFigure, save_figure};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use serde::{Deserialize, Serialize};

use crate::Verbosity;
use crate::population::parse_particle;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera forecast --truth fall-off:sigma0_m=20,w=150          # 14 galaxies, V200 30-200 km/s
  caldera forecast --truth fall-off:sigma0_m=20,w=150 --design 20-60:10 --velocity-error 0.1
  caldera forecast --truth constant:sigma_m=2 --alternative fall-off --end-to-end 10
  caldera forecast --truth fall-off:sigma0_m=20,w=150 --stellar-mass-prior

The design: galaxies per V200 range (km/s), each rotation curve measured at --points radii out
to --extent times R200, with fractional errors --velocity-error and a floor --error-floor (km/s).
Each galaxy is invented (SIDM halo on the concentration-mass relation, stars from the Moster et
al. 2013 relation, gas from a gas-richness trend) and fitted end to end; catalogues are drawn from
this pool at --scales times the design's size and compared by BIC (constant vs --alternative).";

/// Arguments of `caldera forecast`.
#[derive(Debug, Args)]
pub struct ForecastArgs {
    /// The true σ(v)/m the invented galaxies are made with, as for `caldera population
    /// --particle` (e.g. fall-off:sigma0_m=20,w=150).
    #[arg(long, value_name = "SPEC", required_unless_present = "replot")]
    pub truth: Option<String>,
    /// The velocity-dependent model compared against a constant σ/m (default: the truth's kind,
    /// or fall-off when the truth is constant).
    #[arg(long, value_name = "MODEL")]
    pub alternative: Option<String>,
    /// Galaxies per V200 range, LOW-HIGH:COUNT,... in km/s.
    #[arg(long, default_value = "30-60:5,60-120:5,120-200:4")]
    pub design: String,
    /// Outermost measured radius as a fraction of R200.
    #[arg(long, default_value_t = 0.1, value_name = "FRACTION")]
    pub extent: f64,
    /// Measured points per rotation curve.
    #[arg(long, default_value_t = 20)]
    pub points: usize,
    /// Fractional velocity error of every point.
    #[arg(long, default_value_t = 0.05, value_name = "FRACTION")]
    pub velocity_error: f64,
    /// Velocity error floor added in quadrature.
    #[arg(long, default_value_t = 1.0, value_name = "KM/S")]
    pub error_floor: f64,
    /// Halo age.
    #[arg(long, default_value_t = DEFAULT_HALO_AGE_GYR, value_name = "GYR")]
    pub age: f64,
    /// Catalogue sizes as multiples of the design, comma-separated.
    #[arg(long, value_delimiter = ',', default_value = "0.5,1,2,4")]
    pub scales: Vec<f64>,
    /// Invented catalogues per size.
    #[arg(long, default_value_t = 200)]
    pub replicas: usize,
    /// Pool galaxies fitted per design galaxy in each V200 range.
    #[arg(long, default_value_t = 2)]
    pub pool: usize,
    /// Catalogues of the design's size whose population posterior is sampled for the expected
    /// intervals.
    #[arg(long, default_value_t = 8)]
    pub interval_catalogues: usize,
    /// Also fit this many catalogues of the design's size from fresh galaxies end to end (no
    /// pool), the reference the pool approximation is checked against.
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub end_to_end: usize,
    /// Step cap of each galaxy's fit.
    #[arg(long, default_value_t = 20_000)]
    pub max_steps: usize,
    /// Fit each galaxy with the stellar-to-halo mass prior (as `caldera fit
    /// --stellar-mass-prior`; the invented galaxies' stars follow the same relation).
    #[arg(long)]
    pub stellar_mass_prior: bool,
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Folder for forecast.json and power.svg/png.
    #[arg(long, default_value = "forecast", value_name = "DIR")]
    pub out: PathBuf,
    /// Print the report as JSON.
    #[arg(long)]
    pub json: bool,
    /// Fit nothing: read --out's forecast.json, redraw power.svg/png and print the report again.
    #[arg(long)]
    pub replot: bool,
}

#[derive(Debug, Serialize, Deserialize)]
struct Report {
    #[serde(flatten)]
    forecast: Forecast,
    /// Catalogues of fresh galaxies fitted end to end, when asked for.
    end_to_end: Option<PowerPoint>,
    strong_delta_bic: f64,
    positive_delta_bic: f64,
}

fn progress_bar(verbosity: Verbosity, what: &str) -> ProgressBar {
    if verbosity != Verbosity::Quiet && std::io::stderr().is_terminal() {
        let bar = ProgressBar::new(0);
        bar.set_style(
            ProgressStyle::with_template(&format!(
                "{{bar:30}} {{pos}}/{{len}} {what}  {{elapsed_precise}} elapsed, ETA {{eta}}"
            ))
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar
    } else {
        ProgressBar::hidden()
    }
}

/// Reports fitted galaxies on a bar, or as plain lines every tenth of the way when stderr is
/// not a terminal.
fn galaxy_progress(
    bar: &ProgressBar,
    verbosity: Verbosity,
) -> impl Fn(usize, usize) -> bool + Sync + '_ {
    let plain = verbosity != Verbosity::Quiet && bar.is_hidden();
    move |done, total| {
        bar.set_length(total as u64);
        bar.set_position(done as u64);
        if plain && (done == total || done % (total / 10).max(1) == 0) {
            eprintln!("  {done}/{total} invented galaxies fitted");
        }
        true
    }
}

/// A cross-section written as a particle spec (kind:key=value,...).
fn spec_text(cross_section: &caldera_physics::CrossSection) -> String {
    let kind = cross_section.kind();
    let pairs: Vec<String> = kind
        .parameters()
        .iter()
        .zip(cross_section.values())
        .map(|(p, v)| format!("{}={v}", p.key))
        .collect();
    format!("{}:{}", kind.name(), pairs.join(","))
}

fn text_report(report: &Report) -> String {
    let f = &report.forecast;
    let mut text = format!(
        "truth: {}\ncompared: constant σ/m against {}\nper-galaxy fits: {}\ndesign: {} galaxies ({}), {} points to {} R200, errors {:.0}% ⊕ {} km/s\npool: {} invented galaxies fitted end to end ({} unconverged) in {:.0} s; catalogues compared in {:.1} s\n\n",
        spec_text(&f.truth),
        f.alternative.name(),
        if f.stellar_mass_prior {
            "SIDM, with the stellar-to-halo mass prior (Moster et al. 2013)"
        } else {
            "SIDM, without a stellar-to-halo mass prior"
        },
        f.design.n_galaxies(),
        f.design
            .bins
            .iter()
            .map(|b| format!(
                "{} at V200 {}–{} km/s",
                b.count, b.v200_min_kms, b.v200_max_kms
            ))
            .collect::<Vec<_>>()
            .join(", "),
        f.design.points,
        f.design.extent_r200,
        100.0 * f.design.error_fraction,
        f.design.error_floor_kms,
        f.pool_size,
        f.pool_unconverged,
        f.pool_seconds,
        f.catalogue_seconds,
    );
    text += &format!(
        "{:>9} {:>9}  {:>22}  {:>14} {:>14} {:>12}\n",
        "galaxies",
        "catalogues",
        "ΔBIC median [16, 84%]",
        format!("P(ΔBIC ≥ {STRONG_DELTA_BIC})"),
        format!("P(ΔBIC ≥ {POSITIVE_DELTA_BIC})"),
        "constant won"
    );
    let row = |p: &PowerPoint, note: &str| {
        format!(
            "{:>9} {:>9}  {:>8.1} [{:>5.1}, {:>5.1}]  {:>14.2} {:>14.2} {:>12.2}{note}\n",
            p.n_galaxies,
            p.replicas,
            p.median_delta_bic,
            p.p16_delta_bic,
            p.p84_delta_bic,
            p.power_strong,
            p.power_positive,
            p.constant_preferred,
        )
    };
    for p in &f.power {
        text += &row(
            p,
            if p.repeats_pool_galaxies {
                "  (repeats pool galaxies)"
            } else {
                ""
            },
        );
    }
    if let Some(reference) = &report.end_to_end {
        text += &row(reference, "  end to end (fresh galaxies)");
    }
    text += &format!(
        "\nΔBIC = BIC(constant) − BIC({}); ≥ {STRONG_DELTA_BIC} strong, ≥ {POSITIVE_DELTA_BIC} positive (Kass & Raftery scale, common practice).\n",
        f.alternative.name()
    );
    if !f.intervals.is_empty() {
        text += &format!(
            "\nexpected intervals at the design's size ({} catalogues sampled):\n",
            f.intervals.first().map_or(0, |i| i.catalogues)
        );
        for i in &f.intervals {
            text += &format!(
                "  {:<12} ±{:.2} dex (16–84% half-width), median {:.3e} {}{}\n",
                i.name,
                i.median_half_width_dex,
                i.median_of_medians,
                i.unit,
                match (i.truth, i.coverage_95) {
                    (Some(t), Some(c)) => format!(
                        "; truth {t:.3e}, inside the 95% interval in {:.0}% of catalogues",
                        100.0 * c
                    ),
                    _ => String::new(),
                }
            );
        }
    }
    text
}

/// The Wilson score interval (68%, z = 1) of a fraction `share` of `n` trials: unlike the
/// normal approximation, not empty at 0 or 1 (Wilson 1927; common practice for small n).
fn wilson_interval(share: f64, n: usize) -> (f64, f64) {
    let n = n.max(1) as f64;
    let centre = (share + 0.5 / n) / (1.0 + 1.0 / n);
    let half = (share * (1.0 - share) / n + 0.25 / (n * n)).sqrt() / (1.0 + 1.0 / n);
    (centre - half, centre + half)
}

fn figure(report: &Report) -> PowerFigure {
    let f = &report.forecast;
    let curve = |label: String, value: fn(&PowerPoint) -> f64, dashed| PowerCurve {
        label,
        points: f
            .power
            .iter()
            .map(|p| (p.n_galaxies as f64, value(p)))
            .collect(),
        dashed,
    };
    PowerFigure {
        title: format!(
            "Detecting {} against a constant σ/m ({} galaxies{})",
            f.alternative.name(),
            f.design.n_galaxies(),
            if f.stellar_mass_prior {
                ", stellar-to-halo mass prior"
            } else {
                ""
            }
        ),
        curves: vec![
            curve(
                format!("ΔBIC ≥ {STRONG_DELTA_BIC} (strong)"),
                |p| p.power_strong,
                false,
            ),
            curve(
                format!("ΔBIC ≥ {POSITIVE_DELTA_BIC} (positive)"),
                |p| p.power_positive,
                true,
            ),
        ],
        references: report
            .end_to_end
            .iter()
            .map(|p| {
                let (low, high) = wilson_interval(p.power_strong, p.replicas);
                (p.n_galaxies as f64, p.power_strong, low, high)
            })
            .collect(),
        reference_label: "ΔBIC ≥ 6, fresh catalogues end to end (68%)".into(),
    }
}

/// Writes the report's JSON and figures to `out` and prints it.
fn finish(report: &Report, out: &std::path::Path, json_output: bool) -> anyhow::Result<()> {
    std::fs::create_dir_all(out).with_context(|| format!("cannot create {}", out.display()))?;
    let json = serde_json::to_string_pretty(report)? + "\n";
    write_atomic(&out.join("forecast.json"), json.as_bytes())?;
    let figure = figure(report);
    save_figure(&figure, &out.join("power.svg"))?;
    save_figure(&figure, &out.join("power.png"))?;
    if json_output {
        crate::output::print(&json)
    } else {
        crate::output::print(&text_report(report))
    }
}

/// Runs `caldera forecast`.
pub(crate) fn run(args: &ForecastArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    if args.replot {
        let path = args.out.join("forecast.json");
        let text = std::fs::read_to_string(&path)
            .with_context(|| format!("cannot read {}", path.display()))?;
        let report: Report = serde_json::from_str(&text)
            .with_context(|| format!("{} is not a forecast report", path.display()))?;
        finish(&report, &args.out, args.json)?;
        return Ok(ExitCode::SUCCESS);
    }
    let truth =
        parse_particle(args.truth.as_deref().context("--truth is required")?).context("--truth")?;
    let alternative = match &args.alternative {
        Some(name) => VelocityModel::from_name(name).with_context(|| {
            format!(
                "unknown --alternative '{name}' (known: {})",
                VelocityModel::ALL.map(VelocityModel::name).join(", ")
            )
        })?,
        None if truth.kind() == CrossSectionKind::Constant => VelocityModel::FallOff,
        None => truth.kind(),
    };
    if alternative == VelocityModel::Constant {
        bail!(
            "--alternative must be velocity-dependent (the forecast compares it with a constant σ/m)"
        );
    }
    let design = Design {
        bins: DesignBin::parse_list(&args.design).context("--design")?,
        extent_r200: args.extent,
        points: args.points,
        error_fraction: args.velocity_error,
        error_floor_kms: args.error_floor,
        age_gyr: args.age,
    };
    let yukawa_dm_mass_gev = match truth {
        caldera_physics::CrossSection::Yukawa { dm_mass_gev, .. } => dm_mass_gev,
        _ => caldera_physics::cross_section::DEFAULT_YUKAWA_DM_MASS_GEV,
    };
    let settings = ForecastSettings {
        truth,
        alternative,
        scales: args.scales.clone(),
        replicas: args.replicas,
        pool_factor: args.pool,
        interval_replicas: args.interval_catalogues,
        seed: args.seed,
        fit: FitConfig {
            run: RunConfig {
                max_steps: args.max_steps,
                ..RunConfig::default()
            },
            priors: caldera_infer::priors::Priors {
                stellar_mass_halo: args.stellar_mass_prior,
                ..caldera_infer::priors::Priors::default()
            },
            ..FitConfig::default()
        },
        population: PopulationSettings {
            yukawa_dm_mass_gev,
            seed: args.seed,
            ..PopulationSettings::default()
        },
    };
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "forecast: fitting {} invented galaxies (the pool){}",
            design.n_galaxies() * args.pool.max(1),
            if args.end_to_end > 0 {
                format!(
                    ", then {} more for {} end-to-end catalogues",
                    design.n_galaxies() * args.end_to_end,
                    args.end_to_end
                )
            } else {
                String::new()
            }
        );
    }
    let bar = progress_bar(verbosity, "galaxies");
    let result =
        forecast(&design, &settings, &galaxy_progress(&bar, verbosity)).context("forecast")?;
    bar.finish_and_clear();
    let reference = if args.end_to_end > 0 {
        let bar = progress_bar(verbosity, "galaxies (end to end)");
        let point = end_to_end(
            &design,
            &settings,
            args.end_to_end,
            &galaxy_progress(&bar, verbosity),
        )
        .context("end-to-end catalogues")?;
        bar.finish_and_clear();
        Some(point)
    } else {
        None
    };
    let report = Report {
        forecast: result,
        end_to_end: reference,
        strong_delta_bic: STRONG_DELTA_BIC,
        positive_delta_bic: POSITIVE_DELTA_BIC,
    };
    finish(&report, &args.out, args.json)?;
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "wrote {} (forecast.json, power.svg/png)",
            args.out.display()
        );
    }
    Ok(ExitCode::SUCCESS)
}

#[cfg(test)]
mod tests {
    use super::wilson_interval;

    #[test]
    fn wilson_interval_matches_hand_values() {
        // 6 of 6: centre (1 + 1/12)/(1 + 1/6) = 13/14, half-width (1/12)/(7/6) = 1/14, by hand
        // from Wilson's (1927) formula at z = 1.
        let (low, high) = wilson_interval(1.0, 6);
        assert!((low - 12.0 / 14.0).abs() < 1e-12 && (high - 1.0).abs() < 1e-12);
        // Large n: the normal approximation p ± √(p(1−p)/n).
        let (low, high) = wilson_interval(0.5, 10_000);
        assert!((low - 0.495).abs() < 1e-4 && (high - 0.505).abs() < 1e-4);
    }
}
