//! `caldera check`: validate a table or a catalogue folder and summarise it.

use std::path::PathBuf;
use std::process::ExitCode;

use caldera_data::{ReadOptions, load_catalogue};
use clap::Args;
use serde_json::json;

use crate::Verbosity;
use crate::options::TableOptions;

pub(crate) const EXAMPLES: &str = "\
Examples:
  caldera check demo_galaxies
  caldera check galaxy.csv --json
  caldera check galaxy.dat --format whitespace --radius-column R_out";

/// Arguments of `caldera check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// A galaxy table, or a folder of tables (with an optional index.csv).
    pub path: PathBuf,
    #[command(flatten)]
    pub table: TableOptions,
    /// Print one JSON object: per galaxy its name, file, n_points, r_min_kpc, r_max_kpc,
    /// v_obs_max_kms, warnings and errors, then totals.
    #[arg(long)]
    pub json: bool,
}

/// Runs `caldera check`: exit status 0 when every table loads, 1 otherwise.
pub(crate) fn run(args: &CheckArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let options: ReadOptions = args.table.read_options()?;
    let catalogue = load_catalogue(&args.path, &options)?;
    let mut galaxies = Vec::new();
    let (mut points, mut warnings, mut errors) = (0usize, catalogue.warnings.len(), 0usize);
    for entry in &catalogue.entries {
        let file = entry.path.display().to_string();
        match &entry.table {
            Ok(table) => {
                points += table.len();
                warnings += table.warnings.len();
                let messages: Vec<String> =
                    table.warnings.iter().map(ToString::to_string).collect();
                galaxies.push(json!({
                    "name": table.meta.name,
                    "file": file,
                    "n_points": table.len(),
                    "r_min_kpc": table.radius_kpc.first(),
                    "r_max_kpc": table.radius_kpc.last(),
                    "v_obs_max_kms": table.v_obs_max_kms(),
                    "distance_mpc": table.meta.distance_mpc,
                    "inclination_deg": table.meta.inclination_deg,
                    "has_bulge": table.v_bulge_kms.is_some(),
                    "warnings": messages,
                    "errors": Vec::<String>::new(),
                }));
            }
            Err(error) => {
                errors += 1;
                galaxies.push(json!({
                    "name": entry.name(),
                    "file": file,
                    "n_points": 0,
                    "r_min_kpc": null,
                    "r_max_kpc": null,
                    "v_obs_max_kms": null,
                    "warnings": Vec::<String>::new(),
                    "errors": [error.to_string()],
                }));
            }
        }
    }
    let catalogue_warnings: Vec<String> =
        catalogue.warnings.iter().map(ToString::to_string).collect();
    if args.json {
        let report = json!({
            "path": args.path.display().to_string(),
            "galaxies": galaxies,
            "catalogue_warnings": catalogue_warnings,
            "n_galaxies": catalogue.entries.len(),
            "n_points": points,
            "n_warnings": warnings,
            "n_errors": errors,
        });
        crate::output::print(&(serde_json::to_string_pretty(&report)? + "\n"))?;
    } else {
        let mut text = String::new();
        for entry in &catalogue.entries {
            match &entry.table {
                Ok(table) => {
                    text += &format!(
                        "ok     {:<24} {:>3} points  r {:>6.2}–{:<6.2} kpc  V_obs max {:>6.1} km/s  {} warning(s)",
                        table.meta.name,
                        table.len(),
                        table.radius_kpc.first().copied().unwrap_or(f64::NAN),
                        table.radius_kpc.last().copied().unwrap_or(f64::NAN),
                        table.v_obs_max_kms(),
                        table.warnings.len()
                    );
                    text.push('\n');
                    if verbosity == Verbosity::Verbose {
                        for w in &table.warnings {
                            text += &format!("       warning: {w}\n");
                        }
                    }
                }
                Err(error) => text += &format!("FAILED {error}\n"),
            }
        }
        if verbosity != Verbosity::Quiet {
            for w in &catalogue_warnings {
                text += &format!("warning: {w}\n");
            }
        }
        text += &format!(
            "{}, {}, {}, {}\n",
            count(catalogue.entries.len(), "galaxy", "galaxies"),
            count(points, "point", "points"),
            count(warnings, "warning", "warnings"),
            count(errors, "error", "errors"),
        );
        crate::output::print(&text)?;
    }
    Ok(if errors == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::FAILURE
    })
}

/// "1 galaxy", "2 galaxies".
fn count(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}
