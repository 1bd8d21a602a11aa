//! The relay measurement: a first-order lag on frequency and a lag-averaged derivative of it.
//!
//! `T_f·dm/dt = f − m` (a numerical relay's frequency estimate over a few cycles modelled as a
//! first-order lag with `T_f = Measurement.frequency_lag_s`; `T_f = 0` makes `m = f`), and
//! `T_w·dr/dt = dm/dt − r`, i.e. df/dt is the derivative of the measured frequency passed through
//! a first-order lag with time constant `T_w = Measurement.rocof_window_s` (floored at
//! [`MIN_ROCOF_WINDOW_S`]). Relays read `m` and `r`.
//!
//! Both are linear filters of the section's speed, so they are not integrated as ODE states: over
//! each accepted step the speed is the step's interpolating polynomial, and [`advance`] solves
//! the two lags driven by that polynomial exactly (docs/models.md §5), whatever the step length
//! (no stability bound, unlike an explicit integrator). The pair `(m, r)` driven by a polynomial
//! `w` is a linear ODE with polynomial forcing; two evaluations of its exact solution are used:
//!
//! * **Closed form** (step at least as long as both time constants): in the step fraction θ,
//!   with `α = h/T_f`, `β = h/T_w`, the particular solution of `m′ + α·m = α·w` is the
//!   polynomial `P = Σ_j (−1/α)^j·w^(j)` (undetermined coefficients), so
//!   `m = P + (m0 − P(0))·e^(−αθ)`; with `C = m0 − P(0)`, `ρ = h·r` solves
//!   `ρ′ + β·ρ = β·m′ = β·P′ − αβ·C·e^(−αθ)`, so `ρ = Q + (ρ0 − Q(0))·e^(−βθ) − αβ·C·E(θ)` with
//!   `Q = Σ_j (−1/β)^j·P^(j+1)` and `E = (e^(−αθ) − e^(−βθ))/(β − α)`, evaluated as
//!   `θ·e^(−αθ)·(1 − e^(−u))/u`, `u = (β − α)θ`, which stays exact when `α = β`. The series for
//!   `P` and `Q` multiply the polynomial's coefficients by at most `k!/α^k`, `k ≤ 4`, so with
//!   `α, β ≥ 1` rounding is not amplified beyond a few dozen units.
//! * **Taylor series** (shorter steps, where `1/α^k` would amplify rounding): the interval is cut
//!   into pieces no longer than the shorter time constant, and on each the solution's Taylor
//!   series is summed until the terms fall below the rounding of the sum. On a piece of length
//!   `δ ≤ T`, term `k + 1` is at most `(δ/T)/(k + 1) ≤ 1/(k + 1)` times term `k` once `k` passes
//!   the polynomial's degree, so the tail after the last term kept is below one fifth of that
//!   term: exact to rounding.

/// Shortest ROCOF averaging time constant used, seconds: the simulator's shortest lag
/// ([`crate::model::INSTANT_LAG_S`]).
pub const MIN_ROCOF_WINDOW_S: f64 = crate::model::INSTANT_LAG_S;

/// Below this a lag is algebraic ([`crate::model::INSTANT_LAG_S`]).
pub const MIN_LAG_S: f64 = crate::model::INSTANT_LAG_S;

/// Highest degree of the input polynomial [`advance`] accepts (Dormand–Prince's dense output is
/// a quartic in the step fraction).
pub const INPUT_DEGREE: usize = 4;

/// Most Taylor terms summed on one piece; with the piece no longer than the shorter time
/// constant the terms fall below rounding long before (about 20 terms).
const MAX_TERMS: usize = 40;

/// `dm/dt` of the measured frequency (any unit) given the true value and its own derivative.
pub fn measured_derivative(
    true_value: f64,
    true_derivative: f64,
    measured: f64,
    lag_s: f64,
) -> f64 {
    if lag_s < MIN_LAG_S {
        true_derivative
    } else {
        (true_value - measured) / lag_s
    }
}

/// `dr/dt` of the measured ROCOF given `dm/dt`.
pub fn rocof_derivative(measured_derivative: f64, rocof: f64, window_s: f64) -> f64 {
    (measured_derivative - rocof) / window_s.max(MIN_ROCOF_WINDOW_S)
}

/// The two time constants of a measurement, as the equations use them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Lags {
    /// `T_f`, seconds; below [`MIN_LAG_S`] the measured frequency is the true one.
    pub lag_s: f64,
    /// `T_w`, seconds (floored at [`MIN_ROCOF_WINDOW_S`]).
    pub window_s: f64,
}

impl Lags {
    pub fn new(lag_s: f64, window_s: f64) -> Lags {
        Lags {
            lag_s,
            window_s: window_s.max(MIN_ROCOF_WINDOW_S),
        }
    }

    fn algebraic(&self) -> bool {
        self.lag_s < MIN_LAG_S
    }

    /// The shorter time constant that acts, seconds.
    fn shortest_s(&self) -> f64 {
        if self.algebraic() {
            self.window_s
        } else {
            self.lag_s.min(self.window_s)
        }
    }
}

/// `(m, r)` at `t0 + θ·h` from `(m0, r0)` at `t0`, with the true value over the step
/// `w(t0 + θ·h) = Σ b[k]·θ^k` (θ ∈ [0, 1]); exact to rounding (module doc).
pub fn advance(
    lags: &Lags,
    b: &[f64; INPUT_DEGREE + 1],
    h: f64,
    theta: f64,
    m0: f64,
    r0: f64,
) -> (f64, f64) {
    let span_s = theta * h;
    if !(span_s > 0.0) {
        return (m0, r0);
    }
    let beta = h / lags.window_s;
    let alpha = if lags.algebraic() {
        f64::INFINITY
    } else {
        h / lags.lag_s
    };
    if alpha >= 1.0 && beta >= 1.0 {
        return closed_form(alpha, beta, b, h, theta, m0, r0);
    }
    taylor(lags, b, h, theta, m0, r0)
}

/// The closed form of the module doc, for `α, β ≥ 1` (`α` infinite: no frequency lag).
fn closed_form(
    alpha: f64,
    beta: f64,
    b: &[f64; INPUT_DEGREE + 1],
    h: f64,
    theta: f64,
    m0: f64,
    r0: f64,
) -> (f64, f64) {
    const N: usize = INPUT_DEGREE + 1;
    // P + P′/α = w, coefficient by coefficient from the top degree down.
    let mut p = *b;
    if alpha.is_finite() {
        for k in (0..N - 1).rev() {
            p[k] = b[k] - (k + 1) as f64 * p[k + 1] / alpha;
        }
    }
    // Q + Q′/β = P′.
    let mut q = [0.0; N - 1];
    for k in (0..N - 1).rev() {
        let dp = (k + 1) as f64 * p[k + 1];
        q[k] = if k + 1 < N - 1 {
            dp - (k + 1) as f64 * q[k + 1] / beta
        } else {
            dp
        };
    }
    let horner = |c: &[f64]| c.iter().rev().fold(0.0, |acc, &ck| acc * theta + ck);
    let decay_w = (-beta * theta).exp();
    let rho0 = h * r0;
    if !alpha.is_finite() {
        let rho = horner(&q) + (rho0 - q[0]) * decay_w;
        return (horner(&p), rho / h);
    }
    let decay_f = (-alpha * theta).exp();
    let c = m0 - p[0];
    let m = horner(&p) + c * decay_f;
    // (e^(−αθ) − e^(−βθ))/(β − α), symmetric in α and β: taken from the slower exponential.
    let (slow, fast) = if beta >= alpha {
        (alpha, beta)
    } else {
        (beta, alpha)
    };
    let u = (fast - slow) * theta;
    let ratio = if u == 0.0 { 1.0 } else { -(-u).exp_m1() / u };
    let e = theta * (-slow * theta).exp() * ratio;
    let rho = horner(&q) + (rho0 - q[0]) * decay_w - alpha * beta * c * e;
    (m, rho / h)
}

/// The Taylor-series evaluation of the module doc.
fn taylor(
    lags: &Lags,
    b: &[f64; INPUT_DEGREE + 1],
    h: f64,
    theta: f64,
    m0: f64,
    r0: f64,
) -> (f64, f64) {
    let span_s = theta * h;
    let pieces = (span_s / lags.shortest_s()).ceil().max(1.0);
    let n = pieces as usize;
    let delta_s = span_s / pieces;
    let (mut m, mut r) = (m0, r0);
    for j in 0..n {
        // The input on this piece as a polynomial in σ ∈ [0, 1]: w(t0 + (θ_a + σ·λ)·h).
        let theta_a = theta * j as f64 / pieces;
        let w = shifted(b, theta_a, delta_s / h);
        (m, r) = taylor_piece(lags, &w, delta_s, m, r);
    }
    (m, r)
}

/// Coefficients of `p(θ_a + λ·σ)` in σ for `p(θ) = Σ b[k]·θ^k` (Taylor shift, then scaling).
fn shifted(b: &[f64; INPUT_DEGREE + 1], theta_a: f64, lambda: f64) -> [f64; INPUT_DEGREE + 1] {
    let mut c = *b;
    if theta_a != 0.0 {
        // Repeated synthetic division by (θ − θ_a): c[k] becomes p^(k)(θ_a)/k!.
        for i in 0..INPUT_DEGREE {
            for k in (i..INPUT_DEGREE).rev() {
                c[k] += theta_a * c[k + 1];
            }
        }
    }
    let mut scale = 1.0;
    for ck in c.iter_mut() {
        *ck *= scale;
        scale *= lambda;
    }
    c
}

/// One piece of length `delta_s` (at most the shorter time constant), with the input
/// `w = Σ c[k]·σ^k`, σ = elapsed / `delta_s`: the sums of the Taylor series of `m` and `r` in σ.
fn taylor_piece(
    lags: &Lags,
    c: &[f64; INPUT_DEGREE + 1],
    delta_s: f64,
    m0: f64,
    r0: f64,
) -> (f64, f64) {
    let inv_w = 1.0 / lags.window_s;
    let cw = delta_s * inv_w;
    let input = |k: usize| if k <= INPUT_DEGREE { c[k] } else { 0.0 };
    // Series coefficients (of σ^k): m_k, r_k; dm/dσ has coefficients (k + 1)·m_{k+1}.
    let (mut mk, mut rk) = (if lags.algebraic() { c[0] } else { m0 }, r0);
    let (mut m_sum, mut r_sum) = (mk, rk);
    let a = if lags.algebraic() {
        0.0
    } else {
        delta_s / lags.lag_s
    };
    for k in 0..MAX_TERMS {
        let kp1 = (k + 1) as f64;
        // (k + 1)·m_{k+1}: the coefficient of σ^k in dm/dσ.
        let dm_k = if lags.algebraic() {
            kp1 * input(k + 1)
        } else {
            a * (input(k) - mk)
        };
        let m_next = dm_k / kp1;
        // dr/dσ = (dm/dσ)/T_w − (δ/T_w)·r.
        let r_next = (dm_k * inv_w - cw * rk) / kp1;
        m_sum += m_next;
        r_sum += r_next;
        mk = m_next;
        rk = r_next;
        let settled = k >= INPUT_DEGREE
            && m_next.abs() <= 1e-17 * m_sum.abs()
            && (r_next * lags.window_s).abs()
                <= 1e-17 * (m_sum.abs() + (r_sum * lags.window_s).abs());
        if settled || (mk == 0.0 && rk == 0.0 && k >= INPUT_DEGREE) {
            break;
        }
    }
    (m_sum, r_sum)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lag_of_a_ramp_lags_by_its_time_constant() {
        // A first-order lag of a ramp a·t settles to a·(t − T) (standard result).
        let (a, t_f) = (-1.0, 0.04);
        let h = 1e-5;
        let mut m = 0.0;
        let mut t = 0.0;
        while t < 1.0 {
            m += h * measured_derivative(a * t, a, m, t_f);
            t += h;
        }
        assert!((m - a * (t - t_f)).abs() < 1e-4);
    }

    /// `advance` over a whole interval cut into steps of length `h` (each step's input
    /// polynomial re-expressed from the exact ramp), from rest.
    fn ramp_through(lags: &Lags, slope: f64, h: f64, steps: usize, theta_last: f64) -> (f64, f64) {
        let (mut m, mut r) = (0.0, 0.0);
        for k in 0..steps {
            let w0 = slope * h * k as f64;
            let b = [w0, slope * h, 0.0, 0.0, 0.0];
            let theta = if k + 1 == steps { theta_last } else { 1.0 };
            (m, r) = advance(lags, &b, h, theta, m, r);
        }
        (m, r)
    }

    /// The ramp response of a first-order lag from rest, `a·(t − T + T·e^(−t/T))` (Ogata,
    /// *Modern Control Engineering*, §5-3, unit-ramp response of first-order systems; from
    /// memory), and of the cascade that gives df/dt: the derivative of the measured frequency is
    /// `a` times the unit-step response of the two lags, `1 − (T_f·e^(−t/T_f) − T_w·e^(−t/T_w))
    /// /(T_f − T_w)` (partial fractions of `1/((1 + sT_f)(1 + sT_w))`), and
    /// `1 − (1 + t/T)·e^(−t/T)` when `T_f = T_w = T` (the critically damped limit).
    fn ramp_reference(t_f: f64, t_w: f64, a: f64, t: f64) -> (f64, f64) {
        let m = a * (t - t_f + t_f * (-t / t_f).exp());
        let step = if (t_f - t_w).abs() < 1e-12 {
            1.0 - (1.0 + t / t_f) * (-t / t_f).exp()
        } else {
            1.0 - (t_f * (-t / t_f).exp() - t_w * (-t / t_w).exp()) / (t_f - t_w)
        };
        (m, a * step)
    }

    #[test]
    fn ramp_responses_match_the_textbook_forms_for_short_and_long_steps() {
        let a = -0.03; // pu/s: 1.5 Hz/s on 50 Hz
                       // (T_f, T_w): the defaults, a window shorter than the lag, and equal time constants.
        for (t_f, t_w) in [(0.04, 0.1), (0.1, 0.02), (0.05, 0.05), (0.04, 0.5)] {
            let lags = Lags::new(t_f, t_w);
            // Steps far shorter than, close to, and far longer than the time constants: both
            // evaluations (closed form and Taylor series) and the piece cutting are exercised.
            for h in [1e-4, 0.003, 0.03, 0.07, 0.2, 0.5] {
                for (steps, theta) in [(1, 1.0), (1, 0.37), (7, 1.0), (7, 0.61)] {
                    let t = h * (steps as f64 - 1.0 + theta);
                    let (m, r) = ramp_through(&lags, a, h, steps, theta);
                    let (m_ref, r_ref) = ramp_reference(t_f, t_w, a, t);
                    assert!(
                        (m - m_ref).abs() <= 1e-15 + 1e-12 * m_ref.abs(),
                        "m: T_f {t_f} T_w {t_w} h {h} t {t}: {m} vs {m_ref}"
                    );
                    assert!(
                        (r - r_ref).abs() <= 1e-15 + 1e-11 * r_ref.abs(),
                        "r: T_f {t_f} T_w {t_w} h {h} t {t}: {r} vs {r_ref}"
                    );
                }
            }
        }
    }

    #[test]
    fn without_a_frequency_lag_the_measured_frequency_is_the_true_one() {
        // T_f = 0: m = w, and df/dt is the window's lag of the true slope: a·(1 − e^(−t/T_w))
        // (the unit-step response of a first-order lag).
        let (a, t_w) = (0.02, 0.1);
        let lags = Lags::new(0.0, t_w);
        for h in [0.004, 0.05, 0.3] {
            let (m, r) = ramp_through(&lags, a, h, 5, 0.5);
            let t = h * 4.5;
            assert!((m - a * t).abs() <= 1e-15, "{m} vs {}", a * t);
            let r_ref = a * (1.0 - (-t / t_w).exp());
            assert!((r - r_ref).abs() <= 1e-12 * r_ref.abs(), "{r} vs {r_ref}");
        }
    }

    #[test]
    fn the_two_evaluations_agree_where_both_apply() {
        // A quartic input with a start off the particular solution; the closed form is used
        // for α, β ≥ 1, the Taylor series always applies: both are exact, so they must agree to
        // rounding (a consistency check between two derivations; the outside references are
        // the textbook forms above and scipy in tests/measurement_scipy.rs).
        let b = [-0.011, -0.004, 0.0023, -0.0017, 0.0009];
        for (t_f, t_w) in [(0.04, 0.1), (0.08, 0.08), (0.1, 0.03)] {
            let lags = Lags::new(t_f, t_w);
            for h in [0.1, 0.25, 0.5] {
                for theta in [0.05, 0.5, 1.0] {
                    let closed = advance(&lags, &b, h, theta, -0.002, 0.01);
                    let series = taylor(&lags, &b, h, theta, -0.002, 0.01);
                    assert!(
                        (closed.0 - series.0).abs() <= 1e-15,
                        "{closed:?} {series:?}"
                    );
                    assert!(
                        (closed.1 - series.1).abs() <= 1e-13,
                        "{closed:?} {series:?}"
                    );
                }
            }
        }
    }
}
