//! What a run remembers of its trajectory: extrema candidates, level crossings and samples.
//!
//! The minimum and maximum of a section's frequency over any interval lie at a segment end, at a
//! step end, or at an interior stationary point; the recorder keeps segment ends and the
//! stationary points (found where dΔω/dt changes sign between step ends and refined by
//! golden-section search on the dense output), so island and run extremes are exact to the
//! integrator's accuracy rather than to the sample spacing.
//!
//! Samples on the fixed grid `k·dt` are not taken while the run goes: the integrated segments
//! are kept, and a sample is evaluated on their dense output only when it is needed, i.e. for
//! the trace when one is asked for, and for the windowed ROCOF only where it can matter: a window
//! whose frequency range (bounded by the step ends and stationary points inside it, between
//! which the frequency is monotone) divided by its width cannot exceed the largest ROCOF found so
//! far is skipped without changing the result. Must not: decide events or change the state.

use super::integrate::Segment;
use super::rhs::speed_index;
use super::trajectory::{Kept, Recorded, Trajectory};
use super::FailLimits;
use std::cell::RefCell;
/// Grid points are tested for skipping in blocks of this many, and blocks in groups of
/// `GROUP` first (a group passed over is not looked at block by block).
const BLOCK: usize = 10;
const GROUP: usize = 10;

pub struct Recorder {
    pub nominal_hz: f64,
    pub sample_interval_s: f64,
    n_sections: usize,
    /// The start state, the kept segments and the knots (handed to the run at its end).
    path: Recorded,
    /// Per section: (t, Hz) at segment ends and stationary points.
    pub candidates: Vec<Vec<(f64, f64)>>,
    recover_pu: f64,
    below: Vec<bool>,
    /// Per section: was below the recovery level at some time.
    ever_below: Vec<bool>,
    /// Per section: last time it came back above the recovery level.
    pub last_up_s: Vec<Option<f64>>,
    /// Per section, grid samples already evaluated (NaN where not), handed to [`Samples`].
    grid_cache: RefCell<Vec<Vec<f64>>>,
    watch: Option<Watch>,
}

/// The limits a run stops at once certain to break one ([`crate::sim::SimConfig::stop_when_failing`]),
/// checked on the recorded path after each segment.
struct Watch {
    limits: FailLimits,
    /// The ROCOF window, seconds (as the run's summary takes it: at least one sample interval).
    window: f64,
    /// Per section: the first block of grid points not yet checked against the ROCOF limit.
    next_block: Vec<usize>,
    /// When and why the run became certain to fail.
    failed: Option<(f64, &'static str)>,
}

/// Grid samples evaluated on demand.
pub struct Samples<'a> {
    rec: &'a Recorder,
    /// Number of grid points.
    pub len: usize,
    cache: Vec<Vec<f64>>,
    /// Per section, for the window they were computed with: each group's bound (see
    /// [`Samples::group_bounds`]).
    bounds: Vec<Option<(f64, Vec<f64>)>>,
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
            n_sections,
            path: Recorded::new(nominal_hz, sample_interval_s, n_sections),
            candidates: vec![Vec::new(); n_sections],
            recover_pu: (recover_hz - nominal_hz) / nominal_hz,
            below: vec![false; n_sections],
            ever_below: vec![false; n_sections],
            last_up_s: vec![None; n_sections],
            grid_cache: RefCell::new(vec![Vec::new(); n_sections]),
            watch: None,
        }
    }

    /// Watch the recorded path for a certain failure of `limits` (none: nothing watched);
    /// `rocof_window_s` is the run's ROCOF window.
    pub fn watching(mut self, limits: Option<FailLimits>, rocof_window_s: f64) -> Self {
        self.watch = limits.map(|limits| Watch {
            limits,
            window: rocof_window_s.max(self.sample_interval_s),
            next_block: vec![0; self.n_sections],
            failed: None,
        });
        self
    }

    /// When and why the run became certain to fail a watched limit (see [`Recorder::watching`]):
    /// the time of the segment end at which it was found, and the criterion.
    pub fn certain_failure(&self) -> Option<(f64, &'static str)> {
        self.watch.as_ref().and_then(|w| w.failed)
    }

    /// Frequency of section `s` at grid point `k`, Hz, on the recorded path (cached).
    fn grid_hz(&self, s: usize, k: usize) -> f64 {
        let mut cache = self.grid_cache.borrow_mut();
        let c = &mut cache[s];
        if c.len() <= k {
            c.resize(k + 1, f64::NAN);
        }
        if c[k].is_nan() {
            let t = k as f64 * self.sample_interval_s;
            c[k] = self.hz(self.path.component_at(t, speed_index(s)));
        }
        c[k]
    }

    /// After a segment ending at `t_stop`: whether a grid point of an unfrozen section recorded
    /// so far has a windowed ROCOF above the watched limit. Grid points up to `t_stop` are final
    /// (later segments do not change the path before them), and the value is computed as
    /// [`Samples::windowed_rocof`] computes it, so the run's reported ROCOF is at least as large.
    /// Blocks whose covering knot range divided by W does not exceed the limit are passed over.
    fn watch_rocof(&mut self, frozen: &[bool], t_stop: f64) {
        let Some(watch) = &self.watch else { return };
        if watch.failed.is_some() {
            return;
        }
        let (limit, window) = (watch.limits.max_rocof_hz_per_s, watch.window);
        let dt = self.sample_interval_s;
        let w = window / dt;
        let time = |k: usize| k as f64 * dt;
        let mut next_block = watch.next_block.clone();
        let mut failed = None;
        'sections: for s in 0..self.n_sections {
            if frozen[s] {
                continue;
            }
            // The blocks recorded in full since the last check, bounded together first: most
            // segments end far from the limit and are passed over in one look at their knots.
            let b0 = next_block[s];
            let n_final = ((t_stop / dt).floor().max(0.0) as usize).saturating_add(1);
            let mut b_end = n_final / BLOCK;
            while b_end > b0 && time(b_end * BLOCK - 1) > t_stop {
                b_end -= 1;
            }
            while time((b_end + 1) * BLOCK - 1) <= t_stop {
                b_end += 1;
            }
            if b_end <= b0 {
                continue;
            }
            let t_lo = time(back_index(b0 * BLOCK, w).0);
            let t_hi = time(b_end * BLOCK - 1);
            if knot_range(&self.path.knots[s], t_lo, t_hi) / window <= limit {
                next_block[s] = b_end;
                continue;
            }
            loop {
                let b = next_block[s];
                let (first, last) = (b * BLOCK, b * BLOCK + BLOCK - 1);
                if time(last) > t_stop {
                    break;
                }
                next_block[s] = b + 1;
                let bound = knot_range(
                    &self.path.knots[s],
                    time(back_index(first, w).0),
                    time(last),
                );
                if bound / window <= limit {
                    continue;
                }
                for i in first..=last {
                    if time(i) < window - 1e-12 {
                        continue;
                    }
                    let (lo, frac) = back_index(i, w);
                    // `lo + 1 ≤ i`: recorded as well.
                    let back = if frac != 0.0 {
                        self.grid_hz(s, lo) * (1.0 - frac) + self.grid_hz(s, lo + 1) * frac
                    } else {
                        self.grid_hz(s, lo)
                    };
                    if ((self.grid_hz(s, i) - back) / window).abs() > limit {
                        failed = Some((t_stop, "rocof"));
                        break 'sections;
                    }
                }
            }
        }
        let watch = self.watch.as_mut().expect("watched");
        watch.next_block = next_block;
        watch.failed = watch.failed.or(failed);
    }

    fn hz(&self, dw: f64) -> f64 {
        self.nominal_hz * (1.0 + dw)
    }

    /// The state at the start of the run.
    pub fn start(&mut self, y0: &[f64]) {
        self.path.y0 = y0.to_vec();
        for s in 0..self.n_sections {
            let dw = y0[speed_index(s)];
            self.below[s] = dw < self.recover_pu;
            self.ever_below[s] = self.below[s];
            let v = self.hz(dw);
            self.candidates[s].push((0.0, v));
            self.path.knots[s].push((0.0, v));
        }
    }

    /// Record a segment that ends at `t_stop` with state `y_stop` and slope `dy_stop`;
    /// `frozen[s]` says section `s` is held in this segment.
    pub fn segment(
        &mut self,
        seg: Segment,
        frozen: &[bool],
        t_stop: f64,
        y_stop: &[f64],
        dy_stop: &[f64],
        shed_mw: f64,
    ) {
        let n_before = (0..seg.n_points())
            .take_while(|&k| seg.times[k] < t_stop)
            .count();
        let point = |k: usize| -> (f64, &[f64], &[f64]) {
            if k < n_before {
                (seg.times[k], seg.state(k), seg.slope(k))
            } else {
                (t_stop, y_stop, dy_stop)
            }
        };
        for s in 0..self.n_sections {
            if frozen[s] {
                continue;
            }
            let iw = speed_index(s);
            for k in 1..=n_before {
                let (ta, ya, da) = point(k - 1);
                let (tb, yb, db) = point(k);
                let (da, db) = (da[iw], db[iw]);
                if da * db < 0.0 {
                    let minimum = da < 0.0;
                    let (t, v) = extremum(&seg, iw, (ta, ya[iw], da), (tb, yb[iw], db), minimum);
                    let hz = self.hz(v);
                    self.candidates[s].push((t, hz));
                    self.path.knots[s].push((t, hz));
                }
                if k < n_before {
                    let hz = self.hz(yb[iw]);
                    self.path.knots[s].push((tb, hz));
                }
                let below_b = yb[iw] < self.recover_pu;
                if let Some(watch) = &mut self.watch {
                    if below_b && tb > watch.limits.recovered_by_s && watch.failed.is_none() {
                        watch.failed = Some((t_stop, "recover"));
                    }
                }
                if below_b != self.below[s] {
                    if !below_b {
                        let mut lo = ta;
                        let mut hi = tb;
                        if ya[iw] < self.recover_pu {
                            while hi - lo > 1e-6 {
                                let mid = 0.5 * (lo + hi);
                                if seg.component_at(mid, iw) < self.recover_pu {
                                    lo = mid;
                                } else {
                                    hi = mid;
                                }
                            }
                        }
                        self.last_up_s[s] = Some(hi);
                    }
                    self.below[s] = below_b;
                    self.ever_below[s] |= below_b;
                }
            }
            let hz = self.hz(y_stop[iw]);
            self.candidates[s].push((t_stop, hz));
            self.path.knots[s].push((t_stop, hz));
        }
        self.path.kept.push(Kept {
            seg,
            to: t_stop,
            y_to: y_stop.to_vec(),
            shed_mw,
        });
        self.watch_rocof(frozen, t_stop);
    }

    pub fn ends_below(&self, section: usize) -> bool {
        self.below[section]
    }

    /// Whether any section was ever below the recovery level.
    pub fn went_below(&self) -> bool {
        self.ever_below.iter().any(|b| *b)
    }

    /// The peak of section `s` between `from` and `to`, counting only what follows the
    /// disturbance start `after`: the frequency is skipped while it falls from there (so the
    /// value held at the disturbance instant, i.e. the pre-event value, is never the peak), and
    /// from its first rise on the highest value is taken. `None` when it never rose.
    pub fn peak_after(&self, s: usize, after: f64, from: f64, to: f64) -> Option<(f64, f64)> {
        let lo = after.max(from);
        let knots: Vec<(f64, f64)> = self.path.knots[s]
            .iter()
            .copied()
            .filter(|(t, _)| *t >= lo - 1e-12 && *t <= to + 1e-12)
            .collect();
        let first_rise = knots.windows(2).position(|w| w[1].1 > w[0].1)? + 1;
        knots[first_rise..]
            .iter()
            .copied()
            .fold(None, |best: Option<(f64, f64)>, k| match best {
                Some(b) if b.1 >= k.1 => Some(b),
                _ => Some(k),
            })
    }

    /// The sample grid up to `t_end` (points `k·dt` with `k·dt ≤ t_end`).
    pub fn samples(&self, t_end: f64) -> Samples<'_> {
        let len = super::trajectory::grid_len(self.sample_interval_s, t_end);
        Samples {
            rec: self,
            len,
            cache: self.grid_cache.take(),
            bounds: vec![None; self.n_sections],
        }
    }

    /// The run's trajectory: what it keeps of its path for reading after the end.
    pub fn into_trajectory(self, t_end: f64) -> Trajectory {
        Trajectory::new(self.path, t_end)
    }
}

impl Samples<'_> {
    pub fn time(&self, k: usize) -> f64 {
        k as f64 * self.rec.sample_interval_s
    }

    /// Frequency of section `s` at grid point `k`, Hz.
    pub fn hz(&mut self, s: usize, k: usize) -> f64 {
        if self.cache[s].len() < self.len {
            self.cache[s].resize(self.len, f64::NAN);
        }
        let v = self.cache[s][k];
        if !v.is_nan() {
            return v;
        }
        let t = self.time(k);
        let v = self.rec.hz(self.rec.path.component_at(t, speed_index(s)));
        self.cache[s][k] = v;
        v
    }

    /// The range of section `s`'s knot values that cover the windows of grid points
    /// `first..=last`, from the first point's window start to the last point, in Hz. Between two
    /// knots the frequency is monotone, so every |f(t) − f(t − W)| of those points, interpolated
    /// window start included, is at most this range. Infinite when a knot is not a number or
    /// there are none (nothing is bounded then).
    fn window_range(&self, s: usize, w: f64, first: usize, last: usize) -> f64 {
        let t_lo = self.time(back_index(first, w).0);
        knot_range(&self.rec.path.knots[s], t_lo, self.time(last))
    }

    /// Section `s`'s group bounds for window `window` (group `g` holds the grid points
    /// `g·GROUP·BLOCK …`; see [`Samples::window_range`]), computed once per section.
    fn group_bounds(&mut self, s: usize, window: f64) -> Vec<f64> {
        if !matches!(&self.bounds[s], Some((w, _)) if *w == window) {
            let w = window / self.rec.sample_interval_s;
            let span = GROUP * BLOCK;
            let out = (0..self.len.div_ceil(span))
                .map(|g| self.window_range(s, w, g * span, ((g + 1) * span).min(self.len) - 1))
                .collect();
            self.bounds[s] = Some((window, out));
        }
        self.bounds[s].as_ref().expect("computed above").1.clone()
    }

    /// Max over grid points `t` with `W ≤ t`, `from < t ≤ to` of |f(t) − f(t − W)|/W on section
    /// `s`, `f(t − W)` interpolated linearly between grid samples.
    ///
    /// Only the grid points that can matter are evaluated. Groups of blocks are visited with the
    /// group whose bound ([`Samples::window_range`]) is the largest first, then in time order;
    /// inside a group, blocks the same way; a group or block whose bound divided by W does not
    /// exceed the largest value found so far is passed over. It cannot hold a larger value, so
    /// the result is the maximum over every grid point.
    pub fn windowed_rocof(&mut self, s: usize, window: f64, from: f64, to: f64) -> f64 {
        let dt = self.rec.sample_interval_s;
        let w = window / dt;
        // Grid points that count: the first one past `from` and not before `window`, up to `to`.
        // Both found from an estimate corrected on the same tests (the lower bounds hold from
        // some grid point on, the upper one up to some point), not by a scan of the grid.
        let after_lower = |i: usize| {
            let t = self.time(i);
            !(t < window - 1e-12 || t <= from)
        };
        let below_upper = |i: usize| self.time(i) <= to + 1e-12;
        let estimate = |t: f64| {
            if t.is_finite() {
                ((t / dt).floor().max(0.0) as usize).min(self.len)
            } else if t > 0.0 {
                self.len
            } else {
                0
            }
        };
        let mut lower = estimate(window.max(from));
        while lower > 0 && after_lower(lower - 1) {
            lower -= 1;
        }
        while lower < self.len && !after_lower(lower) {
            lower += 1;
        }
        let mut upper = estimate(to);
        while upper < self.len && below_upper(upper) {
            upper += 1;
        }
        while upper > 0 && !below_upper(upper - 1) {
            upper -= 1;
        }
        if lower >= upper {
            return 0.0;
        }
        let (i_min, i_end) = (lower, upper);
        debug_assert!((i_min..i_end).all(|i| {
            let t = self.time(i);
            !(t < window - 1e-12 || t <= from || t > to + 1e-12)
        }));
        let span = GROUP * BLOCK;
        let (g_first, g_last) = (i_min / span, (i_end - 1) / span);
        let groups = self.group_bounds(s, window);
        let seed = largest_first(g_first..=g_last, |g| groups[g]);
        let mut best: f64 = 0.0;
        for g in seed {
            if groups[g] / window <= best {
                continue;
            }
            let b_first = (g * GROUP).max(i_min / BLOCK);
            let b_last = ((g + 1) * GROUP - 1).min((i_end - 1) / BLOCK);
            let mut blocks = [0.0; GROUP];
            for b in b_first..=b_last {
                let first = (b * BLOCK).max(i_min);
                let last = ((b + 1) * BLOCK).min(i_end) - 1;
                blocks[b - b_first] = self.window_range(s, w, first, last);
            }
            for b in largest_first(b_first..=b_last, |b| blocks[b - b_first]) {
                if blocks[b - b_first] / window <= best {
                    continue;
                }
                let first = (b * BLOCK).max(i_min);
                let last = ((b + 1) * BLOCK).min(i_end) - 1;
                for i in first..=last {
                    let (lo, frac) = back_index(i, w);
                    let back = if lo + 1 < self.len && frac != 0.0 {
                        self.hz(s, lo) * (1.0 - frac) + self.hz(s, lo + 1) * frac
                    } else {
                        self.hz(s, lo)
                    };
                    best = best.max(((self.hz(s, i) - back) / window).abs());
                }
            }
        }
        best
    }
}

/// Grid point `i`'s window start `t − W` as (grid point at or before it, fraction to the next
/// one), `w = W / dt`.
fn back_index(i: usize, w: f64) -> (usize, f64) {
    let p = (i as f64 - w).max(0.0);
    let lo = p.floor() as usize;
    (lo, p - lo as f64)
}

/// The range of the knot values covering [t_lo, t_hi] (the last knot at or before `t_lo` up to
/// the first at or after `t_hi`, clamped to the ends of the list), Hz: between two knots the
/// frequency is monotone, so no value in [t_lo, t_hi] differs from another by more. Infinite
/// when a knot is not a number or there are none (nothing is bounded then).
fn knot_range(knots: &[(f64, f64)], t_lo: f64, t_hi: f64) -> f64 {
    if knots.is_empty() {
        return f64::INFINITY;
    }
    let j_lo = knots.partition_point(|k| k.0 <= t_lo).saturating_sub(1);
    let j_hi = knots
        .partition_point(|k| k.0 < t_hi)
        .min(knots.len() - 1)
        .max(j_lo);
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    let mut nan = false;
    for k in &knots[j_lo..=j_hi] {
        lo = lo.min(k.1);
        hi = hi.max(k.1);
        nan |= k.1.is_nan();
    }
    let range = hi - lo;
    if nan || !range.is_finite() {
        f64::INFINITY
    } else {
        range
    }
}

/// The indices of `range`, the one with the largest `bound` first (the earliest of equals), then
/// the others in order.
fn largest_first(
    range: std::ops::RangeInclusive<usize>,
    bound: impl Fn(usize) -> f64,
) -> impl Iterator<Item = usize> {
    let top = range
        .clone()
        .max_by(|&a, &b| bound(a).total_cmp(&bound(b)).then(b.cmp(&a)));
    top.into_iter()
        .chain(range.filter(move |&i| Some(i) != top))
}

/// The extremum of component `i` inside the step (a, b), whose end values and slopes are given:
/// Newton's method on the dense output's slope, started at the stationary point of the step's
/// Hermite cubic; the slope and curvature are central differences of the dense output (a
/// polynomial inside the step, so they are exact to rounding). Falls back to golden-section
/// search when Newton leaves the step, meets the wrong curvature or does not settle.
fn extremum(
    seg: &Segment,
    i: usize,
    (a, ya, da): (f64, f64, f64),
    (b, yb, db): (f64, f64, f64),
    minimum: bool,
) -> (f64, f64) {
    let h = b - a;
    let sign = if minimum { 1.0 } else { -1.0 };
    let f = |t: f64| sign * seg.component_at(t, i);
    let start = super::integrate::hermite_stationary(h, ya, da, yb, db);
    if let Some(theta) = start {
        let delta = (1e-4 * h).clamp(1e-9, 1e-5);
        let mut t = a + theta * h;
        for _ in 0..8 {
            let (lo, mid, hi) = (f(t - delta), f(t), f(t + delta));
            let curvature = (hi - 2.0 * mid + lo) / (delta * delta);
            if curvature.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
                break;
            }
            let step = -((hi - lo) / (2.0 * delta)) / curvature;
            let next = t + step;
            if !(next > a && next < b) {
                break;
            }
            t = next;
            if step.abs() < 1e-8 {
                return (t, seg.component_at(t, i));
            }
        }
    }
    golden(seg, i, a, b, minimum)
}

/// Golden-section search for the extremum of component `i` on [a, b].
fn golden(seg: &Segment, i: usize, mut a: f64, mut b: f64, minimum: bool) -> (f64, f64) {
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let sign = if minimum { 1.0 } else { -1.0 };
    let f = |t: f64| sign * seg.component_at(t, i);
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
    (t, seg.component_at(t, i))
}
