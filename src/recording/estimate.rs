//! Frequency from a voltage waveform: positive-going zero crossings located by linear
//! interpolation between samples, and the frequency of each window of `N` whole cycles as `N`
//! divided by the window's duration.
//!
//! Source: IEC 61000-4-30:2015, clause 5.1 (power frequency): the frequency is the number of
//! integral cycles counted in an interval divided by the cumulative duration of those integer
//! cycles. The standard counts over 10 s for power-quality statistics; here the interval is a
//! sliding window of a few cycles (default [`DEFAULT_CYCLES`]), moved one cycle at a time, so
//! that the frequency after a trip is followed closely. Locating a crossing by linear
//! interpolation is common practice (no source).
//!
//! - **Stamp and latency.** Each estimate is stamped at the centre of its window, halfway between
//!   its first and last crossing. For a frequency that changes linearly with time the average
//!   over a window equals the value at its centre exactly (the phase is quadratic in time), so a
//!   ramp is followed without lag; a relay measuring on line would see the same value half a
//!   window (`N`/2 cycles) later. A step is smeared over one window.
//! - **Noise.** A crossing is taken only once the signal has swung below `-h` and then above
//!   `+h` (hysteresis `h` = 5 % of the channel's largest magnitude after its mean is removed),
//!   the last upward crossing of zero before `+h`; noise near zero does not count extra cycles.
//! - **Harmonics.** Harmonics that hold still shift every crossing by the same time, so periods
//!   and the estimate are unchanged; only a harmonic that changes shifts it.
//! - **Lost voltage.** A window whose longest period is above 1.5 times its shortest (a cycle
//!   lost to a voltage collapse, a sag below the hysteresis, a switching transient) gives no
//!   estimate; the output then has a longer step there.
//! - **Sampling.** At least [`MIN_SAMPLES_PER_CYCLE`] samples per cycle are required.

/// Cycles per window unless the caller says otherwise (100 ms at 50 Hz, close to the window of a
/// numerical under-frequency relay).
pub const DEFAULT_CYCLES: usize = 5;
/// The longest window allowed, in cycles (2 s at 50 Hz: longer windows hide the nadir).
pub const MAX_CYCLES: usize = 100;
/// Fewest samples per cycle the estimator accepts: at fewer, the interpolated crossings of a
/// distorted wave move by a noticeable part of a cycle (common practice, no source).
pub const MIN_SAMPLES_PER_CYCLE: f64 = 8.0;

/// An estimated frequency series.
#[derive(Debug, Clone, PartialEq)]
pub struct Estimate {
    /// Window centres, strictly increasing, in the waveform's time axis.
    pub times_s: Vec<f64>,
    pub frequency_hz: Vec<f64>,
}

/// Why a waveform gave no estimate.
#[derive(Debug, Clone, PartialEq)]
pub enum EstimateError {
    /// The channel is constant (no AC voltage at all).
    Flat,
    /// Fewer whole cycles than one window plus one.
    TooFewCycles { found: usize, needed: usize },
    /// Too few samples per cycle.
    Undersampled { samples_per_cycle: f64 },
}

impl std::fmt::Display for EstimateError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            EstimateError::Flat => write!(
                f,
                "the channel holds no alternating voltage (it is constant)"
            ),
            EstimateError::TooFewCycles { found, needed } => write!(
                f,
                "the waveform has {found} whole cycles, fewer than the {needed} the estimator needs"
            ),
            EstimateError::Undersampled { samples_per_cycle } => write!(
                f,
                "the waveform has {samples_per_cycle:.1} samples per cycle, fewer than the \
                 {MIN_SAMPLES_PER_CYCLE} the estimator needs"
            ),
        }
    }
}

/// The method as reports name it.
pub fn method_text(cycles: usize) -> String {
    format!(
        "zero crossings over {cycles} whole cycles, stamped at the window centre \
         (IEC 61000-4-30:2015, 5.1)"
    )
}

/// Estimates frequency from `samples` taken at `times_s` (strictly increasing, same length) with
/// windows of `cycles` whole cycles.
pub fn zero_crossings(
    times_s: &[f64],
    samples: &[f64],
    cycles: usize,
) -> Result<Estimate, EstimateError> {
    let cycles = cycles.max(1);
    let n = samples.len().min(times_s.len());
    let mean = samples[..n].iter().sum::<f64>() / n.max(1) as f64;
    let peak = samples[..n]
        .iter()
        .map(|x| (x - mean).abs())
        .fold(0.0, f64::max);
    if !(peak > 0.0) || !peak.is_finite() {
        return Err(EstimateError::Flat);
    }
    let h = 0.05 * peak;
    let mut crossings = Vec::new();
    let mut armed = false;
    let mut candidate: Option<f64> = None;
    for i in 0..n {
        let x = samples[i] - mean;
        if x < -h {
            armed = true;
            candidate = None;
        } else if armed {
            if i > 0 {
                let prev = samples[i - 1] - mean;
                if prev < 0.0 && x >= 0.0 {
                    let (t0, t1) = (times_s[i - 1], times_s[i]);
                    candidate = Some(t0 + (t1 - t0) * (-prev) / (x - prev));
                }
            }
            if x > h {
                if let Some(c) = candidate.take() {
                    crossings.push(c);
                }
                armed = false;
            }
        }
    }
    let needed = cycles + 1;
    if crossings.len() < needed {
        return Err(EstimateError::TooFewCycles {
            found: crossings.len().saturating_sub(1),
            needed,
        });
    }
    let mut periods: Vec<f64> = crossings.windows(2).map(|w| w[1] - w[0]).collect();
    let step = super::axis::median_step(&times_s[..n]).unwrap_or(f64::INFINITY);
    let median_period = {
        let mut p = periods.clone();
        let mid = p.len() / 2;
        *p.select_nth_unstable_by(mid, f64::total_cmp).1
    };
    let per_cycle = median_period / step;
    if per_cycle < MIN_SAMPLES_PER_CYCLE {
        return Err(EstimateError::Undersampled {
            samples_per_cycle: per_cycle,
        });
    }
    let mut out = Estimate {
        times_s: Vec::with_capacity(crossings.len()),
        frequency_hz: Vec::with_capacity(crossings.len()),
    };
    for j in cycles..crossings.len() {
        let window = &mut periods[j - cycles..j];
        let (lo, hi) = window
            .iter()
            .fold((f64::INFINITY, 0.0_f64), |(lo, hi), &p| {
                (lo.min(p), hi.max(p))
            });
        if hi > 1.5 * lo {
            continue;
        }
        let (first, last) = (crossings[j - cycles], crossings[j]);
        out.times_s.push(0.5 * (first + last));
        out.frequency_hz.push(cycles as f64 / (last - first));
    }
    if out.times_s.len() < 2 {
        return Err(EstimateError::TooFewCycles {
            found: out.times_s.len() + cycles - 1,
            needed,
        });
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_steady_sine_gives_its_frequency() {
        let fs = 5000.0;
        let t: Vec<f64> = (0..5000).map(|i| i as f64 / fs).collect();
        let v: Vec<f64> = t
            .iter()
            .map(|t| (2.0 * std::f64::consts::PI * 49.7 * t + 0.3).sin())
            .collect();
        let e = zero_crossings(&t, &v, 5).unwrap();
        for f in &e.frequency_hz {
            // Linear interpolation of a crossing at 100 samples per cycle errs by a few µs·ppm:
            // 0.1 mHz is far below any figure a study reads.
            assert!((f - 49.7).abs() < 1e-4, "{f}");
        }
    }

    #[test]
    fn flat_and_short_channels_are_refused() {
        let t: Vec<f64> = (0..100).map(|i| i as f64 * 1e-3).collect();
        assert_eq!(
            zero_crossings(&t, &vec![1.0; 100], 5),
            Err(EstimateError::Flat)
        );
        let v: Vec<f64> = t
            .iter()
            .map(|t| (2.0 * std::f64::consts::PI * 50.0 * t).sin())
            .collect();
        assert!(matches!(
            zero_crossings(&t, &v, 5),
            Err(EstimateError::TooFewCycles { .. })
        ));
    }
}
