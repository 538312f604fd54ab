//! A prior-only run (`caldera fit --prior-only`, `FitConfig::prior_only`) samples what the priors
//! imply. For the NFW halo, sampled in (log V200, log c200), the stated prior is log-uniform V200
//! (so log M200 ∝ 3 log V200 is uniform) and log c200 normal around the Dutton & Macciò (2014)
//! relation with 0.11 dex scatter. The derived log M200 and the standardised
//! z = (log c200 − log c_DM(M200)) / 0.11 must follow U and N(0, 1): Kolmogorov–Smirnov over about
//! 20 000 draws (one per autocorrelation time), at the 0.1% level (critical D = 1.95/√n, the
//! asymptotic Kolmogorov value; Massey 1951).

use std::path::Path;

use caldera_data::session::HaloModel;
use caldera_data::{ReadOptions, read_table};
use caldera_infer::model::Derived;
use caldera_infer::priors::Priors;
use caldera_infer::sampler::{RunConfig, Silent};
use caldera_infer::{FitConfig, fit_galaxy};
use caldera_physics::Cosmology;
use caldera_physics::cosmology::DUTTON_MACCIO_SCATTER_DEX;

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

#[test]
fn nfw_prior_only_draws_follow_the_stated_prior() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_galaxies/kiln_d03.ecsv");
    let table = read_table(&path, &ReadOptions::default()).expect("the demo table");
    let config = FitConfig {
        prior_only: true,
        run: RunConfig {
            min_steps: 14_000,
            max_steps: 14_000,
            ..RunConfig::default()
        },
        ..FitConfig::default()
    };
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
        z.push(
            (c200.log10() - cosmology.dutton_maccio_c200(m200).log10()) / DUTTON_MACCIO_SCATTER_DEX,
        );
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
