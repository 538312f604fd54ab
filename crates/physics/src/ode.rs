//! Ordinary differential equation steppers on stack arrays.
//!
//! Two integrators, for two jobs:
//! - [`rk4_step`], a classical fourth-order Runge–Kutta step on `[f64; N]` with no allocation.
//!   The Jeans solver takes a *fixed* number of steps per unit of ln ξ. A fixed grid makes the
//!   solution a smooth function of the halo parameters (an adaptive controller changes its step
//!   count as parameters move, which makes finite-difference gradients jitter), and it is the
//!   fastest option measured for this 2-variable problem.
//! - [`integrate_adaptive`], a Dormand–Prince 5(4) integrator with error control (Dormand &
//!   Prince 1980; Hairer, Nørsett & Wanner, "Solving ODEs I", §II.5). It is slow and exact to the
//!   requested tolerance, and serves as the test oracle for the fixed-step solver.

/// One classical RK4 step of size `h` for `dy/dt = f(τ, y)`; returns the new state.
///
/// The caller passes the slope at the start of the step (it is also the dense-output derivative
/// of the previous node) and the independent variable, or any precomputed function of it such as
/// ξ = e^t, at the middle and end of the step, so an exponential map costs no `exp` per stage.
#[inline]
pub fn rk4_step<const N: usize, T: Copy, F>(
    f: &F,
    at_middle: T,
    at_end: T,
    y: &[f64; N],
    slope_at_start: &[f64; N],
    h: f64,
) -> [f64; N]
where
    F: Fn(T, &[f64; N]) -> [f64; N],
{
    let k1 = slope_at_start;
    let k2 = f(at_middle, &axpy(y, 0.5 * h, k1));
    let k3 = f(at_middle, &axpy(y, 0.5 * h, &k2));
    let k4 = f(at_end, &axpy(y, h, &k3));
    let mut out = *y;
    for i in 0..N {
        out[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
    }
    out
}

#[inline]
fn axpy<const N: usize>(y: &[f64; N], a: f64, k: &[f64; N]) -> [f64; N] {
    let mut out = *y;
    for i in 0..N {
        out[i] += a * k[i];
    }
    out
}

/// Integrates `dy/dt = f(t, y)` from `t0` to `t1` with an adaptive Dormand–Prince 5(4) method,
/// to relative tolerance `rtol` and absolute tolerance `atol` per component.
///
/// `stop`, when given, ends the integration at the first accepted step after which it returns
/// true; the returned pair is then the state after that step. Returns `None` if the step size
/// underflows.
pub fn integrate_adaptive<const N: usize, F, S>(
    f: F,
    t0: f64,
    y0: [f64; N],
    t1: f64,
    rtol: f64,
    atol: f64,
    mut on_step: S,
) -> Option<(f64, [f64; N])>
where
    F: Fn(f64, &[f64; N]) -> [f64; N],
    S: FnMut(f64, &[f64; N]) -> bool,
{
    // Dormand–Prince 5(4) tableau.
    const C: [f64; 7] = [0.0, 0.2, 0.3, 0.8, 8.0 / 9.0, 1.0, 1.0];
    const A: [[f64; 6]; 7] = [
        [0.0; 6],
        [0.2, 0.0, 0.0, 0.0, 0.0, 0.0],
        [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
        [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
        [
            19372.0 / 6561.0,
            -25360.0 / 2187.0,
            64448.0 / 6561.0,
            -212.0 / 729.0,
            0.0,
            0.0,
        ],
        [
            9017.0 / 3168.0,
            -355.0 / 33.0,
            46732.0 / 5247.0,
            49.0 / 176.0,
            -5103.0 / 18656.0,
            0.0,
        ],
        [
            35.0 / 384.0,
            0.0,
            500.0 / 1113.0,
            125.0 / 192.0,
            -2187.0 / 6784.0,
            11.0 / 84.0,
        ],
    ];
    const B5: [f64; 7] = [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
        0.0,
    ];
    const B4: [f64; 7] = [
        5179.0 / 57600.0,
        0.0,
        7571.0 / 16695.0,
        393.0 / 640.0,
        -92097.0 / 339200.0,
        187.0 / 2100.0,
        1.0 / 40.0,
    ];
    let direction = (t1 - t0).signum();
    let mut t = t0;
    let mut y = y0;
    let mut h = direction * (t1 - t0).abs().min(1e-3);
    while direction * (t1 - t) > 0.0 {
        if direction * (t + h - t1) > 0.0 {
            h = t1 - t;
        }
        let mut k = [[0.0; N]; 7];
        for s in 0..7 {
            let mut ys = y;
            for (j, kj) in k.iter().enumerate().take(s) {
                for i in 0..N {
                    ys[i] += h * A[s][j] * kj[i];
                }
            }
            k[s] = f(t + C[s] * h, &ys);
        }
        let mut y5 = y;
        let mut err = 0.0f64;
        for i in 0..N {
            let mut d5 = 0.0;
            let mut d4 = 0.0;
            for s in 0..7 {
                d5 += B5[s] * k[s][i];
                d4 += B4[s] * k[s][i];
            }
            y5[i] += h * d5;
            let scale = atol + rtol * y[i].abs().max(y5[i].abs());
            err = err.max((h * (d5 - d4) / scale).abs());
        }
        if !err.is_finite() {
            h *= 0.25;
        } else if err <= 1.0 {
            t += h;
            y = y5;
            if on_step(t, &y) {
                return Some((t, y));
            }
            h *= (0.9 * err.powf(-0.2)).clamp(0.2, 5.0);
        } else {
            h *= (0.9 * err.powf(-0.2)).clamp(0.1, 1.0);
        }
        if h.abs() < 1e-14 * t.abs().max(1.0) {
            return None;
        }
    }
    Some((t, y))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rk4_integrates_exponential_growth() {
        // dy/dt = y from 0 to 1: exact e.
        let f = |_t: f64, y: &[f64; 1]| [y[0]];
        let mut y = [1.0];
        let h = 0.01;
        for i in 0..100 {
            let t = f64::from(i) * h;
            let slope = f(t, &y);
            y = rk4_step(&f, t + 0.5 * h, t + h, &y, &slope, h);
        }
        approx::assert_relative_eq!(y[0], std::f64::consts::E, max_relative = 1e-9);
    }

    #[test]
    fn adaptive_integrator_meets_its_tolerance_on_an_oscillator() {
        // y'' = -y: exact solution cos t.
        let f = |_t: f64, y: &[f64; 2]| [y[1], -y[0]];
        let (_, y) = integrate_adaptive(f, 0.0, [1.0, 0.0], 10.0, 1e-12, 1e-14, |_, _| false)
            .expect("integrates");
        approx::assert_abs_diff_eq!(y[0], 10f64.cos(), epsilon = 1e-10);
    }
}
