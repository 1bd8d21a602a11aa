//! The integration seam: the only file that knows ode_solvers.
//!
//! One call integrates one segment (no discrete change inside) with Dopri5 and continuous output,
//! with the step capped at `max_step_s`. After every accepted step `solout` checks each guard
//! (a state component against a level) for a change of side at the step end, or a hidden
//! excursion inside the step judged from the cubic Hermite interpolant of the step's end values
//! and slopes; on a hit it stops, and [`Segment::locate`] finds the crossing by bisection on the
//! dense output.

use super::rhs::{derivatives, scratch_for, Conditions, PlantEquations};
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::{OutputType, System};
use ode_solvers::{DVector, Dopri5};
use std::cell::{Cell, RefCell};

/// A state component watched against a level.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StateGuard {
    pub index: usize,
    pub level: f64,
}

/// Options of the stepper.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepOptions {
    pub max_step_s: f64,
    pub rtol: f64,
    pub atol: f64,
}

/// One integrated segment.
pub struct Segment {
    /// Accepted step ends including the start point.
    pub times: Vec<f64>,
    pub states: Vec<DVector<f64>>,
    dense: ContinuousOutputModel<f64, DVector<f64>>,
    /// The solver stopped early because a guard looked crossed in the last step.
    pub guard_hit: bool,
}

struct Plant<'a> {
    eq: &'a PlantEquations,
    cond: &'a Conditions,
    scratch: RefCell<Vec<f64>>,
    guards: &'a [StateGuard],
    prev_t: f64,
    prev_y: DVector<f64>,
    prev_dy: DVector<f64>,
    hit: &'a Cell<bool>,
}

impl System<f64, DVector<f64>> for Plant<'_> {
    fn system(&self, _t: f64, y: &DVector<f64>, dy: &mut DVector<f64>) {
        let mut s = self.scratch.borrow_mut();
        derivatives(self.eq, self.cond, &mut s, y.as_slice(), dy.as_mut_slice());
    }

    fn solout(&mut self, t: f64, y: &DVector<f64>, dy: &DVector<f64>) -> bool {
        let h = t - self.prev_t;
        let hit = self.guards.iter().any(|g| {
            crosses_in_step(
                g,
                h,
                self.prev_y[g.index],
                self.prev_dy[g.index],
                y[g.index],
                dy[g.index],
            )
        });
        self.prev_t = t;
        self.prev_y.copy_from(y);
        self.prev_dy.copy_from(dy);
        if hit {
            self.hit.set(true);
        }
        hit
    }
}

/// Whether a guard changes side over a step, judged from the end values and the Hermite cubic.
pub fn crosses_in_step(g: &StateGuard, h: f64, y0: f64, d0: f64, y1: f64, d1: f64) -> bool {
    let below0 = y0 < g.level;
    if (y1 < g.level) != below0 {
        return true;
    }
    if d0 * d1 >= 0.0 {
        return false;
    }
    hermite_extrema(h, y0, d0, y1, d1)
        .into_iter()
        .flatten()
        .any(|v| (v < g.level) != below0)
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

/// Integrate from `t0` to `t_end` (exactly) unless a guard stops the solver first.
pub fn integrate(
    eq: &PlantEquations,
    cond: &Conditions,
    t0: f64,
    y0: &DVector<f64>,
    t_end: f64,
    guards: &[StateGuard],
    opt: &StepOptions,
) -> Result<Segment, String> {
    let hit = Cell::new(false);
    let mut dy0 = DVector::zeros(y0.len());
    let mut scratch = scratch_for(cond);
    derivatives(eq, cond, &mut scratch, y0.as_slice(), dy0.as_mut_slice());
    let sys = Plant {
        eq,
        cond,
        scratch: RefCell::new(scratch),
        guards,
        prev_t: t0,
        prev_y: y0.clone(),
        prev_dy: dy0,
        hit: &hit,
    };
    let h_max = opt.max_step_s.min(t_end - t0).max(1e-9);
    let mut solver = Dopri5::from_param(
        sys,
        t0,
        t_end,
        h_max,
        y0.clone(),
        opt.rtol,
        opt.atol,
        0.9,
        0.04,
        0.2,
        10.0,
        h_max,
        0.0,
        1_000_000,
        1000,
        OutputType::Continuous,
    );
    let mut dense = ContinuousOutputModel::default();
    solver
        .integrate_with_continuous_output_model(&mut dense)
        .map_err(|e| e.to_string())?;
    // With continuous output the solver stores step ends only; the start point goes first.
    let (t_steps, y_steps) = solver.results().get();
    let mut times = Vec::with_capacity(t_steps.len() + 1);
    let mut states = Vec::with_capacity(t_steps.len() + 1);
    times.push(t0);
    states.push(y0.clone());
    times.extend_from_slice(t_steps);
    states.extend(y_steps.iter().cloned());
    Ok(Segment {
        times,
        states,
        dense,
        guard_hit: hit.get(),
    })
}

impl Segment {
    /// State at `t` inside the segment (clamped to its ends).
    pub fn at(&self, t: f64) -> DVector<f64> {
        let first = self.times[0];
        let last = self.times[self.times.len() - 1];
        if t <= first {
            return self.states[0].clone();
        }
        if t >= last {
            return self.states[self.states.len() - 1].clone();
        }
        self.dense
            .evaluate(t)
            .unwrap_or_else(|| self.states[self.states.len() - 1].clone())
    }

    /// The earliest guard crossing inside the last step, as the first time on the new side
    /// (bisection to `tol_s`). `None` if a suspected hidden excursion is not confirmed.
    pub fn locate(&self, guards: &[StateGuard], tol_s: f64) -> Option<f64> {
        let n = self.times.len();
        if n < 2 {
            return None;
        }
        let (ta, tb) = (self.times[n - 2], self.times[n - 1]);
        let ya = &self.states[n - 2];
        const N_SUB: usize = 16;
        let mut best: Option<f64> = None;
        let subs: Vec<(f64, DVector<f64>)> = (1..=N_SUB)
            .map(|k| {
                let t = if k == N_SUB {
                    tb
                } else {
                    ta + (tb - ta) * k as f64 / N_SUB as f64
                };
                (t, self.at(t))
            })
            .collect();
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
                if (self.at(mid)[g.index] < g.level) != below0 {
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
