//! Caldera's ensemble sampler against emcee and against closed forms.
//!
//! References: emcee 3.1.6 (stretch move, a = 2) on the same toy posteriors, via
//! tests/reference/make_sampler_fixtures.py → tests/reference/fixtures/sampler_emcee.json; the
//! exact moments of those posteriors; and the closed-form posterior of a Gaussian linear model
//! with Gaussian priors (Bishop 2006, "Pattern Recognition and Machine Learning", eqs. 3.53–3.54).
//!
//! Tolerances are Monte-Carlo based: with N samples and autocorrelation time τ, the standard
//! error of a mean is √(var·τ/N) and of a variance about var·√(2τ/N); differences are allowed up
//! to 5 combined standard errors (a false alarm about once in 10⁶ checks).

use caldera_checks::read_fixture;
use caldera_infer::sampler::{EnsembleState, LogDensity, RunConfig, Silent, StretchMove, run};
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_xoshiro::Xoshiro256PlusPlus;
use serde::Deserialize;

#[derive(Deserialize)]
struct EmceeRun {
    n_walkers: usize,
    n_steps: usize,
    burn: usize,
    mean: Vec<f64>,
    variance: Vec<f64>,
    covariance: Vec<Vec<f64>>,
    tau: Vec<f64>,
    acceptance: f64,
}

#[derive(Deserialize)]
struct Fixture {
    gaussian: EmceeRun,
    banana: EmceeRun,
}

struct Gaussian {
    mean: [f64; 3],
    precision: [[f64; 3]; 3],
}

impl LogDensity for Gaussian {
    fn dim(&self) -> usize {
        3
    }
    fn log_density(&self, x: &[f64], _derived: &mut [f64]) -> f64 {
        let d: Vec<f64> = (0..3).map(|i| x[i] - self.mean[i]).collect();
        let mut q = 0.0;
        for i in 0..3 {
            for j in 0..3 {
                q += d[i] * self.precision[i][j] * d[j];
            }
        }
        -0.5 * q
    }
}

struct Banana;

impl LogDensity for Banana {
    fn dim(&self) -> usize {
        2
    }
    fn log_density(&self, x: &[f64], _derived: &mut [f64]) -> f64 {
        -0.5 * x[0] * x[0] - 0.5 * ((x[1] - x[0] * x[0]) / 0.5).powi(2)
    }
}

fn normal(rng: &mut Xoshiro256PlusPlus) -> f64 {
    Distribution::<f64>::sample(&StandardNormal, rng)
}

/// Inverse of a 3×3 matrix by cofactors.
fn invert3(m: [[f64; 3]; 3]) -> [[f64; 3]; 3] {
    let det = m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
    std::array::from_fn(|i| {
        std::array::from_fn(|j| {
            // inv[i][j] = cofactor C[j][i] / det: drop row j and column i.
            let rows: Vec<usize> = (0..3).filter(|&r| r != j).collect();
            let cols: Vec<usize> = (0..3).filter(|&c| c != i).collect();
            let minor = m[rows[0]][cols[0]] * m[rows[1]][cols[1]]
                - m[rows[0]][cols[1]] * m[rows[1]][cols[0]];
            let sign = if (i + j) % 2 == 0 { 1.0 } else { -1.0 };
            sign * minor / det
        })
    })
}

/// Samples (burned, flattened) and their moments.
struct Moments {
    mean: Vec<f64>,
    covariance: Vec<Vec<f64>>,
    tau: Vec<f64>,
    n: usize,
    acceptance: f64,
}

fn sample<D: LogDensity>(
    density: &D,
    walkers: usize,
    steps: usize,
    burn: usize,
    seed: u64,
) -> Moments {
    let dim = density.dim();
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed);
    let initial: Vec<Vec<f64>> = (0..walkers)
        .map(|_| (0..dim).map(|_| 0.1 * normal(&mut rng)).collect())
        .collect();
    let state = EnsembleState::new(density, initial, seed).expect("valid start");
    let config = RunConfig {
        tau_factor: f64::INFINITY,
        min_steps: steps,
        max_steps: steps,
        check_every: steps,
        tau_tolerance: 0.0,
    };
    let outcome = run(
        density,
        &StretchMove::default(),
        state,
        &config,
        &mut Silent,
    );
    let kept: Vec<(usize, usize)> = outcome.chain.kept(burn, 1).collect();
    let n = kept.len();
    let mean: Vec<f64> = (0..dim)
        .map(|p| {
            kept.iter()
                .map(|&(s, w)| outcome.chain.position(s, w, p))
                .sum::<f64>()
                / n as f64
        })
        .collect();
    let covariance: Vec<Vec<f64>> = (0..dim)
        .map(|a| {
            (0..dim)
                .map(|b| {
                    kept.iter()
                        .map(|&(s, w)| {
                            (outcome.chain.position(s, w, a) - mean[a])
                                * (outcome.chain.position(s, w, b) - mean[b])
                        })
                        .sum::<f64>()
                        / (n - 1) as f64
                })
                .collect()
        })
        .collect();
    Moments {
        mean,
        covariance,
        tau: caldera_infer::diagnostics::integrated_autocorr_times(&outcome.chain, burn),
        n,
        acceptance: outcome.state.acceptance_fraction(),
    }
}

fn compare(name: &str, ours: &Moments, emcee: &EmceeRun, exact_mean: &[f64], exact_var: &[f64]) {
    let emcee_n = (emcee.n_steps - emcee.burn) * emcee.n_walkers;
    for p in 0..exact_mean.len() {
        let var = exact_var[p];
        let se_ours = (var * ours.tau[p] / ours.n as f64).sqrt();
        let se_emcee = (var * emcee.tau[p] / emcee_n as f64).sqrt();
        let mean = ours.mean[p];
        assert!(
            (mean - exact_mean[p]).abs() < 5.0 * se_ours,
            "{name}[{p}] mean {mean} vs exact {}",
            exact_mean[p]
        );
        assert!(
            (mean - emcee.mean[p]).abs() < 5.0 * se_ours.hypot(se_emcee),
            "{name}[{p}] mean {mean} vs emcee {}",
            emcee.mean[p]
        );
        let our_var = ours.covariance[p][p];
        let rel_ours = (2.0 * ours.tau[p] / ours.n as f64).sqrt();
        let rel_emcee = (2.0 * emcee.tau[p] / emcee_n as f64).sqrt();
        // The banana's x2 has heavy tails: its variance estimate converges more slowly; the
        // kurtosis factor (≈ 3 for x2 here) widens the Gaussian formula by √(κ − 1)/√2.
        let tail_factor = if name == "banana" { 2.0 } else { 1.0 };
        assert!(
            (our_var / var - 1.0).abs() < 5.0 * tail_factor * rel_ours,
            "{name}[{p}] variance {our_var} vs exact {var}"
        );
        assert!(
            (our_var / emcee.variance[p] - 1.0).abs()
                < 5.0 * tail_factor * rel_ours.hypot(rel_emcee),
            "{name}[{p}] variance {our_var} vs emcee {}",
            emcee.variance[p]
        );
    }
    assert!(
        (ours.acceptance - emcee.acceptance).abs() < 0.02,
        "{name} acceptance {} vs emcee {}",
        ours.acceptance,
        emcee.acceptance
    );
    for p in 0..exact_mean.len() {
        assert!(
            (ours.tau[p] / emcee.tau[p] - 1.0).abs() < 0.35,
            "{name}[{p}] tau {} vs emcee {}",
            ours.tau[p],
            emcee.tau[p]
        );
    }
}

#[test]
fn correlated_gaussian_matches_emcee_and_the_exact_moments() {
    let f: Fixture = read_fixture("sampler_emcee.json");
    let e = &f.gaussian;
    let covariance = [[1.0, 0.8, 0.2], [0.8, 2.0, -0.5], [0.2, -0.5, 0.5]];
    let density = Gaussian {
        mean: [1.0, -2.0, 0.5],
        precision: invert3(covariance),
    };
    let ours = sample(&density, e.n_walkers, e.n_steps, e.burn, 11);
    compare("gaussian", &ours, e, &density.mean, &[1.0, 2.0, 0.5]);
    // Off-diagonal covariances within 5 standard errors (≈ √((σ_a²σ_b² + c²) τ/N)).
    for a in 0..3 {
        for b in 0..3 {
            let se = ((covariance[a][a] * covariance[b][b] + covariance[a][b] * covariance[a][b])
                * ours.tau[a].max(ours.tau[b])
                / ours.n as f64)
                .sqrt();
            assert!(
                (ours.covariance[a][b] - covariance[a][b]).abs() < 5.0 * se,
                "cov[{a}][{b}]"
            );
            assert!(
                (ours.covariance[a][b] - e.covariance[a][b]).abs() < 7.0 * se,
                "cov[{a}][{b}] vs emcee"
            );
        }
    }
}

#[test]
fn banana_matches_emcee_and_the_exact_moments() {
    let f: Fixture = read_fixture("sampler_emcee.json");
    let e = &f.banana;
    let ours = sample(&Banana, e.n_walkers, e.n_steps, e.burn, 12);
    compare("banana", &ours, e, &[0.0, 1.0], &[1.0, 0.25 + 2.0]);
}

/// y = a + b x + ε, ε ~ N(0, σ²), priors a, b ~ N(0, 10²).
struct LinearModel {
    x: Vec<f64>,
    y: Vec<f64>,
    sigma: f64,
}

impl LogDensity for LinearModel {
    fn dim(&self) -> usize {
        2
    }
    fn log_density(&self, theta: &[f64], _derived: &mut [f64]) -> f64 {
        let chi2: f64 = self
            .x
            .iter()
            .zip(&self.y)
            .map(|(x, y)| ((y - theta[0] - theta[1] * x) / self.sigma).powi(2))
            .sum();
        -0.5 * chi2 - 0.5 * (theta[0] * theta[0] + theta[1] * theta[1]) / 100.0
    }
}

#[test]
fn gaussian_linear_model_matches_its_closed_form_posterior() {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(3);
    let sigma = 0.5;
    let x: Vec<f64> = (0..20).map(|i| f64::from(i) * 0.25).collect();
    let y: Vec<f64> = x
        .iter()
        .map(|x| 1.5 + 0.7 * x + sigma * normal(&mut rng))
        .collect();
    // Posterior precision Λ = XᵀX/σ² + I/100 and mean μ = Λ⁻¹ Xᵀy/σ².
    let (sx, sxx, sy, sxy) = x
        .iter()
        .zip(&y)
        .fold((0.0, 0.0, 0.0, 0.0), |(a, b, c, d), (x, y)| {
            (a + x, b + x * x, c + y, d + x * y)
        });
    let n = x.len() as f64;
    let s2 = sigma * sigma;
    let lambda = [[n / s2 + 0.01, sx / s2], [sx / s2, sxx / s2 + 0.01]];
    let det = lambda[0][0] * lambda[1][1] - lambda[0][1] * lambda[1][0];
    let cov = [
        [lambda[1][1] / det, -lambda[0][1] / det],
        [-lambda[1][0] / det, lambda[0][0] / det],
    ];
    let rhs = [sy / s2, sxy / s2];
    let mu = [
        cov[0][0] * rhs[0] + cov[0][1] * rhs[1],
        cov[1][0] * rhs[0] + cov[1][1] * rhs[1],
    ];

    let model = LinearModel { x, y, sigma };
    let ours = sample(&model, 32, 20_000, 1_000, 4);
    for p in 0..2 {
        let se = (cov[p][p] * ours.tau[p] / ours.n as f64).sqrt();
        assert!(
            (ours.mean[p] - mu[p]).abs() < 5.0 * se,
            "mean[{p}] {} vs {}",
            ours.mean[p],
            mu[p]
        );
        let rel = (2.0 * ours.tau[p] / ours.n as f64).sqrt();
        assert!(
            (ours.covariance[p][p] / cov[p][p] - 1.0).abs() < 5.0 * rel,
            "var[{p}]"
        );
    }
    let correlation =
        ours.covariance[0][1] / (ours.covariance[0][0] * ours.covariance[1][1]).sqrt();
    let exact = cov[0][1] / (cov[0][0] * cov[1][1]).sqrt();
    assert!(
        (correlation - exact).abs() < 0.02,
        "correlation {correlation} vs {exact}"
    );
}
