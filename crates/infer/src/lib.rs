//! Caldera's inference: layouts (each parameter's transform, bounds and prior), priors,
//! likelihood, maximum a posteriori, the affine-invariant ensemble sampler, chain diagnostics,
//! one sampling pipeline for galaxy and population fits, summaries, and the run folder.
//!
//! Main types: [`layout::Layout`], [`model::GalaxyModel`], [`FitConfig`] / [`fit_galaxy`] /
//! [`FitSummary`], [`run_folder::RunFolder`], [`population::PopulationFit`].
//!
//! ```
//! use caldera_infer::layout::{Layout, ParamSpec};
//! use caldera_physics::{ParamId, ParamValues, Transform};
//!
//! let layout = Layout::new(
//!     vec![ParamSpec::uniform(ParamId::SigmaM, Transform::Log10, (-2.0, 2.0))],
//!     1,
//!     ParamValues::default(),
//! );
//! assert_eq!(layout.labels(), ["log σ/m [cm²/g]"]);
//! ```

pub mod calibration;
pub mod chain;
pub mod diagnostics;
mod error;
pub mod fit;
pub mod forecast;
pub mod layout;
pub mod model;
pub mod optimize;
pub mod pipeline;
pub mod population;
pub mod priors;
pub mod reparam;
pub mod run_folder;
pub mod sampler;
pub mod session;
pub mod summary;
pub mod tempering;

pub use error::InferError;
pub use fit::{FitConfig, FitResult, FitSummary, Tempering, fit_galaxy};
