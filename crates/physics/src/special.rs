//! Special functions: modified Bessel functions for the exponential disk, and the gamma
//! functions for the Einasto profile.
//!
//! Bessel functions: //! Polynomial approximations of Abramowitz & Stegun (1964), §9.8.1–9.8.8 (absolute or relative
//! errors below about 2e-7, as stated there). Each function returns an exponentially *scaled*
//! value so that products such as I0(y) K0(y) never overflow at large y.

/// Returns (√y e^{−y} I0(y), √y e^{−y} I1(y)) for y > 0.
fn scaled_i0_i1(y: f64) -> (f64, f64) {
    if y <= 3.75 {
        let t2 = (y / 3.75) * (y / 3.75);
        let i0 = 1.0
            + t2 * (3.5156229
                + t2 * (3.0899424
                    + t2 * (1.2067492 + t2 * (0.2659732 + t2 * (0.0360768 + t2 * 0.0045813)))));
        let i1 = y
            * (0.5
                + t2 * (0.87890594
                    + t2 * (0.51498869
                        + t2 * (0.15084934
                            + t2 * (0.02658733 + t2 * (0.00301532 + t2 * 0.00032411))))));
        let scale = y.sqrt() * (-y).exp();
        (i0 * scale, i1 * scale)
    } else {
        let u = 3.75 / y;
        let i0 = 0.39894228
            + u * (0.01328592
                + u * (0.00225319
                    + u * (-0.00157565
                        + u * (0.00916281
                            + u * (-0.02057706
                                + u * (0.02635537 + u * (-0.01647633 + u * 0.00392377)))))));
        let i1 = 0.39894228
            + u * (-0.03988024
                + u * (-0.00362018
                    + u * (0.00163801
                        + u * (-0.01031555
                            + u * (0.02282967
                                + u * (-0.02895312 + u * (0.01787654 - u * 0.00420059)))))));
        (i0, i1)
    }
}

/// Returns (√y e^{y} K0(y), √y e^{y} K1(y)) for y > 0.
fn scaled_k0_k1(y: f64) -> (f64, f64) {
    if y <= 2.0 {
        let h2 = (y / 2.0) * (y / 2.0);
        let (si0, si1) = scaled_i0_i1(y);
        let unscale = (y).exp() / y.sqrt();
        let (i0, i1) = (si0 * unscale, si1 * unscale);
        let ln_half = (y / 2.0).ln();
        let k0 = -ln_half * i0 - 0.57721566
            + h2 * (0.42278420
                + h2 * (0.23069756
                    + h2 * (0.03488590 + h2 * (0.00262698 + h2 * (0.00010750 + h2 * 0.00000740)))));
        let k1 = (y * ln_half * i1
            + 1.0
            + h2 * (0.15443144
                + h2 * (-0.67278579
                    + h2 * (-0.18156897
                        + h2 * (-0.01919402 + h2 * (-0.00110404 - h2 * 0.00004686))))))
            / y;
        let scale = y.sqrt() * y.exp();
        (k0 * scale, k1 * scale)
    } else {
        let u = 2.0 / y;
        let k0 = 1.25331414
            + u * (-0.07832358
                + u * (0.02189568
                    + u * (-0.01062446 + u * (0.00587872 + u * (-0.00251540 + u * 0.00053208)))));
        let k1 = 1.25331414
            + u * (0.23498619
                + u * (-0.03655620
                    + u * (0.01504268 + u * (-0.00780353 + u * (0.00325614 - u * 0.00068245)))));
        (k0, k1)
    }
}

/// I0(y) K0(y) − I1(y) K1(y), the radial factor of the Freeman (1970) disk's circular velocity.
#[must_use]
pub fn freeman_bessel_factor(y: f64) -> f64 {
    let (i0, i1) = scaled_i0_i1(y);
    let (k0, k1) = scaled_k0_k1(y);
    (i0 * k0 - i1 * k1) / y
}

/// Lanczos coefficients for g = 7, n = 9 (the set in Press et al. 2007, *Numerical Recipes*,
/// 3rd ed., §6.1, and in Godfrey's note on the Lanczos approximation; relative error < 1e-15).
const LANCZOS_G: f64 = 7.0;
const LANCZOS: [f64; 9] = [
    0.999_999_999_999_809_9,
    676.520_368_121_885_1,
    -1_259.139_216_722_402_8,
    771.323_428_777_653_1,
    -176.615_029_162_140_6,
    12.507_343_278_686_905,
    -0.138_571_095_265_720_12,
    9.984_369_578_019_572e-6,
    1.505_632_735_149_311_6e-7,
];

/// ln Γ(x) for x > 0 by the Lanczos approximation (reflection is not needed here).
#[must_use]
pub fn ln_gamma(x: f64) -> f64 {
    if x < 0.5 {
        // Γ(x) = Γ(x + 1) / x keeps the series in its accurate range.
        return ln_gamma(x + 1.0) - x.ln();
    }
    let z = x - 1.0;
    let mut sum = LANCZOS[0];
    for (k, c) in LANCZOS.iter().enumerate().skip(1) {
        sum += c / (z + k as f64);
    }
    let t = z + LANCZOS_G + 0.5;
    0.5 * (2.0 * std::f64::consts::PI).ln() + (z + 0.5) * t.ln() - t + sum.ln()
}

/// The regularised lower incomplete gamma function P(a, x) = γ(a, x) / Γ(a), for a > 0, x ≥ 0:
/// its series for x < a + 1, else 1 − Q(a, x) from Legendre's continued fraction evaluated by the
/// modified Lentz method (Press et al. 2007, *Numerical Recipes*, 3rd ed., §6.2). Relative
/// accuracy ≈ 1e-14.
#[must_use]
pub fn regularized_lower_gamma(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 0.0;
    }
    let log_prefactor = a * x.ln() - x - ln_gamma(a);
    if x < a + 1.0 {
        let (mut term, mut sum, mut ap) = (1.0 / a, 1.0 / a, a);
        for _ in 0..10_000 {
            ap += 1.0;
            term *= x / ap;
            sum += term;
            if term.abs() < sum.abs() * 1e-16 {
                break;
            }
        }
        (sum * log_prefactor.exp()).min(1.0)
    } else {
        let tiny = 1e-300;
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / tiny;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..10_000 {
            let an = -(f64::from(i)) * (f64::from(i) - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < tiny {
                d = tiny;
            }
            c = b + an / c;
            if c.abs() < tiny {
                c = tiny;
            }
            d = 1.0 / d;
            let delta = d * c;
            h *= delta;
            if (delta - 1.0).abs() < 1e-16 {
                break;
            }
        }
        (1.0 - log_prefactor.exp() * h).max(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gamma_functions_match_closed_forms() {
        // Reference: Γ(n) = (n−1)!, Γ(½) = √π; P(1, x) = 1 − e^{−x}; P(½, x) = erf(√x), with
        // erf(1) = 0.8427007929497149 (Abramowitz & Stegun Table 7.1; from memory).
        approx::assert_relative_eq!(ln_gamma(5.0), 24f64.ln(), max_relative = 1e-14);
        approx::assert_relative_eq!(ln_gamma(11.0), 3_628_800f64.ln(), max_relative = 1e-14);
        approx::assert_relative_eq!(
            ln_gamma(0.5),
            std::f64::consts::PI.sqrt().ln(),
            max_relative = 1e-13
        );
        for x in [0.01, 0.3, 1.0, 2.5, 7.0, 40.0] {
            approx::assert_relative_eq!(
                regularized_lower_gamma(1.0, x),
                1.0 - (-x).exp(),
                max_relative = 1e-13
            );
        }
        approx::assert_relative_eq!(
            regularized_lower_gamma(0.5, 1.0),
            0.842_700_792_949_714_9,
            max_relative = 1e-13
        );
        approx::assert_abs_diff_eq!(regularized_lower_gamma(3.0, 0.0), 0.0);
    }

    #[test]
    fn bessel_products_match_tabulated_values() {
        // Reference: Abramowitz & Stegun Table 9.8 values I0(1) = 1.266066, K0(1) = 0.421024,
        // I1(1) = 0.565159, K1(1) = 0.601907 (from memory). The exponential-disk velocities in
        // the tests/reference/check_values.md (scipy) check the whole range in `baryons.rs`.
        let expected = 1.266066 * 0.421024 - 0.565159 * 0.601907;
        approx::assert_relative_eq!(freeman_bessel_factor(1.0), expected, max_relative = 2e-5);
    }
}
