//! A prior-only run (`caldera fit --prior-only`, `FitConfig::prior_only`) samples what the priors
//! imply. For the NFW halo, sampled in (log V200, log c200), the stated prior is log-uniform V200
//! (so log M200 ∝ 3 log V200 is uniform) and log c200 normal around the Dutton & Macciò (2014)
//! relation with 0.11 dex scatter. The derived log M200 and the standardised
//! z = (log c200 − log c_DM(M200)) / 0.11 must follow U and N(0, 1): Kolmogorov–Smirnov over about
//! 20 000 draws (one per autocorrelation time), at the 0.1% level (critical D = 1.95/√n, the
//! asymptotic Kolmogorov value; Massey 1951).
//!
//! For the SIDM halo, sampled core-first in (log ρ0, log σ0, log σ/m) with the outer halo's
//! prior carried over by a Jacobian, the stated prior is the same outer-halo prior and a
//! log-uniform σ/m, restricted to the halos whose lowest-density core exists and lies within the
//! sampled bounds. That restriction has no closed form, so the reference is drawn by an
//! independent path: outer halos, σ/m and nuisances drawn from the stated prior, kept when the
//! halo-first search finds a lowest-density core within the bounds. Chain and reference are
//! compared by the two-sample Kolmogorov–Smirnov test at the 0.1% level (critical
//! D = 1.95 √((n + m)/(n m))).

use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{GalaxyTable, ReadOptions, read_table};
use caldera_infer::model::Derived;
use caldera_infer::model::GalaxyModel;
use caldera_infer::priors::Priors;
use caldera_infer::sampler::{RunConfig, Silent};
use caldera_infer::{FitConfig, fit_galaxy};
use caldera_physics::cosmology::DUTTON_MACCIO_SCATTER_DEX;
use caldera_physics::{
    Branch, Cosmology, CrossSection, Nfw, ParamId, ParamValues, SidmSetup, sidm,
};
use rand::SeedableRng;
use rand_distr::{Distribution, Normal, Uniform};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;

/// Kolmogorov–Smirnov distance between the sample and a continuous CDF.
fn ks_distance(mut sample: Vec<f64>, cdf: impl Fn(f64) -> f64) -> f64 {
    sample.sort_by(f64::total_cmp);
    let n = sample.len() as f64;
    sample
        .iter()
        .enumerate()
        .map(|(i, &x)| {
            let f = cdf(x);
            (f - i as f64 / n)
                .abs()
                .max((((i + 1) as f64) / n - f).abs())
        })
        .fold(0.0, f64::max)
}

/// The standard normal CDF (Abramowitz & Stegun 7.1.26 erf, |error| < 1.5e-7).
fn normal_cdf(z: f64) -> f64 {
    let x = z.abs() / std::f64::consts::SQRT_2;
    let t = 1.0 / (1.0 + 0.327_591_1 * x);
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    let erf = 1.0 - poly * (-x * x).exp();
    if z >= 0.0 {
        0.5 * (1.0 + erf)
    } else {
        0.5 * (1.0 - erf)
    }
}

/// Kiln D03, the demo dwarf both prior-only runs use.
fn demo_dwarf() -> GalaxyTable {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_galaxies/kiln_d03.ecsv");
    read_table(&path, &ReadOptions::default()).expect("the demo table")
}

/// The default fit configuration, sampling the prior alone for exactly `steps` steps.
fn prior_only_config(steps: usize) -> FitConfig {
    FitConfig {
        prior_only: true,
        run: RunConfig {
            min_steps: steps,
            max_steps: steps,
            ..RunConfig::default()
        },
        ..FitConfig::default()
    }
}

#[test]
fn nfw_prior_only_draws_follow_the_stated_prior() {
    let table = demo_dwarf();
    let config = prior_only_config(14_000);
    let result = fit_galaxy(&table, HaloModel::Nfw, &config, &mut Silent).expect("runs");
    assert!(result.summary.prior_only);
    let tau = result.summary.tau_max.ceil().max(1.0) as usize;
    let chain = &result.chain;
    let (mut log_m200, mut z) = (Vec::new(), Vec::new());
    let cosmology = Cosmology::default();
    let mut offset = f64::NAN;
    for (step, walker) in chain.kept(result.burn_in, tau) {
        let m200 = chain.derived(step, walker, Derived::M200 as usize);
        let v200 = chain.derived(step, walker, Derived::V200 as usize);
        let c200 = chain.derived(step, walker, Derived::C200 as usize);
        // log M200 − 3 log V200 is the same constant for every halo (M200 = V200³ / (10 G H0)).
        offset = m200.log10() - 3.0 * v200.log10();
        log_m200.push(m200.log10());
        z.push(standardised(&cosmology, m200, c200));
    }
    let n = log_m200.len();
    assert!(n > 15_000, "{n} draws");
    let (lo, hi) = Priors::default().halo.log10_v200;
    let (m_lo, m_hi) = (3.0 * lo + offset, 3.0 * hi + offset);
    let d_mass = ks_distance(log_m200, |x| ((x - m_lo) / (m_hi - m_lo)).clamp(0.0, 1.0));
    let d_concentration = ks_distance(z, normal_cdf);
    let critical = 1.95 / (n as f64).sqrt();
    println!(
        "{n} draws (τ = {tau} steps): KS D(log M200 vs uniform) = {d_mass:.4}, D(z vs N(0,1)) = {d_concentration:.4}, critical {critical:.4}"
    );
    assert!(d_mass < critical, "log M200: D = {d_mass} ≥ {critical}");
    assert!(
        d_concentration < critical,
        "log c200: D = {d_concentration} ≥ {critical}"
    );
}

/// Two-sample Kolmogorov–Smirnov distance.
fn ks_two_sample(mut a: Vec<f64>, mut b: Vec<f64>) -> f64 {
    a.sort_by(f64::total_cmp);
    b.sort_by(f64::total_cmp);
    let (n, m) = (a.len() as f64, b.len() as f64);
    let (mut i, mut j, mut d) = (0usize, 0usize, 0.0f64);
    while i < a.len() && j < b.len() {
        let x = a[i].min(b[j]);
        while i < a.len() && a[i] <= x {
            i += 1;
        }
        while j < b.len() && b[j] <= x {
            j += 1;
        }
        d = d.max((i as f64 / n - j as f64 / m).abs());
    }
    d
}

/// (log10 M200, z = standardised log10 c200, log10 σ/m) of one halo.
type Draw = [f64; 3];

fn standardised(cosmology: &Cosmology, m200: f64, c200: f64) -> f64 {
    (c200.log10() - cosmology.dutton_maccio_c200(m200).log10()) / DUTTON_MACCIO_SCATTER_DEX
}

/// One draw from the stated SIDM prior, restricted as the module documentation says; None when
/// the drawn halo is rejected.
fn reference_draw(model: &GalaxyModel, seed: u64) -> Option<Draw> {
    let priors = model.priors;
    let cosmology = model.cosmology;
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let unit = Uniform::new(0.0f64, 1.0).expect("valid range");
    let normal = Normal::new(0.0f64, 1.0).expect("valid");
    // Nuisances (Υ, distance, inclination) from their truncated priors.
    let layout = model.layout();
    let nuisance = |rng: &mut Xoshiro256PlusPlus| loop {
        let theta = layout.draw(rng);
        if layout.specs()[3..]
            .iter()
            .zip(&theta[3..])
            .all(|(s, &x)| s.contains(x))
        {
            return layout.values(&theta);
        }
    };
    let mut values: ParamValues = nuisance(&mut rng);
    let (v_lo, v_hi) = priors.halo.log10_v200;
    let (c_lo, c_hi) = priors.halo.log10_c200;
    let log_v200 = v_lo + (v_hi - v_lo) * unit.sample(&mut rng);
    let v200 = 10f64.powf(log_v200);
    let m200 = Nfw::from_v200_c200(v200, 10.0, &cosmology)
        .and_then(|h| h.virial(&cosmology))
        .expect("virial")
        .m200_msun;
    let log_c200 = cosmology.dutton_maccio_c200(m200).log10()
        + priors.concentration_scatter_dex * normal.sample(&mut rng);
    if !(c_lo..=c_hi).contains(&log_c200) {
        return None;
    }
    let (s_lo, s_hi) = (
        priors.cross_section.min_cm2_g.log10(),
        priors.cross_section.max_cm2_g.log10(),
    );
    let log_sigma_m = s_lo + (s_hi - s_lo) * unit.sample(&mut rng);
    let baryons = model.baryons_at_values(&values).ok()?;
    let setup = SidmSetup {
        cross_section: CrossSection::constant(10f64.powf(log_sigma_m)).ok()?,
        age_gyr: model.age_gyr,
        baryons: &baryons,
        cosmology,
    };
    let nfw = Nfw::from_v200_c200(v200, 10f64.powf(log_c200), &cosmology).ok()?;
    let core = sidm::halo_first(&setup, &nfw, Branch::LowestDensity).ok()?;
    values.set(ParamId::Rho0, core.rho0_msun_kpc3());
    values.set(ParamId::Sigma0, core.sigma0_kms());
    values.set(ParamId::SigmaM, 10f64.powf(log_sigma_m));
    model.in_bounds(&model.theta_from_values(&values)).then(|| {
        [
            m200.log10(),
            standardised(&cosmology, m200, 10f64.powf(log_c200)),
            log_sigma_m,
        ]
    })
}

#[test]
fn sidm_prior_only_draws_follow_the_stated_prior() {
    let table = demo_dwarf();
    let config = prior_only_config(30_000);
    let result = fit_galaxy(&table, HaloModel::Sidm, &config, &mut Silent).expect("runs");
    let cosmology = Cosmology::default();
    let tau = result.summary.tau_max.ceil().max(1.0) as usize;
    let chain = &result.chain;
    let mut sampled: Vec<Draw> = Vec::new();
    for (step, walker) in chain.kept(result.burn_in, tau) {
        let value = |d: Derived| chain.derived(step, walker, d as usize);
        let (m200, c200) = (value(Derived::M200), value(Derived::C200));
        sampled.push([
            m200.log10(),
            standardised(&cosmology, m200, c200),
            value(Derived::SigmaM).log10(),
        ]);
    }
    let model = GalaxyModel::new(
        &table,
        HaloModel::Sidm,
        config.priors,
        cosmology,
        config.age_gyr,
    )
    .expect("model");
    let tries: u64 = 6000;
    let reference: Vec<Draw> = (0..tries)
        .into_par_iter()
        .filter_map(|seed| reference_draw(&model, seed))
        .collect();
    let (n, m) = (sampled.len(), reference.len());
    assert!(n > 3000 && m > 3000, "{n} chain draws, {m} reference draws");
    let critical = 1.95 * ((n + m) as f64 / (n * m) as f64).sqrt();
    let names = ["log M200", "z(log c200)", "log sigma/m"];
    let distances: Vec<f64> = (0..3)
        .map(|k| {
            ks_two_sample(
                sampled.iter().map(|d| d[k]).collect(),
                reference.iter().map(|d| d[k]).collect(),
            )
        })
        .collect();
    println!(
        "SIDM prior only: {n} chain draws (τ = {tau} steps), {m} of {tries} reference halos kept; KS D: {} (critical {critical:.4})",
        names
            .iter()
            .zip(&distances)
            .map(|(name, d)| format!("{name} {d:.4}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    for (name, d) in names.iter().zip(&distances) {
        assert!(*d < critical, "{name}: D = {d} ≥ {critical}");
    }
}
