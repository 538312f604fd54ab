//! Forecasts (power analysis): what a catalogue of a given design can tell about a σ(v)/m model.
//!
//! A *design* says how many galaxies fall in each range of V200, how far out and how densely
//! their rotation curves are measured, and how large the velocity errors are. Invented galaxies
//! of that design are made with the mock generator — each halo an SIDM halo matched to an NFW
//! halo on the concentration–mass relation of the fit's prior, its σ(v)/m the *truth* model, its
//! baryons from published scaling relations ([`caldera_physics::scaling`]) — and fitted end to
//! end with the same SIDM fit users run ([`crate::fit_galaxy`]).
//!
//! The cheaper approximation: a *pool* of such galaxies (by default twice the design's count in
//! each V200 range) is fitted once, and each of many invented catalogues is drawn from the pool
//! (with replacement, per V200 range) at several multiples of the design's size. For each
//! catalogue the population models are compared by their maximum likelihood alone (the
//! population treatment: each galaxy at its median velocity): ΔBIC = BIC(constant) −
//! BIC(alternative). Detection power is the fraction of catalogues with ΔBIC ≥ 6 ("strong" on
//! Kass & Raftery's scale, common practice) and with ΔBIC ≥ 2 ("positive"). The expected
//! intervals on the alternative's parameters come from full posterior samples of a few
//! catalogues at the design's size. What the pool leaves out: catalogues larger than the pool
//! repeat galaxies (the same noise counts twice), which overstates their power's spread, not its
//! mean; the end-to-end mode ([`end_to_end`]) fits fresh galaxies for every catalogue, the
//! reference the pool is checked against.

use caldera_data::GalaxyTable;
use caldera_data::mock::{MockDisk, MockHalo, MockSpec, generate};
use caldera_data::session::HaloModel;
use caldera_physics::CrossSection;
use caldera_physics::cross_section::dispersion_from_mean_relative_speed_kms;
use caldera_physics::scaling::{MOSTER_2013, gas_mass_msun, stellar_scale_length_kpc};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::InferError;
use crate::fit::{FitConfig, fit_galaxy};
use crate::population::{
    GalaxyPosterior, PopulationModel as _, PopulationSettings, Treatment, VelocityModel,
    best_fit_population, effective_sigma_m_cm2_g, fit_population,
};
use crate::sampler::Silent;
use crate::summary::quantile;

/// ΔBIC of a "positive" preference (Kass & Raftery 1995's scale, common practice).
pub const POSITIVE_DELTA_BIC: f64 = 2.0;
/// ΔBIC of a "strong" preference — what a forecast calls a detection (common practice).
pub const STRONG_DELTA_BIC: f64 = 6.0;

/// Tries at drawing a galaxy whose SIDM halo exists before giving up.
const DRAW_TRIES: usize = 50;

/// Galaxies in one range of V200.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DesignBin {
    pub v200_min_kms: f64,
    pub v200_max_kms: f64,
    pub count: usize,
}

impl DesignBin {
    /// Parses `LOW-HIGH:COUNT[,LOW-HIGH:COUNT...]` (V200 in km/s), e.g. `30-60:5,60-120:5`.
    pub fn parse_list(text: &str) -> Result<Vec<Self>, InferError> {
        let bad = |part: &str, why: &str| {
            InferError::Config(format!(
                "design bin '{part}': {why} (expected LOW-HIGH:COUNT with V200 in km/s, e.g. 30-60:5)"
            ))
        };
        let mut bins = Vec::new();
        for part in text.split(',').map(str::trim).filter(|p| !p.is_empty()) {
            let (range, count) = part
                .split_once(':')
                .ok_or_else(|| bad(part, "no ':COUNT'"))?;
            let (low, high) = range
                .split_once('-')
                .ok_or_else(|| bad(part, "no 'LOW-HIGH' range"))?;
            let number = |s: &str| -> Result<f64, InferError> {
                s.trim()
                    .parse::<f64>()
                    .map_err(|_| bad(part, &format!("'{}' is not a number", s.trim())))
            };
            let (low, high) = (number(low)?, number(high)?);
            let count: usize = count
                .trim()
                .parse()
                .map_err(|_| bad(part, &format!("'{}' is not a count", count.trim())))?;
            if !(low.is_finite() && low > 0.0 && high > low) {
                return Err(bad(part, "needs 0 < LOW < HIGH"));
            }
            bins.push(Self {
                v200_min_kms: low,
                v200_max_kms: high,
                count,
            });
        }
        if bins.iter().map(|b| b.count).sum::<usize>() == 0 {
            return Err(InferError::Config(format!(
                "design '{text}' holds no galaxies"
            )));
        }
        Ok(bins)
    }
}

/// A catalogue design: galaxies per V200 range and how their rotation curves are measured.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Design {
    pub bins: Vec<DesignBin>,
    /// Outermost measured radius as a fraction of the halo's R200.
    pub extent_r200: f64,
    /// Measured points per rotation curve (evenly spaced from extent/points to the extent).
    pub points: usize,
    /// Fractional velocity error, and the floor added in quadrature (km/s).
    pub error_fraction: f64,
    pub error_floor_kms: f64,
    /// Halo age, Gyr.
    pub age_gyr: f64,
}

impl Design {
    /// Galaxies in the design.
    #[must_use]
    pub fn n_galaxies(&self) -> usize {
        self.bins.iter().map(|b| b.count).sum()
    }

    fn check(&self) -> Result<(), InferError> {
        let fine = self.extent_r200.is_finite()
            && self.extent_r200 > 0.0
            && self.extent_r200 <= 1.0
            && self.points >= 4
            && self.error_fraction.is_finite()
            && self.error_fraction >= 0.0
            && self.error_floor_kms.is_finite()
            && self.error_floor_kms >= 0.0
            && self.error_fraction + self.error_floor_kms > 0.0;
        if fine {
            Ok(())
        } else {
            Err(InferError::Config(format!(
                "design: the extent must lie in (0, 1] of R200 (got {}), at least 4 points (got {}), and errors non-negative and not both zero (got {} and {} km/s)",
                self.extent_r200, self.points, self.error_fraction, self.error_floor_kms
            )))
        }
    }
}

/// One invented galaxy of a design, fitted.
#[derive(Debug, Clone)]
pub struct FittedMock {
    /// Index of its design bin.
    pub bin: usize,
    pub spec: MockSpec,
    /// The truth's effective σ/m at the galaxy's true core dispersion, cm²/g.
    pub true_sigma_eff_cm2_g: f64,
    pub true_v_rel_kms: f64,
    pub posterior: GalaxyPosterior,
    pub converged: bool,
}

/// Everything a forecast needs besides its design.
#[derive(Debug, Clone)]
pub struct ForecastSettings {
    /// The σ(v)/m the invented galaxies are made with.
    pub truth: CrossSection,
    /// The velocity-dependent model compared against a constant σ/m.
    pub alternative: VelocityModel,
    /// Catalogue sizes as multiples of the design's counts.
    pub scales: Vec<f64>,
    /// Invented catalogues per size.
    pub replicas: usize,
    /// Pool galaxies per design galaxy in each V200 range.
    pub pool_factor: usize,
    /// Catalogues at the design's size whose population posterior is sampled in full.
    pub interval_replicas: usize,
    pub seed: u64,
    /// The per-galaxy SIDM fit.
    pub fit: FitConfig,
    pub population: PopulationSettings,
}

/// Detection power at one catalogue size.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PowerPoint {
    pub scale: f64,
    pub n_galaxies: usize,
    pub replicas: usize,
    /// ΔBIC = BIC(constant) − BIC(alternative): median and 16th/84th percentiles.
    pub median_delta_bic: f64,
    pub p16_delta_bic: f64,
    pub p84_delta_bic: f64,
    pub mean_delta_bic: f64,
    /// Fraction of catalogues with ΔBIC ≥ [`STRONG_DELTA_BIC`] (a detection).
    pub power_strong: f64,
    /// Fraction with ΔBIC ≥ [`POSITIVE_DELTA_BIC`].
    pub power_positive: f64,
    /// Fraction with ΔBIC ≤ −[`POSITIVE_DELTA_BIC`] (the constant preferred).
    pub constant_preferred: f64,
    /// Whether catalogues of this size repeat pool galaxies (more galaxies in a V200 range than
    /// the pool holds there).
    pub repeats_pool_galaxies: bool,
}

/// The expected posterior interval on one of the alternative's parameters at the design's size.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ExpectedInterval {
    pub name: String,
    pub unit: String,
    /// The truth's value, when the alternative is the truth's kind.
    pub truth: Option<f64>,
    /// Median over catalogues of the 16–84% half-width in log10, dex.
    pub median_half_width_dex: f64,
    /// Median over catalogues of the posterior median.
    pub median_of_medians: f64,
    /// Fraction of catalogues whose 95% interval holds the truth.
    pub coverage_95: Option<f64>,
    pub catalogues: usize,
}

/// One pool galaxy as a forecast reports it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PoolEntry {
    pub name: String,
    pub v200_kms: f64,
    pub c200: f64,
    pub stellar_mass_msun: f64,
    pub true_v_rel_kms: f64,
    pub true_sigma_eff_cm2_g: f64,
    /// The fitted σ/m posterior, cm²/g.
    pub sigma_m_cm2_g: Option<crate::summary::Interval>,
    pub converged: bool,
    /// Everything that made the galaxy (re-made bit for bit by the mock generator).
    pub spec: MockSpec,
}

impl From<&FittedMock> for PoolEntry {
    fn from(mock: &FittedMock) -> Self {
        let (v200_kms, c200) = match mock.spec.halo {
            MockHalo::SidmHaloFirst { v200_kms, c200, .. } => (v200_kms, c200),
            _ => (f64::NAN, f64::NAN),
        };
        Self {
            name: mock.spec.name.clone(),
            v200_kms,
            c200,
            stellar_mass_msun: mock.spec.stars.map_or(0.0, |s| s.mass_msun),
            true_v_rel_kms: mock.true_v_rel_kms,
            true_sigma_eff_cm2_g: mock.true_sigma_eff_cm2_g,
            sigma_m_cm2_g: mock.posterior.sigma_m_cm2_g(),
            converged: mock.converged,
            spec: mock.spec.clone(),
        }
    }
}

/// A forecast's result.
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct Forecast {
    pub design: Design,
    pub truth: CrossSection,
    pub alternative: VelocityModel,
    /// Whether the per-galaxy fits used the stellar-to-halo mass prior.
    pub stellar_mass_prior: bool,
    /// Galaxies fitted end to end (the pool).
    pub pool_size: usize,
    pub pool_unconverged: usize,
    pub pool: Vec<PoolEntry>,
    pub power: Vec<PowerPoint>,
    pub intervals: Vec<ExpectedInterval>,
    /// Seconds spent fitting the pool and comparing the catalogues.
    pub pool_seconds: f64,
    pub catalogue_seconds: f64,
}

/// Draws one invented galaxy of `bin` for the design: V200 log-uniform within the bin, c200
/// from the fit prior's concentration–mass relation and scatter, stars from the Moster et al.
/// (2013) relation with its scatter at a Υ_disk drawn from the fit's prior, gas from
/// [`gas_mass_msun`] in a disk twice the stars' scale length (common practice).
pub fn draw_design_galaxy(
    design: &Design,
    bin: &DesignBin,
    truth: &CrossSection,
    fit: &FitConfig,
    name: &str,
    rng: &mut Xoshiro256PlusPlus,
) -> Result<(GalaxyTable, MockSpec, f64, f64), InferError> {
    design.check()?;
    let priors = &fit.priors;
    let cosmology = fit.cosmology;
    let mut last_error = String::new();
    for _ in 0..DRAW_TRIES {
        let normal = |rng: &mut Xoshiro256PlusPlus| -> f64 { StandardNormal.sample(rng) };
        let log_v = bin.v200_min_kms.log10()
            + (bin.v200_max_kms.log10() - bin.v200_min_kms.log10()) * rng.random::<f64>();
        let v200_kms = 10f64.powf(log_v);
        let r200_kpc = cosmology.r200_kpc_from_v200(v200_kms);
        let m200_msun =
            v200_kms * v200_kms * r200_kpc / caldera_physics::units::G_KPC_KMS2_PER_MSUN;
        let log_c200 = priors
            .concentration_relation
            .log10_c200(m200_msun, &cosmology)
            + priors.concentration_scatter_dex * normal(rng);
        let c200 = 10f64.powf(log_c200);
        let stellar_mass = MOSTER_2013.stellar_mass_msun(m200_msun)?
            * 10f64.powf(MOSTER_2013.scatter_dex * normal(rng));
        let upsilon_disk =
            priors.upsilon_disk_median * 10f64.powf(priors.upsilon_scatter_dex * normal(rng));
        let scale_kpc = stellar_scale_length_kpc(r200_kpc);
        let r_max_kpc = design.extent_r200 * r200_kpc;
        let spec = MockSpec {
            name: name.to_string(),
            seed: rng.random(),
            halo: MockHalo::SidmHaloFirst {
                v200_kms,
                c200,
                sigma_m_cm2_g: 1.0,
                branch: 0,
            },
            age_gyr: design.age_gyr,
            hubble_kms_mpc: cosmology.hubble_kms_mpc,
            gas: Some(MockDisk {
                mass_msun: gas_mass_msun(stellar_mass),
                scale_length_kpc: 2.0 * scale_kpc,
            }),
            stars: Some(MockDisk {
                mass_msun: stellar_mass,
                scale_length_kpc: scale_kpc,
            }),
            bulge: None,
            upsilon_disk,
            upsilon_bulge: priors.upsilon_bulge_median,
            r_min_kpc: r_max_kpc / design.points as f64,
            r_max_kpc,
            n_points: design.points,
            error_fraction: design.error_fraction,
            error_floor_kms: design.error_floor_kms,
            distance_mpc: 10.0,
            distance_err_mpc: 0.0,
            inclination_deg: 60.0,
            inclination_err_deg: 0.0,
            notes: "invented galaxy of a forecast design".into(),
            velocity_dependence: Some(*truth),
        };
        match generate(&spec) {
            Ok((mut table, mock_truth)) => {
                // The stars' luminosity (their mass at Υ = 1, the column's), as photometry would
                // give it.
                table.meta.luminosity_lsun = Some(stellar_mass / upsilon_disk);
                let Some(sidm) = mock_truth.sidm else {
                    last_error = "the mock has no SIDM halo".into();
                    continue;
                };
                let sigma_eff = effective_sigma_m_cm2_g(truth, sidm.sigma0_kms);
                return Ok((table, spec, sigma_eff, sidm.v_rel_kms));
            }
            Err(error) => last_error = error.to_string(),
        }
    }
    Err(InferError::Config(format!(
        "no SIDM halo of the design's range {}–{} km/s matched in {DRAW_TRIES} draws (last: {last_error})",
        bin.v200_min_kms, bin.v200_max_kms
    )))
}

/// Per-galaxy fit settings of a forecast: distance and inclination held (the invented
/// galaxies' are exact), so the forecast is optimistic by their share of a real error budget.
fn forecast_fit_config(fit: &FitConfig, seed: u64) -> FitConfig {
    FitConfig {
        priors: crate::priors::Priors {
            vary_distance: false,
            vary_inclination: false,
            ..fit.priors
        },
        seed,
        ..*fit
    }
}

/// Makes and fits `counts[b]` invented galaxies in each design bin `b`, in parallel;
/// `progress(done, total)` after each fit, whose false stops the work
/// ([`InferError::Cancelled`]). The seeds derive from `seed`, the bin and the index.
pub fn fit_mocks(
    design: &Design,
    counts: &[usize],
    settings: &ForecastSettings,
    seed: u64,
    progress: &(dyn Fn(usize, usize) -> bool + Sync),
) -> Result<Vec<FittedMock>, InferError> {
    design.check()?;
    let slots: Vec<(usize, usize)> = counts
        .iter()
        .enumerate()
        .flat_map(|(b, &n)| (0..n).map(move |k| (b, k)))
        .collect();
    let total = slots.len();
    let done = std::sync::atomic::AtomicUsize::new(0);
    let stop = std::sync::atomic::AtomicBool::new(false);
    slots
        .par_iter()
        .map(|&(b, k)| {
            if stop.load(std::sync::atomic::Ordering::Relaxed) {
                return Err(InferError::Cancelled);
            }
            let galaxy_seed =
                seed ^ ((b as u64 + 1) << 40) ^ (k as u64 + 1).wrapping_mul(0x9e37_79b9_7f4a_7c15);
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(galaxy_seed);
            let name = format!("Forecast {}-{}", b + 1, k + 1);
            let (table, spec, sigma_eff, v_rel) = draw_design_galaxy(
                design,
                &design.bins[b],
                &settings.truth,
                &settings.fit,
                &name,
                &mut rng,
            )?;
            let config = forecast_fit_config(&settings.fit, galaxy_seed);
            let fit = fit_galaxy(&table, HaloModel::Sidm, &config, &mut Silent)?;
            let posterior = GalaxyPosterior::from_fit(
                &fit,
                &config.priors.cross_section,
                settings.population.max_samples_per_galaxy,
            )?;
            let finished = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            if !progress(finished, total) {
                stop.store(true, std::sync::atomic::Ordering::Relaxed);
            }
            Ok(FittedMock {
                bin: b,
                spec,
                true_sigma_eff_cm2_g: sigma_eff,
                true_v_rel_kms: v_rel,
                posterior,
                converged: fit.summary.converged,
            })
        })
        .collect()
}

/// ΔBIC = BIC(constant) − BIC(alternative) of one catalogue, by maximum likelihood alone.
pub fn delta_bic(
    galaxies: &[GalaxyPosterior],
    alternative: VelocityModel,
    population: &PopulationSettings,
) -> Result<f64, InferError> {
    let constant = best_fit_population(
        VelocityModel::Constant,
        Treatment::Marginal,
        galaxies,
        &[],
        population,
    )?;
    let other = best_fit_population(alternative, Treatment::Marginal, galaxies, &[], population)?;
    Ok(constant.bic - other.bic)
}

/// Galaxies per design bin at `scale` times the design (at least one where the design has any).
fn scaled_counts(design: &Design, scale: f64) -> Vec<usize> {
    design
        .bins
        .iter()
        .map(|b| {
            if b.count == 0 {
                0
            } else {
                ((b.count as f64 * scale).round() as usize).max(1)
            }
        })
        .collect()
}

/// Summarises ΔBIC over catalogues.
fn power_point(scale: f64, n_galaxies: usize, mut values: Vec<f64>, repeats: bool) -> PowerPoint {
    values.sort_by(f64::total_cmp);
    let n = values.len().max(1) as f64;
    let share = |keep: &dyn Fn(f64) -> bool| values.iter().filter(|&&v| keep(v)).count() as f64 / n;
    PowerPoint {
        scale,
        n_galaxies,
        replicas: values.len(),
        median_delta_bic: quantile(&values, 0.5),
        p16_delta_bic: quantile(&values, 0.16),
        p84_delta_bic: quantile(&values, 0.84),
        mean_delta_bic: values.iter().sum::<f64>() / n,
        power_strong: share(&|v| v >= STRONG_DELTA_BIC),
        power_positive: share(&|v| v >= POSITIVE_DELTA_BIC),
        constant_preferred: share(&|v| v <= -POSITIVE_DELTA_BIC),
        repeats_pool_galaxies: repeats,
    }
}

/// Draws a catalogue of `counts[b]` galaxies per bin from the pool, with replacement.
fn draw_catalogue(
    pool: &[FittedMock],
    counts: &[usize],
    rng: &mut Xoshiro256PlusPlus,
) -> Vec<GalaxyPosterior> {
    let mut catalogue = Vec::new();
    for (b, &n) in counts.iter().enumerate() {
        let members: Vec<&FittedMock> = pool.iter().filter(|m| m.bin == b).collect();
        if members.is_empty() {
            continue;
        }
        for _ in 0..n {
            let pick = rng.random_range(0..members.len());
            catalogue.push(members[pick].posterior.clone());
        }
    }
    catalogue
}

/// Expected intervals on the alternative's parameters: full population posteriors of
/// `catalogues` catalogues.
fn expected_intervals(
    catalogues: &[Vec<GalaxyPosterior>],
    settings: &ForecastSettings,
) -> Result<Vec<ExpectedInterval>, InferError> {
    let fits: Vec<_> = catalogues
        .par_iter()
        .enumerate()
        .map(|(k, galaxies)| {
            fit_population(
                settings.alternative,
                Treatment::Marginal,
                galaxies,
                &[],
                &PopulationSettings {
                    seed: settings.seed ^ (k as u64 + 1),
                    ..settings.population
                },
                &mut Silent,
            )
        })
        .collect::<Result<_, _>>()?;
    let truth_values: Option<Vec<f64>> =
        (settings.truth.kind() == settings.alternative).then(|| {
            settings
                .truth
                .values()
                .into_iter()
                .zip(settings.alternative.parameters())
                .filter(|(_, p)| !p.held_in_population_fits)
                .map(|(v, _)| v)
                .collect()
        });
    let parameters = settings.alternative.population_parameters();
    Ok(parameters
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let intervals: Vec<_> = fits
                .iter()
                .filter_map(|f| f.parameters.get(k).and_then(|q| q.interval))
                .collect();
            let mut half_widths: Vec<f64> = intervals
                .iter()
                .map(|i| 0.5 * (i.p84.log10() - i.p16.log10()))
                .collect();
            half_widths.sort_by(f64::total_cmp);
            let mut medians: Vec<f64> = intervals.iter().map(|i| i.median).collect();
            medians.sort_by(f64::total_cmp);
            let truth = truth_values.as_ref().and_then(|t| t.get(k).copied());
            let coverage_95 = truth.map(|t| {
                intervals
                    .iter()
                    .filter(|i| i.p2_5 <= t && t <= i.p97_5)
                    .count() as f64
                    / intervals.len().max(1) as f64
            });
            ExpectedInterval {
                name: p.name.to_string(),
                unit: p.unit.to_string(),
                truth,
                median_half_width_dex: quantile(&half_widths, 0.5),
                median_of_medians: quantile(&medians, 0.5),
                coverage_95,
                catalogues: intervals.len(),
            }
        })
        .collect())
}

fn check_settings(settings: &ForecastSettings) -> Result<(), InferError> {
    if settings.alternative == VelocityModel::Constant {
        return Err(InferError::Config(
            "a forecast compares a velocity-dependent model against a constant σ/m; choose a velocity-dependent alternative".into(),
        ));
    }
    if settings.replicas == 0 || settings.scales.iter().any(|s| !(s.is_finite() && *s > 0.0)) {
        return Err(InferError::Config(
            "a forecast needs at least one catalogue per size and positive size multiples".into(),
        ));
    }
    Ok(())
}

/// The forecast by the pool approximation (module docs): fits the pool with
/// `progress(done, total)`, then compares `replicas` catalogues at each scale.
pub fn forecast(
    design: &Design,
    settings: &ForecastSettings,
    progress: &(dyn Fn(usize, usize) -> bool + Sync),
) -> Result<Forecast, InferError> {
    check_settings(settings)?;
    let started = std::time::Instant::now();
    let pool_counts: Vec<usize> = design
        .bins
        .iter()
        .map(|b| b.count * settings.pool_factor.max(1))
        .collect();
    let pool = fit_mocks(design, &pool_counts, settings, settings.seed, progress)?;
    let pool_seconds = started.elapsed().as_secs_f64();
    let started = std::time::Instant::now();
    let power = settings
        .scales
        .iter()
        .enumerate()
        .map(|(s, &scale)| {
            let counts = scaled_counts(design, scale);
            let repeats = counts.iter().zip(&pool_counts).any(|(n, p)| n > p);
            let values: Vec<f64> = (0..settings.replicas)
                .into_par_iter()
                .map(|r| {
                    let mut rng = Xoshiro256PlusPlus::seed_from_u64(
                        settings.seed ^ ((s as u64 + 1) << 48) ^ (r as u64 + 1) << 8,
                    );
                    delta_bic(
                        &draw_catalogue(&pool, &counts, &mut rng),
                        settings.alternative,
                        &settings.population,
                    )
                })
                .collect::<Result<_, _>>()?;
            Ok(power_point(scale, counts.iter().sum(), values, repeats))
        })
        .collect::<Result<Vec<_>, InferError>>()?;
    let design_counts = scaled_counts(design, 1.0);
    let catalogues: Vec<Vec<GalaxyPosterior>> = (0..settings.interval_replicas)
        .map(|r| {
            let mut rng =
                Xoshiro256PlusPlus::seed_from_u64(settings.seed ^ 0x1e7_e5a1 ^ (r as u64) << 16);
            draw_catalogue(&pool, &design_counts, &mut rng)
        })
        .collect();
    let intervals = expected_intervals(&catalogues, settings)?;
    Ok(Forecast {
        design: design.clone(),
        truth: settings.truth,
        alternative: settings.alternative,
        stellar_mass_prior: settings.fit.priors.stellar_mass_halo,
        pool_size: pool.len(),
        pool_unconverged: pool.iter().filter(|m| !m.converged).count(),
        pool: pool.iter().map(PoolEntry::from).collect(),
        power,
        intervals,
        pool_seconds,
        catalogue_seconds: started.elapsed().as_secs_f64(),
    })
}

/// The reference the pool approximation is checked against: `catalogues` catalogues of the
/// design's size, each made of freshly invented galaxies fitted end to end (no galaxy shared),
/// and their ΔBIC; `progress(done, total)` counts galaxies.
pub fn end_to_end(
    design: &Design,
    settings: &ForecastSettings,
    catalogues: usize,
    progress: &(dyn Fn(usize, usize) -> bool + Sync),
) -> Result<PowerPoint, InferError> {
    check_settings(settings)?;
    let counts: Vec<usize> = design.bins.iter().map(|b| b.count * catalogues).collect();
    // Seeds apart from the pool's, so the reference never reuses a pool galaxy.
    let mocks = fit_mocks(
        design,
        &counts,
        settings,
        settings.seed ^ 0xe2e0_0000_0000_0001,
        progress,
    )?;
    let values: Vec<f64> = (0..catalogues)
        .map(|c| {
            let galaxies: Vec<GalaxyPosterior> = design
                .bins
                .iter()
                .enumerate()
                .flat_map(|(b, bin)| {
                    mocks
                        .iter()
                        .filter(move |m| m.bin == b)
                        .skip(c * bin.count)
                        .take(bin.count)
                        .map(|m| m.posterior.clone())
                })
                .collect();
            delta_bic(&galaxies, settings.alternative, &settings.population)
        })
        .collect::<Result<_, _>>()?;
    Ok(power_point(1.0, design.n_galaxies(), values, false))
}

/// The truth's effective σ/m (cm²/g) at a mean relative speed ⟨v_rel⟩ (km/s): what the
/// galaxies of a catalogue measure, for plotting the truth beside them.
#[must_use]
pub fn truth_effective_sigma_m_cm2_g(truth: &CrossSection, v_rel_kms: f64) -> f64 {
    effective_sigma_m_cm2_g(truth, dispersion_from_mean_relative_speed_kms(v_rel_kms))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn design_bins_parse_and_refuse_clearly() {
        let bins = DesignBin::parse_list("30-60:5, 60-120:5,120-200:4").expect("parses");
        assert_eq!(bins.len(), 3);
        assert_eq!(bins[2].count, 4);
        assert!((bins[1].v200_max_kms - 120.0).abs() < 1e-12);
        for (text, says) in [
            ("30-60", "no ':COUNT'"),
            ("30:5", "no 'LOW-HIGH'"),
            ("60-30:5", "0 < LOW < HIGH"),
            ("30-x:5", "'x' is not a number"),
            ("30-60:0", "holds no galaxies"),
        ] {
            let error = DesignBin::parse_list(text).expect_err(text).to_string();
            assert!(error.contains(says), "{text}: {error}");
        }
    }

    #[test]
    fn design_galaxies_follow_the_scaling_relations() {
        let design = Design {
            bins: DesignBin::parse_list("40-40.001:1").expect("parses"),
            extent_r200: 0.1,
            points: 12,
            error_fraction: 0.05,
            error_floor_kms: 1.0,
            age_gyr: 10.0,
        };
        let truth = CrossSection::constant(2.0).expect("valid");
        let fit = FitConfig::default();
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
        let (table, spec, sigma_eff, v_rel) =
            draw_design_galaxy(&design, &design.bins[0], &truth, &fit, "G", &mut rng)
                .expect("a galaxy");
        assert_eq!(table.radius_kpc.len(), 12);
        // A constant σ/m is its own effective value.
        assert!((sigma_eff - 2.0).abs() < 1e-9);
        assert!(v_rel > 0.0);
        let r200 = fit.cosmology.r200_kpc_from_v200(40.0);
        assert!((spec.r_max_kpc - 0.1 * r200).abs() < 1e-3 * r200);
        // Stars within 0.5 dex (over 3σ of the 0.15 dex scatter) of the Moster et al. relation.
        let m200 = 40.0f64.powi(2) * r200 / caldera_physics::units::G_KPC_KMS2_PER_MSUN;
        let median = MOSTER_2013.stellar_mass_msun(m200).expect("valid");
        let stars = spec.stars.expect("a stellar disk").mass_msun;
        assert!((stars / median).log10().abs() < 0.5, "{stars} vs {median}");
    }
}
