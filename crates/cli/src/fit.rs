//! `caldera fit`: Bayesian fits of halo models to galaxy rotation curves.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, bail};
use caldera_data::session::HaloModel;
use caldera_data::{GalaxyTable, read_table, write_atomic};
use caldera_infer::priors::{
    ConcentrationRelation, CrossSectionPrior, Priors, SidmBranches, SidmCoordinates,
};
use caldera_infer::sampler::{Control, Progress, RunConfig};
use caldera_infer::summary::Interval;
use caldera_infer::tempering::LadderConfig;
use caldera_infer::{FitConfig, FitSummary, Tempering, fit_galaxy};
use caldera_physics::Cosmology;
use caldera_physics::cosmology::DUTTON_MACCIO_SCATTER_DEX;
use clap::{Args, ValueEnum};

use crate::Verbosity;
use crate::batch::BatchArgs;
use crate::options::TableOptions;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera fit demo_galaxies/kiln_d03.ecsv --model sidm
  caldera fit galaxy.csv --model nfw --json --seed 7
  caldera fit galaxy.csv --model sidm --sigma-prior linear --sigma-max 20 --chain chain.csv
  caldera fit demo_galaxies --models sidm,nfw --out results/
  caldera fit demo_galaxies --models sidm,nfw,burkert --out shards/3 --shard 3/8";

/// How σ/m is sampled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SigmaScale {
    /// Uniform in log10(σ/m).
    Log,
    /// Uniform in σ/m.
    Linear,
}

/// Which SIDM cores the prior admits (see `caldera_infer::priors::SidmBranches`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BranchChoice {
    /// The lowest-density core of each outer halo.
    Lowest,
    /// Every matching core.
    All,
}

/// When the posterior is sampled by parallel tempering (see `caldera_infer::fit::Tempering`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TemperingChoice {
    /// Where the posterior has separated branches: an SIDM fit with --sidm-branches all whose
    /// best-fitting outer halo has more than one matching core within the bounds.
    Auto,
    /// Never.
    Off,
    /// Always.
    On,
}

/// The coordinates an SIDM fit samples in (see `caldera_infer::priors::SidmCoordinates`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CoordinateChoice {
    /// The core's (ρ0, σ0).
    Core,
    /// The outer halo's (V200, c200).
    Halo,
}

/// Arguments of `caldera fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// A galaxy table, or a catalogue folder (then --out is needed).
    pub path: PathBuf,
    /// Halo models, comma-separated: sidm, nfw, burkert, pseudo-iso, einasto.
    #[arg(
        long,
        visible_alias = "model",
        value_delimiter = ',',
        default_value = "sidm",
        value_name = "MODEL,..."
    )]
    pub models: Vec<String>,
    /// Print the summary as one JSON object (one table, one model).
    #[arg(long)]
    pub json: bool,
    /// Random seed (the same seed gives the same chain).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Write the kept posterior samples to this CSV file.
    #[arg(long, value_name = "FILE")]
    pub chain: Option<PathBuf>,
    #[command(flatten)]
    pub settings: FitSettings,
    #[command(flatten)]
    pub table: TableOptions,
    #[command(flatten)]
    pub batch: BatchArgs,
}

/// Priors and sampler settings shared by single and catalogue fits.
#[derive(Debug, Args)]
pub struct FitSettings {
    /// Halo age for the SIDM rate condition, Gyr (default: the table's, else 10).
    #[arg(long, value_name = "GYR")]
    pub age: Option<f64>,
    /// Hubble constant, km/s/Mpc.
    #[arg(long, default_value_t = 70.0, value_name = "KM/S/MPC")]
    pub h0: f64,
    /// Sample σ/m uniformly in its logarithm or linearly.
    #[arg(long, value_enum, default_value_t = SigmaScale::Log)]
    pub sigma_prior: SigmaScale,
    /// Lower bound of the σ/m prior, cm²/g.
    #[arg(long, default_value_t = 0.01, value_name = "CM2/G")]
    pub sigma_min: f64,
    /// Upper bound of the σ/m prior, cm²/g.
    #[arg(long, default_value_t = 100.0, value_name = "CM2/G")]
    pub sigma_max: f64,
    /// Do not apply the concentration–mass prior (log c200 uniform within its bounds instead).
    #[arg(long)]
    pub no_concentration_prior: bool,
    /// Mean concentration–mass relation: log10 c200 = A + B log10(M200 / 10¹² h⁻¹ Msun); A
    /// (default Dutton & Macciò 2014).
    #[arg(long, default_value_t = ConcentrationRelation::default().intercept, value_name = "A", allow_hyphen_values = true)]
    pub concentration_intercept: f64,
    /// The relation's slope B (default Dutton & Macciò 2014).
    #[arg(long, default_value_t = ConcentrationRelation::default().slope, value_name = "B", allow_hyphen_values = true)]
    pub concentration_slope: f64,
    /// Scatter of log10 c200 about the relation, dex.
    #[arg(long, default_value_t = DUTTON_MACCIO_SCATTER_DEX, value_name = "DEX")]
    pub concentration_scatter: f64,
    /// Which SIDM cores the prior admits when several match one outer halo: the lowest-density
    /// one (the core-expansion solution) or every one (each with its halo's full prior weight).
    #[arg(long, value_enum, default_value_t = BranchChoice::Lowest)]
    pub sidm_branches: BranchChoice,
    /// The coordinates an SIDM fit samples in (same prior and posterior): the core (ρ0, σ0),
    /// cheap per step; or the outer halo (V200, c200), which mixes far better on
    /// baryon-dominated galaxies but costs 20–50 times more per step (with --sidm-branches
    /// lowest only).
    #[arg(long, value_enum, default_value_t = CoordinateChoice::Core)]
    pub sidm_coordinates: CoordinateChoice,
    /// Apply the stellar-to-halo mass prior (Moster, Naab & White 2013, 0.15 dex scatter) to the
    /// stellar mass at the sampled Υ's: Υ times the table's luminosity_lsun metadata when
    /// given, else the disk and bulge curves' V²r/G at the last radius (a spherical estimate
    /// that misses stars beyond it). Not for halos without an M200 (pseudo-isothermal).
    #[arg(long)]
    pub stellar_mass_prior: bool,
    /// Keep the distance fixed at the table's value.
    #[arg(long)]
    pub fixed_distance: bool,
    /// Keep the inclination fixed at the table's value.
    #[arg(long)]
    pub fixed_inclination: bool,
    /// Error floor added in quadrature to every velocity error, km/s.
    #[arg(long, default_value_t = 0.0, value_name = "KM/S")]
    pub error_floor: f64,
    /// Ensemble walkers.
    #[arg(long, default_value_t = 32)]
    pub walkers: usize,
    /// Most sampler steps; a chain stopped here is marked unconverged.
    #[arg(long, default_value_t = 20_000)]
    pub max_steps: usize,
    /// Run until the chain is longer than this many autocorrelation times.
    #[arg(long, default_value_t = 50.0)]
    pub tau_factor: f64,
    /// Hold the Einasto shape α at this value (default: sample it, log-uniform on [0.05, 1]).
    #[arg(long, value_name = "ALPHA")]
    pub einasto_alpha: Option<f64>,
    /// Also compute the Bayesian evidence ln Z (parallel tempering after the posterior run;
    /// about rungs × evidence steps more likelihood evaluations than a usual fit's few thousand
    /// steps: tens of seconds per galaxy and model).
    #[arg(long)]
    pub evidence: bool,
    /// Rungs of the tempering ladder for --evidence and --tempering (the prior's rung included).
    #[arg(long, default_value_t = LadderConfig::default().rungs, value_name = "N")]
    pub evidence_rungs: usize,
    /// Steps of the tempered run for --evidence and --tempering (the first half adapts the
    /// ladder).
    #[arg(long, default_value_t = LadderConfig::default().steps, value_name = "N")]
    pub evidence_steps: usize,
    /// Sample the posterior on a parallel-tempering ladder (its cold rung is the sample; ln Z
    /// comes with it): auto turns it on where the SIDM posterior has separated branches within
    /// the bounds (--sidm-branches all and several cores matching the best-fitting outer halo);
    /// it costs the ladder's rungs × steps evaluations, tens of seconds per galaxy.
    #[arg(long, value_enum, default_value_t = TemperingChoice::Auto)]
    pub tempering: TemperingChoice,
    /// Keep an SIDM fit in core coordinates even when its chain ends unconverged (by default it
    /// is then sampled again in outer-halo coordinates: the same posterior, 15–20 times the
    /// cost, and far better mixing where the core sits deep in the NFW cusp).
    #[arg(long)]
    pub no_halo_fallback: bool,
    /// Sample the prior alone, without the data: the printed intervals then show what the priors
    /// imply (σ/m, V200, c200, M200, …), to check them before trusting a fit.
    #[arg(long)]
    pub prior_only: bool,
    /// Sample the SIDM coordinates as they are, without first straightening the posterior along
    /// σ/m (mixes slower on spirals; for comparison and diagnosis).
    #[arg(long)]
    pub no_straighten: bool,
}

impl FitSettings {
    /// The fit configuration these flags describe.
    pub fn config(&self, seed: u64) -> anyhow::Result<FitConfig> {
        let cosmology = Cosmology::with_hubble(self.h0).context("invalid --h0")?;
        if let Some(age) = self.age
            && !(age.is_finite() && age > 0.0)
        {
            bail!("--age must be a positive number of Gyr, got {age}");
        }
        if !(self.concentration_scatter.is_finite() && self.concentration_scatter > 0.0) {
            bail!(
                "--concentration-scatter must be a positive number of dex, got {}",
                self.concentration_scatter
            );
        }
        if !(self.concentration_intercept.is_finite() && self.concentration_slope.is_finite()) {
            bail!("--concentration-intercept and --concentration-slope must be finite numbers");
        }
        if self.sidm_coordinates == CoordinateChoice::Halo
            && self.sidm_branches == BranchChoice::All
        {
            bail!(
                "--sidm-coordinates halo samples one core per outer halo, the lowest-density one: it cannot be combined with --sidm-branches all"
            );
        }
        let ladder = LadderConfig {
            rungs: self.evidence_rungs,
            steps: self.evidence_steps,
            ..LadderConfig::default()
        };
        let priors = Priors {
            cross_section: CrossSectionPrior {
                logarithmic: self.sigma_prior == SigmaScale::Log,
                min_cm2_g: self.sigma_min,
                max_cm2_g: self.sigma_max,
            },
            concentration_mass: !self.no_concentration_prior,
            concentration_relation: ConcentrationRelation {
                intercept: self.concentration_intercept,
                slope: self.concentration_slope,
            },
            concentration_scatter_dex: self.concentration_scatter,
            sidm_coordinates: match self.sidm_coordinates {
                CoordinateChoice::Core => SidmCoordinates::Core,
                CoordinateChoice::Halo => SidmCoordinates::Halo,
            },
            sidm_branches: match self.sidm_branches {
                BranchChoice::Lowest => SidmBranches::LowestDensity,
                BranchChoice::All => SidmBranches::All,
            },
            vary_distance: !self.fixed_distance,
            vary_inclination: !self.fixed_inclination,
            error_floor_kms: self.error_floor,
            einasto_alpha_fixed: self.einasto_alpha,
            stellar_mass_halo: self.stellar_mass_prior,
            ..Priors::default()
        };
        Ok(FitConfig {
            priors,
            run: RunConfig {
                tau_factor: self.tau_factor,
                max_steps: self.max_steps,
                ..RunConfig::default()
            },
            n_walkers: self.walkers,
            seed,
            cosmology,
            age_gyr: self.age,
            prior_only: self.prior_only,
            straighten: !self.no_straighten,
            evidence: self.evidence.then_some(ladder),
            tempering_ladder: Some(ladder),
            halo_coordinates_fallback: !self.no_halo_fallback,
            tempering: match self.tempering {
                TemperingChoice::Auto => Tempering::Auto,
                TemperingChoice::Off => Tempering::Off,
                TemperingChoice::On => Tempering::On,
            },
            ..FitConfig::default()
        })
    }
}

/// Parses a model name, listing the known ones on failure.
pub(crate) fn parse_model(name: &str) -> anyhow::Result<HaloModel> {
    HaloModel::from_name(name).with_context(|| {
        format!(
            "unknown model '{name}'; choose from {}",
            HaloModel::ALL.map(HaloModel::name).join(", ")
        )
    })
}

/// Runs `caldera fit`: one table and model printed, or a catalogue run into --out.
pub(crate) fn run(args: &FitArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let mut models = Vec::new();
    for name in &args.models {
        let model = parse_model(name)?;
        if !models.contains(&model) {
            models.push(model);
        }
    }
    let config = args.settings.config(args.seed)?;
    let read = args.table.read_options()?;
    if let Some(out) = &args.batch.out {
        return crate::batch::run(
            &args.path,
            &models,
            &config,
            &read,
            &args.batch,
            out,
            verbosity,
        );
    }
    if args.path.is_dir() {
        bail!(
            "{} is a folder: give --out DIR for a catalogue run",
            args.path.display()
        );
    }
    let [model] = models[..] else {
        bail!("several models need a catalogue run: give --out DIR");
    };
    let table = read_table(&args.path, &read)?;
    if verbosity != Verbosity::Quiet {
        for w in &table.warnings {
            eprintln!("warning: {w}");
        }
    }
    let result = fit_one(&table, model, &config, verbosity)
        .with_context(|| format!("fit of {} ({}) failed", table.meta.name, model.name()))?;
    if let Some(path) = &args.chain {
        let text = result.chain_table().to_csv(path)?;
        write_atomic(path, text.as_bytes())?;
    }
    if args.json {
        crate::output::print(&(serde_json::to_string_pretty(&result.summary)? + "\n"))?;
    } else {
        crate::output::print(&text_summary(&result.summary))?;
    }
    Ok(ExitCode::SUCCESS)
}

/// Fits one galaxy, printing sampler progress on standard error when verbose.
pub(crate) fn fit_one(
    table: &GalaxyTable,
    model: HaloModel,
    config: &FitConfig,
    verbosity: Verbosity,
) -> anyhow::Result<caldera_infer::FitResult> {
    let mut observer = |p: &Progress| {
        if verbosity == Verbosity::Verbose && p.step.is_multiple_of(500) {
            eprintln!(
                "  step {:>6}/{}  acceptance {:.2}  tau_max {}  target {}",
                p.step,
                p.max_steps,
                p.acceptance,
                p.tau_max.map_or("-".into(), |t| format!("{t:.0}")),
                p.target_steps.map_or("-".into(), |t| t.to_string())
            );
        }
        Control::Continue
    };
    Ok(fit_galaxy(table, model, config, &mut observer)?)
}

fn interval_line(label: &str, unit: &str, interval: Option<&Interval>) -> String {
    match interval {
        None => String::new(),
        Some(i) => match i.upper95 {
            Some(limit) => format!(
                "  {label:<18} < {limit:.3} {unit} (95% upper limit; posterior piles at the prior's lower bound)\n"
            ),
            None => format!(
                "  {label:<18} {:.3} (+{:.3} / -{:.3}) {unit}   [95%: {:.3} – {:.3}]\n",
                i.median,
                i.p84 - i.median,
                i.median - i.p16,
                i.p2_5,
                i.p97_5
            ),
        },
    }
}

/// The human-readable fit summary.
pub(crate) fn text_summary(s: &FitSummary) -> String {
    let mut out = format!(
        "{} — {} halo, {} points, {} free parameters, halo age {} Gyr\n",
        s.galaxy, s.model, s.n_points, s.n_parameters, s.age_gyr
    );
    if s.prior_only {
        out.push_str(
            "  PRIOR ONLY: the data were left out; these intervals describe the prior (chi2 is of the best prior sample)\n",
        );
    }
    out.push_str(&interval_line("sigma/m", "cm2/g", s.sigma_m_cm2_g.as_ref()));
    out.push_str(&interval_line("<v_rel>", "km/s", s.v_rel_kms.as_ref()));
    out.push_str(&interval_line("r1", "kpc", s.r1_kpc.as_ref()));
    out.push_str(&interval_line(
        "core radius",
        "kpc",
        s.core_radius_kpc.as_ref(),
    ));
    out.push_str(&interval_line("V200", "km/s", s.v200_kms.as_ref()));
    out.push_str(&interval_line("c200", "", s.c200.as_ref()));
    out.push_str(&interval_line(
        "Upsilon disk",
        "Msun/Lsun",
        s.upsilon_disk.as_ref(),
    ));
    out.push_str(&interval_line(
        "Upsilon bulge",
        "Msun/Lsun",
        s.upsilon_bulge.as_ref(),
    ));
    out.push_str(&interval_line("distance", "Mpc", s.distance_mpc.as_ref()));
    out.push_str(&interval_line(
        "inclination",
        "deg",
        s.inclination_deg.as_ref(),
    ));
    out.push_str(&format!(
        "  chi2 = {:.2} for {} dof (chi2/nu = {:.2}), AIC = {:.2}, BIC = {:.2}\n",
        s.chi2, s.dof, s.chi2_nu, s.aic, s.bic
    ));
    if let (Some(z), Some(e)) = (s.log_evidence, s.log_evidence_err) {
        out.push_str(&format!(
            "  ln Z = {z:.2} +- {e:.2} (Bayesian evidence under these priors, by thermodynamic integration)\n"
        ));
    }
    let status = if s.converged {
        "converged".to_string()
    } else if s.cancelled {
        "NOT CONVERGED (stopped) — do not trust these intervals".to_string()
    } else {
        "NOT CONVERGED (step cap reached) — do not trust these intervals".to_string()
    };
    out.push_str(&format!(
        "  {status}: tau_max {:.0} steps, {} steps x {} walkers, acceptance {:.2}, split R-hat {:.3}, {} evaluations\n",
        s.tau_max, s.n_steps, s.n_walkers, s.acceptance, s.rhat_max, s.n_evaluations
    ));
    if s.resampled_in_halo_coordinates {
        out.push_str(
            "  sampled again in outer-halo coordinates (the core coordinates ended unconverged): tau and steps are that run's\n",
        );
    }
    if s.tempered {
        out.push_str(
            "  sampled on a parallel-tempering ladder (separated SIDM branches within the bounds): tau and steps are its cold rung's\n",
        );
    }
    out
}
