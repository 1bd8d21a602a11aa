//! What a run remembers of its trajectory: extrema candidates, level crossings and samples.
//!
//! The minimum and maximum of a section's frequency over any interval lie at a segment end, at a
//! step end, or at an interior stationary point; the recorder keeps segment ends and the
//! stationary points (found where dΔω/dt changes sign between step ends and refined by
//! golden-section search on the dense output), so island and run extremes are exact to the
//! integrator's accuracy rather than to the sample spacing.

use super::integrate::Segment;
use super::rhs::{derivatives, scratch_for, speed_index, Conditions, IslandMode, PlantEquations};
use ode_solvers::DVector;

pub struct Recorder {
    pub nominal_hz: f64,
    pub sample_interval_s: f64,
    next_sample: u64,
    pub t_samples: Vec<f64>,
    pub section_hz: Vec<Vec<f64>>,
    pub shed_samples: Vec<f64>,
    /// Per section: (t, Hz) at segment ends and stationary points.
    pub candidates: Vec<Vec<(f64, f64)>>,
    recover_pu: f64,
    below: Vec<bool>,
    /// Per section: last time it came back above the recovery level.
    pub last_up_s: Vec<Option<f64>>,
}

impl Recorder {
    pub fn new(
        nominal_hz: f64,
        n_sections: usize,
        sample_interval_s: f64,
        recover_hz: f64,
    ) -> Self {
        Recorder {
            nominal_hz,
            sample_interval_s,
            next_sample: 0,
            t_samples: Vec::new(),
            section_hz: vec![Vec::new(); n_sections],
            shed_samples: Vec::new(),
            candidates: vec![Vec::new(); n_sections],
            recover_pu: (recover_hz - nominal_hz) / nominal_hz,
            below: vec![false; n_sections],
            last_up_s: vec![None; n_sections],
        }
    }

    fn hz(&self, dw: f64) -> f64 {
        self.nominal_hz * (1.0 + dw)
    }

    /// The state at the start of the run.
    pub fn start(&mut self, y0: &DVector<f64>, shed_mw: f64) {
        for s in 0..self.section_hz.len() {
            let dw = y0[speed_index(s)];
            self.below[s] = dw < self.recover_pu;
            let v = self.hz(dw);
            self.candidates[s].push((0.0, v));
        }
        self.take_sample(0.0, y0, shed_mw);
        self.next_sample = 1;
    }

    fn take_sample(&mut self, t: f64, y: &DVector<f64>, shed_mw: f64) {
        self.t_samples.push(t);
        for s in 0..self.section_hz.len() {
            let v = self.hz(y[speed_index(s)]);
            self.section_hz[s].push(v);
        }
        self.shed_samples.push(shed_mw);
    }

    /// Record a segment that ends at `t_stop` with state `y_stop`.
    pub fn segment(
        &mut self,
        seg: &Segment,
        eq: &PlantEquations,
        cond: &Conditions,
        t_stop: f64,
        y_stop: &DVector<f64>,
        shed_mw: f64,
    ) {
        // Samples on the fixed grid k·dt.
        loop {
            let t = self.next_sample as f64 * self.sample_interval_s;
            if t > t_stop + 1e-12 {
                break;
            }
            let y = if t >= t_stop {
                y_stop.clone()
            } else {
                seg.at(t)
            };
            self.take_sample(t, &y, shed_mw);
            self.next_sample += 1;
        }
        // Step points up to t_stop.
        let mut pts: Vec<(f64, &DVector<f64>)> = seg
            .times
            .iter()
            .zip(&seg.states)
            .filter(|(t, _)| **t < t_stop)
            .map(|(t, y)| (*t, y))
            .collect();
        pts.push((t_stop, y_stop));
        let mut scratch = scratch_for(cond);
        let mut dys: Vec<DVector<f64>> = Vec::with_capacity(pts.len());
        for (_, y) in &pts {
            let mut dy = DVector::zeros(y.len());
            derivatives(eq, cond, &mut scratch, y.as_slice(), dy.as_mut_slice());
            dys.push(dy);
        }
        for s in 0..self.section_hz.len() {
            if cond.modes[cond.island_of_section[s]] == IslandMode::Frozen {
                continue;
            }
            let iw = speed_index(s);
            for k in 1..pts.len() {
                let (ta, ya) = pts[k - 1];
                let (tb, yb) = pts[k];
                let (da, db) = (dys[k - 1][iw], dys[k][iw]);
                if da * db < 0.0 {
                    let minimum = da < 0.0;
                    let (t, v) = golden(seg, iw, ta, tb, minimum);
                    let hz = self.hz(v);
                    self.candidates[s].push((t, hz));
                }
                let below_b = yb[iw] < self.recover_pu;
                if below_b != self.below[s] {
                    if !below_b {
                        let mut lo = ta;
                        let mut hi = tb;
                        if ya[iw] < self.recover_pu {
                            while hi - lo > 1e-6 {
                                let mid = 0.5 * (lo + hi);
                                if seg.at(mid)[iw] < self.recover_pu {
                                    lo = mid;
                                } else {
                                    hi = mid;
                                }
                            }
                        }
                        self.last_up_s[s] = Some(hi);
                    }
                    self.below[s] = below_b;
                }
            }
            let hz = self.hz(y_stop[iw]);
            self.candidates[s].push((t_stop, hz));
        }
    }

    pub fn ends_below(&self, section: usize) -> bool {
        self.below[section]
    }
}

/// Golden-section search for the extremum of component `i` on [a, b].
fn golden(seg: &Segment, i: usize, mut a: f64, mut b: f64, minimum: bool) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let sign = if minimum { 1.0 } else { -1.0 };
    let f = |t: f64| sign * seg.at(t)[i];
    let mut c = b - r * (b - a);
    let mut d = a + r * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    while b - a > 1e-7 {
        if fc < fd {
            b = d;
            d = c;
            fd = fc;
            c = b - r * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + r * (b - a);
            fd = f(d);
        }
    }
    let t = 0.5 * (a + b);
    (t, seg.at(t)[i])
}
