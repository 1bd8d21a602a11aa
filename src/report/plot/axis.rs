//! The plot's axes: a time axis that gives the first seconds after each event room, and round ticks.
//!
//! Time axis method (piecewise linear, stated in every plot's legend): the `window_s` seconds after
//! each event are drawn `stretch` times wider than the rest of the run, where `stretch` is chosen so
//! that these windows fill about 60 % of the width (never more than 8×, never less than 1×: a run
//! short enough, or with windows already covering most of it, stays linear). The map is continuous
//! and increasing, so order and the reading of any instant are kept; only the scale changes, and the
//! stretched stretches are shaded in the plot so a reader sees where.

/// A continuous, increasing map from time (s) to [0, 1].
#[derive(Debug, Clone, PartialEq)]
pub struct TimeAxis {
    /// Breakpoints (time s, position 0..1), ascending in both.
    knots: Vec<(f64, f64)>,
    /// The stretched intervals, merged and sorted.
    pub stretched: Vec<(f64, f64)>,
    /// How many times wider a stretched second is drawn (1 when linear).
    pub stretch: f64,
    pub duration_s: f64,
}

/// Share of the width the windows after events should take.
const TARGET_SHARE: f64 = 0.6;
const MAX_STRETCH: f64 = 8.0;

impl TimeAxis {
    /// The axis for a run of `duration_s` with events at `events_s`, stretching `window_s` after each.
    pub fn new(duration_s: f64, events_s: &[f64], window_s: f64) -> TimeAxis {
        let duration = if duration_s.is_finite() && duration_s > 0.0 {
            duration_s
        } else {
            1.0
        };
        let mut windows: Vec<(f64, f64)> = events_s
            .iter()
            .filter(|t| t.is_finite() && **t >= 0.0 && **t < duration)
            .map(|&t| (t, (t + window_s).min(duration)))
            .collect();
        windows.sort_by(|a, b| a.0.total_cmp(&b.0));
        let mut merged: Vec<(f64, f64)> = Vec::new();
        for w in windows {
            match merged.last_mut() {
                Some(last) if w.0 <= last.1 => last.1 = last.1.max(w.1),
                _ => merged.push(w),
            }
        }
        let inside: f64 = merged.iter().map(|w| w.1 - w.0).sum();
        let outside = duration - inside;
        let stretch = if inside <= 0.0 || outside <= 0.0 {
            1.0
        } else {
            (TARGET_SHARE * outside / ((1.0 - TARGET_SHARE) * inside)).clamp(1.0, MAX_STRETCH)
        };
        let total = stretch * inside + outside;
        let mut knots = vec![(0.0, 0.0)];
        let mut pos = 0.0;
        let mut t = 0.0;
        for &(a, b) in &merged {
            pos += (a - t) / total;
            knots.push((a, pos));
            pos += stretch * (b - a) / total;
            knots.push((b, pos));
            t = b;
        }
        knots.push((duration, 1.0));
        knots.dedup_by(|b, a| b.0 <= a.0);
        TimeAxis {
            knots,
            stretched: if stretch > 1.0 { merged } else { Vec::new() },
            stretch,
            duration_s: duration,
        }
    }

    /// Position of time `t` on the axis, 0 at the start and 1 at the end (clamped).
    pub fn position(&self, t: f64) -> f64 {
        if !t.is_finite() {
            return 0.0;
        }
        let t = t.clamp(0.0, self.duration_s);
        let k = self.knots.partition_point(|p| p.0 <= t);
        if k == 0 {
            return 0.0;
        }
        if k >= self.knots.len() {
            return 1.0;
        }
        let (t0, p0) = self.knots[k - 1];
        let (t1, p1) = self.knots[k];
        if t1 <= t0 {
            p1
        } else {
            p0 + (t - t0) / (t1 - t0) * (p1 - p0)
        }
    }

    /// Tick times whose labels stay at least `min_gap` apart on an axis `width` long: round
    /// numbers first (multiples of the coarsest step), then finer ones where the stretch leaves room.
    pub fn ticks(&self, width: f64, min_gap: f64) -> Vec<f64> {
        let mut steps: Vec<f64> = Vec::new();
        for magnitude in [0.1, 1.0, 10.0, 100.0, 1000.0, 10_000.0] {
            for m in [1.0, 2.0, 5.0] {
                steps.push(m * magnitude);
            }
        }
        steps.retain(|s| self.duration_s / s <= 400.0);
        steps.reverse();
        let mut placed: Vec<(f64, f64)> = Vec::new();
        for step in steps {
            let n = (self.duration_s / step).floor() as usize;
            for i in 0..=n {
                let t = i as f64 * step;
                let x = self.position(t) * width;
                if placed.iter().all(|&(_, px)| (px - x).abs() >= min_gap) {
                    placed.push((t, x));
                }
            }
        }
        let mut out: Vec<f64> = placed.into_iter().map(|p| p.0).collect();
        out.sort_by(f64::total_cmp);
        out
    }
}

/// Round tick positions, about `count` of them, covering [lo, hi].
pub fn ticks(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    let span = (hi - lo).max(1e-9);
    let raw = span / count.max(1) as f64;
    let magnitude = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * magnitude)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * magnitude);
    let mut out = Vec::new();
    let mut t = (lo / step).ceil() * step;
    while t <= hi + step * 1e-9 && out.len() < 100 {
        out.push(t);
        t += step;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_seconds_after_each_event_get_most_of_the_width() {
        let axis = TimeAxis::new(30.0, &[0.0, 8.0], 5.0);
        // Windows [0, 5] and [8, 13]: 10 s of 30 take 60 % of the width, stretch 3.
        assert!((axis.stretch - 3.0).abs() < 1e-12);
        assert!((axis.position(5.0) - 0.3).abs() < 1e-12);
        assert!((axis.position(13.0) - 0.6 - 3.0 / 50.0).abs() < 1e-12);
        assert_eq!(axis.position(30.0), 1.0);
        // Increasing everywhere.
        let p: Vec<f64> = (0..=300).map(|k| axis.position(k as f64 * 0.1)).collect();
        assert!(p.windows(2).all(|w| w[1] > w[0]));
    }

    #[test]
    fn a_short_run_stays_linear() {
        let axis = TimeAxis::new(4.0, &[0.0], 5.0);
        assert_eq!(axis.stretch, 1.0);
        assert!((axis.position(1.0) - 0.25).abs() < 1e-12);
        assert!(axis.stretched.is_empty());
    }

    #[test]
    fn tick_labels_never_crowd() {
        let axis = TimeAxis::new(30.0, &[0.0, 8.0], 5.0);
        let t = axis.ticks(700.0, 34.0);
        let x: Vec<f64> = t.iter().map(|&t| axis.position(t) * 700.0).collect();
        assert!(x.windows(2).all(|w| w[1] - w[0] >= 34.0 - 1e-9), "{t:?}");
        assert!(
            t.contains(&0.0) && t.contains(&30.0) && t.contains(&1.0),
            "{t:?}"
        );
    }

    #[test]
    fn frequency_ticks_are_round() {
        assert_eq!(
            ticks(0.0, 10.0, 10),
            (0..=10).map(f64::from).collect::<Vec<_>>()
        );
    }
}
