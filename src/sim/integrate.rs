//! The integration seam: the only file that knows the stepper (`super::dopri`).
//!
//! One call integrates one segment (no discrete change inside) with Dormand–Prince 5(4) and its
//! continuous extension, with the step capped at `max_step_s`. After every accepted step the
//! callback advances the relay measurement over the step from the step's own stages, then checks
//! each guard (a state component against a level) for a change of side at the step end, or a
//! hidden excursion inside the step judged from the cubic Hermite interpolant of the step's end
//! values and slopes; on a hit it stops, and [`Segment::locate`] finds the crossing by bisection
//! on the dense output. The same test against the edges of each watched band ([`Band`]) ends a
//! segment integrated with a relaxed step cap as soon as the state comes near a level.
//!
//! The segment keeps, per accepted step, the state, slope, step size and three coefficients of
//! the continuous extension per state entry (the other two are the end states), and per filtered
//! pair the input quartic the measurement reads.
//! Must not: know relays, islands or events (it sees a derivative function and levels).

use super::dopri::{dense_value, Accepted, Control, Counts, Failure, Stepper, DENSE_D};
use super::rhs::{Filtered, SegmentEquations};
use crate::relay::measurement::{self, INPUT_DEGREE};
use std::cell::RefCell;

/// A state component watched against a level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StateGuard {
    pub index: usize,
    pub level: f64,
}

/// A state component that must stay inside `[lo, hi]` for the segment to continue.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Band {
    pub index: usize,
    pub lo: f64,
    pub hi: f64,
}

/// Number of coefficients of a step's input polynomial.
const NB: usize = INPUT_DEGREE + 1;

/// Steps (accepted or rejected) one segment may try: bounded time for any accepted input (the
/// run's memory ceiling, `SimConfig::max_kept_values`, bounds the accepted ones first).
const MAX_ATTEMPTS: usize = 1_000_000;

/// The input polynomial of a step, `w(t0 + θh) = Σ b[k]·θ^k`, from the values and slopes at
/// both ends and the derivatives of stages 3–6 (`k36`): DOPRI5's continuous extension
/// `y0 + θ(c1 + (1−θ)(c2 + θ(c3 + (1−θ)c4)))` written in powers of θ.
fn step_polynomial(h: f64, y0: f64, k1: f64, y1: f64, k7: f64, k36: &[f64; 4]) -> [f64; NB] {
    let c1 = y1 - y0;
    let c2 = h * k1 - c1;
    let c3 = -h * k7 + c1 - c2;
    let d = &DENSE_D;
    let c4 =
        (k1 * d[0] + k36[0] * d[1] + k36[1] * d[2] + k36[2] * d[3] + k36[3] * d[4] + k7 * d[5]) * h;
    [y0, c1 + c2, c3 + c4 - c2, -(c3 + 2.0 * c4), c4]
}

/// Options of the stepper.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepOptions {
    pub max_step_s: f64,
    pub rtol: f64,
    pub atol: f64,
    /// The first step to try (capped at `max_step_s`); 0 lets the solver estimate one
    /// (Hairer, Nørsett & Wanner, *Solving ODEs I*, §II.4, two derivative evaluations).
    pub first_step_s: f64,
    /// The segment stops (as if at its end) once it keeps more values than this
    /// ([`Segment::kept_values`]): the caller's memory ceiling, checked before it is exceeded.
    pub max_kept_values: usize,
}

/// One integrated segment.
pub struct Segment {
    n: usize,
    /// Accepted step ends including the start point.
    pub times: Vec<f64>,
    /// The size of each accepted step as the stepper took it (`times[k] − times[k−1]` up to
    /// rounding), the unit of θ in its continuous extension.
    steps: Vec<f64>,
    /// Flat: `n` values per point.
    states: Vec<f64>,
    /// dy/dt at each point, flat like `states`.
    slopes: Vec<f64>,
    /// Per accepted step: coefficients 2–4 of the continuous extension, `3n` values.
    dense: Vec<f64>,
    filtered: Vec<Filtered>,
    /// Per accepted step, per filtered pair: the input polynomial of the step (`NB` values).
    polys: Vec<f64>,
    /// The solver stopped early because a guard looked crossed in the last step.
    pub guard_hit: bool,
    /// The solver stopped early because a watched component left its band.
    pub band_left: bool,
    /// Steps and derivative evaluations the segment took.
    pub counts: Counts,
}

/// What the stepper's callback keeps after every accepted step.
struct Observer<'a> {
    n: usize,
    guards: &'a [StateGuard],
    bands: &'a [Band],
    filtered: &'a [Filtered],
    max_kept: usize,
    seg: Segment,
}

impl Observer<'_> {
    fn accepted(&mut self, st: &Accepted<'_>) -> bool {
        let n = self.n;
        let seg = &mut self.seg;
        // The step as the stored times give it (θ of `step_of`); the stepper's own `st.h` may
        // differ from it in the last bit and is the unit of the ODE states' extension only.
        let h = st.t1 - seg.times[seg.times.len() - 1];
        // The new point is stored first and its filtered components filled in place; the
        // previous point (the step's start) is the row before it.
        let at = seg.states.len();
        seg.states.extend_from_slice(st.y1);
        seg.slopes.extend_from_slice(st.k[6]);
        let (before, y) = seg.states.split_at_mut(at);
        let (before_d, dy) = seg.slopes.split_at_mut(at);
        let (py, pdy) = (&before[at - n..], &before_d[at - n..]);
        for f in self.filtered {
            let i = f.input;
            let k36 = [st.k[2][i], st.k[3][i], st.k[4][i], st.k[5][i]];
            let b = step_polynomial(h, py[i], pdy[i], y[i], dy[i], &k36);
            seg.polys.extend_from_slice(&b);
            let (m, r) = measurement::advance(&f.lags, &b, h, 1.0, py[f.measured], py[f.rocof]);
            let dm = measurement::measured_derivative(y[i], dy[i], m, f.lags.lag_s);
            y[f.measured] = m;
            y[f.rocof] = r;
            dy[f.measured] = dm;
            dy[f.rocof] = measurement::rocof_derivative(dm, r, f.lags.window_s);
        }
        let crosses = |i: usize, level: f64| crosses_level(level, h, py[i], pdy[i], y[i], dy[i]);
        let hit = self.guards.iter().any(|g| crosses(g.index, g.level));
        let left = !hit
            && self
                .bands
                .iter()
                .any(|b| crosses(b.index, b.lo) || crosses(b.index, b.hi));
        seg.times.push(st.t1);
        seg.steps.push(st.h);
        for c in st.dense {
            seg.dense.extend_from_slice(c);
        }
        seg.guard_hit |= hit;
        seg.band_left |= left;
        hit || left || seg.kept_values() > self.max_kept
    }
}

/// Whether a guard changes side over a step, judged from the end values and the Hermite cubic.
pub fn crosses_in_step(g: &StateGuard, h: f64, y0: f64, d0: f64, y1: f64, d1: f64) -> bool {
    crosses_level(g.level, h, y0, d0, y1, d1)
}

fn crosses_level(level: f64, h: f64, y0: f64, d0: f64, y1: f64, d1: f64) -> bool {
    let below0 = y0 < level;
    if (y1 < level) != below0 {
        return true;
    }
    if d0 * d1 >= 0.0 {
        return false;
    }
    // The cubic stays within its end values widened by (4/27)·h·(|d0| + |d1|) (the largest
    // magnitude of the Hermite slope basis functions on [0, 1] is 4/27, at θ = 1/3 and 2/3);
    // widened again for rounding, a level outside that range cannot be reached.
    let reach = (4.0 / 27.0) * h.abs() * (d0.abs() + d1.abs()) * (1.0 + 1e-6)
        + 1e-12 * (y0.abs() + y1.abs() + level.abs());
    if level < y0.min(y1) - reach || level > y0.max(y1) + reach {
        return false;
    }
    hermite_extrema(h, y0, d0, y1, d1)
        .into_iter()
        .flatten()
        .any(|v| (v < level) != below0)
}

/// The stationary point of the step's cubic Hermite interpolant where its slope changes sign
/// (a fraction of the step in (0, 1)), for a step whose end slopes `d0`, `d1` have opposite signs.
pub fn hermite_stationary(h: f64, y0: f64, d0: f64, y1: f64, d1: f64) -> Option<f64> {
    // Slope of the cubic in θ ∈ [0, 1]: a·θ² + b·θ + c with a, b, c as in `hermite_extrema`;
    // the root between the end slopes' signs is the one the sign change brackets.
    let dy = y0 - y1;
    let a = 6.0 * dy + 3.0 * h * (d0 + d1);
    let b = -6.0 * dy - 4.0 * h * d0 - 2.0 * h * d1;
    let c = h * d0;
    let slope = |th: f64| (a * th + b) * th + c;
    let (mut lo, mut hi) = (0.0_f64, 1.0_f64);
    if slope(lo) * slope(hi) >= 0.0 {
        return None;
    }
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if slope(mid) * slope(lo) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

/// Values of the cubic Hermite interpolant at its interior stationary points (at most two).
fn hermite_extrema(h: f64, y0: f64, d0: f64, y1: f64, d1: f64) -> [Option<f64>; 2] {
    let dy = y0 - y1;
    let a = 6.0 * dy + 3.0 * h * (d0 + d1);
    let b = -6.0 * dy - 4.0 * h * d0 - 2.0 * h * d1;
    let c = h * d0;
    let eval = |th: f64| {
        let h00 = 2.0 * th.powi(3) - 3.0 * th * th + 1.0;
        let h10 = th.powi(3) - 2.0 * th * th + th;
        let h01 = -2.0 * th.powi(3) + 3.0 * th * th;
        let h11 = th.powi(3) - th * th;
        h00 * y0 + h10 * h * d0 + h01 * y1 + h11 * h * d1
    };
    let inside = |th: f64| (th > 0.0 && th < 1.0).then(|| eval(th));
    if a.abs() < 1e-300 {
        if b.abs() < 1e-300 {
            return [None, None];
        }
        return [inside(-c / b), None];
    }
    let disc = b * b - 4.0 * a * c;
    if disc < 0.0 {
        return [None, None];
    }
    let sq = disc.sqrt();
    [inside((-b + sq) / (2.0 * a)), inside((-b - sq) / (2.0 * a))]
}

/// Integrate from `t0` to `t_end` (exactly) unless a guard or a band stops the solver first.
pub fn integrate(
    eq: &SegmentEquations,
    t0: f64,
    y0: &[f64],
    t_end: f64,
    guards: &[StateGuard],
    bands: &[Band],
    opt: &StepOptions,
) -> Result<Segment, String> {
    let n = y0.len();
    // The solver's start slope: the filtered components have zero derivative in the equations.
    let mut k0 = vec![0.0; n];
    eq.derivatives(y0, &mut k0);
    let mut dy0 = k0.clone();
    let filtered = eq.filtered();
    for f in &filtered {
        // The slopes the filters have at the start (the equations give them zero).
        let dm = measurement::measured_derivative(
            y0[f.input],
            dy0[f.input],
            y0[f.measured],
            f.lags.lag_s,
        );
        dy0[f.measured] = dm;
        dy0[f.rocof] = measurement::rocof_derivative(dm, y0[f.rocof], f.lags.window_s);
    }
    let mut seg = Segment {
        n,
        times: Vec::with_capacity(64),
        steps: Vec::with_capacity(64),
        states: Vec::with_capacity(64 * n),
        slopes: Vec::with_capacity(64 * n),
        dense: Vec::with_capacity(3 * 64 * n),
        polys: Vec::with_capacity(64 * NB * filtered.len()),
        filtered: Vec::new(),
        guard_hit: false,
        band_left: false,
        counts: Counts::default(),
    };
    seg.times.push(t0);
    seg.states.extend_from_slice(y0);
    seg.slopes.extend_from_slice(&dy0);
    let mut obs = Observer {
        n,
        guards,
        bands,
        filtered: &filtered,
        max_kept: opt.max_kept_values,
        seg,
    };
    let h_max = opt.max_step_s.min(t_end - t0).max(1e-9);
    // The error norm is the RMS over the ODE states (not the filtered components). It is formed
    // as ode_solvers 0.6 formed it over the state padded to the width 16, 32, 64 or 128 (or n
    // past 128) with both tolerances scaled by √(n_ode/width), so that every step size, and
    // with it every result, is bit for bit the one nadir gave with that solver.
    let n_ode = n - eq.n_outside_ode();
    let width = match n {
        0..=16 => 16,
        17..=32 => 32,
        33..=64 => 64,
        65..=128 => 128,
        _ => n,
    };
    let scale = if width > n_ode && n_ode > 0 {
        (n_ode as f64 / width as f64).sqrt()
    } else {
        1.0
    };
    let ctl = Control {
        rtol: opt.rtol * scale,
        atol: opt.atol * scale,
        norm_width: width,
        h_max,
        first_step: opt.first_step_s.clamp(0.0, h_max),
        max_attempts: MAX_ATTEMPTS,
    };
    let mut rhs = |y: &[f64], dy: &mut [f64]| eq.derivatives(y, dy);
    let counts = with_stepper(n, |stepper| {
        stepper.integrate(&mut rhs, t0, y0, &k0, t_end, &ctl, &mut |st| {
            obs.accepted(st)
        })
    })
    .map_err(in_words)?;
    let mut seg = obs.seg;
    seg.counts = counts;
    seg.filtered = filtered;
    #[cfg(feature = "compare-integrators")]
    capture::record(eq, t0, y0, &seg, opt, &ctl);
    Ok(seg)
}

/// The segments a run integrates, kept for replaying them through other integrators
/// (examples/bench_integrators.rs; feature `compare-integrators`, not in the normal build).
#[cfg(feature = "compare-integrators")]
pub mod capture {
    use super::{Control, Segment, SegmentEquations, StepOptions};
    use std::cell::RefCell;

    /// One integrated segment as the stepper was asked to take it.
    #[derive(Debug, Clone)]
    pub struct SegmentProblem {
        pub eq: SegmentEquations,
        pub t0: f64,
        pub y0: Vec<f64>,
        /// Where the segment ended (its end time, or where a guard or band stopped it).
        pub t_end: f64,
        /// The run's tolerances for an RMS norm over the `n_ode` ODE states (the other entries
        /// of the state, the relay measurement, have zero derivative in `eq`).
        pub rtol: f64,
        pub atol: f64,
        pub n_ode: usize,
        pub h_max: f64,
        /// The first step tried (0: estimated).
        pub first_step: f64,
        /// Accepted steps, rejected steps and derivative evaluations the run's stepper took.
        pub accepted: usize,
        pub rejected: usize,
        pub evaluations: usize,
    }

    thread_local! {
        static KEPT: RefCell<Option<Vec<SegmentProblem>>> = const { RefCell::new(None) };
    }

    pub(super) fn record(
        eq: &SegmentEquations,
        t0: f64,
        y0: &[f64],
        seg: &Segment,
        opt: &StepOptions,
        ctl: &Control,
    ) {
        KEPT.with(|k| {
            if let Some(v) = k.borrow_mut().as_mut() {
                v.push(SegmentProblem {
                    eq: eq.clone(),
                    t0,
                    y0: y0.to_vec(),
                    t_end: seg.times[seg.times.len() - 1],
                    rtol: opt.rtol,
                    atol: opt.atol,
                    n_ode: y0.len() - eq.n_outside_ode(),
                    h_max: ctl.h_max,
                    first_step: ctl.first_step,
                    accepted: seg.counts.accepted,
                    rejected: seg.counts.rejected,
                    evaluations: seg.counts.evaluations,
                });
            }
        });
    }

    /// Run `f` on this thread and return the segments it integrated.
    pub fn segments_of<R>(f: impl FnOnce() -> R) -> (R, Vec<SegmentProblem>) {
        KEPT.with(|k| *k.borrow_mut() = Some(Vec::new()));
        let r = f();
        let v = KEPT.with(|k| k.borrow_mut().take()).unwrap_or_default();
        (r, v)
    }
}

thread_local! {
    /// The stepper's work space, kept for the next segment on the same thread.
    static STEPPER: RefCell<Option<Stepper>> = const { RefCell::new(None) };
}

/// Run `f` with a stepper for `n` states, reusing this thread's work space.
fn with_stepper<R>(n: usize, f: impl FnOnce(&mut Stepper) -> R) -> R {
    let mut stepper = STEPPER
        .with(|s| s.borrow_mut().take())
        .filter(|s| s.width() == n)
        .unwrap_or_else(|| Stepper::new(n));
    let r = f(&mut stepper);
    STEPPER.with(|s| *s.borrow_mut() = Some(stepper));
    r
}

/// The stepper's failure in the words of a run's status.
fn in_words(e: Failure) -> String {
    match e {
        Failure::Budget { at, attempts } => format!(
            "the integrator reached its limit of {attempts} steps in one stretch at {at:.3} s \
             (the equations change too fast for it; see docs/models.md, lags)"
        ),
        Failure::Underflow { at } => {
            format!("the integrator's step became too small at {at:.3} s")
        }
    }
}

impl Segment {
    /// Values the segment keeps for reading later, against a run's memory ceiling: the state at
    /// every stored point and the input quartic of every filtered pair and step.
    pub fn kept_values(&self) -> usize {
        self.states.len() + self.polys.len()
    }

    /// Number of stored points (start point and every accepted step end).
    pub fn n_points(&self) -> usize {
        self.times.len()
    }

    pub fn state(&self, k: usize) -> &[f64] {
        &self.states[k * self.n..(k + 1) * self.n]
    }

    pub fn slope(&self, k: usize) -> &[f64] {
        &self.slopes[k * self.n..(k + 1) * self.n]
    }

    /// The segment's longest of its last two accepted steps (the very last one may have been
    /// shortened to end the segment exactly); 0 without a step.
    pub fn last_step_s(&self) -> f64 {
        let t = &self.times;
        let step = |k: usize| {
            if k >= 1 && k < t.len() {
                t[k] - t[k - 1]
            } else {
                0.0
            }
        };
        let n = t.len();
        step(n.wrapping_sub(1)).max(step(n.wrapping_sub(2)))
    }

    pub fn last_state(&self) -> &[f64] {
        self.state(self.n_points() - 1)
    }

    /// State at `t` inside the segment (clamped to its ends), written to `out`.
    pub fn at_into(&self, t: f64, out: &mut [f64]) {
        self.ode_at_into(t, out);
        if self.filtered.is_empty() {
            return;
        }
        if let Some((k, theta)) = self.step_of(t) {
            for j in 0..self.filtered.len() {
                let (m, r) = self.filtered_in_step(j, k, theta);
                out[self.filtered[j].measured] = m;
                out[self.filtered[j].rocof] = r;
            }
        }
    }

    /// The accepted step `t` lies in (1-based, ending at `times[k]`) and the fraction of it, for
    /// a time strictly inside the segment.
    fn step_of(&self, t: f64) -> Option<(usize, f64)> {
        let last = self.times.len() - 1;
        if !(t > self.times[0] && t < self.times[last]) {
            return None;
        }
        let k = self.times.partition_point(|&tk| tk < t).clamp(1, last);
        let (ta, tb) = (self.times[k - 1], self.times[k]);
        Some((k, ((t - ta) / (tb - ta)).clamp(0.0, 1.0)))
    }

    /// Filtered pair `j` at fraction `theta` of step `k`.
    fn filtered_in_step(&self, j: usize, k: usize, theta: f64) -> (f64, f64) {
        let f = &self.filtered[j];
        let nf = self.filtered.len();
        let at = ((k - 1) * nf + j) * NB;
        let b: &[f64; NB] = self.polys[at..at + NB].try_into().expect("NB coefficients");
        let y0 = self.state(k - 1);
        let h = self.times[k] - self.times[k - 1];
        measurement::advance(&f.lags, b, h, theta, y0[f.measured], y0[f.rocof])
    }

    /// The ODE states at `t` (clamped to the segment's ends), written to `out`; filtered
    /// components are left at their value at the segment's start (inside) or end (past it).
    pub fn ode_at_into(&self, t: f64, out: &mut [f64]) {
        let first = self.times[0];
        let last = self.times[self.times.len() - 1];
        if t <= first {
            out.copy_from_slice(self.state(0));
            return;
        }
        if t >= last {
            out.copy_from_slice(self.last_state());
            return;
        }
        let (k, theta) = self.dense_step(t);
        let n = self.n;
        let (ya, yb) = (self.state(k - 1), self.state(k));
        let c = &self.dense[3 * n * (k - 1)..3 * n * k];
        let (c2, c3, c4) = (&c[..n], &c[n..2 * n], &c[2 * n..]);
        for i in 0..n {
            out[i] = dense_value(theta, ya[i], yb[i], c2[i], c3[i], c4[i]);
        }
        let y0 = self.state(0);
        for f in &self.filtered {
            out[f.measured] = y0[f.measured];
            out[f.rocof] = y0[f.rocof];
        }
    }

    /// State at `t` inside the segment (clamped to its ends).
    pub fn at(&self, t: f64) -> Vec<f64> {
        let mut out = vec![0.0; self.n];
        self.at_into(t, &mut out);
        out
    }

    /// One component at `t` (clamped to the segment's ends).
    pub fn component_at(&self, t: f64, i: usize) -> f64 {
        let first = self.times[0];
        let last = self.times[self.times.len() - 1];
        if t <= first {
            return self.state(0)[i];
        }
        if t >= last {
            return self.last_state()[i];
        }
        if let Some(j) = self
            .filtered
            .iter()
            .position(|f| f.input == i || f.measured == i || f.rocof == i)
        {
            let (k, theta) = self.step_of(t).expect("inside the segment");
            let f = &self.filtered[j];
            if f.input == i {
                // The step's continuous extension of the input, kept as a quartic in θ: one
                // component without evaluating the whole state.
                let at = ((k - 1) * self.filtered.len() + j) * NB;
                let b = &self.polys[at..at + NB];
                return b.iter().rev().fold(0.0, |acc, &c| acc * theta + c);
            }
            let (m, r) = self.filtered_in_step(j, k, theta);
            return if f.measured == i { m } else { r };
        }
        let (k, theta) = self.dense_step(t);
        self.dense_component(k, theta, i)
    }

    /// For `t` strictly inside the segment: the step it lies in (1-based, ending at
    /// `times[k]`; a step end belongs to the step it ends) and θ in the unit the stepper used.
    fn dense_step(&self, t: f64) -> (usize, f64) {
        let last = self.times.len() - 1;
        let k = self.times.partition_point(|&tk| tk < t).clamp(1, last);
        (k, (t - self.times[k - 1]) / self.steps[k - 1])
    }

    /// Component `i` of the continuous extension of step `k` at `theta`.
    fn dense_component(&self, k: usize, theta: f64, i: usize) -> f64 {
        let n = self.n;
        let c = &self.dense[3 * n * (k - 1)..3 * n * k];
        dense_value(
            theta,
            self.states[(k - 1) * n + i],
            self.states[k * n + i],
            c[i],
            c[n + i],
            c[2 * n + i],
        )
    }

    /// The earliest guard crossing inside the last step, as the first time on the new side
    /// (bisection to `tol_s`). `None` if a suspected hidden excursion is not confirmed.
    pub fn locate(&self, guards: &[StateGuard], tol_s: f64) -> Option<f64> {
        let n = self.times.len();
        if n < 2 {
            return None;
        }
        let (ta, tb) = (self.times[n - 2], self.times[n - 1]);
        let ya = self.state(n - 2);
        const N_SUB: usize = 16;
        let mut best: Option<f64> = None;
        let mut subs: Vec<(f64, Vec<f64>)> = Vec::with_capacity(N_SUB);
        for k in 1..=N_SUB {
            let t = if k == N_SUB {
                tb
            } else {
                ta + (tb - ta) * k as f64 / N_SUB as f64
            };
            subs.push((t, self.at(t)));
        }
        for g in guards {
            let below0 = ya[g.index] < g.level;
            let mut lo = ta;
            let mut found = None;
            for (t, y) in &subs {
                if (y[g.index] < g.level) != below0 {
                    found = Some(*t);
                    break;
                }
                lo = *t;
            }
            let Some(mut hi) = found else { continue };
            if best.is_some_and(|b| lo >= b) {
                continue;
            }
            while hi - lo > tol_s {
                let mid = 0.5 * (lo + hi);
                if (self.component_at(mid, g.index) < g.level) != below0 {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            if best.map_or(true, |b| hi < b) {
                best = Some(hi);
            }
        }
        best
    }
}
