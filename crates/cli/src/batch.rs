//! Catalogue runs: `caldera fit PATH --models ... --out DIR` fits every galaxy with every model in
//! parallel, writes each result as it finishes (atomically), skips finished work on a re-run,
//! and rebuilds the catalogue's tables, figures and session file; `caldera merge` joins shard
//! output folders.

use std::collections::BTreeMap;
use std::io::IsTerminal as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Instant;

use anyhow::{Context, bail};
use caldera_data::session::{HaloModel, save_session};
use caldera_data::{GalaxyTable, ReadOptions, load_catalogue, write_atomic};
use caldera_infer::layout::ParamSpec;
use caldera_infer::model::GalaxyModel;
use caldera_infer::run_folder::{GALAXIES_DIR, RunFolder};
use caldera_infer::sampler::{Control, Progress};
use caldera_infer::session::Session;
use caldera_infer::{FitConfig, FitResult, fit_galaxy};
use caldera_report::figures::{
    CornerFigure, PopulationFigure, PopulationPoint, RotationCurveFigure, save_figure,
};
use caldera_report::tables::{latex_table, results_table};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use rayon::prelude::*;

use crate::Verbosity;

/// A deterministic slice of a catalogue: the K-th of N (1-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    pub index: usize,
    pub count: usize,
}

impl std::str::FromStr for Shard {
    type Err = String;
    fn from_str(text: &str) -> Result<Self, Self::Err> {
        let (k, n) = text.split_once('/').ok_or("expected K/N, e.g. 2/8")?;
        let index: usize = k
            .trim()
            .parse()
            .map_err(|_| format!("'{k}' is not a shard number"))?;
        let count: usize = n
            .trim()
            .parse()
            .map_err(|_| format!("'{n}' is not a shard count"))?;
        if count == 0 || index == 0 || index > count {
            return Err(format!("shard {index}/{count}: need 1 ≤ K ≤ N"));
        }
        Ok(Self { index, count })
    }
}

impl Shard {
    /// True when the galaxy at position `position` (in file-name order) belongs to this shard.
    #[must_use]
    pub fn contains(&self, position: usize) -> bool {
        position % self.count == self.index - 1
    }
}

/// Catalogue-run options of `caldera fit`.
#[derive(Debug, Args)]
pub struct BatchArgs {
    /// Output folder for a catalogue run (tables, figures, chains, session).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Re-fit galaxies whose results already exist in the output folder.
    #[arg(long)]
    pub force: bool,
    /// Fit only the K-th of N deterministic slices of the catalogue (cluster job arrays).
    #[arg(long, value_name = "K/N")]
    pub shard: Option<Shard>,
    /// Skip the per-galaxy figures (faster).
    #[arg(long)]
    pub no_figures: bool,
}

/// A seed for one galaxy and model that does not depend on shards or order (FNV-1a).
fn job_seed(base: u64, galaxy: &str, model: HaloModel) -> u64 {
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325 ^ base;
    for byte in galaxy.bytes().chain(model.name().bytes()) {
        hash ^= u64::from(byte);
        hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
    }
    hash
}

struct Job<'a> {
    slug: String,
    table: &'a GalaxyTable,
    model: HaloModel,
}

/// Runs a catalogue fit.
pub(crate) fn run(
    path: &Path,
    models: &[HaloModel],
    config: &FitConfig,
    read: &ReadOptions,
    args: &BatchArgs,
    out: &Path,
    verbosity: Verbosity,
) -> anyhow::Result<ExitCode> {
    let started = Instant::now();
    let catalogue = load_catalogue(path, read)?;
    std::fs::create_dir_all(RunFolder::new(out).galaxies_dir())
        .with_context(|| format!("cannot create {}", out.display()))?;
    let mut failures = 0usize;
    let mut jobs = Vec::new();
    for (position, entry) in catalogue.entries.iter().enumerate() {
        if args.shard.is_some_and(|s| !s.contains(position)) {
            continue;
        }
        match &entry.table {
            Err(error) => {
                failures += 1;
                eprintln!("error: {error}");
            }
            Ok(table) => {
                if verbosity != Verbosity::Quiet {
                    for w in &table.warnings {
                        eprintln!("warning: {w}");
                    }
                }
                for &model in models {
                    let job = Job {
                        slug: RunFolder::slug(&entry.path),
                        table,
                        model,
                    };
                    let done = RunFolder::new(out).summary_path(&job.slug, model).exists();
                    if args.force || !done {
                        jobs.push(job);
                    }
                }
            }
        }
    }

    let cancel = Arc::new(AtomicBool::new(false));
    {
        let cancel = Arc::clone(&cancel);
        // A second Ctrl-C while stopping falls back to the default (immediate exit).
        let _ = ctrlc::set_handler(move || cancel.store(true, Ordering::SeqCst));
    }
    let bar = if verbosity != Verbosity::Quiet && std::io::stderr().is_terminal() {
        let bar = ProgressBar::new(jobs.len() as u64);
        bar.set_style(
            ProgressStyle::with_template(
                "{bar:30} {pos}/{len} fits  {elapsed_precise} elapsed, ETA {eta}  {wide_msg}",
            )
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar
    } else {
        ProgressBar::hidden()
    };
    let plain = verbosity != Verbosity::Quiet && bar.is_hidden();
    let total = jobs.len();
    let finished = std::sync::atomic::AtomicUsize::new(0);
    let outcomes: Vec<anyhow::Result<bool>> = jobs
        .par_iter()
        .map(|job| {
            if cancel.load(Ordering::SeqCst) {
                return Ok(false);
            }
            bar.set_message(format!(
                "fitting {} ({})",
                job.table.meta.name,
                job.model.name()
            ));
            let t = Instant::now();
            let job_config = FitConfig {
                seed: job_seed(config.seed, &job.table.meta.name, job.model),
                ..*config
            };
            let mut observer = |_: &Progress| {
                if cancel.load(Ordering::SeqCst) {
                    Control::Stop
                } else {
                    Control::Continue
                }
            };
            let result = fit_galaxy(job.table, job.model, &job_config, &mut observer)
                .with_context(|| format!("{} ({})", job.table.meta.name, job.model.name()));
            let outcome = match result {
                Ok(result) if result.summary.cancelled => Ok(false),
                Ok(result) => {
                    write_job(out, job, &job_config, &result, !args.no_figures).map(|()| true)
                }
                Err(e) => Err(e),
            };
            let n = finished.fetch_add(1, Ordering::SeqCst) + 1;
            bar.inc(1);
            if plain {
                let state = match &outcome {
                    Ok(true) => "done".to_string(),
                    Ok(false) => "stopped".to_string(),
                    Err(e) => format!("FAILED: {e:#}"),
                };
                eprintln!(
                    "[{n}/{total}] {} ({}) {state} in {:.1} s",
                    job.table.meta.name,
                    job.model.name(),
                    t.elapsed().as_secs_f64()
                );
            }
            outcome
        })
        .collect();
    bar.finish_and_clear();
    for outcome in &outcomes {
        match outcome {
            Ok(true) => {}
            Ok(false) => failures += 1,
            Err(e) => {
                failures += 1;
                eprintln!("error: {e:#}");
            }
        }
    }
    let completed = outcomes.iter().filter(|o| matches!(o, Ok(true))).count();
    let session = Session {
        catalogue: Some(path.to_path_buf()),
        format: read.format,
        column_mapping: read.mapping.clone(),
        fit: *config,
        models: models.to_vec(),
        ..Session::default()
    };
    let summaries = rebuild_outputs(out, session)?;
    let seconds = started.elapsed().as_secs_f64();
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "{completed} fits in {seconds:.1} s ({:.1} galaxy-model fits per minute); {} results in {}; {failures} failed or stopped",
            completed as f64 / seconds * 60.0,
            summaries,
            out.display()
        );
    }
    if cancel.load(Ordering::SeqCst) {
        eprintln!(
            "stopped by Ctrl-C: finished results are kept; run the same command again to continue"
        );
    }
    Ok(if failures == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::FAILURE
    })
}

/// Writes one finished fit: chain, figures, then the summary last (its presence marks the job
/// done, so an interrupted write is redone on the next run).
fn write_job(
    out: &Path,
    job: &Job,
    config: &FitConfig,
    result: &FitResult,
    figures: bool,
) -> anyhow::Result<()> {
    let run = RunFolder::new(out);
    let folder = run.galaxy_dir(&job.slug);
    std::fs::create_dir_all(&folder)
        .with_context(|| format!("cannot create {}", folder.display()))?;
    let name = job.model.name();
    let chain_path = run.chain_path(&job.slug, job.model);
    write_atomic(
        &chain_path,
        result.chain_table().to_csv(&chain_path)?.as_bytes(),
    )?;
    if figures {
        let model = GalaxyModel::new(
            job.table,
            job.model,
            result.priors,
            config.cosmology,
            config.age_gyr,
        )?;
        let components = model
            .components(&result.best_theta)
            .map_err(anyhow::Error::from)?;
        let curve = RotationCurveFigure {
            title: format!("{} — {} halo", job.table.meta.name, name),
            components,
        };
        let kept: Vec<(usize, usize)> = result.chain.kept(result.burn_in, result.thin).collect();
        let corner = CornerFigure {
            title: format!("{} — {} posterior", job.table.meta.name, name),
            names: result.parameters.iter().map(ParamSpec::label).collect(),
            columns: (0..result.parameters.len())
                .map(|p| {
                    kept.iter()
                        .map(|&(s, w)| result.chain.position(s, w, p))
                        .collect()
                })
                .collect(),
        };
        for extension in ["svg", "png"] {
            save_figure(
                &curve,
                &run.curve_figure_path(&job.slug, job.model, extension),
            )?;
            save_figure(
                &corner,
                &run.corner_figure_path(&job.slug, job.model, extension),
            )?;
        }
    }
    let summary = serde_json::to_string_pretty(&result.summary)? + "\n";
    write_atomic(&run.summary_path(&job.slug, job.model), summary.as_bytes())?;
    Ok(())
}

/// Rebuilds the catalogue's tables, population figure and session from the summaries on disk.
fn rebuild_outputs(out: &Path, mut session: Session) -> anyhow::Result<usize> {
    let run = RunFolder::new(out);
    let summaries = run.read_summaries()?;
    let table = results_table(&summaries);
    write_atomic(
        &run.results_path("csv"),
        table.to_csv(&run.results_path("csv"))?.as_bytes(),
    )?;
    write_atomic(
        &run.results_path("ecsv"),
        table.to_ecsv(&run.results_path("ecsv"))?.as_bytes(),
    )?;
    write_atomic(&run.results_path("tex"), latex_table(&summaries).as_bytes())?;
    let points: Vec<PopulationPoint> = summaries
        .iter()
        .filter(|s| s.model == HaloModel::Sidm)
        .filter_map(|s| {
            Some(PopulationPoint::new(
                &s.galaxy,
                s.v_rel_kms.as_ref()?,
                s.sigma_m_cm2_g.as_ref()?,
            ))
        })
        .collect();
    if !points.is_empty() {
        let figure = PopulationFigure {
            title: "σ/m against collision velocity".into(),
            points,
            curves: Vec::new(),
        };
        save_figure(&figure, &run.population_figure_path("svg"))?;
        save_figure(&figure, &run.population_figure_path("png"))?;
    }
    let count = summaries.len();
    session.results = summaries;
    save_session(&run.session_path(), &session)?;
    Ok(count)
}

/// Arguments of `caldera merge`.
#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Output folders of sharded runs.
    #[arg(required = true)]
    pub inputs: Vec<PathBuf>,
    /// Folder receiving the merged results.
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
}

pub(crate) const MERGE_EXAMPLES: &str = "\
Examples:
  caldera merge shards/1 shards/2 --out results";

/// Runs `caldera merge`: copies every galaxy's files from the shard folders and rebuilds the
/// catalogue outputs. Two shards holding different files for the same galaxy are an error.
pub(crate) fn merge(args: &MergeArgs, verbosity: Verbosity) -> anyhow::Result<ExitCode> {
    let mut sources: BTreeMap<PathBuf, PathBuf> = BTreeMap::new();
    let mut session: Option<Session> = None;
    for input in &args.inputs {
        let shard = RunFolder::new(input);
        let entries = std::fs::read_dir(shard.galaxies_dir()).with_context(|| {
            format!(
                "{} is not a Caldera output folder (no {GALAXIES_DIR}/)",
                input.display()
            )
        })?;
        for folder in entries.filter_map(Result::ok).filter(|e| e.path().is_dir()) {
            for file in std::fs::read_dir(folder.path())?.filter_map(Result::ok) {
                let relative = PathBuf::from(folder.file_name()).join(file.file_name());
                if let Some(existing) = sources.get(&relative) {
                    if std::fs::read(existing)? != std::fs::read(file.path())? {
                        bail!(
                            "{} and {} differ: the shards overlap",
                            existing.display(),
                            file.path().display()
                        );
                    }
                    continue;
                }
                sources.insert(relative, file.path());
            }
        }
        if session.is_none() {
            session = caldera_data::session::load_session(&shard.session_path()).ok();
        }
    }
    for (relative, source) in &sources {
        let target = RunFolder::new(&args.out).galaxies_dir().join(relative);
        if let Some(parent) = target.parent() {
            std::fs::create_dir_all(parent)
                .with_context(|| format!("cannot create {}", parent.display()))?;
        }
        write_atomic(&target, &std::fs::read(source)?)?;
    }
    let mut session = session.unwrap_or_default();
    session.results.clear();
    let count = rebuild_outputs(&args.out, session)?;
    if verbosity != Verbosity::Quiet {
        eprintln!(
            "merged {} folders: {count} results in {}",
            args.inputs.len(),
            args.out.display()
        );
    }
    Ok(ExitCode::SUCCESS)
}
