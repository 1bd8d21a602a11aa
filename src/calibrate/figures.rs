//! What a recorded and a modelled frequency curve are compared on, read the same way from both:
//! nadir and its time, ROCOF over the criteria's window, settling value, and the RMS difference;
//! and the rule that finds the event in a record when neither the user nor the record says when
//! it happened.
//!
//! Owns these definitions (docs/calibration.md states them). Works on plain sampled curves
//! (times in seconds, frequencies in Hz); it must not simulate, fit or read files.

/// Centred moving mean applied before the nadir and ROCOF are read, seconds: five cycles at
/// 50 Hz, so measurement noise does not deepen the nadir (common practice, no source).
pub const SMOOTH_S: f64 = 0.1;
/// The settling value is the mean over this last stretch of the compared window, seconds.
pub const SETTLE_S: f64 = 1.0;

/// The figures of one curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Figures {
    pub nadir_hz: f64,
    pub nadir_at_s: f64,
    /// Largest |f(t) − f(t − W)|/W, W the criteria's ROCOF window.
    pub max_rocof_hz_per_s: f64,
    /// Mean over the last [`SETTLE_S`] of the window.
    pub settling_hz: f64,
}

/// The figures of a curve sampled at ascending `t_s`.
pub fn figures(t_s: &[f64], hz: &[f64], rocof_window_s: f64) -> Figures {
    let smooth = moving_mean(t_s, hz, SMOOTH_S);
    let (mut nadir_hz, mut nadir_at_s) = (f64::INFINITY, 0.0);
    for (k, &f) in smooth.iter().enumerate() {
        if f < nadir_hz {
            nadir_hz = f;
            nadir_at_s = t_s[k];
        }
    }
    let mut max_rocof: f64 = 0.0;
    if let (Some(&t0), true) = (t_s.first(), rocof_window_s > 0.0) {
        for (k, &t) in t_s.iter().enumerate() {
            if t - rocof_window_s < t0 {
                continue;
            }
            let before = interpolate(t_s, &smooth, t - rocof_window_s);
            max_rocof = max_rocof.max((smooth[k] - before).abs() / rocof_window_s);
        }
    }
    let end = t_s.last().copied().unwrap_or(0.0);
    let tail: Vec<f64> = t_s
        .iter()
        .zip(hz)
        .filter(|(t, _)| **t >= end - SETTLE_S)
        .map(|(_, f)| *f)
        .collect();
    let settling_hz = tail.iter().sum::<f64>() / tail.len().max(1) as f64;
    Figures {
        nadir_hz,
        nadir_at_s,
        max_rocof_hz_per_s: max_rocof,
        settling_hz,
    }
}

/// Root mean square of `a − b` (same length).
pub fn rms(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    if n == 0 {
        return 0.0;
    }
    (a.iter().zip(b).map(|(x, y)| (x - y) * (x - y)).sum::<f64>() / n as f64).sqrt()
}

/// Linear interpolation of (`t_s`, `v`) at `t` (held at the ends).
pub fn interpolate(t_s: &[f64], v: &[f64], t: f64) -> f64 {
    let n = t_s.len();
    if n == 0 {
        return f64::NAN;
    }
    if t <= t_s[0] {
        return v[0];
    }
    if t >= t_s[n - 1] {
        return v[n - 1];
    }
    let k = t_s.partition_point(|&x| x <= t);
    let (t0, t1) = (t_s[k - 1], t_s[k]);
    if t1 <= t0 {
        return v[k];
    }
    v[k - 1] + (v[k] - v[k - 1]) * (t - t0) / (t1 - t0)
}

/// Centred moving mean over `width_s`: each sample averaged with its neighbours within ±width/2,
/// the half-width shrunk near either end of the curve so that the window stays centred (a
/// one-sided window at an end would shift a slope's value and cut the first ROCOF window short).
pub fn moving_mean(t_s: &[f64], v: &[f64], width_s: f64) -> Vec<f64> {
    let n = t_s.len();
    if n == 0 {
        return Vec::new();
    }
    let mut prefix = Vec::with_capacity(n + 1);
    prefix.push(0.0);
    for x in v {
        prefix.push(prefix[prefix.len() - 1] + x);
    }
    let (first, last) = (t_s[0], t_s[n - 1]);
    (0..n)
        .map(|k| {
            let half = (width_s / 2.0).min(t_s[k] - first).min(last - t_s[k]);
            let lo = t_s.partition_point(|&t| t < t_s[k] - half);
            let hi = t_s.partition_point(|&t| t <= t_s[k] + half);
            let (lo, hi) = (lo.min(k), hi.max(k + 1));
            (prefix[hi] - prefix[lo]) / (hi - lo) as f64
        })
        .collect()
}

/// How the event was found in a record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Onset {
    /// On the record's own time axis, seconds.
    pub at_s: f64,
    /// The pre-event level, Hz.
    pub level_hz: f64,
    /// The departure that counts as the event, Hz.
    pub threshold_hz: f64,
}

/// Stretch at the start of a record taken as before the event, seconds.
pub const PRE_EVENT_S: f64 = 0.2;
/// Smallest departure from the pre-event level that counts as the event, Hz (common practice,
/// no source: above a recorder's quantisation and the normal wander of an islanded plant over a
/// few cycles).
pub const MIN_DEPARTURE_HZ: f64 = 0.02;
/// Departure in robust noise standard deviations that counts as the event.
pub const NOISE_SIGMAS: f64 = 6.0;
/// Smoothing of the onset search, seconds (one cycle at 50 Hz).
pub const ONSET_SMOOTH_S: f64 = 0.02;
/// Stretch after the crossing over which the departure's slope is taken, seconds.
pub const SLOPE_S: f64 = 0.05;

/// The onset of the disturbance in a record: the pre-event level is the median of the first
/// [`PRE_EVENT_S`]; noise σ is 1.4826 × the median absolute deviation there (the MAD estimate of
/// a normal σ: Rousseeuw & Croux, JASA 88 (1993) 1273); the event is the first time the curve,
/// smoothed over [`ONSET_SMOOTH_S`], leaves the level by more than max([`MIN_DEPARTURE_HZ`],
/// [`NOISE_SIGMAS`]·σ), moved back to the level along a least-squares line through the samples of
/// the [`SLOPE_S`] after that crossing. `None` when the record has too little before the event or never leaves it.
pub fn onset(t_s: &[f64], hz: &[f64]) -> Option<Onset> {
    let t0 = *t_s.first()?;
    let pre: Vec<f64> = t_s
        .iter()
        .zip(hz)
        .filter(|(t, _)| **t < t0 + PRE_EVENT_S)
        .map(|(_, f)| *f)
        .collect();
    if pre.len() < 5 {
        return None;
    }
    let level = median(pre.clone());
    let mad = median(pre.iter().map(|f| (f - level).abs()).collect());
    let threshold = (NOISE_SIGMAS * 1.4826 * mad).max(MIN_DEPARTURE_HZ);
    let smooth = moving_mean(t_s, hz, ONSET_SMOOTH_S);
    let k = smooth
        .iter()
        .enumerate()
        .position(|(k, f)| t_s[k] >= t0 + PRE_EVENT_S && (f - level).abs() > threshold)?;
    // A least-squares line through the raw samples of the SLOPE_S after the crossing, followed
    // back to the level: exact for a straight departure, and free of the smoothing's lead.
    let t_k = t_s[k];
    let after: Vec<(f64, f64)> = t_s
        .iter()
        .zip(hz)
        .filter(|(t, _)| **t >= t_k && **t <= t_k + SLOPE_S)
        .map(|(t, f)| (*t, *f))
        .collect();
    let mut at = t_k;
    if after.len() >= 3 {
        let n = after.len() as f64;
        let mt = after.iter().map(|p| p.0).sum::<f64>() / n;
        let mf = after.iter().map(|p| p.1).sum::<f64>() / n;
        let sxy: f64 = after.iter().map(|p| (p.0 - mt) * (p.1 - mf)).sum();
        let sxx: f64 = after.iter().map(|p| (p.0 - mt) * (p.0 - mt)).sum();
        if sxx > 0.0 {
            let slope = sxy / sxx;
            if slope != 0.0 && slope.signum() == (smooth[k] - level).signum() {
                at = mt - (mf - level) / slope;
            }
        }
    }
    Some(Onset {
        at_s: at.clamp(t0, t_k),
        level_hz: level,
        threshold_hz: threshold,
    })
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n == 0 {
        return f64::NAN;
    }
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn grid(dt: f64, end: f64) -> Vec<f64> {
        (0..=((end / dt).round() as usize))
            .map(|k| k as f64 * dt)
            .collect()
    }

    /// A straight fall from 50 Hz at 1 Hz/s starting at 0.6 s: the onset is found within one
    /// 1 ms sample of 0.6 s (the back-extrapolation is exact on a straight line; closed form).
    #[test]
    fn onset_of_a_ramp_is_where_it_leaves_the_level() {
        let t = grid(0.001, 2.0);
        let f: Vec<f64> = t
            .iter()
            .map(|&t| if t < 0.6 { 50.0 } else { 50.0 - (t - 0.6) })
            .collect();
        let o = onset(&t, &f).unwrap();
        assert!((o.at_s - 0.6).abs() < 0.002, "{o:?}");
        assert_eq!(o.level_hz, 50.0);
    }

    #[test]
    fn a_flat_record_has_no_onset() {
        let t = grid(0.01, 2.0);
        let f = vec![49.98; t.len()];
        assert!(onset(&t, &f).is_none());
    }

    /// f = 50 − 2·t·e^(−t) on a fine grid: nadir 50 − 2/e at t = 1 (closed form, df/dt = 0 at
    /// t = 1); the smoothing over 0.1 s moves it by under 1e-3 Hz (second derivative 2/e, error
    /// ≈ f''·w²/24). ROCOF over 0.5 s is largest at the start: (2·0.5·e^(−0.5))/0.5 = 1.2131 Hz/s;
    /// the smoothing moves it by a few mHz/s.
    #[test]
    fn figures_of_a_closed_form_curve() {
        let t = grid(0.001, 8.0);
        let f: Vec<f64> = t.iter().map(|&t| 50.0 - 2.0 * t * (-t).exp()).collect();
        let fig = figures(&t, &f, 0.5);
        assert!((fig.nadir_hz - (50.0 - 2.0 / std::f64::consts::E)).abs() < 1e-3);
        assert!((fig.nadir_at_s - 1.0).abs() < 0.01);
        assert!((fig.max_rocof_hz_per_s - 1.2131).abs() < 0.02, "{fig:?}");
        let tail = 50.0 - 2.0 * 7.5 * (-7.5f64).exp();
        assert!((fig.settling_hz - tail).abs() < 2e-3);
    }

    #[test]
    fn rms_and_interpolation() {
        assert_eq!(rms(&[1.0, 1.0], &[0.0, 0.0]), 1.0);
        assert_eq!(interpolate(&[0.0, 1.0], &[0.0, 2.0], 0.25), 0.5);
        assert_eq!(interpolate(&[0.0, 1.0], &[0.0, 2.0], 5.0), 2.0);
    }
}
