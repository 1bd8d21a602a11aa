//! Trace thinning: the one way nadir shortens a sampled trace for a plot, a report or any other
//! output that wants fewer points, keeping what a reader must see.
//!
//! Method: M4 aggregation (U. Jugel, Z. Jerzak, G. Hackenbroich, V. Markl, "M4: A
//! Visualization-Oriented Time Series Data Aggregation", PVLDB 7(10), 2014). The time axis is cut
//! into `buckets` columns (in the coordinate the caller draws in, so a stretched part of a time
//! axis gets more columns); in each column, for every channel, the first and last sample and the
//! samples holding the channel's minimum and maximum are kept. Three additions make it safe for
//! protection studies:
//!
//! * **extremes** — every column keeps each channel's minimum and maximum sample, so the lowest and
//!   highest value of the whole trace (and of any column) survive exactly;
//! * **steps** — where a channel changes between two neighbouring samples by more than `step`
//!   (a shed, a breaker opening), both samples are kept, so the step stays vertical at its instant;
//! * **event instants** — for every instant in `keep_at`, the last sample at or before it and the
//!   first after it are kept.
//!
//! All channels share one time axis and the kept indices are their union, so thinned channels stay
//! aligned (one row per kept sample). The result has at most `4·buckets·channels + 2·steps +
//! 2·instants + 2` samples whatever the trace's length: this is what bounds a report of long cases.

/// Indices (ascending, no repeats) of the samples to keep.
///
/// * `t_s` — sample times, ascending;
/// * `channels` — values at those times (each as long as `t_s`; a shorter one is read as far as it goes);
/// * `keep_at` — instants (same unit as `t_s`) whose neighbouring samples must survive;
/// * `step` — a change between neighbouring samples larger than this keeps both (use
///   `f64::INFINITY` for none);
/// * `buckets` — number of columns;
/// * `position` — where a time falls on the drawn axis, in [0, 1] (for a linear axis,
///   `|t| (t - t0) / (t1 - t0)`).
pub fn keep(
    t_s: &[f64],
    channels: &[&[f64]],
    keep_at: &[f64],
    step: f64,
    buckets: usize,
    position: impl Fn(f64) -> f64,
) -> Vec<usize> {
    let n = t_s.len();
    if n <= 2 {
        return (0..n).collect();
    }
    let buckets = buckets.max(1);
    let mut keep = vec![false; n];
    keep[0] = true;
    keep[n - 1] = true;
    let column = |t: f64| -> usize {
        let p = position(t);
        let p = if p.is_finite() {
            p.clamp(0.0, 1.0)
        } else {
            0.0
        };
        ((p * buckets as f64) as usize).min(buckets - 1)
    };
    // M4 per column and channel.
    let mut start = 0;
    while start < n {
        let col = column(t_s[start]);
        let mut end = start + 1;
        while end < n && column(t_s[end]) == col {
            end += 1;
        }
        keep[start] = true;
        keep[end - 1] = true;
        for ch in channels {
            let stop = end.min(ch.len());
            if start >= stop {
                continue;
            }
            let (mut lo, mut hi) = (start, start);
            for k in start..stop {
                if ch[k] < ch[lo] {
                    lo = k;
                }
                if ch[k] > ch[hi] {
                    hi = k;
                }
            }
            keep[lo] = true;
            keep[hi] = true;
        }
        start = end;
    }
    // Steps.
    for ch in channels {
        for k in 1..n.min(ch.len()) {
            if (ch[k] - ch[k - 1]).abs() > step {
                keep[k - 1] = true;
                keep[k] = true;
            }
        }
    }
    // Event instants.
    for &at in keep_at.iter().filter(|t| t.is_finite()) {
        let after = t_s.partition_point(|&t| t <= at);
        if after > 0 {
            keep[after - 1] = true;
        }
        if after < n {
            keep[after] = true;
        }
    }
    (0..n).filter(|&k| keep[k]).collect()
}

/// The values of `values` at `indices` (as returned by [`keep`]).
pub fn pick<T: Copy>(values: &[T], indices: &[usize]) -> Vec<T> {
    indices
        .iter()
        .filter_map(|&k| values.get(k).copied())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn linear(t0: f64, t1: f64) -> impl Fn(f64) -> f64 {
        move |t| (t - t0) / (t1 - t0)
    }

    #[test]
    fn extremes_steps_and_instants_survive() {
        // 30 s at 0.01 s: a dip to 48.7 Hz at 1.37 s, a 2 MW step at 1.02 s, an event at 8 s.
        let t: Vec<f64> = (0..3001).map(|k| k as f64 * 0.01).collect();
        let f: Vec<f64> = t
            .iter()
            .map(|&t| 50.0 - 1.3 * (-(t - 1.37) * (t - 1.37) * 4.0).exp())
            .collect();
        let shed: Vec<f64> = t
            .iter()
            .map(|&t| if t >= 1.02 { 2.0 } else { 0.0 })
            .collect();
        let kept = keep(&t, &[&f, &shed], &[8.0], 0.5, 100, linear(0.0, 30.0));
        assert!(kept.len() < 500, "kept {}", kept.len());
        let lowest = (0..f.len()).min_by(|&a, &b| f[a].total_cmp(&f[b])).unwrap();
        assert!(kept.contains(&lowest), "the nadir sample is kept");
        assert!(
            kept.contains(&101) && kept.contains(&102),
            "both sides of the step"
        );
        assert!(
            kept.contains(&800) && kept.contains(&801),
            "around the event at 8 s"
        );
        assert!(kept.windows(2).all(|w| w[0] < w[1]));
        assert_eq!((kept[0], *kept.last().unwrap()), (0, 3000));
    }

    #[test]
    fn the_count_is_bounded_by_the_columns_not_the_length() {
        // A noisy hour at 0.01 s: 360 001 samples.
        let t: Vec<f64> = (0..360_001).map(|k| k as f64 * 0.01).collect();
        let f: Vec<f64> = (0..t.len())
            .map(|k| 50.0 + 0.01 * ((k * 7919 % 101) as f64 - 50.0) / 50.0)
            .collect();
        let kept = keep(&t, &[&f], &[], f64::INFINITY, 300, linear(0.0, 3600.0));
        assert!(kept.len() <= 4 * 300 + 2, "kept {}", kept.len());
        let lowest = (0..f.len()).min_by(|&a, &b| f[a].total_cmp(&f[b])).unwrap();
        let highest = (0..f.len()).max_by(|&a, &b| f[a].total_cmp(&f[b])).unwrap();
        let kf = pick(&f, &kept);
        assert_eq!(kf.iter().copied().fold(f64::INFINITY, f64::min), f[lowest]);
        assert_eq!(
            kf.iter().copied().fold(f64::NEG_INFINITY, f64::max),
            f[highest]
        );
    }

    #[test]
    fn short_traces_are_kept_whole() {
        assert_eq!(
            keep(&[0.0, 1.0], &[&[1.0, 2.0]], &[], 1.0, 10, |t| t),
            vec![0, 1]
        );
        assert!(keep(&[], &[], &[], 1.0, 10, |t| t).is_empty());
    }
}
