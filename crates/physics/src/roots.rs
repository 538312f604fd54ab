//! One-dimensional root finding (Brent's method) used by the halo inversions.

use crate::PhysicsError;

/// Finds a root of `f` in `[a, b]` with Brent's method (Brent 1973, "Algorithms for
/// Minimization without Derivatives", ch. 4). `f(a)` and `f(b)` must differ in sign.
pub(crate) fn brent<F: FnMut(f64) -> f64>(
    mut f: F,
    mut a: f64,
    mut b: f64,
    tolerance: f64,
    what: &'static str,
) -> Result<f64, PhysicsError> {
    let mut fa = f(a);
    let mut fb = f(b);
    if !(fa.is_finite() && fb.is_finite()) || fa * fb > 0.0 {
        return Err(PhysicsError::NoConvergence { what });
    }
    if fa == 0.0 {
        return Ok(a);
    }
    let mut c = a;
    let mut fc = fa;
    let mut d = b - a;
    let mut e = d;
    for _ in 0..200 {
        if fb * fc > 0.0 {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * tolerance;
        let m = 0.5 * (c - b);
        if m.abs() <= tol || fb == 0.0 {
            return Ok(b);
        }
        if e.abs() >= tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            // Exact equality is intended: c was copied from a when the bracket was reset.
            #[allow(clippy::float_cmp)]
            let copied = a == c;
            if copied {
                p = 2.0 * m * s;
                q = 1.0 - s;
            } else {
                let qa = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * m * qa * (qa - r) - (b - a) * (r - 1.0));
                q = (qa - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            } else {
                p = -p;
            }
            if 2.0 * p < (3.0 * m * q - (tol * q).abs()).min((e * q).abs()) {
                e = d;
                d = p / q;
            } else {
                d = m;
                e = m;
            }
        } else {
            d = m;
            e = m;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol { d } else { tol.copysign(m) };
        fb = f(b);
        if !fb.is_finite() {
            return Err(PhysicsError::NoConvergence { what });
        }
    }
    Err(PhysicsError::NoConvergence { what })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_cube_root_of_two() {
        let root = brent(|x| x * x * x - 2.0, 0.0, 2.0, 1e-14, "test").expect("bracketed");
        approx::assert_relative_eq!(root, 2f64.cbrt(), max_relative = 1e-13);
    }

    #[test]
    fn refuses_an_unbracketed_interval() {
        assert!(brent(|x| x * x + 1.0, -1.0, 1.0, 1e-12, "test").is_err());
    }
}
