//! A run's path kept for reading after its end: the integrated segments with their dense output
//! and, per section, the knots between which its frequency is monotone.
//!
//! Readings on the sample grid `k·dt` (the settling range, the time in a frequency band, the
//! first sample below a level) are taken without building the sampled trace: between two
//! consecutive knots a section's frequency is monotone, so over the grid points of one knot
//! interval the extremes sit at the grid points nearest the interval's two ends, and every grid
//! point of the interval is on one side of a level when both knot values are. Only those grid
//! points are evaluated on the dense output, each by the same evaluation the trace uses, so a
//! reading equals the one taken from the full trace. The plotting trace itself is built only
//! on request ([`Trajectory::trace`]), in one forward sweep that evaluates the state once per
//! grid time for every section. Must not: decide events or change the state.

use super::integrate::Segment;
use super::rhs::speed_index;
use super::Trace;
use std::sync::Arc;

/// One integrated segment as the run kept it: valid on (start, `to`].
pub(super) struct Kept {
    pub seg: Segment,
    pub to: f64,
    pub y_to: Vec<f64>,
    pub shed_mw: f64,
}

/// What the recorder builds while the run goes.
pub(super) struct Recorded {
    pub nominal_hz: f64,
    pub sample_interval_s: f64,
    pub y0: Vec<f64>,
    /// Kept segments in time order.
    pub kept: Vec<Kept>,
    /// Per section, time-ordered: (t, Hz) at the start, every step end, every stationary point
    /// and every segment end. Between two consecutive knots the frequency is monotone.
    pub knots: Vec<Vec<(f64, f64)>>,
}

impl Recorded {
    pub fn new(nominal_hz: f64, sample_interval_s: f64, n_sections: usize) -> Recorded {
        Recorded {
            nominal_hz,
            sample_interval_s,
            y0: Vec::new(),
            kept: Vec::new(),
            knots: vec![Vec::new(); n_sections],
        }
    }

    /// The index of the kept segment a time belongs to (the first one ending at or after it).
    fn kept_index(&self, t: f64) -> usize {
        self.kept.partition_point(|k| k.to + 1e-12 < t)
    }

    /// State component `i` at `t`, from the kept segment `j` (which must be the one `t` belongs
    /// to, or past the end).
    fn component_in(&self, j: usize, t: f64, i: usize) -> f64 {
        if t <= 0.0 {
            return self.y0[i];
        }
        match self.kept.get(j) {
            Some(k) if t >= k.to => k.y_to[i],
            Some(k) => k.seg.component_at(t, i),
            None => self.kept.last().map_or(self.y0[i], |k| k.y_to[i]),
        }
    }

    /// State component `i` at `t`.
    pub fn component_at(&self, t: f64, i: usize) -> f64 {
        self.component_in(self.kept_index(t), t, i)
    }

    fn shed_in(&self, j: usize, t: f64) -> f64 {
        if t <= 0.0 {
            return 0.0;
        }
        self.kept
            .get(j)
            .or(self.kept.last())
            .map_or(0.0, |k| k.shed_mw)
    }
}

/// The path of a run: its knots and dense output, for readings on the sample grid and for the
/// plotting trace on request. Cheap to clone (shared).
#[derive(Clone)]
pub struct Trajectory {
    path: Arc<Recorded>,
    /// Number of grid points `k·dt` with `k·dt ≤` the end of the run.
    len: usize,
}

impl std::fmt::Debug for Trajectory {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Trajectory")
            .field("segments", &self.path.kept.len())
            .field("samples", &self.len)
            .finish()
    }
}

/// Two trajectories are equal when their knots (every step end, stationary point and segment
/// end of every section) and their sample grids are.
impl PartialEq for Trajectory {
    fn eq(&self, other: &Self) -> bool {
        self.len == other.len
            && self.path.sample_interval_s == other.path.sample_interval_s
            && self.path.knots == other.path.knots
    }
}

/// The number of grid points `k·dt` with `k·dt ≤ t_end` (`1e-12` of slack), at least one: found
/// from the estimate `t_end / dt` and corrected on the same test (which holds up to some `k` and
/// not after it), not by counting up from zero.
pub(super) fn grid_len(dt: f64, t_end: f64) -> usize {
    let end = t_end + 1e-12;
    if !(end >= dt) {
        return 1;
    }
    let mut len = ((end / dt).floor() as usize).saturating_add(1).max(1);
    while len > 1 && ((len - 1) as f64) * dt > end {
        len -= 1;
    }
    while (len as f64) * dt <= end {
        len += 1;
    }
    len
}

impl Trajectory {
    pub(super) fn new(path: Recorded, t_end: f64) -> Trajectory {
        let len = grid_len(path.sample_interval_s, t_end);
        Trajectory {
            path: Arc::new(path),
            len,
        }
    }

    /// Number of grid points.
    pub fn grid_len(&self) -> usize {
        self.len
    }

    /// Time of grid point `k`, seconds.
    pub fn grid_time(&self, k: usize) -> f64 {
        k as f64 * self.path.sample_interval_s
    }

    /// Per section, time-ordered (t, Hz) with the frequency monotone between consecutive knots.
    pub fn knots(&self, section: usize) -> &[(f64, f64)] {
        &self.path.knots[section]
    }

    /// Frequency of `section` at grid point `k`, Hz: the value the trace holds there.
    pub fn grid_hz(&self, section: usize, k: usize) -> f64 {
        let dw = self
            .path
            .component_at(self.grid_time(k), speed_index(section));
        self.path.nominal_hz * (1.0 + dw)
    }

    /// The last grid point at or before `t` (the first one when `t` is before it).
    pub fn grid_at_or_before(&self, t: f64) -> usize {
        // The count of grid times `k·dt ≤ t`, less one, decided on the same products.
        let dt = self.path.sample_interval_s;
        let mut k = ((t / dt).floor().max(0.0) as usize).min(self.len - 1);
        while k + 1 < self.len && self.grid_time(k + 1) <= t {
            k += 1;
        }
        while k > 0 && self.grid_time(k) > t {
            k -= 1;
        }
        k
    }

    /// The number of grid points `k` with `grid_time(k) ≤ t` (grid times grow with `k`, so the
    /// test holds up to some point and not after it): found from the estimate `t / dt` and
    /// corrected on the same test, not by a scan of the grid.
    fn grid_count_upto(&self, t: f64) -> usize {
        let dt = self.path.sample_interval_s;
        let mut k = if t.is_nan() {
            0
        } else {
            ((t / dt).floor().max(0.0) as usize).min(self.len)
        };
        while k < self.len && self.grid_time(k) <= t {
            k += 1;
        }
        while k > 0 && self.grid_time(k - 1) > t {
            k -= 1;
        }
        k
    }

    /// Grid points of each knot interval of `section`, in time order: `(first, last, v_a, v_b)`
    /// with the grid points `first..=last` inside the interval (each grid point in exactly one:
    /// the first interval whose end it does not pass) and the knot values at its ends.
    fn intervals(&self, section: usize) -> impl Iterator<Item = (usize, usize, f64, f64)> + '_ {
        self.intervals_from(section, 0)
    }

    /// [`Trajectory::intervals`] from the first interval holding a grid point at or after `k`
    /// on (the intervals wholly before it are passed over by a search of the knots, not walked).
    fn intervals_from(
        &self,
        section: usize,
        k: usize,
    ) -> impl Iterator<Item = (usize, usize, f64, f64)> + '_ {
        let knots = &self.path.knots[section];
        // An interval holds a grid point at or after `k` when its end knot is not before it.
        let t_k = self.grid_time(k);
        let j0 = knots.partition_point(|kn| kn.0 < t_k);
        // Before the pair that ends at knot `j0`, every grid point up to knot `j0 − 1` is taken.
        let (skip, mut next) = if j0 >= 2 {
            (j0 - 1, self.grid_count_upto(knots[j0 - 1].0))
        } else {
            (0, 0)
        };
        let tail = knots.last().map(|k| (k.0, k.1));
        let pairs = knots
            .windows(2)
            .skip(skip)
            .map(|w| (w[1].0, w[0].1, w[1].1));
        // After the last knot the frequency is held (the run ended or the island was frozen).
        let held = tail.map(|(_, v)| (f64::INFINITY, v, v));
        pairs.chain(held).filter_map(move |(t_b, va, vb)| {
            if next >= self.len {
                return None;
            }
            let first = next;
            next = first.max(self.grid_count_upto(t_b));
            (next > first).then(|| (first, next - 1, va, vb))
        })
    }

    /// Lowest and highest sampled frequency of any section at grid times from `from` on
    /// (`t + 1e-9 ≥ from`), as the sampled trace would give them; `None` when no grid point is
    /// that late.
    pub fn grid_range_from(&self, from: f64) -> Option<(f64, f64)> {
        // The first grid point with `t + 1e-9 ≥ from` (the test holds from some point on).
        let dt = self.path.sample_interval_s;
        let mut k_from = if from.is_nan() {
            self.len
        } else {
            ((from / dt).floor().max(0.0) as usize).min(self.len)
        };
        while k_from > 0 && self.grid_time(k_from - 1) + 1e-9 >= from {
            k_from -= 1;
        }
        while k_from < self.len && self.grid_time(k_from) + 1e-9 < from {
            k_from += 1;
        }
        if k_from >= self.len {
            return None;
        }
        let mut range: Option<(f64, f64)> = None;
        let mut take = |f: f64| {
            range = Some(match range {
                None => (f, f),
                Some((lo, hi)) => (lo.min(f), hi.max(f)),
            });
        };
        for s in 0..self.path.knots.len() {
            for (first, last, _, _) in self.intervals_from(s, k_from) {
                let first = first.max(k_from);
                if first > last {
                    continue;
                }
                // Monotone over the interval: its extremes are at its first and last grid points.
                take(self.grid_hz(s, first));
                if last != first {
                    take(self.grid_hz(s, last));
                }
            }
        }
        range
    }

    /// Time `section` spends in the band `low ≤ f < high` (either bound may be infinite) on the
    /// sample grid, until `until`: every grid interval `[t_k, t_{k+1}]` counts in full (cut at
    /// `until`) when the frequency at its start is in the band, summed in time order. The dense
    /// output is evaluated only in the knot intervals whose end values are not both inside or
    /// both on one side outside, and not at all when every knot is on one side outside.
    pub fn grid_time_in_band(&self, section: usize, low: f64, high: f64, until: f64) -> f64 {
        let knots = &self.path.knots[section];
        if knots.iter().all(|k| k.1 < low) || knots.iter().all(|k| k.1 >= high) {
            return 0.0;
        }
        let inside = |f: f64| f >= low && f < high;
        let mut time_s = 0.0;
        // Grid point `k` (not the last) counts the interval to the next one.
        let mut count = |k: usize| -> bool {
            if k + 1 >= self.len {
                return false;
            }
            let (t0, t1) = (self.grid_time(k), self.grid_time(k + 1).min(until));
            if t1 <= t0 {
                return t0 < until;
            }
            time_s += t1 - t0;
            true
        };
        'walk: for (first, last, va, vb) in self.intervals(section) {
            let same_side = (va < low && vb < low) || (va >= high && vb >= high);
            if inside(va) && inside(vb) {
                for k in first..=last {
                    if !count(k) {
                        break 'walk;
                    }
                }
            } else if !same_side {
                for k in first..=last {
                    if inside(self.grid_hz(section, k)) && !count(k) {
                        break 'walk;
                    }
                }
            }
        }
        time_s
    }

    /// The first grid time at or after `from` at which any of `sections` is below `hz`, as the
    /// sampled trace would show it.
    pub fn first_grid_below(&self, sections: &[usize], from: f64, hz: f64) -> Option<f64> {
        let mut best: Option<usize> = None;
        for &s in sections {
            for (first, last, va, vb) in self.intervals(s) {
                if best.is_some_and(|b| first >= b) {
                    break;
                }
                if va >= hz && vb >= hz {
                    continue;
                }
                let hit = (first..=last)
                    .filter(|&k| self.grid_time(k) >= from)
                    .find(|&k| self.grid_hz(s, k) < hz);
                if let Some(k) = hit {
                    best = Some(best.map_or(k, |b| b.min(k)));
                    break;
                }
            }
        }
        best.map(|k| self.grid_time(k))
    }

    /// The sampled trace: every section's frequency and the shed MW at every grid point, in one
    /// forward sweep (the state is evaluated once per grid time for all sections).
    pub fn trace(&self) -> Trace {
        let p = &*self.path;
        let n_sections = p.knots.len();
        let mut t_s = Vec::with_capacity(self.len);
        let mut section_hz = vec![Vec::with_capacity(self.len); n_sections];
        let mut shed_mw = Vec::with_capacity(self.len);
        let mut state = vec![0.0; p.y0.len()];
        let mut j = 0;
        for k in 0..self.len {
            let t = self.grid_time(k);
            while j < p.kept.len() && p.kept[j].to + 1e-12 < t {
                j += 1;
            }
            if t <= 0.0 {
                state.copy_from_slice(&p.y0);
            } else {
                match p.kept.get(j) {
                    Some(kp) if t >= kp.to => state.copy_from_slice(&kp.y_to),
                    Some(kp) => kp.seg.ode_at_into(t, &mut state),
                    None => state.copy_from_slice(p.kept.last().map_or(&p.y0, |kp| &kp.y_to)),
                }
            }
            t_s.push(t);
            for (s, hz) in section_hz.iter_mut().enumerate() {
                hz.push(p.nominal_hz * (1.0 + state[speed_index(s)]));
            }
            shed_mw.push(p.shed_in(j, t));
        }
        Trace {
            t_s,
            section_hz,
            shed_mw,
        }
    }
}
