//! A fitted reparameterisation that straightens a curved posterior before the ensemble samples it.
//!
//! The SIDM posterior in its core coordinates (log ρ0, log σ0, log σ/m, nuisances) is a bent,
//! flaring ridge: as σ/m falls the core shrinks, ρ0 and σ0 follow curved paths towards the NFW
//! cusp and the ridge narrows (demo spiral Kiln S02: log σ0 bends by 0.25 dex over two decades of
//! σ/m while its width at fixed σ/m shrinks several times). Affine-invariant moves cannot follow
//! a bend: the stretch and differential-evolution moves accepted 7% of proposals there and the
//! autocorrelation time reached 780 steps.
//!
//! The cure is a triangular transport map (Marzouk, Moselhy, Parno & Spantini 2016, "Sampling
//! via measure transport"; the lower-triangular Knothe–Rosenblatt form) that makes the posterior
//! conditionally Gaussian given one coordinate s (log σ/m). Every coordinate is first
//! standardised by the pilot's mean and spread (x = (θ − μ)/σ); then each other coordinate, in
//! order, is replaced by its standardised offset from a regression on s and the coordinates
//! before it,
//!
//!   x_k = m_k(s) + Σ_{j<k} β_kj(s) x_j + exp(h_k(s)) · z_k,
//!
//! with m_k, β_kj and h_k cubic splines in s (B-splines on knots at quantiles of the pilot's s),
//! fitted by weighted least squares to a pilot run's samples (h_k on ln |residual|, the weights
//! the fitted widths⁻²). A flaring ridge needs local freedom and accuracy: its thin end must be
//! fitted as closely as its width, which global polynomials in s and piecewise-linear functions
//! did not manage. The mean, the correlations and the widths of the posterior may thus all drift
//! with σ/m (on Kiln S02 the ρ0–σ0 correlation turns from +0.2 to −0.55 along the ridge, and the
//! thinnest local direction is up to six times thinner than the whole posterior's; in the map's
//! coordinates the local widths agree within a factor 1.5). The map is a bijection for any
//! fitted coefficients, with
//! ln |∂θ/∂θ'| = Σ_j ln σ_j + Σ_k h_k(s), so the density sampled in θ' is p(θ(θ')) |∂θ/∂θ'|
//! exactly: the fit decides how well the sampler mixes, never which distribution it samples.
//! Beyond the pilot's range of s, m_k continues as its tangent line and β, h keep their end
//! values (a smooth, still-bijective extension).

use crate::sampler::LogDensity;

/// Distinct knots of the splines in s, at equally spaced quantiles of the pilot's s.
const KNOTS: usize = 10;
/// Degree of the B-splines (cubic).
const DEGREE: usize = 3;
/// E[ln |r|] − ln σ for Gaussian residuals r of spread σ: −(γ + ln 2)/2 = −0.635 (from memory;
/// the unit test `gaussian_mean_log_abs_matches_quadrature` integrates it).
const GAUSSIAN_MEAN_LN_ABS: f64 = -0.635;
/// The fitted local widths are floored at e^−2.5 ≈ 8% of the residuals' rms. The floor stays
/// below real posteriors: the thinnest end of a flaring ridge seen on the demo spirals is about
/// 6 times (17%) thinner than the posterior as a whole (see the module's description).
const WIDTH_FLOOR_E_FOLDS: f64 = 2.5;

/// One coordinate after the conditioning one: its regression on s and the coordinates before it.
#[derive(Debug, Clone, PartialEq)]
struct Row {
    index: usize,
    /// m(s): B-spline coefficients.
    mean: Vec<f64>,
    /// β_j(s) for each earlier coordinate j (in the map's order): B-spline coefficients.
    slopes: Vec<(usize, Vec<f64>)>,
    /// h(s): B-spline coefficients.
    log_width: Vec<f64>,
}

/// The non-zero cubic B-spline basis functions at one s (clamped to the knots' range): (index,
/// value) pairs summing to one.
type SplineWeights = [(usize, f64); DEGREE + 1];

/// A clamped cubic B-spline basis on distinct knots k_0 < … < k_{K−1}: the knot vector repeats
/// each end DEGREE + 1 times; K + DEGREE − 1 basis functions (Piegl & Tiller, The NURBS Book,
/// algorithm A2.2).
#[derive(Debug, Clone, PartialEq)]
struct Splines {
    vector: Vec<f64>,
}

impl Splines {
    fn new(knots: &[f64]) -> Self {
        let (first, last) = (knots[0], knots[knots.len() - 1]);
        let mut vector = vec![first; DEGREE];
        vector.extend_from_slice(knots);
        vector.extend(std::iter::repeat_n(last, DEGREE));
        Self { vector }
    }

    fn len(&self) -> usize {
        self.vector.len() - DEGREE - 1
    }

    fn range(&self) -> (f64, f64) {
        (self.vector[0], self.vector[self.vector.len() - 1])
    }

    fn basis(&self, s: f64) -> SplineWeights {
        let u = &self.vector;
        let n = self.len() - 1;
        let (lo, hi) = self.range();
        let s = s.clamp(lo, hi);
        // The span i with u[i] ≤ s < u[i + 1] (the last non-empty span at the right end).
        let span = if s >= u[n + 1] {
            n
        } else {
            u.partition_point(|&k| k <= s) - 1
        };
        let mut values = [0.0; DEGREE + 1];
        let (mut left, mut right) = ([0.0; DEGREE + 1], [0.0; DEGREE + 1]);
        values[0] = 1.0;
        for j in 1..=DEGREE {
            left[j] = s - u[span + 1 - j];
            right[j] = u[span + j] - s;
            let mut saved = 0.0;
            for r in 0..j {
                let temp = values[r] / (right[r + 1] + left[j - r]);
                values[r] = saved + right[r + 1] * temp;
                saved = left[j - r] * temp;
            }
            values[j] = saved;
        }
        std::array::from_fn(|r| (span - DEGREE + r, values[r]))
    }

    /// The slopes of the spline with `coefficients` at the two ends of its range.
    fn end_slopes(&self, coefficients: &[f64]) -> (f64, f64) {
        let u = &self.vector;
        let (n, m) = (coefficients.len() - 1, u.len() - 1);
        let p = DEGREE as f64;
        (
            p * (coefficients[1] - coefficients[0]) / (u[DEGREE + 1] - u[1]),
            p * (coefficients[n] - coefficients[n - 1]) / (u[m - 1] - u[m - DEGREE - 1]),
        )
    }
}

fn interpolate(values: &[f64], at: &SplineWeights) -> f64 {
    at.iter().map(|&(i, w)| values[i] * w).sum()
}

/// A sparse row of a design matrix: (column, value) pairs.
type SparseRow = Vec<(usize, f64)>;

fn dot(row: &SparseRow, coefficients: &[f64]) -> f64 {
    row.iter().map(|&(c, v)| coefficients[c] * v).sum()
}

/// The fitted triangular map (see the module's description).
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionalMap {
    /// Index of the conditioning coordinate s in θ.
    given: usize,
    /// Per coordinate of θ: the pilot's mean and spread.
    centre: Vec<f64>,
    spread: Vec<f64>,
    /// The splines in the standardised s.
    splines: Splines,
    rows: Vec<Row>,
}

impl ConditionalMap {
    /// Fits the map to `samples` (positions θ): coordinate `given` conditions each of
    /// `regressed`, in that order (coordinates in neither pass through unchanged). None when the samples cannot
    /// determine it (too few, a coordinate without spread, a singular regression).
    #[must_use]
    pub fn fit(samples: &[Vec<f64>], given: usize, regressed: &[usize]) -> Option<Self> {
        const MIN_SAMPLES: usize = 64;
        let dim = samples.first()?.len();
        if samples.len() < MIN_SAMPLES
            || regressed.is_empty()
            || regressed.contains(&given)
            || given >= dim
            || regressed.iter().any(|&k| k >= dim)
        {
            return None;
        }
        let n = samples.len() as f64;
        let mut centre = vec![0.0; dim];
        let mut spread = vec![1.0; dim];
        for &k in std::iter::once(&given).chain(regressed) {
            let mean = samples.iter().map(|x| x[k]).sum::<f64>() / n;
            let sd = (samples.iter().map(|x| (x[k] - mean).powi(2)).sum::<f64>() / n).sqrt();
            if !(sd.is_finite() && sd > 0.0) {
                return None;
            }
            centre[k] = mean;
            spread[k] = sd;
        }
        let standard: Vec<Vec<f64>> = samples
            .iter()
            .map(|x| {
                x.iter()
                    .zip(centre.iter().zip(&spread))
                    .map(|(v, (m, sd))| (v - m) / sd)
                    .collect()
            })
            .collect();
        let s: Vec<f64> = standard.iter().map(|x| x[given]).collect();
        let mut sorted = s.clone();
        sorted.sort_by(f64::total_cmp);
        let mut knots: Vec<f64> = (0..KNOTS)
            .map(|i| sorted[i * (sorted.len() - 1) / (KNOTS - 1)])
            .collect();
        knots.dedup_by(|a, b| *a - *b < 1e-9);
        if knots.len() < 2 {
            return None;
        }
        let splines = Splines::new(&knots);
        let basis: Vec<SplineWeights> = s.iter().map(|&v| splines.basis(v)).collect();
        let k = splines.len();
        let width_design: Vec<SparseRow> = basis.iter().map(|at| at.to_vec()).collect();
        let mut rows: Vec<Row> = Vec::with_capacity(regressed.len());
        for (position, &index) in regressed.iter().enumerate() {
            let earlier = &regressed[..position];
            let columns = k * (1 + earlier.len());
            let design: Vec<SparseRow> = standard
                .iter()
                .zip(&basis)
                .map(|(x, at)| {
                    let mut f = at.to_vec();
                    for (e, &j) in earlier.iter().enumerate() {
                        f.extend(at.iter().map(|&(i, w)| (k * (e + 1) + i, w * x[j])));
                    }
                    f
                })
                .collect();
            let target: Vec<f64> = standard.iter().map(|x| x[index]).collect();
            // Iteratively reweighted: the regression weighs each sample by its fitted local
            // width⁻², so that the thin end of a flaring ridge is fitted as closely as its width
            // demands (ordinary least squares would follow the wide end).
            let mut weights = vec![1.0; samples.len()];
            let mut coefficients = Vec::new();
            let mut log_width = Vec::new();
            for _ in 0..3 {
                coefficients = least_squares(&design, columns, &target, &weights)?;
                let residuals: Vec<f64> = design
                    .iter()
                    .zip(&target)
                    .map(|(f, y)| y - dot(f, &coefficients))
                    .collect();
                let rms = (residuals.iter().map(|r| r * r).sum::<f64>() / n).sqrt();
                if !(rms.is_finite() && rms > 0.0) {
                    return None;
                }
                // ln |r| has mean ln(width) − 0.635 for Gaussian residuals (GAUSSIAN_MEAN_LN_ABS);
                // the offset only rescales z, which affine-invariant moves ignore. Near-zero
                // residuals are floored so that they cannot dominate the fit.
                let floor = rms.ln() - 10.0;
                let log_abs: Vec<f64> = residuals.iter().map(|r| r.abs().ln().max(floor)).collect();
                log_width = least_squares(&width_design, k, &log_abs, &vec![1.0; log_abs.len()])?;
                // A fitted width no thinner than e^−WIDTH_FLOOR_E_FOLDS of the residuals' rms
                // (the coefficients bound the spline): a few nearly coincident samples at one
                // end of s (walkers barely out of their start ball) would otherwise fit a width
                // there far below the posterior's, as repeated positions did (see
                // `DistinctPositions` in the pipeline).
                let width_floor = rms.ln() + GAUSSIAN_MEAN_LN_ABS - WIDTH_FLOOR_E_FOLDS;
                for c in &mut log_width {
                    *c = c.max(width_floor);
                }
                weights = basis
                    .iter()
                    .map(|at| (-2.0 * interpolate(&log_width, at)).exp())
                    .collect();
            }
            let mean = coefficients[..k].to_vec();
            let slopes = earlier
                .iter()
                .enumerate()
                .map(|(e, &j)| (j, coefficients[k * (e + 1)..k * (e + 2)].to_vec()))
                .collect();
            rows.push(Row {
                index,
                mean,
                slopes,
                log_width,
            });
        }
        Some(Self {
            given,
            centre,
            spread,
            splines,
            rows,
        })
    }

    /// m(s) + Σ β_j(s) x_j and h(s) for `row` at the standardised s (with its spline weights
    /// `at`), with the extension beyond the knots: m continues as its tangent line, β and h keep
    /// their end values.
    fn regression(&self, row: &Row, s: f64, at: &SplineWeights, x: &[f64]) -> (f64, f64) {
        let (lo, hi) = self.splines.range();
        let beyond = if s < lo || s > hi {
            let (left, right) = self.splines.end_slopes(&row.mean);
            if s < lo {
                (s - lo) * left
            } else {
                (s - hi) * right
            }
        } else {
            0.0
        };
        let mean = interpolate(&row.mean, at)
            + beyond
            + row
                .slopes
                .iter()
                .map(|(j, b)| interpolate(b, at) * x[*j])
                .sum::<f64>();
        (mean, interpolate(&row.log_width, at))
    }

    /// Whether every value of the conditioning coordinate in `values` (θ units) lies within the
    /// fitted range of s widened by `tolerance` × its width on each side.
    pub fn covers(&self, values: impl IntoIterator<Item = f64>, tolerance: f64) -> bool {
        let (lo, hi) = self.splines.range();
        let slack = tolerance * (hi - lo);
        let (centre, spread) = (self.centre[self.given], self.spread[self.given]);
        values.into_iter().all(|v| {
            let s = (v - centre) / spread;
            (lo - slack..=hi + slack).contains(&s)
        })
    }

    /// θ for sampler coordinates θ'.
    #[must_use]
    pub fn to_model(&self, sampler: &[f64]) -> Vec<f64> {
        self.to_model_with_log_jacobian(sampler).0
    }

    /// θ for sampler coordinates θ', and ln |∂θ/∂θ'| there (one evaluation of the splines).
    #[must_use]
    pub fn to_model_with_log_jacobian(&self, sampler: &[f64]) -> (Vec<f64>, f64) {
        // Standardised coordinates, filled in the map's order. The sampler's s and its
        // pass-through coordinates already are standardised ones (the latter with μ = 0, σ = 1).
        let mut x = sampler.to_vec();
        let s = x[self.given];
        let at = self.splines.basis(s);
        let mut log_widths = 0.0;
        for row in &self.rows {
            let (mean, log_width) = self.regression(row, s, &at, &x);
            x[row.index] = mean + log_width.exp() * sampler[row.index];
            log_widths += log_width;
        }
        let log_jacobian = self.spread.iter().map(|sd| sd.ln()).sum::<f64>() + log_widths;
        let theta = x
            .iter()
            .zip(self.centre.iter().zip(&self.spread))
            .map(|(v, (m, sd))| m + sd * v)
            .collect();
        (theta, log_jacobian)
    }

    /// Sampler coordinates θ' for θ (the inverse of [`ConditionalMap::to_model`]).
    #[must_use]
    pub fn to_sampler(&self, theta: &[f64]) -> Vec<f64> {
        let x: Vec<f64> = theta
            .iter()
            .zip(self.centre.iter().zip(&self.spread))
            .map(|(v, (m, sd))| (v - m) / sd)
            .collect();
        let mut sampler = x.clone();
        let s = x[self.given];
        let at = self.splines.basis(s);
        for row in &self.rows {
            let (mean, log_width) = self.regression(row, s, &at, &x);
            sampler[row.index] = (x[row.index] - mean) * (-log_width).exp();
        }
        sampler
    }

    /// ln |∂θ/∂θ'| at sampler coordinates θ'.
    #[must_use]
    pub fn log_jacobian(&self, sampler: &[f64]) -> f64 {
        self.to_model_with_log_jacobian(sampler).1
    }
}

/// Weighted least-squares coefficients of `target` on the sparse rows of `design` (`columns`
/// wide), by the normal equations (the features are built from standardised coordinates, so
/// they are well conditioned) solved by Gaussian elimination with partial pivoting. None when
/// singular or non-finite.
fn least_squares(
    design: &[SparseRow],
    columns: usize,
    target: &[f64],
    weights: &[f64],
) -> Option<Vec<f64>> {
    let n = columns;
    let mut normal = vec![vec![0.0; n]; n];
    let mut rhs = vec![0.0; n];
    for ((row, &y), &w) in design.iter().zip(target).zip(weights) {
        for &(a, fa) in row {
            rhs[a] += w * fa * y;
            for &(b, fb) in row {
                normal[a][b] += w * fa * fb;
            }
        }
    }
    let scale = (0..n).map(|a| normal[a][a].abs()).fold(0.0, f64::max);
    for col in 0..n {
        let pivot =
            (col..n).max_by(|&a, &b| normal[a][col].abs().total_cmp(&normal[b][col].abs()))?;
        if normal[pivot][col].abs() <= 1e-12 * scale || !normal[pivot][col].is_finite() {
            return None;
        }
        normal.swap(col, pivot);
        rhs.swap(col, pivot);
        let (upper, lower) = normal.split_at_mut(col + 1);
        let pivot_row = &upper[col];
        for (offset, row) in lower.iter_mut().enumerate() {
            let factor = row[col] / pivot_row[col];
            for (target, source) in row[col..].iter_mut().zip(&pivot_row[col..]) {
                *target -= factor * source;
            }
            rhs[col + 1 + offset] -= factor * rhs[col];
        }
    }
    let mut coefficients = vec![0.0; n];
    for row in (0..n).rev() {
        let tail: f64 = (row + 1..n).map(|k| normal[row][k] * coefficients[k]).sum();
        coefficients[row] = (rhs[row] - tail) / normal[row][row];
    }
    coefficients
        .iter()
        .all(|c| c.is_finite())
        .then_some(coefficients)
}

/// `inner`'s density seen in the sampler coordinates of `map`: p(θ(θ')) |∂θ/∂θ'|.
pub struct Reparameterised<'a, D> {
    pub inner: &'a D,
    pub map: &'a ConditionalMap,
}

impl<D: LogDensity> LogDensity for Reparameterised<'_, D> {
    fn dim(&self) -> usize {
        self.inner.dim()
    }

    fn n_derived(&self) -> usize {
        self.inner.n_derived()
    }

    fn log_density(&self, sampler: &[f64], derived: &mut [f64]) -> f64 {
        let (theta, log_jacobian) = self.map.to_model_with_log_jacobian(sampler);
        let value = self.inner.log_density(&theta, derived);
        if value.is_finite() {
            value + log_jacobian
        } else {
            value
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    use rand_xoshiro::Xoshiro256PlusPlus;

    #[test]
    fn gaussian_mean_log_abs_matches_quadrature() {
        // E ln |Z| = 2 ∫₀^∞ ln z φ(z) dz, with z = e^u: 2 ∫ u φ(e^u) e^u du (trapezoid rule).
        let (lo, hi, n) = (-40.0_f64, 4.0_f64, 200_000);
        let h = (hi - lo) / n as f64;
        let integrand = |u: f64| {
            let z = u.exp();
            2.0 * u * (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt() * z
        };
        let sum: f64 = (0..=n)
            .map(|i| {
                let w = if i == 0 || i == n { 0.5 } else { 1.0 };
                w * integrand(lo + h * i as f64)
            })
            .sum();
        let quadrature = sum * h;
        assert!(
            (quadrature - GAUSSIAN_MEAN_LN_ABS).abs() < 1e-3,
            "{quadrature} against {GAUSSIAN_MEAN_LN_ABS}"
        );
    }

    /// A bent, flaring ridge: y = 0.3 s² − 0.1 s³ + exp(0.4 s − 1) z.
    fn ridge(n: usize) -> Vec<Vec<f64>> {
        let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
        (0..n)
            .map(|_| {
                let s: f64 =
                    2.0 * <StandardNormal as Distribution<f64>>::sample(&StandardNormal, &mut rng);
                let z: f64 = StandardNormal.sample(&mut rng);
                let w: f64 = StandardNormal.sample(&mut rng);
                vec![
                    0.3 * s * s - 0.1 * s.powi(3) + (0.4 * s - 1.0).exp() * z,
                    s,
                    w,
                ]
            })
            .collect()
    }

    #[test]
    fn the_map_is_a_bijection_with_its_stated_jacobian() {
        let samples = ridge(4000);
        let map = ConditionalMap::fit(&samples, 1, &[0]).expect("fit");
        // Inside and well beyond the fitted range of s.
        for theta in [
            [0.4, -1.0, 2.0],
            [3.0, 2.5, -1.0],
            [-50.0, 9.0, 0.0],
            [1.0, -12.0, 0.3],
        ] {
            let back = map.to_model(&map.to_sampler(&theta));
            for (a, b) in theta.iter().zip(&back) {
                assert!(
                    (a - b).abs() < 1e-9 * (1.0 + a.abs()),
                    "{theta:?} -> {back:?}"
                );
            }
            // Central differences of θ(θ') against the stated ln |∂θ/∂θ'|.
            let sampler = map.to_sampler(&theta);
            let h = 1e-6;
            let mut jacobian = [[0.0; 3]; 3];
            for col in 0..3 {
                let (mut up, mut down) = (sampler.clone(), sampler.clone());
                up[col] += h;
                down[col] -= h;
                let (a, b) = (map.to_model(&up), map.to_model(&down));
                for row in 0..3 {
                    jacobian[row][col] = (a[row] - b[row]) / (2.0 * h);
                }
            }
            let [a, b, c] = jacobian;
            let determinant = a[0] * (b[1] * c[2] - b[2] * c[1])
                - a[1] * (b[0] * c[2] - b[2] * c[0])
                + a[2] * (b[0] * c[1] - b[1] * c[0]);
            let expected = map.log_jacobian(&sampler);
            assert!(
                (determinant.abs().ln() - expected).abs() < 1e-5,
                "{theta:?}: det {determinant} vs {}",
                expected.exp()
            );
        }
    }

    #[test]
    fn the_fit_straightens_a_bent_ridge() {
        let samples = ridge(4000);
        let map = ConditionalMap::fit(&samples, 1, &[0]).expect("fit");
        // In every tenth of the samples by s, the straightened coordinate has no offset (its mean
        // within a quarter of its spread) and the same spread everywhere (within 0.7–1.4 of the
        // overall). In θ the mean moves by many widths and the spread by 25× along s.
        let mut z: Vec<(f64, f64)> = samples
            .iter()
            .map(|x| (x[1], map.to_sampler(x)[0]))
            .collect();
        z.sort_by(|a, b| a.0.total_cmp(&b.0));
        let moments = |part: &[(f64, f64)]| {
            let n = part.len() as f64;
            let m = part.iter().map(|p| p.1).sum::<f64>() / n;
            let sd = (part.iter().map(|p| (p.1 - m).powi(2)).sum::<f64>() / n).sqrt();
            (m, sd)
        };
        let (_, overall) = moments(&z);
        for part in z.chunks(z.len() / 10) {
            let (m, sd) = moments(part);
            assert!(
                m.abs() < 0.25 * sd,
                "offset {m} with spread {sd} near s = {}",
                part[0].0
            );
            assert!(
                (0.7..1.4).contains(&(sd / overall)),
                "spread {sd} against {overall} near s = {}",
                part[0].0
            );
        }
    }

    #[test]
    fn a_drifting_correlation_is_removed() {
        // Coordinate 2 follows coordinate 0 with a slope that turns with s: w = (0.5 s) y + noise.
        let samples: Vec<Vec<f64>> = ridge(6000)
            .into_iter()
            .map(|x| {
                let w = 0.5 * x[1] * x[0] + 0.2 * x[2];
                vec![x[0], x[1], w]
            })
            .collect();
        let map = ConditionalMap::fit(&samples, 1, &[0, 2]).expect("fit");
        for theta in [[0.4, -1.0, 2.0], [3.0, 2.5, -1.0], [1.0, -12.0, 0.3]] {
            let back = map.to_model(&map.to_sampler(&theta));
            for (a, b) in theta.iter().zip(&back) {
                assert!(
                    (a - b).abs() < 1e-9 * (1.0 + a.abs()),
                    "{theta:?} -> {back:?}"
                );
            }
        }
        // Within each third of s, the two straightened coordinates are uncorrelated.
        let mut by_s: Vec<(f64, Vec<f64>)> =
            samples.iter().map(|x| (x[1], map.to_sampler(x))).collect();
        by_s.sort_by(|a, b| a.0.total_cmp(&b.0));
        for part in by_s.chunks(by_s.len() / 3) {
            let n = part.len() as f64;
            let mean = |k: usize| part.iter().map(|p| p.1[k]).sum::<f64>() / n;
            let (m0, m2) = (mean(0), mean(2));
            let (mut ab, mut aa, mut bb) = (0.0, 0.0, 0.0);
            for p in part {
                let (a, b) = (p.1[0] - m0, p.1[2] - m2);
                ab += a * b;
                aa += a * a;
                bb += b * b;
            }
            let r = ab / (aa * bb).sqrt();
            assert!(r.abs() < 0.1, "correlation {r}");
        }
    }

    #[test]
    fn the_spline_basis_sums_to_one_and_reproduces_a_cubic() {
        let splines = Splines::new(&[-2.0, -0.5, 0.1, 1.0, 3.0]);
        // Coefficients of the cubic c(s) = 1 − s + 0.5 s² − 0.2 s³ by least squares on a grid:
        // a cubic lies in the span of the cubic B-splines, so the fit is exact everywhere.
        let grid: Vec<f64> = (0..=100)
            .map(|i| -2.0 + 5.0 * f64::from(i) / 100.0)
            .collect();
        let cubic = |s: f64| 1.0 - s + 0.5 * s * s - 0.2 * s.powi(3);
        let design: Vec<SparseRow> = grid.iter().map(|&s| splines.basis(s).to_vec()).collect();
        let target: Vec<f64> = grid.iter().map(|&s| cubic(s)).collect();
        let coefficients =
            least_squares(&design, splines.len(), &target, &vec![1.0; grid.len()]).expect("fit");
        for s in [-2.0, -1.3, -0.5, 0.0, 0.77, 2.2, 3.0] {
            let at = splines.basis(s);
            let total: f64 = at.iter().map(|&(_, w)| w).sum();
            assert!(
                (total - 1.0).abs() < 1e-12,
                "partition of unity at {s}: {total}"
            );
            assert!(
                (interpolate(&coefficients, &at) - cubic(s)).abs() < 1e-9,
                "cubic at {s}"
            );
        }
        // The end slopes are the cubic's derivative there: −1 + s − 0.6 s².
        let (left, right) = splines.end_slopes(&coefficients);
        assert!(
            (left - (-1.0 - 2.0 - 2.4)).abs() < 1e-8,
            "left slope {left}"
        );
        assert!(
            (right - (-1.0 + 3.0 - 5.4)).abs() < 1e-8,
            "right slope {right}"
        );
    }

    #[test]
    fn too_few_or_flat_samples_fit_no_map() {
        assert!(ConditionalMap::fit(&ridge(10), 1, &[0]).is_none());
        let flat: Vec<Vec<f64>> = (0..100).map(|i| vec![f64::from(i), 1.0]).collect();
        assert!(ConditionalMap::fit(&flat, 1, &[0]).is_none());
    }
}
