//! Parallel tempering and its evidence against outside references.
//!
//! - Bimodal target with known weights (0.3, 0.7; two unit Gaussians 10σ apart, where a single
//!   ensemble cannot move between them): the cold rung's mode weights agree with the truth
//!   within 5 Monte Carlo standard errors.
//! - ln Z by thermodynamic integration against dynesty's nested sampling
//!   (tests/reference/make_evidence_fixtures.py → fixtures/evidence_dynesty.json) on a
//!   correlated Gaussian, two Gaussian shells and an NFW rotation-curve posterior of the demo
//!   galaxy Kiln D03 written out in Python: agreement within 3 combined standard uncertainties
//!   (and with the analytic values where they exist).

use std::path::Path;

use caldera_data::{ReadOptions, read_table};
use caldera_infer::diagnostics::integrated_autocorr_times;
use caldera_infer::sampler::MoveMix;
use caldera_infer::tempering::{LadderConfig, SplitDensity, TemperedRun, run_tempered};
use rand::SeedableRng;
use rand_distr::{Distribution, Uniform};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde_json::Value;

const LN_2PI: f64 = 1.837_877_066_409_345_3;

/// A uniform prior on a box, normalised.
fn box_log_prior(theta: &[f64], bounds: &[(f64, f64)]) -> f64 {
    let mut log_volume = 0.0;
    for (&x, &(a, b)) in theta.iter().zip(bounds) {
        if !(a..=b).contains(&x) {
            return f64::NEG_INFINITY;
        }
        log_volume += (b - a).ln();
    }
    -log_volume
}

/// `n` walkers drawn from the box prior.
fn prior_draws(bounds: &[(f64, f64)], n: usize, seed: u64) -> Vec<Vec<f64>> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    (0..n)
        .map(|_| {
            bounds
                .iter()
                .map(|&(a, b)| Uniform::new(a, b).expect("valid box").sample(&mut rng))
                .collect()
        })
        .collect()
}

struct Bimodal;

impl SplitDensity for Bimodal {
    fn dim(&self) -> usize {
        2
    }
    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        let log_prior = { box_log_prior(theta, &[(-20.0, 20.0), (-20.0, 20.0)]) };
        if !log_prior.is_finite() {
            return (log_prior, f64::NEG_INFINITY);
        }
        let log_likelihood = {
            let mode = |c: f64, w: f64| {
                w.ln() - LN_2PI - 0.5 * ((theta[0] - c).powi(2) + theta[1].powi(2))
            };
            let (a, b) = (mode(-5.0, 0.3), mode(5.0, 0.7));
            a.max(b) + (-(a - b).abs()).exp().ln_1p()
        };
        (log_prior, log_likelihood)
    }
}

fn run(
    density: &impl SplitDensity,
    bounds: &[(f64, f64)],
    config: &LadderConfig,
    seed: u64,
) -> TemperedRun {
    let initial = prior_draws(bounds, 32, seed);
    run_tempered(density, &MoveMix::default(), &initial, config, seed).expect("runs")
}

#[test]
fn tempering_recovers_the_weights_of_two_separated_modes() {
    let config = LadderConfig {
        rungs: 12,
        beta_min: 1e-4,
        steps: 6000,
        ..LadderConfig::default()
    };
    let out = run(&Bimodal, &[(-20.0, 20.0), (-20.0, 20.0)], &config, 7);
    let chain = &out.cold;
    let steps = chain.steps();
    let mut left = 0usize;
    let mut total = 0usize;
    for step in 0..steps {
        for walker in 0..chain.n_walkers {
            total += 1;
            if chain.position(step, walker, 0) < 0.0 {
                left += 1;
            }
        }
    }
    let weight = left as f64 / total as f64;
    // Monte Carlo error: independent samples = samples / τ of the mode indicator's parameter.
    let tau = integrated_autocorr_times(chain, 0)[0].max(1.0);
    let independent = total as f64 / tau;
    let standard_error = (0.3 * 0.7 / independent).sqrt();
    println!(
        "left-mode weight {weight:.4} (truth 0.3), τ = {tau:.1} steps, MC standard error {standard_error:.4}; swaps {:?}",
        out.evidence.swap_acceptance
    );
    assert!(
        (weight - 0.3).abs() < 5.0 * standard_error,
        "weight {weight} vs 0.3 ± {standard_error}"
    );
    // Its evidence: the mixture integrates to one inside the box, so ln Z = −ln 1600.
    let e = &out.evidence;
    let truth = -(1600f64.ln());
    println!(
        "bimodal ln Z = {} ± {} (truth {truth})",
        e.log_evidence, e.log_evidence_err
    );
    assert!((e.log_evidence - truth).abs() < 3.0 * e.log_evidence_err.max(0.02));
}

fn fixture() -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/reference/fixtures/evidence_dynesty.json");
    serde_json::from_str(&std::fs::read_to_string(&path).expect("the dynesty fixture"))
        .expect("valid JSON")
}

fn number(v: &Value, key: &str) -> f64 {
    v[key]
        .as_f64()
        .unwrap_or_else(|| panic!("{key} in the fixture"))
}

/// Checks ln Z against dynesty's (and the analytic value when given).
fn check(name: &str, out: &TemperedRun) {
    let reference = &fixture()[name];
    let (z, z_err) = (
        number(reference, "log_evidence"),
        number(reference, "log_evidence_err"),
    );
    let e = &out.evidence;
    let combined = e.log_evidence_err.hypot(z_err);
    println!(
        "{name}: Caldera ln Z = {:.4} ± {:.4}, dynesty {z:.4} ± {z_err:.4}, analytic {:?}; swaps {:?}",
        e.log_evidence,
        e.log_evidence_err,
        reference.get("analytic").and_then(Value::as_f64),
        e.swap_acceptance
    );
    assert!(
        (e.log_evidence - z).abs() < 3.0 * combined,
        "{name}: {} ± {} vs dynesty {z} ± {z_err}",
        e.log_evidence,
        e.log_evidence_err
    );
    if let Some(truth) = reference.get("analytic").and_then(Value::as_f64) {
        assert!(
            (e.log_evidence - truth).abs() < 3.0 * e.log_evidence_err.max(0.02),
            "{name}: {} ± {} vs analytic {truth}",
            e.log_evidence,
            e.log_evidence_err
        );
    }
}

struct CorrelatedGaussian {
    inverse: [[f64; 3]; 3],
    log_norm: f64,
}

impl CorrelatedGaussian {
    fn new(rho: f64) -> Self {
        // Σ_ij = ρ^|i−j| (an AR(1) matrix): its inverse is tridiagonal and det Σ = (1 − ρ²)².
        let s = 1.0 - rho * rho;
        let inverse = [
            [1.0 / s, -rho / s, 0.0],
            [-rho / s, (1.0 + rho * rho) / s, -rho / s],
            [0.0, -rho / s, 1.0 / s],
        ];
        Self {
            inverse,
            log_norm: -0.5 * (3.0 * LN_2PI + 2.0 * s.ln()),
        }
    }
}

impl SplitDensity for CorrelatedGaussian {
    fn dim(&self) -> usize {
        3
    }
    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        let log_prior = { box_log_prior(theta, &[(-10.0, 10.0); 3]) };
        if !log_prior.is_finite() {
            return (log_prior, f64::NEG_INFINITY);
        }
        let log_likelihood = {
            let mut q = 0.0;
            for i in 0..3 {
                for j in 0..3 {
                    q += theta[i] * self.inverse[i][j] * theta[j];
                }
            }
            self.log_norm - 0.5 * q
        };
        (log_prior, log_likelihood)
    }
}

#[test]
fn evidence_of_a_correlated_gaussian_agrees_with_dynesty() {
    let rho = number(&fixture()["correlated_gaussian"]["setup"], "rho");
    let config = LadderConfig {
        rungs: 20,
        beta_min: 1e-5,
        steps: 4000,
        ..LadderConfig::default()
    };
    let out = run(
        &CorrelatedGaussian::new(rho),
        &[(-10.0, 10.0); 3],
        &config,
        11,
    );
    check("correlated_gaussian", &out);
}

struct Shells;

impl SplitDensity for Shells {
    fn dim(&self) -> usize {
        2
    }
    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        let log_prior = { box_log_prior(theta, &[(-6.0, 6.0); 2]) };
        if !log_prior.is_finite() {
            return (log_prior, f64::NEG_INFINITY);
        }
        let log_likelihood = {
            let (r, w) = (2.0, 0.1);
            let term = |c: f64| {
                let d = (theta[0] - c).hypot(theta[1]) - r;
                -0.5 * d * d / (w * w) - 0.5 * (LN_2PI + 2.0 * f64::ln(w))
            };
            let (a, b) = (term(-3.5), term(3.5));
            a.max(b) + (-(a - b).abs()).exp().ln_1p()
        };
        (log_prior, log_likelihood)
    }
}

#[test]
fn evidence_of_two_gaussian_shells_agrees_with_dynesty() {
    let config = LadderConfig {
        rungs: 20,
        beta_min: 1e-4,
        steps: 6000,
        ..LadderConfig::default()
    };
    let out = run(&Shells, &[(-6.0, 6.0); 2], &config, 13);
    check("gaussian_shells", &out);
}

/// The NFW rotation-curve posterior of the fixture script, term for term.
struct NfwGalaxy {
    radius: Vec<f64>,
    v_obs: Vec<f64>,
    v_err: Vec<f64>,
    v_baryon_sq: Vec<f64>,
    log_norm: f64,
    hubble: f64,
    bounds: [(f64, f64); 2],
}

impl SplitDensity for NfwGalaxy {
    fn dim(&self) -> usize {
        2
    }
    fn log_prior_and_likelihood(&self, theta: &[f64]) -> (f64, f64) {
        let log_prior = { box_log_prior(theta, &self.bounds) };
        if !log_prior.is_finite() {
            return (log_prior, f64::NEG_INFINITY);
        }
        let log_likelihood = {
            let (v200, c) = (10f64.powf(theta[0]), 10f64.powf(theta[1]));
            let r200 = 100.0 * v200 / self.hubble;
            let mass = |y: f64| y.ln_1p() - y / (1.0 + y);
            let mut chi2 = 0.0;
            for k in 0..self.radius.len() {
                let x = self.radius[k] / r200;
                let vh2 = v200 * v200 * mass(c * x) / (x * mass(c));
                let model = (vh2 + self.v_baryon_sq[k]).sqrt();
                chi2 += ((self.v_obs[k] - model) / self.v_err[k]).powi(2);
            }
            self.log_norm - 0.5 * chi2
        };
        (log_prior, log_likelihood)
    }
}

#[test]
fn evidence_of_an_nfw_rotation_curve_agrees_with_dynesty() {
    let setup = &fixture()["nfw_kiln_d03"]["setup"];
    let galaxy = setup["galaxy"].as_str().expect("galaxy file");
    let upsilon = number(setup, "upsilon_disk");
    let range = |key: &str| -> (f64, f64) {
        let v = &setup[key];
        (v[0].as_f64().expect("low"), v[1].as_f64().expect("high"))
    };
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo_galaxies")
        .join(galaxy);
    let table = read_table(&path, &ReadOptions::default()).expect("the demo table");
    let signed = |v: f64| v * v.abs();
    let density = NfwGalaxy {
        v_baryon_sq: table
            .v_gas_kms
            .iter()
            .zip(&table.v_disk_kms)
            .map(|(&g, &d)| signed(g) + upsilon * signed(d))
            .collect(),
        log_norm: -table
            .v_err_kms
            .iter()
            .map(|e| (e * (2.0 * std::f64::consts::PI).sqrt()).ln())
            .sum::<f64>(),
        radius: table.radius_kpc.clone(),
        v_obs: table.v_obs_kms.clone(),
        v_err: table.v_err_kms.clone(),
        hubble: number(setup, "hubble_kms_mpc"),
        bounds: [range("log10_v200"), range("log10_c200")],
    };
    let config = LadderConfig {
        rungs: 20,
        beta_min: 1e-5,
        steps: 4000,
        ..LadderConfig::default()
    };
    let out = run(&density, &density.bounds, &config, 17);
    check("nfw_kiln_d03", &out);
}
