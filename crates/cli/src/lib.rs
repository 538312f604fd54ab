//! The `caldera` command-line tool: argument parsing and glue over the library crates.
//!
//! Exit codes: 0 success, 1 failure (the reason is printed once on standard error), 2 usage
//! error (printed by the argument parser).

mod batch;
mod calibrate;
mod check;
mod curve;
mod fit;
mod forecast;
mod mock;
mod options;
mod output;
mod population;

use std::process::ExitCode;

use clap::{Parser, Subcommand};

pub use batch::{BatchArgs, MergeArgs};
pub use calibrate::CalibrateArgs;
pub use check::CheckArgs;
pub use curve::CurveArgs;
pub use fit::FitArgs;
pub use forecast::ForecastArgs;
pub use mock::MockArgs;
pub use population::PopulationArgs;

/// Caldera: self-interacting dark matter constraints from galaxy rotation curves.
#[derive(Debug, Parser)]
#[command(name = "caldera", version, about, long_about = None)]
pub struct Cli {
    /// Print only errors.
    #[arg(long, short, global = true, conflicts_with = "verbose")]
    pub quiet: bool,
    /// Print more detail (every table warning, solver choices).
    #[arg(long, short, global = true)]
    pub verbose: bool,
    #[command(subcommand)]
    pub command: Command,
}

/// What to do.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Evaluate a halo model's rotation curve at given radii.
    #[command(after_help = curve::EXAMPLES)]
    Curve(CurveArgs),
    /// Validate a galaxy table or a catalogue folder and summarise it.
    #[command(after_help = check::EXAMPLES)]
    Check(CheckArgs),
    /// Fit a halo model to a galaxy's rotation curve (posterior of σ/m and the halo).
    #[command(after_help = fit::EXAMPLES)]
    Fit(Box<FitArgs>),
    /// Join the output folders of sharded catalogue runs into one.
    #[command(after_help = batch::MERGE_EXAMPLES)]
    Merge(MergeArgs),
    /// Check that the SIDM fit's intervals are calibrated, on mocks drawn from its prior.
    #[command(after_help = calibrate::EXAMPLES)]
    Calibrate(CalibrateArgs),
    /// Fit velocity-dependent σ(v)/m models to a catalogue run's posteriors and compare them.
    #[command(after_help = population::EXAMPLES)]
    Population(Box<PopulationArgs>),
    /// Make an invented galaxy: its table and a truth file with every true parameter.
    #[command(after_help = mock::EXAMPLES)]
    Mock(Box<MockArgs>),
    /// Forecast what a catalogue design can detect of a σ(v)/m model (power analysis).
    #[command(after_help = forecast::EXAMPLES)]
    Forecast(Box<ForecastArgs>),
}

/// How much to print besides results.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verbosity {
    Quiet,
    Normal,
    Verbose,
}

impl Cli {
    /// The verbosity the flags ask for.
    #[must_use]
    pub fn verbosity(&self) -> Verbosity {
        if self.quiet {
            Verbosity::Quiet
        } else if self.verbose {
            Verbosity::Verbose
        } else {
            Verbosity::Normal
        }
    }
}

/// Runs a parsed command line.
pub fn run(cli: &Cli) -> anyhow::Result<ExitCode> {
    match &cli.command {
        Command::Curve(args) => curve::run(args, cli.verbosity()),
        Command::Check(args) => check::run(args, cli.verbosity()),
        Command::Mock(args) => mock::run(args, cli.verbosity()),
        Command::Fit(args) => fit::run(args, cli.verbosity()),
        Command::Calibrate(args) => calibrate::run(args, cli.verbosity()),
        Command::Merge(args) => batch::merge(args, cli.verbosity()),
        Command::Population(args) => population::run(args, cli.verbosity()),
        Command::Forecast(args) => forecast::run(args, cli.verbosity()),
    }
}
