//! Chain diagnostics: integrated autocorrelation time and split-R̂.

use rustfft::FftPlanner;
use rustfft::num_complex::Complex;

use crate::chain::ChainStore;

/// Normalised autocorrelation function of a series, by FFT (zero-padded to avoid wrap-around).
#[must_use]
pub fn autocorrelation(series: &[f64], planner: &mut FftPlanner<f64>) -> Vec<f64> {
    let n = series.len();
    if n < 2 {
        return vec![1.0; n];
    }
    let mean = series.iter().sum::<f64>() / n as f64;
    let size = (2 * n).next_power_of_two();
    let mut buffer: Vec<Complex<f64>> = series
        .iter()
        .map(|x| Complex::new(x - mean, 0.0))
        .chain(std::iter::repeat(Complex::new(0.0, 0.0)))
        .take(size)
        .collect();
    planner.plan_fft_forward(size).process(&mut buffer);
    for c in &mut buffer {
        *c = Complex::new(c.norm_sqr(), 0.0);
    }
    planner.plan_fft_inverse(size).process(&mut buffer);
    let zero = buffer[0].re;
    if zero <= 0.0 {
        return vec![1.0; n];
    }
    buffer[..n].iter().map(|c| c.re / zero).collect()
}

/// Integrated autocorrelation time of each parameter, in steps, from step `start` on.
///
/// Method (Goodman & Weare 2010; Sokal 1997): average the normalised autocorrelation functions
/// of the walkers, sum it to τ(M) = 1 + 2 Σ_{t=1}^{M} ρ(t), and take the smallest window M with
/// M ≥ 5 τ(M) (the automatic window with c = 5, common practice).
#[must_use]
pub fn integrated_autocorr_times(chain: &ChainStore, start: usize) -> Vec<f64> {
    let mut planner = FftPlanner::new();
    (0..chain.n_dim)
        .map(|param| {
            let n = chain.steps().saturating_sub(start);
            if n < 8 {
                return f64::NAN;
            }
            let mut mean_acf = vec![0.0; n];
            for walker in 0..chain.n_walkers {
                let acf = autocorrelation(&chain.walker_series(walker, param, start), &mut planner);
                for (m, a) in mean_acf.iter_mut().zip(acf) {
                    *m += a / chain.n_walkers as f64;
                }
            }
            integrated_time(&mean_acf)
        })
        .collect()
}

/// Sokal window constant c: the window M is the smallest lag with M ≥ c τ(M) (common practice).
pub const SOKAL_WINDOW: f64 = 5.0;

/// The integrated autocorrelation time τ(M) = 1 + 2 Σ_{t=1}^{M} ρ(t) of a normalised
/// autocorrelation function `acf`, at the smallest window M with M ≥ [`SOKAL_WINDOW`] τ(M)
/// (Sokal 1997), or over the whole function when no lag satisfies it.
#[must_use]
pub fn integrated_time(acf: &[f64]) -> f64 {
    let mut tau = 1.0;
    for (lag, rho) in acf.iter().enumerate().skip(1) {
        tau += 2.0 * rho;
        if lag as f64 >= SOKAL_WINDOW * tau {
            return tau;
        }
    }
    tau
}

/// Split-R̂ of each parameter over the kept steps (Gelman et al. 2013, BDA3 §11.4): every walker's
/// post-burn series is split in two halves and the halves are compared as separate chains.
#[must_use]
pub fn split_rhat(chain: &ChainStore, burn: usize) -> Vec<f64> {
    let steps = chain.steps();
    let length = steps.saturating_sub(burn) / 2;
    (0..chain.n_dim)
        .map(|param| {
            if length < 2 {
                return f64::NAN;
            }
            let mut means = Vec::new();
            let mut variances = Vec::new();
            for walker in 0..chain.n_walkers {
                for half in 0..2 {
                    let from = burn + half * length;
                    let values: Vec<f64> = (from..from + length)
                        .map(|s| chain.position(s, walker, param))
                        .collect();
                    let mean = values.iter().sum::<f64>() / length as f64;
                    let var = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>()
                        / (length - 1) as f64;
                    means.push(mean);
                    variances.push(var);
                }
            }
            let m = means.len() as f64;
            let n = length as f64;
            let grand = means.iter().sum::<f64>() / m;
            let between = n / (m - 1.0) * means.iter().map(|x| (x - grand).powi(2)).sum::<f64>();
            let within = variances.iter().sum::<f64>() / m;
            if within <= 0.0 {
                return f64::NAN;
            }
            let pooled = (n - 1.0) / n * within + between / n;
            (pooled / within).sqrt()
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    #[test]
    fn ar1_process_has_the_known_autocorrelation_time() {
        // An AR(1) series x_t = φ x_{t−1} + ε has τ = (1 + φ)/(1 − φ) (textbook result).
        let phi: f64 = 0.8;
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(5);
        let mut x = 0.0;
        let series: Vec<f64> = (0..200_000)
            .map(|_| {
                let e: f64 = StandardNormal.sample(&mut rng);
                x = phi * x + e;
                x
            })
            .collect();
        let mut planner = FftPlanner::new();
        let acf = autocorrelation(&series, &mut planner);
        assert!((acf[1] - phi).abs() < 0.01);
        let tau = integrated_time(&acf);
        let expected = (1.0 + phi) / (1.0 - phi);
        assert!(
            (tau / expected - 1.0).abs() < 0.05,
            "tau {tau} vs {expected}"
        );
    }
}
