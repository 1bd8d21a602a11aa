//! The integration seam: the only file that knows ode_solvers.
//!
//! One call integrates one segment (no discrete change inside) with Dopri5 and continuous output,
//! with the step capped at `max_step_s`. After every accepted step `solout` checks each guard
//! (a state component against a level) for a change of side at the step end, or a hidden
//! excursion inside the step judged from the cubic Hermite interpolant of the step's end values
//! and slopes; on a hit it stops, and [`Segment::locate`] finds the crossing by bisection on the
//! dense output. The same test against the edges of each watched band ([`Band`]) ends a segment
//! integrated with a relaxed step cap as soon as the state comes near a level.
//!
//! The state is a fixed-size `SVector` of the smallest of 16, 32, 64 or 128 entries that holds
//! it (monomorphised, so no stage allocates); entries past the plant's own are padding with zero
//! derivative, and the tolerances are scaled by √(n/N) so that the solver's RMS error norm, and
//! with it every step size, is the one of the unpadded system. Larger plants use a `DVector`.
//! Must not: know relays, islands or events (it sees a derivative function and levels).

use super::rhs::{Filtered, SegmentEquations};
use crate::relay::measurement::{self, INPUT_DEGREE};
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::{OutputType, System};
use ode_solvers::{DVector, Dopri5, SVector};
use std::cell::{Cell, RefCell};

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

/// Dormand–Prince 5(4) dense-output weights d1, d3…d7 (Hairer, Nørsett & Wanner, *Solving
/// Ordinary Differential Equations I*, 2nd ed., §II.6, the continuous extension of DOPRI5;
/// the same values ode_solvers uses).
const DENSE_D: [f64; 6] = [
    -12715105075.0 / 11282082432.0,
    87487479700.0 / 32700410799.0,
    -10690763975.0 / 1880347072.0,
    701980252875.0 / 199316789632.0,
    -1453857185.0 / 822651844.0,
    69997945.0 / 29380423.0,
];

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
}

/// One integrated segment.
pub struct Segment {
    n: usize,
    /// Accepted step ends including the start point.
    pub times: Vec<f64>,
    /// Flat: `n` values per point.
    states: Vec<f64>,
    /// dy/dt at each point, flat like `states`.
    slopes: Vec<f64>,
    dense: Dense,
    filtered: Vec<Filtered>,
    /// Per accepted step, per filtered pair: the input polynomial of the step (`NB` values).
    polys: Vec<f64>,
    /// The solver stopped early because a guard looked crossed in the last step.
    pub guard_hit: bool,
    /// The solver stopped early because a watched component left its band.
    pub band_left: bool,
}

enum Dense {
    S16(ContinuousOutputModel<f64, SVector<f64, 16>>),
    S32(ContinuousOutputModel<f64, SVector<f64, 32>>),
    S64(ContinuousOutputModel<f64, SVector<f64, 64>>),
    S128(ContinuousOutputModel<f64, SVector<f64, 128>>),
    Dyn(ContinuousOutputModel<f64, DVector<f64>>),
}

/// What `solout` keeps; filled while the solver owns the system.
struct Observer<'a> {
    n: usize,
    guards: &'a [StateGuard],
    bands: &'a [Band],
    prev_t: f64,
    prev_y: Vec<f64>,
    prev_dy: Vec<f64>,
    /// The solver's state and slope at the step end with the filtered components filled in.
    cur_y: Vec<f64>,
    cur_dy: Vec<f64>,
    filtered: &'a [Filtered],
    polys: &'a mut Vec<f64>,
    /// The input components' derivatives at the solver's last five evaluations (a ring).
    stage_ring: &'a RefCell<StageRing>,
    /// The last evaluations were not the stages of the accepted step (never expected).
    stages_unread: &'a Cell<bool>,
    times: &'a mut Vec<f64>,
    states: &'a mut Vec<f64>,
    slopes: &'a mut Vec<f64>,
    guard_hit: &'a Cell<bool>,
    band_left: &'a Cell<bool>,
}

/// The input components' derivatives at the solver's most recent evaluations. A Dormand–Prince
/// step evaluates its stages 2–7 in order, stage 7 at the step end, and then reports the step;
/// so when a step is accepted the last five evaluations are its stages 3–7, which with the
/// start slope are what the continuous extension needs.
struct StageRing {
    n: usize,
    /// 5 × n values, slot `calls % 5` written last.
    values: Vec<f64>,
    calls: usize,
}

impl StageRing {
    fn record(&mut self, filtered: &[Filtered], dy: &[f64]) {
        let slot = self.calls % 5;
        for (j, f) in filtered.iter().enumerate() {
            self.values[slot * self.n + j] = dy[f.input];
        }
        self.calls += 1;
    }

    /// Stages 3, 4, 5, 6 and 7 of filtered pair `j`, oldest first.
    fn stages(&self, j: usize) -> [f64; 5] {
        let mut out = [0.0; 5];
        for (i, o) in out.iter_mut().enumerate() {
            let slot = (self.calls + i) % 5;
            *o = self.values[slot * self.n + j];
        }
        out
    }
}

struct Plant<'a> {
    eq: &'a SegmentEquations,
    obs: Observer<'a>,
}

impl Observer<'_> {
    fn accepted(&mut self, t: f64, y: &[f64], dy: &[f64]) -> bool {
        let h = t - self.prev_t;
        self.cur_y.copy_from_slice(&y[..self.n]);
        self.cur_dy.copy_from_slice(&dy[..self.n]);
        {
            let ring = self.stage_ring.borrow();
            for (j, f) in self.filtered.iter().enumerate() {
                let k = ring.stages(j);
                let k7 = dy[f.input];
                if k[4] != k7 || ring.calls < 5 {
                    self.stages_unread.set(true);
                }
                let (pi, pd) = (self.prev_y[f.input], self.prev_dy[f.input]);
                let b = step_polynomial(h, pi, pd, y[f.input], k7, &[k[0], k[1], k[2], k[3]]);
                self.polys.extend_from_slice(&b);
                let (m0, r0) = (self.prev_y[f.measured], self.prev_y[f.rocof]);
                let (m, r) = measurement::advance(&f.lags, &b, h, 1.0, m0, r0);
                let dm = measurement::measured_derivative(y[f.input], k7, m, f.lags.lag_s);
                self.cur_y[f.measured] = m;
                self.cur_y[f.rocof] = r;
                self.cur_dy[f.measured] = dm;
                self.cur_dy[f.rocof] = measurement::rocof_derivative(dm, r, f.lags.window_s);
            }
        }
        let (y, dy) = (&self.cur_y, &self.cur_dy);
        let (py, pdy) = (&self.prev_y, &self.prev_dy);
        let crosses = |i: usize, level: f64| crosses_level(level, h, py[i], pdy[i], y[i], dy[i]);
        let hit = self.guards.iter().any(|g| crosses(g.index, g.level));
        let left = !hit
            && self
                .bands
                .iter()
                .any(|b| crosses(b.index, b.lo) || crosses(b.index, b.hi));
        self.prev_t = t;
        self.prev_y.copy_from_slice(y);
        self.prev_dy.copy_from_slice(dy);
        self.times.push(t);
        self.states.extend_from_slice(y);
        self.slopes.extend_from_slice(dy);
        if hit {
            self.guard_hit.set(true);
        }
        if left {
            self.band_left.set(true);
        }
        hit || left
    }
}

macro_rules! system_for {
    ($v:ty) => {
        impl System<f64, $v> for Plant<'_> {
            fn system(&self, _t: f64, y: &$v, dy: &mut $v) {
                let n = self.obs.n;
                self.eq
                    .derivatives(&y.as_slice()[..n], &mut dy.as_mut_slice()[..n]);
                if !self.obs.filtered.is_empty() {
                    self.obs
                        .stage_ring
                        .borrow_mut()
                        .record(self.obs.filtered, dy.as_slice());
                }
            }

            fn solout(&mut self, t: f64, y: &$v, dy: &$v) -> bool {
                self.obs.accepted(t, y.as_slice(), dy.as_slice())
            }
        }
    };
}
system_for!(SVector<f64, 16>);
system_for!(SVector<f64, 32>);
system_for!(SVector<f64, 64>);
system_for!(SVector<f64, 128>);
system_for!(DVector<f64>);

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
    let mut dy0 = vec![0.0; n];
    eq.derivatives(y0, &mut dy0);
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
    let stage_ring = RefCell::new(StageRing {
        n: filtered.len(),
        values: vec![0.0; 5 * filtered.len()],
        calls: 0,
    });
    let stages_unread = Cell::new(false);
    let mut polys = Vec::with_capacity(64 * NB * filtered.len());
    let guard_hit = Cell::new(false);
    let band_left = Cell::new(false);
    let mut times = Vec::with_capacity(64);
    let mut states = Vec::with_capacity(64 * n);
    let mut slopes = Vec::with_capacity(64 * n);
    times.push(t0);
    states.extend_from_slice(y0);
    slopes.extend_from_slice(&dy0);
    let obs = Observer {
        n,
        guards,
        bands,
        prev_t: t0,
        prev_y: y0.to_vec(),
        prev_dy: dy0,
        cur_y: vec![0.0; n],
        cur_dy: vec![0.0; n],
        filtered: &filtered,
        polys: &mut polys,
        stage_ring: &stage_ring,
        stages_unread: &stages_unread,
        times: &mut times,
        states: &mut states,
        slopes: &mut slopes,
        guard_hit: &guard_hit,
        band_left: &band_left,
    };
    let sys = Plant { eq, obs };
    let h_max = opt.max_step_s.min(t_end - t0).max(1e-9);
    // The error norm counts the ODE states only (not the filtered components nor padding).
    let n_ode = n - eq.n_outside_ode();
    macro_rules! solve {
        ($size:literal, $variant:ident, $runner:ident) => {{
            let mut y = SVector::<f64, $size>::zeros();
            y.as_mut_slice()[..n].copy_from_slice(y0);
            Dense::$variant($runner(sys, t0, t_end, h_max, y, opt, n_ode, $size)?)
        }};
    }
    let dense = match n {
        0..=16 => solve!(16, S16, run16),
        17..=32 => solve!(32, S32, run32),
        33..=64 => solve!(64, S64, run64),
        65..=128 => solve!(128, S128, run128),
        _ => {
            let y = DVector::from_column_slice(y0);
            Dense::Dyn(run_dyn(sys, t0, t_end, h_max, y, opt, n_ode, n)?)
        }
    };
    if stages_unread.get() {
        return Err(
            "the integrator's stages could not be read for the relay measurement \
                    (an internal error; please report it with the input files)"
                .to_string(),
        );
    }
    Ok(Segment {
        n,
        times,
        states,
        slopes,
        dense,
        filtered,
        polys,
        guard_hit: guard_hit.get(),
        band_left: band_left.get(),
    })
}

macro_rules! dopri5_runner {
    ($name:ident, $v:ty) => {
        #[allow(clippy::too_many_arguments)]
        fn $name(
            sys: Plant<'_>,
            t0: f64,
            t_end: f64,
            h_max: f64,
            y: $v,
            opt: &StepOptions,
            n: usize,
            padded: usize,
        ) -> Result<ContinuousOutputModel<f64, $v>, String> {
            // Padding and filtered entries have zero error; scaling both tolerances by √(n/N)
            // makes the RMS norm over N entries equal the one over the n ODE states.
            let scale = if padded > n && n > 0 {
                (n as f64 / padded as f64).sqrt()
            } else {
                1.0
            };
            let mut solver = Dopri5::from_param(
                sys,
                t0,
                t_end,
                h_max,
                y,
                opt.rtol * scale,
                opt.atol * scale,
                0.9,
                0.04,
                0.2,
                10.0,
                h_max,
                opt.first_step_s.clamp(0.0, h_max),
                1_000_000,
                u32::MAX,
                OutputType::Continuous,
            );
            let mut dense = ContinuousOutputModel::new();
            solver
                .integrate_with_continuous_output_model(&mut dense)
                .map_err(in_words)?;
            Ok(dense)
        }
    };
}

/// The solver's error in the words of a run's status.
fn in_words(e: ode_solvers::dop_shared::IntegrationError) -> String {
    use ode_solvers::dop_shared::IntegrationError as E;
    match e {
        E::MaxNumStepReached { x, n_step } => format!(
            "the integrator reached its limit of {n_step} steps in one stretch at {x:.3} s \
             (the equations change too fast for it; see docs/models.md, lags)"
        ),
        E::StepSizeUnderflow { x } => {
            format!("the integrator's step became too small at {x:.3} s")
        }
        E::StiffnessDetected { x } => format!("the equations became stiff at {x:.3} s"),
    }
}

dopri5_runner!(run16, SVector<f64, 16>);
dopri5_runner!(run32, SVector<f64, 32>);
dopri5_runner!(run64, SVector<f64, 64>);
dopri5_runner!(run128, SVector<f64, 128>);
dopri5_runner!(run_dyn, DVector<f64>);

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
        let n = self.n;
        let done = match &self.dense {
            Dense::S16(d) => d
                .evaluate(t)
                .map(|v| out.copy_from_slice(&v.as_slice()[..n])),
            Dense::S32(d) => d
                .evaluate(t)
                .map(|v| out.copy_from_slice(&v.as_slice()[..n])),
            Dense::S64(d) => d
                .evaluate(t)
                .map(|v| out.copy_from_slice(&v.as_slice()[..n])),
            Dense::S128(d) => d
                .evaluate(t)
                .map(|v| out.copy_from_slice(&v.as_slice()[..n])),
            Dense::Dyn(d) => d.evaluate(t).map(|v| out.copy_from_slice(v.as_slice())),
        };
        if done.is_none() {
            out.copy_from_slice(self.last_state());
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
        let v = match &self.dense {
            Dense::S16(d) => d.evaluate(t).map(|v| v[i]),
            Dense::S32(d) => d.evaluate(t).map(|v| v[i]),
            Dense::S64(d) => d.evaluate(t).map(|v| v[i]),
            Dense::S128(d) => d.evaluate(t).map(|v| v[i]),
            Dense::Dyn(d) => d.evaluate(t).map(|v| v[i]),
        };
        v.unwrap_or_else(|| self.last_state()[i])
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
