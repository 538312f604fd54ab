//! `caldera calibrate`: simulation-based calibration of the SIDM fit's intervals.

use std::process::ExitCode;

use caldera_infer::FitConfig;
use caldera_infer::calibration::{calibration_priors, coverage_run};
use caldera_infer::sampler::RunConfig;
use clap::Args;

use crate::Verbosity;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera calibrate --mocks 200 --seed 1            # the full coverage run (minutes on 2 cores)
  caldera calibrate --mocks 24 --max-steps 6000 --json
  caldera calibrate --mocks 200 --stellar-mass-prior  # with the stellar-to-halo mass prior";

/// Arguments of `caldera calibrate`.
#[derive(Debug, Args)]
pub struct CalibrateArgs {
    /// Number of mock galaxies drawn from the prior.
    #[arg(long, default_value_t = 200)]
    pub mocks: usize,
    /// Seed of the whole run.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Step cap of each fit.
    #[arg(long, default_value_t = 10_000)]
    pub max_steps: usize,
    /// Print the report as JSON.
    #[arg(long)]
    pub json: bool,
    /// Calibrate with the stellar-to-halo mass prior on (the mocks drawn from it too).
    #[arg(long)]
    pub stellar_mass_prior: bool,
}

/// Runs `caldera calibrate`.
pub(crate) fn run(args: &CalibrateArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let config = FitConfig {
        priors: caldera_infer::priors::Priors {
            stellar_mass_halo: args.stellar_mass_prior,
            ..calibration_priors()
        },
        run: RunConfig {
            max_steps: args.max_steps,
            ..RunConfig::default()
        },
        seed: args.seed,
        map_starts: 4,
        ..FitConfig::default()
    };
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "calibrating: {} mocks drawn from the SIDM prior, each fitted (this takes a while)",
            args.mocks
        );
    }
    let report = coverage_run(args.mocks, args.seed, &config)?;
    if args.json {
        crate::output::print(&(serde_json::to_string_pretty(&report)? + "\n"))?;
    } else {
        let mut text = format!(
            "{} mocks, {} fitted, {} unconverged (seed {})\n{:<24} {:>8} {:>8} {:>10}  rank histogram\n",
            report.n_mocks,
            report.n_fitted,
            report.n_unconverged,
            report.seed,
            "parameter",
            "68% cov",
            "95% cov",
            "rank chi2"
        );
        for p in &report.parameters {
            text += &format!(
                "{:<24} {:>8.3} {:>8.3} {:>10.2}  {:?}\n",
                p.name, p.coverage_68, p.coverage_95, p.rank_chi2, p.rank_histogram
            );
        }
        crate::output::print(&text)?;
    }
    Ok(ExitCode::SUCCESS)
}
