//! Simulation-based calibration (Talts et al. 2018) of the SIDM fit.
//!
//! Each mock draws its true parameters from *exactly* the prior the fit states — the outer
//! halo's prior (log-uniform V200, Dutton–Macciò c200), log-uniform σ/m, the log-normal Υ prior,
//! restricted to halos whose lowest-density core exists within the sampled bounds — by a path
//! independent of the sampler's (halo-first solves, [`draw_from_prior`]); then it simulates a rotation curve on a fixed dwarf-like template with the same
//! forward model the fit uses, adds Gaussian noise, fits, and records where each true value falls
//! in its posterior: inside the 68% and 95% intervals (coverage), and its rank among posterior
//! draws (uniform when calibrated). Distance and inclination are held fixed in these mocks.

use caldera_data::session::HaloModel;
use caldera_data::{GalaxyMeta, GalaxyTable};
use caldera_physics::{Branch, CrossSection, ExponentialDisk, Nfw, ParamId, SidmSetup, sidm};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::fit::{FitConfig, fit_galaxy};
use crate::model::GalaxyModel;
use crate::priors::{CrossSectionPrior, HaloBounds, Priors, SidmBranches};
use crate::sampler::{LogDensity, Silent};
use crate::summary::quantile;

/// Number of posterior draws each truth is ranked among.
pub const RANK_DRAWS: usize = 99;
/// Bins of the rank histogram.
pub const RANK_BINS: usize = 10;

/// The prior used for calibration: dwarf-like halos (both the mocks and the fits use it).
#[must_use]
pub fn calibration_priors() -> Priors {
    Priors {
        halo: HaloBounds {
            log10_rho0: (6.5, 8.7),
            log10_sigma0: (1.3, 1.85),
            ..HaloBounds::default()
        },
        cross_section: CrossSectionPrior {
            logarithmic: true,
            min_cm2_g: 0.1,
            max_cm2_g: 30.0,
        },
        vary_distance: false,
        vary_inclination: false,
        ..Priors::default()
    }
}

/// The fixed dwarf-like template: 16 radii from 0.3 to 6 kpc, an exponential gas disk
/// (3e8 Msun, 1.8 kpc) and stellar disk column for Υ = 1 (2e8 Msun, 0.8 kpc), no bulge.
#[must_use]
pub fn template() -> GalaxyTable {
    let radius_kpc: Vec<f64> = (0..16).map(|i| 0.3 + 5.7 * f64::from(i) / 15.0).collect();
    let velocity = |mass: f64, scale: f64| -> Vec<f64> {
        ExponentialDisk::new(mass, scale).map_or_else(
            |_| vec![0.0; radius_kpc.len()],
            |d| {
                radius_kpc
                    .iter()
                    .map(|&r| d.v_squared_kms2(r).sqrt())
                    .collect()
            },
        )
    };
    GalaxyTable {
        meta: GalaxyMeta {
            name: "calibration mock".into(),
            ..GalaxyMeta::default()
        },
        source: None,
        v_gas_kms: velocity(3e8, 1.8),
        v_disk_kms: velocity(2e8, 0.8),
        v_obs_kms: vec![1.0; radius_kpc.len()],
        v_err_kms: vec![1.0; radius_kpc.len()],
        v_bulge_kms: None,
        radius_kpc,
        warnings: Vec::new(),
    }
}

/// Coverage and ranks of one parameter over all mocks.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ParameterCoverage {
    pub name: String,
    pub n: usize,
    pub inside_68: usize,
    pub inside_95: usize,
    pub coverage_68: f64,
    pub coverage_95: f64,
    /// Counts of truth ranks among [`RANK_DRAWS`] posterior draws, in [`RANK_BINS`] bins.
    pub rank_histogram: Vec<usize>,
    /// χ² of the rank histogram against uniform (RANK_BINS − 1 degrees of freedom).
    pub rank_chi2: f64,
}

/// The result of a calibration run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CoverageReport {
    pub n_mocks: usize,
    pub n_fitted: usize,
    pub n_unconverged: usize,
    pub seed: u64,
    pub parameters: Vec<ParameterCoverage>,
}

/// Draws true parameters from exactly the fit's prior, by a path independent of the sampler's:
/// the outer halo (log V200 uniform, log c200 around the Dutton–Macciò relation or uniform,
/// within bounds), σ/m and the nuisances from their priors, times the stellar-to-halo mass
/// prior when it is on (by rejection); the core is the halo-first search's
/// lowest-density core for that halo (the default [`SidmBranches`]), kept when it lies within
/// the sampled bounds and the fit's prior admits it. None after many rejections, or when the
/// priors admit every branch (not calibrated here).
pub fn draw_from_prior(model: &GalaxyModel, rng: &mut Xoshiro256PlusPlus) -> Option<Vec<f64>> {
    let priors = model.priors;
    if priors.sidm_branches != SidmBranches::LowestDensity {
        return None;
    }
    let cosmology = model.cosmology;
    let layout = model.layout();
    let halo_len = layout.halo_specs().len();
    let sigma_m_spec = layout.spec(ParamId::SigmaM)?;
    let (v_lo, v_hi) = priors.halo.log10_v200;
    let (c_lo, c_hi) = priors.halo.log10_c200;
    for _ in 0..20_000 {
        let theta = layout.draw(rng);
        let nuisances_inside = layout.specs()[halo_len..]
            .iter()
            .zip(&theta[halo_len..])
            .all(|(spec, &x)| spec.contains(x));
        if !nuisances_inside {
            continue;
        }
        let mut values = layout.values(&theta);
        let sigma_m = sigma_m_spec.physical(sigma_m_spec.draw(rng));
        let v200 = 10f64.powf(v_lo + (v_hi - v_lo) * rng.random::<f64>());
        let Ok(m200) = Nfw::from_v200_c200(v200, 10.0, &cosmology)
            .and_then(|h| h.virial(&cosmology))
            .map(|v| v.m200_msun)
        else {
            continue;
        };
        // The stellar-to-halo mass prior, when on, multiplies the others: rejection with the
        // acceptance probability exp(−½ z²) ≤ 1 draws from their product.
        if priors.stellar_mass_halo
            && rng.random::<f64>() >= model.stellar_mass_log_prior(&values, m200).exp()
        {
            continue;
        }
        let log_c200 = if priors.concentration_mass {
            let z: f64 = StandardNormal.sample(rng);
            priors.concentration_relation.log10_c200(m200, &cosmology)
                + priors.concentration_scatter_dex * z
        } else {
            c_lo + (c_hi - c_lo) * rng.random::<f64>()
        };
        if !(c_lo..=c_hi).contains(&log_c200) {
            continue;
        }
        let (Ok(baryons), Ok(cross_section), Ok(nfw)) = (
            model.baryons_at_values(&values),
            CrossSection::constant(sigma_m),
            Nfw::from_v200_c200(v200, 10f64.powf(log_c200), &cosmology),
        ) else {
            continue;
        };
        let setup = SidmSetup {
            cross_section,
            age_gyr: model.age_gyr,
            baryons: &baryons,
            cosmology,
        };
        let Ok(core) = sidm::halo_first(&setup, &nfw, Branch::LowestDensity) else {
            continue;
        };
        values.set(ParamId::Rho0, core.rho0_msun_kpc3());
        values.set(ParamId::Sigma0, core.sigma0_kms());
        values.set(ParamId::SigmaM, sigma_m);
        values.set(ParamId::V200, v200);
        values.set(ParamId::C200, 10f64.powf(log_c200));
        let truth = model.theta_from_values(&values);
        let mut derived = vec![0.0; model.n_derived()];
        if model.in_bounds(&truth) && model.log_density(&truth, &mut derived).is_finite() {
            return Some(truth);
        }
    }
    None
}

/// Where one true value fell in its posterior.
#[derive(Debug, Clone, Copy)]
struct TruthPlacement {
    inside_68: bool,
    inside_95: bool,
    rank: usize,
}

/// One fitted mock: a placement per parameter, and whether its chain converged.
struct MockOutcome {
    placements: Vec<TruthPlacement>,
    converged: bool,
}

/// One mock: draw, simulate, fit, place each truth in its posterior.
fn one_mock(index: usize, seed: u64, config: &FitConfig) -> Result<MockOutcome, InferError> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed.wrapping_add(index as u64 * 0x9E37_79B9));
    let mut table = template();
    let model = GalaxyModel::new(
        &table,
        HaloModel::Sidm,
        config.priors,
        config.cosmology,
        config.age_gyr,
    )?;
    let truth = draw_from_prior(&model, &mut rng)
        .ok_or_else(|| InferError::NoValidStart("no prior draw with a valid SIDM model".into()))?;
    let (evaluation, _) = model.evaluate(&truth)?;
    for (i, &v) in evaluation.v_model_kms.iter().enumerate() {
        let sigma = (0.05 * v).hypot(2.0);
        let z: f64 = StandardNormal.sample(&mut rng);
        table.v_err_kms[i] = sigma;
        table.v_obs_kms[i] = v + sigma * z;
    }
    let fit_config = FitConfig {
        seed: seed ^ (index as u64).wrapping_mul(0x2545_F491_4F6C_DD1D),
        // The truth is placed among the chain's core coordinates, so the chain must stay in
        // them: an unconverged chain is counted as such, not sampled again in halo coordinates.
        halo_coordinates_fallback: false,
        ..*config
    };
    let result = fit_galaxy(&table, HaloModel::Sidm, &fit_config, &mut Silent)?;
    let kept: Vec<(usize, usize)> = result.chain.kept(result.burn_in, result.thin).collect();
    let mut outcome = Vec::new();
    for (p, &true_value) in truth.iter().enumerate().take(model.dim()) {
        let mut samples: Vec<f64> = kept
            .iter()
            .map(|&(s, w)| result.chain.position(s, w, p))
            .collect();
        samples.sort_by(f64::total_cmp);
        let inside = |lo: f64, hi: f64| {
            true_value >= quantile(&samples, lo) && true_value <= quantile(&samples, hi)
        };
        let rank = (0..RANK_DRAWS)
            .filter(|&k| quantile(&samples, (k as f64 + 0.5) / RANK_DRAWS as f64) < true_value)
            .count();
        outcome.push(TruthPlacement {
            inside_68: inside(0.16, 0.84),
            inside_95: inside(0.025, 0.975),
            rank,
        });
    }
    Ok(MockOutcome {
        placements: outcome,
        converged: result.summary.converged,
    })
}

/// Runs `n_mocks` calibration mocks in parallel (deterministic for a seed).
pub fn coverage_run(
    n_mocks: usize,
    seed: u64,
    config: &FitConfig,
) -> Result<CoverageReport, InferError> {
    let model = GalaxyModel::new(
        &template(),
        HaloModel::Sidm,
        config.priors,
        config.cosmology,
        config.age_gyr,
    )?;
    let names = model.layout().columns();
    let results: Vec<Result<MockOutcome, InferError>> = (0..n_mocks)
        .into_par_iter()
        .map(|i| one_mock(i, seed, config))
        .collect();
    let fitted: Vec<&MockOutcome> = results.iter().filter_map(|r| r.as_ref().ok()).collect();
    let parameters = names
        .iter()
        .enumerate()
        .map(|(p, name)| {
            let n = fitted.len();
            let inside_68 = fitted.iter().filter(|m| m.placements[p].inside_68).count();
            let inside_95 = fitted.iter().filter(|m| m.placements[p].inside_95).count();
            let mut rank_histogram = vec![0usize; RANK_BINS];
            for m in &fitted {
                rank_histogram
                    [(m.placements[p].rank * RANK_BINS / (RANK_DRAWS + 1)).min(RANK_BINS - 1)] += 1;
            }
            let expected = n as f64 / RANK_BINS as f64;
            let rank_chi2 = rank_histogram
                .iter()
                .map(|&c| (c as f64 - expected).powi(2) / expected)
                .sum();
            ParameterCoverage {
                name: name.clone(),
                n,
                inside_68,
                inside_95,
                coverage_68: inside_68 as f64 / n.max(1) as f64,
                coverage_95: inside_95 as f64 / n.max(1) as f64,
                rank_histogram,
                rank_chi2,
            }
        })
        .collect();
    Ok(CoverageReport {
        n_mocks,
        n_fitted: fitted.len(),
        n_unconverged: fitted.iter().filter(|m| !m.converged).count(),
        seed,
        parameters,
    })
}
