//! The output folder of a catalogue run, as a type: where each file lives, shared by the writer
//! (`caldera fit CATALOGUE --out DIR`, `caldera merge`) and the readers (`caldera population`,
//! the app).
//!
//! ```text
//! DIR/results.csv, results.ecsv, results.tex     one row per galaxy and model
//! DIR/population.svg, population.png             σ/m against ⟨v_rel⟩
//! DIR/session.ron                                the session that reproduces the run
//! DIR/galaxies/<slug>/<model>.summary.json       a finished fit (written last: marks it done)
//! DIR/galaxies/<slug>/<model>.chain.csv          its kept samples
//! DIR/galaxies/<slug>/<model>.curve.svg/.png     its best-fitting curve
//! DIR/galaxies/<slug>/<model>.corner.svg/.png    its posterior
//! DIR/population/                                `caldera population` outputs
//! ```
//!
//! ```
//! use caldera_infer::run_folder::RunFolder;
//! use caldera_physics::HaloModel;
//!
//! let run = RunFolder::new("results");
//! let path = run.chain_path("kiln_d01", HaloModel::Sidm);
//! assert!(path.ends_with("galaxies/kiln_d01/sidm.chain.csv"));
//! assert_eq!(RunFolder::slug(std::path::Path::new("tables/kiln_d01.ecsv")), "kiln_d01");
//! ```

use std::path::{Path, PathBuf};

use caldera_data::DataError;
use caldera_physics::HaloModel;

use crate::{FitSummary, InferError};

/// The folder of per-galaxy results inside a run folder.
pub const GALAXIES_DIR: &str = "galaxies";

/// A catalogue run's output folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RunFolder {
    root: PathBuf,
}

fn io_error(path: &Path, source: std::io::Error) -> InferError {
    InferError::Data(DataError::Io {
        path: path.to_path_buf(),
        reason: source,
    })
}

impl RunFolder {
    /// The run folder at `root` (nothing is read or created).
    pub fn new(root: impl Into<PathBuf>) -> Self {
        Self { root: root.into() }
    }

    /// The folder itself.
    #[must_use]
    pub fn root(&self) -> &Path {
        &self.root
    }

    /// A galaxy's folder name: its table's file stem.
    #[must_use]
    pub fn slug(table_path: &Path) -> String {
        table_path
            .file_stem()
            .map_or_else(|| "galaxy".into(), |s| s.to_string_lossy().into_owned())
    }

    /// `DIR/galaxies`.
    #[must_use]
    pub fn galaxies_dir(&self) -> PathBuf {
        self.root.join(GALAXIES_DIR)
    }

    /// `DIR/galaxies/<slug>`.
    #[must_use]
    pub fn galaxy_dir(&self, slug: &str) -> PathBuf {
        self.galaxies_dir().join(slug)
    }

    fn galaxy_file(&self, slug: &str, model: HaloModel, suffix: &str) -> PathBuf {
        self.galaxy_dir(slug)
            .join(format!("{}.{suffix}", model.name()))
    }

    /// A fit's summary; its presence marks the fit done.
    #[must_use]
    pub fn summary_path(&self, slug: &str, model: HaloModel) -> PathBuf {
        self.galaxy_file(slug, model, "summary.json")
    }

    /// A fit's kept samples.
    #[must_use]
    pub fn chain_path(&self, slug: &str, model: HaloModel) -> PathBuf {
        self.galaxy_file(slug, model, "chain.csv")
    }

    /// A fit's rotation-curve figure (`extension` svg or png).
    #[must_use]
    pub fn curve_figure_path(&self, slug: &str, model: HaloModel, extension: &str) -> PathBuf {
        self.galaxy_file(slug, model, &format!("curve.{extension}"))
    }

    /// A fit's corner figure (`extension` svg or png).
    #[must_use]
    pub fn corner_figure_path(&self, slug: &str, model: HaloModel, extension: &str) -> PathBuf {
        self.galaxy_file(slug, model, &format!("corner.{extension}"))
    }

    /// `DIR/results.<extension>` (csv, ecsv, tex).
    #[must_use]
    pub fn results_path(&self, extension: &str) -> PathBuf {
        self.root.join(format!("results.{extension}"))
    }

    /// `DIR/population.<extension>` (svg, png).
    #[must_use]
    pub fn population_figure_path(&self, extension: &str) -> PathBuf {
        self.root.join(format!("population.{extension}"))
    }

    /// `DIR/session.ron`.
    #[must_use]
    pub fn session_path(&self) -> PathBuf {
        self.root.join("session.ron")
    }

    /// `DIR/population`, where `caldera population` writes.
    #[must_use]
    pub fn population_dir(&self) -> PathBuf {
        self.root.join("population")
    }

    /// True when the folder has a `galaxies/` folder (a run has written into it).
    #[must_use]
    pub fn exists(&self) -> bool {
        self.galaxies_dir().is_dir()
    }

    /// The galaxy folders' slugs, sorted.
    pub fn slugs(&self) -> Result<Vec<String>, InferError> {
        let dir = self.galaxies_dir();
        let mut slugs: Vec<String> = std::fs::read_dir(&dir)
            .map_err(|e| io_error(&dir, e))?
            .filter_map(Result::ok)
            .filter(|e| e.path().is_dir())
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .collect();
        slugs.sort();
        Ok(slugs)
    }

    /// A finished fit's summary, or None when the fit has not finished.
    pub fn read_summary(
        &self,
        slug: &str,
        model: HaloModel,
    ) -> Result<Option<FitSummary>, InferError> {
        let path = self.summary_path(slug, model);
        if !path.exists() {
            return Ok(None);
        }
        let text = std::fs::read_to_string(&path).map_err(|e| io_error(&path, e))?;
        serde_json::from_str(&text).map(Some).map_err(|e| {
            InferError::Config(format!("{} is not a fit summary: {e}", path.display()))
        })
    }

    /// Every finished fit's summary, sorted by galaxy, then model name.
    pub fn read_summaries(&self) -> Result<Vec<FitSummary>, InferError> {
        if !self.exists() {
            return Ok(Vec::new());
        }
        let mut summaries = Vec::new();
        for slug in self.slugs()? {
            for model in HaloModel::ALL {
                if let Some(summary) = self.read_summary(&slug, model)? {
                    summaries.push(summary);
                }
            }
        }
        summaries.sort_by(|a, b| {
            a.galaxy
                .cmp(&b.galaxy)
                .then_with(|| a.model.name().cmp(b.model.name()))
        });
        Ok(summaries)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_follow_the_layout() {
        let run = RunFolder::new("/tmp/run");
        assert_eq!(
            run.summary_path("kiln_s01", HaloModel::Nfw),
            PathBuf::from("/tmp/run/galaxies/kiln_s01/nfw.summary.json")
        );
        assert_eq!(
            run.corner_figure_path("a", HaloModel::PseudoIsothermal, "png"),
            PathBuf::from("/tmp/run/galaxies/a/pseudo-iso.corner.png")
        );
        assert_eq!(
            run.results_path("tex"),
            PathBuf::from("/tmp/run/results.tex")
        );
        assert_eq!(run.session_path(), PathBuf::from("/tmp/run/session.ron"));
        assert_eq!(run.population_dir(), PathBuf::from("/tmp/run/population"));
    }

    #[test]
    fn an_empty_folder_has_no_summaries() {
        let dir = std::env::temp_dir().join(format!("caldera-run-folder-{}", std::process::id()));
        let run = RunFolder::new(&dir);
        assert!(!run.exists());
        assert!(run.read_summaries().expect("no error").is_empty());
    }
}
