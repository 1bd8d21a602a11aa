//! The Dormand–Prince 5(4) stepper with its step-size control and first-step estimate.
//!
//! Method: Dormand & Prince, "A family of embedded Runge–Kutta formulae", J. Comp. Appl. Math.
//! 6(1), 1980, 19–26; the tableau, the error estimate (5th-order solution minus the embedded
//! 4th-order one), the continuous extension of order 4 and the starting-step estimate as printed
//! in Hairer, Nørsett & Wanner, *Solving Ordinary Differential Equations I*, 2nd ed., Springer
//! 1993: Table II.5.2 (DOPRI5), §II.6 (dense output of DOPRI5), §II.4 (starting step size,
//! algorithm (4.14)). The coefficients below were copied from that table as ode_solvers 0.6 (the
//! integrator nadir used before, same values) holds them; the step-size control is Hairer's PI
//! ("Lund") control of DOPRI5 (op. cit. §II.4 and the DOPRI5 code in its appendix) with
//! ode_solvers' parameters: safety 0.9, β = 0.04, α = 0.2 − 0.75·β, factor limits 0.2 and 10.
//!
//! The arithmetic follows ode_solvers 0.6.2 operation for operation (same order of sums, same
//! error norm over the width the old solver saw, `norm_width`), so every step size and value is
//! bit-for-bit the one it gave. Unlike it, nothing is allocated per step (the stage vectors are
//! kept in one buffer for the segment), the state is not padded, and the caller sees each
//! accepted step's stages directly (the relay measurement integrates over them).
//! Must not: know the plant, relays or guards (it sees a derivative function and a callback).

/// a(i, j) of the tableau, rows for stages 2–7 (stage 7's row is the 5th-order weights b).
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const A71: f64 = 35.0 / 384.0;
const A73: f64 = 500.0 / 1113.0;
const A74: f64 = 125.0 / 192.0;
const A75: f64 = -2187.0 / 6784.0;
const A76: f64 = 11.0 / 84.0;

/// Error weights e = b − b̂ (stages 1, 3–7; stage 2's is zero).
const E: [f64; 6] = [
    71.0 / 57600.0,
    -71.0 / 16695.0,
    71.0 / 1920.0,
    -17253.0 / 339200.0,
    22.0 / 525.0,
    -1.0 / 40.0,
];

/// Dense-output weights d (stages 1, 3–7) of the order-4 continuous extension (§II.6).
pub const DENSE_D: [f64; 6] = [
    -12715105075.0 / 11282082432.0,
    87487479700.0 / 32700410799.0,
    -10690763975.0 / 1880347072.0,
    701980252875.0 / 199316789632.0,
    -1453857185.0 / 822651844.0,
    69997945.0 / 29380423.0,
];

/// Safety factor of the step-size control.
const SAFETY: f64 = 0.9;
/// β of the PI control (the integral part's exponent is α = 0.2 − 0.75·β).
const BETA: f64 = 0.04;
/// Smallest and largest ratio of a new step to the last one.
const FAC_MIN: f64 = 0.2;
const FAC_MAX: f64 = 10.0;

/// Tolerances and limits of one integration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Control {
    pub rtol: f64,
    pub atol: f64,
    /// The error norm is √(Σ (errᵢ/scᵢ)² / norm_width); entries past the state count zero.
    pub norm_width: usize,
    pub h_max: f64,
    /// First step to try; 0 estimates one ([`first_step`]).
    pub first_step: f64,
    /// Attempted steps (accepted or rejected) before giving up.
    pub max_attempts: usize,
}

/// Why an integration stopped short.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Failure {
    /// More than `Control::max_attempts` steps were tried.
    Budget { at: f64, attempts: usize },
    /// The step became too small to advance the time.
    Underflow { at: f64 },
}

/// Counts of one integration.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Counts {
    pub accepted: usize,
    pub rejected: usize,
    pub evaluations: usize,
}

/// One accepted step as the callback sees it.
pub struct Accepted<'a> {
    /// The step's end time (`t0 + h` as the stepper advanced it).
    pub t1: f64,
    pub h: f64,
    /// The state at the step's end (the start is the previous step's end).
    pub y1: &'a [f64],
    /// Derivatives of the stages 1–7: `k[0]` at the start, `k[6]` at the end (FSAL).
    pub k: [&'a [f64]; 7],
    /// Coefficients 2–4 of the step's continuous extension (`c2`, `c3`, `c4` of
    /// [`dense_value`]); coefficients 0 and 1 are the start state and `y1 − y0`.
    pub dense: [&'a [f64]; 3],
}

/// The continuous extension at fraction `theta` of a step, from `y0`, `y1` and the three
/// coefficients of [`Accepted::dense`]: y0 + θ(c1 + (1−θ)(c2 + θ(c3 + (1−θ)c4))), c1 = y1 − y0
/// (HNW I §II.6, the nested form of the DOPRI5 code).
#[inline]
pub fn dense_value(theta: f64, y0: f64, y1: f64, c2: f64, c3: f64, c4: f64) -> f64 {
    let theta1 = 1.0 - theta;
    let c1 = y1 - y0;
    y0 + (c1 + (c2 + (c3 + c4 * theta1) * theta) * theta1) * theta
}

/// Work space of the stepper for states of `n` entries; reusable across integrations.
pub struct Stepper {
    n: usize,
    /// Stage derivatives k1…k7.
    k: [Vec<f64>; 7],
    y: Vec<f64>,
    y_next: Vec<f64>,
    /// Coefficients 2–4 of the last accepted step's continuous extension.
    dense: [Vec<f64>; 3],
}

impl Stepper {
    pub fn new(n: usize) -> Self {
        let v = || vec![0.0; n];
        Stepper {
            n,
            k: [v(), v(), v(), v(), v(), v(), v()],
            y: v(),
            y_next: v(),
            dense: [v(), v(), v()],
        }
    }

    /// Number of state entries this work space is for.
    pub fn width(&self) -> usize {
        self.n
    }

    /// Integrate `f` from `t0` (state `y0`, derivative `dy0 = f(y0)`) to `t_end`, calling
    /// `accepted` after every accepted step; it returns true to stop there.
    #[allow(clippy::too_many_arguments)]
    pub fn integrate(
        &mut self,
        f: &mut dyn FnMut(&[f64], &mut [f64]),
        t0: f64,
        y0: &[f64],
        dy0: &[f64],
        t_end: f64,
        ctl: &Control,
        accepted: &mut dyn FnMut(&Accepted<'_>) -> bool,
    ) -> Result<Counts, Failure> {
        let n = self.n;
        assert!(y0.len() == n && dy0.len() == n, "state width");
        let mut counts = Counts::default();
        if t_end <= t0 || n == 0 {
            return Ok(counts);
        }
        self.y.copy_from_slice(y0);
        self.k[0].copy_from_slice(dy0);
        let mut h = if ctl.first_step > 0.0 {
            ctl.first_step.min(ctl.h_max)
        } else {
            counts.evaluations += 1;
            self.first_step(f, ctl)
        };
        let alpha = 0.2 - BETA * 0.75;
        let (facc1, facc2) = (1.0 / FAC_MIN, 1.0 / FAC_MAX);
        let mut fac_old = 1.0e-4_f64;
        let mut reject = false;
        let mut x = t0;
        let mut attempts = 0usize;
        let mut last = false;
        let width = ctl.norm_width as f64;
        while !last {
            if attempts > ctl.max_attempts {
                return Err(Failure::Budget { at: x, attempts });
            }
            if 0.1 * h.abs() <= f64::EPSILON * x.abs() {
                return Err(Failure::Underflow { at: x });
            }
            if x + 1.01 * h - t_end > 0.0 {
                h = t_end - x;
                last = true;
            }
            attempts += 1;
            self.stages(f, h);
            counts.evaluations += 6;
            let err = (self.error_sum(h, ctl) / width).sqrt();
            // Hairer's PI control, as in ode_solvers' `Controller::accept`.
            let fac11 = err.powf(alpha);
            let fac = facc2.max(facc1.min(fac11 * fac_old.powf(-BETA) / SAFETY));
            let mut h_new = h / fac;
            if err <= 1.0 {
                fac_old = err.max(1.0e-4);
                if h_new.abs() > ctl.h_max {
                    h_new = ctl.h_max;
                }
                if reject {
                    h_new = h_new.abs().min(h.abs());
                }
                reject = false;
                counts.accepted += 1;
                self.dense_coefficients(h);
                x += h;
                let k = &self.k;
                let stop = accepted(&Accepted {
                    t1: x,
                    h,
                    y1: &self.y_next,
                    k: [&k[0], &k[1], &k[2], &k[3], &k[4], &k[5], &k[6]],
                    dense: [&self.dense[0], &self.dense[1], &self.dense[2]],
                });
                // First same as last: the end slope and state start the next step.
                self.k.swap(0, 6);
                std::mem::swap(&mut self.y, &mut self.y_next);
                if stop {
                    last = true;
                }
                if last {
                    return Ok(counts);
                }
            } else {
                h_new = h / facc1.min(fac11 / SAFETY);
                reject = true;
                last = false;
                if counts.accepted >= 1 {
                    counts.rejected += 1;
                }
            }
            h = h_new;
        }
        Ok(counts)
    }

    /// Stages 2–7 of a step of size `h` from `y` with `k[0]` set; stage 7's argument (the
    /// 5th-order solution) is left in `y_next`. Each argument is summed in one pass, term by term
    /// in the tableau's order (the rounding of ode_solvers' one-pass-per-term sums).
    fn stages(&mut self, f: &mut dyn FnMut(&[f64], &mut [f64]), h: f64) {
        let n = self.n;
        macro_rules! stage {
            ($s:literal, $($j:literal * $a:expr),+) => {{
                {
                    let [k0, k1, k2, k3, k4, k5, _] = &self.k;
                    let ks: [&[f64]; 6] = [&k0[..n], &k1[..n], &k2[..n], &k3[..n], &k4[..n], &k5[..n]];
                    let y = &self.y[..n];
                    let arg = &mut self.y_next[..n];
                    for i in 0..n {
                        let mut v = y[i];
                        $( v += ks[$j][i] * h * $a; )+
                        arg[i] = v;
                    }
                }
                f(&self.y_next, &mut self.k[$s]);
            }};
        }
        stage!(1, 0 * A21);
        stage!(2, 0 * A31, 1 * A32);
        stage!(3, 0 * A41, 1 * A42, 2 * A43);
        stage!(4, 0 * A51, 1 * A52, 2 * A53, 3 * A54);
        stage!(5, 0 * A61, 1 * A62, 2 * A63, 3 * A64, 4 * A65);
        stage!(6, 0 * A71, 2 * A73, 3 * A74, 4 * A75, 5 * A76);
    }

    /// Σ (errᵢ/scᵢ)² of the step just computed (stage 2's error weight is zero).
    fn error_sum(&self, h: f64, ctl: &Control) -> f64 {
        let n = self.n;
        let [k0, _, k2, k3, k4, k5, k6] = &self.k;
        let (k0, k2, k3, k4, k5, k6) = (&k0[..n], &k2[..n], &k3[..n], &k4[..n], &k5[..n], &k6[..n]);
        let (y, yn) = (&self.y[..n], &self.y_next[..n]);
        let mut err = 0.0;
        for i in 0..n {
            let e = (k0[i] * E[0]
                + k2[i] * E[1]
                + k3[i] * E[2]
                + k4[i] * E[3]
                + k5[i] * E[4]
                + k6[i] * E[5])
                * h;
            let sc = ctl.atol + y[i].abs().max(yn[i].abs()) * ctl.rtol;
            err += (e / sc) * (e / sc);
        }
        err
    }

    /// Coefficients 2–4 of the continuous extension of the step just taken.
    fn dense_coefficients(&mut self, h: f64) {
        let n = self.n;
        let [k0, _, k2, k3, k4, k5, k6] = &self.k;
        let (k0, k2, k3, k4, k5, k6) = (&k0[..n], &k2[..n], &k3[..n], &k4[..n], &k5[..n], &k6[..n]);
        let (y, yn) = (&self.y[..n], &self.y_next[..n]);
        let [c2, c3, c4] = &mut self.dense;
        let (c2, c3, c4) = (&mut c2[..n], &mut c3[..n], &mut c4[..n]);
        let d = &DENSE_D;
        for i in 0..n {
            let ydiff = yn[i] - y[i];
            let bspl = k0[i] * h - ydiff;
            c2[i] = bspl;
            c3[i] = -k6[i] * h + ydiff - bspl;
            c4[i] = (k0[i] * d[0]
                + k2[i] * d[1]
                + k3[i] * d[2]
                + k4[i] * d[3]
                + k5[i] * d[4]
                + k6[i] * d[5])
                * h;
        }
    }

    /// Hairer's starting step (HNW I §II.4, (4.14)) from `y` and `k[0]`, capped at `h_max`;
    /// one derivative evaluation (in the stage-2 slot, overwritten by the first step).
    fn first_step(&mut self, f: &mut dyn FnMut(&[f64], &mut [f64]), ctl: &Control) -> f64 {
        let (mut d0, mut d1) = (0.0_f64, 0.0_f64);
        for (&yi, &fi) in self.y.iter().zip(&self.k[0]) {
            let sc = ctl.atol + yi.abs() * ctl.rtol;
            d0 += (yi / sc) * (yi / sc);
            d1 += (fi / sc) * (fi / sc);
        }
        let tol = 1.0e-10;
        let mut h0 = if d0 < tol || d1 < tol {
            1.0e-6
        } else {
            0.01 * (d0 / d1).sqrt()
        };
        h0 = h0.min(ctl.h_max).abs();
        for ((a, &yi), &fi) in self.y_next.iter_mut().zip(&self.y).zip(&self.k[0]) {
            *a = yi + fi * h0;
        }
        f(&self.y_next, &mut self.k[1]);
        let mut d2 = 0.0_f64;
        for ((&f0, &f1), &yi) in self.k[0].iter().zip(&self.k[1]).zip(&self.y) {
            let sc = ctl.atol + yi.abs() * ctl.rtol;
            d2 += ((f1 - f0) / sc) * ((f1 - f0) / sc);
        }
        d2 = d2.sqrt() / h0;
        let h1 = if d1.sqrt().max(d2.abs()) <= 1.0e-15 {
            1.0e-6_f64.max(h0.abs() * 1.0e-3)
        } else {
            (0.01 / d1.sqrt().max(d2)).powf(1.0 / 5.0)
        };
        (100.0 * h0.abs()).min(h1.min(ctl.h_max))
    }
}
