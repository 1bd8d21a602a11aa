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
    /// k1…k7, then y, y_next, the stage argument, and the three dense coefficients.
    buf: Vec<f64>,
}

const K: usize = 0;
const Y: usize = 7;
const YN: usize = 8;
const ARG: usize = 9;
const D2: usize = 10;
const SLOTS: usize = 13;

impl Stepper {
    pub fn new(n: usize) -> Self {
        Stepper {
            n,
            buf: vec![0.0; SLOTS * n],
        }
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
        self.buf[Y * n..(Y + 1) * n].copy_from_slice(y0);
        self.buf[K * n..(K + 1) * n].copy_from_slice(dy0);
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
            // Error estimate and its norm (stage 2's weight is zero).
            let mut err = 0.0;
            {
                let b = &self.buf;
                let k = |s: usize, i: usize| b[(K + s) * n + i];
                for i in 0..n {
                    let e = (k(0, i) * E[0]
                        + k(2, i) * E[1]
                        + k(3, i) * E[2]
                        + k(4, i) * E[3]
                        + k(5, i) * E[4]
                        + k(6, i) * E[5])
                        * h;
                    let (yi, yni) = (b[Y * n + i], b[YN * n + i]);
                    let sc = ctl.atol + yi.abs().max(yni.abs()) * ctl.rtol;
                    err += (e / sc) * (e / sc);
                }
            }
            err = (err / width).sqrt();
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
                let stop = {
                    let b = &self.buf;
                    let s = |j: usize| &b[j * n..(j + 1) * n];
                    accepted(&Accepted {
                        t1: x,
                        h,
                        y1: s(YN),
                        k: [
                            s(K),
                            s(K + 1),
                            s(K + 2),
                            s(K + 3),
                            s(K + 4),
                            s(K + 5),
                            s(K + 6),
                        ],
                        dense: [s(D2), s(D2 + 1), s(D2 + 2)],
                    })
                };
                // First same as last: the end slope starts the next step.
                self.buf.copy_within((K + 6) * n..(K + 7) * n, K * n);
                self.buf.copy_within(YN * n..(YN + 1) * n, Y * n);
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

    /// Stages 2–7 of a step of size `h` from `Y` with `k[0]` set; stage 7's argument (the
    /// 5th-order solution) is left in `YN`.
    fn stages(&mut self, f: &mut dyn FnMut(&[f64], &mut [f64]), h: f64) {
        let n = self.n;
        let rows: [&[f64]; 6] = [
            &[A21],
            &[A31, A32],
            &[A41, A42, A43],
            &[A51, A52, A53, A54],
            &[A61, A62, A63, A64, A65],
            &[A71, 0.0, A73, A74, A75, A76],
        ];
        for (s, row) in rows.iter().enumerate() {
            let (head, tail) = self.buf.split_at_mut(ARG * n);
            let arg = &mut tail[..n];
            let y = &head[Y * n..(Y + 1) * n];
            arg.copy_from_slice(y);
            for (j, &a) in row.iter().enumerate() {
                if a == 0.0 {
                    continue;
                }
                let kj = &head[(K + j) * n..(K + j + 1) * n];
                for i in 0..n {
                    arg[i] += kj[i] * h * a;
                }
            }
            let (ks, rest) = head.split_at_mut((K + s + 1) * n);
            let _ = ks;
            f(arg, &mut rest[..n]);
        }
        self.buf.copy_within(ARG * n..(ARG + 1) * n, YN * n);
    }

    /// Coefficients 2–4 of the continuous extension of the step just taken.
    fn dense_coefficients(&mut self, h: f64) {
        let n = self.n;
        let (head, tail) = self.buf.split_at_mut(D2 * n);
        let k = |s: usize, i: usize| head[(K + s) * n + i];
        for i in 0..n {
            let ydiff = head[YN * n + i] - head[Y * n + i];
            let bspl = k(0, i) * h - ydiff;
            tail[i] = bspl;
            tail[n + i] = -k(6, i) * h + ydiff - bspl;
            tail[2 * n + i] = (k(0, i) * DENSE_D[0]
                + k(2, i) * DENSE_D[1]
                + k(3, i) * DENSE_D[2]
                + k(4, i) * DENSE_D[3]
                + k(5, i) * DENSE_D[4]
                + k(6, i) * DENSE_D[5])
                * h;
        }
    }

    /// Hairer's starting step (HNW I §II.4, (4.14)) from `Y` and `k[0]`, capped at `h_max`;
    /// one derivative evaluation (in the stage-2 slot, overwritten by the first step).
    fn first_step(&mut self, f: &mut dyn FnMut(&[f64], &mut [f64]), ctl: &Control) -> f64 {
        let n = self.n;
        let (mut d0, mut d1) = (0.0_f64, 0.0_f64);
        {
            let b = &self.buf;
            for i in 0..n {
                let yi = b[Y * n + i];
                let sc = ctl.atol + yi.abs() * ctl.rtol;
                d0 += (yi / sc) * (yi / sc);
                let fi = b[K * n + i];
                d1 += (fi / sc) * (fi / sc);
            }
        }
        let tol = 1.0e-10;
        let mut h0 = if d0 < tol || d1 < tol {
            1.0e-6
        } else {
            0.01 * (d0 / d1).sqrt()
        };
        h0 = h0.min(ctl.h_max).abs();
        {
            let (head, tail) = self.buf.split_at_mut(ARG * n);
            let arg = &mut tail[..n];
            for i in 0..n {
                arg[i] = head[Y * n + i] + head[K * n + i] * h0;
            }
            f(arg, &mut head[(K + 1) * n..(K + 2) * n]);
        }
        let mut d2 = 0.0_f64;
        {
            let b = &self.buf;
            for i in 0..n {
                let (f0, f1, yi) = (b[K * n + i], b[(K + 1) * n + i], b[Y * n + i]);
                let sc = ctl.atol + yi.abs() * ctl.rtol;
                d2 += ((f1 - f0) / sc) * ((f1 - f0) / sc);
            }
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
