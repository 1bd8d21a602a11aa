//! The time axis every record must have: strictly increasing, and without a sampling gap, so
//! that a lost stretch of samples is never read as a flat or a steep frequency.
//!
//! A gap is a step above the caller's `max_step_s`, or (without it) above 1.5 times the median
//! step: on a fixed sampling rate one lost sample doubles a step, while the jitter of times
//! printed with few digits stays far below half a step.

use super::refuse;
use crate::error::Error;

/// Checks `times_s`; `place(i)` names sample `i` for messages (its CSV line, or "sample n").
pub fn check(
    file: &str,
    times_s: &[f64],
    max_step_s: Option<f64>,
    place: &dyn Fn(usize) -> (Option<usize>, String),
    gaps: bool,
) -> Result<(), Error> {
    if let Some(i) = times_s.iter().position(|t| !t.is_finite()) {
        let (line, at) = place(i);
        return Err(refuse(
            file,
            line,
            format!("{at}: the time is not a finite number"),
            "every sample needs its time; cut the record before this sample or fill it".to_string(),
        ));
    }
    for (i, w) in times_s.windows(2).enumerate() {
        if w[1] <= w[0] {
            let (line, at) = place(i + 1);
            let how = if w[1] == w[0] {
                "repeats the time of the sample before it"
            } else {
                "goes back in time"
            };
            return Err(refuse(
                file,
                line,
                format!(
                    "{at}: the time {} s {how} ({} s); times must increase strictly",
                    num(w[1]),
                    num(w[0])
                ),
                "check that the rows are in time order and that the time column has enough \
                 digits for the sampling rate (a rate of 10 kHz needs times to 0.1 ms)"
                    .to_string(),
            ));
        }
    }
    if !gaps {
        return Ok(());
    }
    let Some(limit) = max_step_s.or_else(|| median_step(times_s).map(|m| 1.5 * m)) else {
        return Ok(());
    };
    for (i, w) in times_s.windows(2).enumerate() {
        let step = w[1] - w[0];
        if step > limit {
            let (line, at) = place(i + 1);
            let rule = match max_step_s {
                Some(_) => format!("the largest allowed step {} s", num(limit)),
                None => format!(
                    "1.5 times the record's usual step of {} s",
                    num(limit / 1.5)
                ),
            };
            return Err(refuse(
                file,
                line,
                format!(
                    "{at}: a sampling gap of {} s after the time {} s, above {rule}",
                    num(step),
                    num(w[0])
                ),
                "samples are missing here: cut the record before the gap, or, if the recorder \
                 samples unevenly on purpose, allow the largest step you expect (--max-step \
                 SECONDS)"
                    .to_string(),
            ));
        }
    }
    Ok(())
}

/// A time for messages: nine significant digits at most, so that 0.001999999999999995 reads
/// 0.002.
pub fn num(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let digits = (8 - x.abs().log10().floor() as i32).clamp(0, 15) as usize;
    let s = format!("{x:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// The median step of an axis with at least two samples.
pub fn median_step(times_s: &[f64]) -> Option<f64> {
    if times_s.len() < 2 {
        return None;
    }
    let mut steps: Vec<f64> = times_s.windows(2).map(|w| w[1] - w[0]).collect();
    let mid = steps.len() / 2;
    let (_, m, _) = steps.select_nth_unstable_by(mid, f64::total_cmp);
    Some(*m)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn place(i: usize) -> (Option<usize>, String) {
        (Some(i + 2), format!("row {}", i + 2))
    }

    #[test]
    fn one_lost_sample_is_a_gap_and_printing_jitter_is_not() {
        let even: Vec<f64> = (0..100)
            .map(|i| (i as f64 * 0.001 * 1e4).round() / 1e4)
            .collect();
        assert!(check("r.csv", &even, None, &place, true).is_ok());
        let mut lost = even.clone();
        lost.remove(50);
        let e = check("r.csv", &lost, None, &place, true)
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("r.csv:52: row 52: a sampling gap of 0.002 s after the time 0.049 s, above 1.5 times the record's usual step of 0.001 s"),
            "{e}"
        );
        assert!(check("r.csv", &lost, Some(0.0025), &place, true).is_ok());
    }

    #[test]
    fn repeated_and_backward_times_are_refused() {
        let e = check("r.csv", &[0.0, 0.1, 0.1], None, &place, true)
            .unwrap_err()
            .to_string();
        assert!(e.contains("repeats the time"), "{e}");
        let e = check("r.csv", &[0.0, 0.1, 0.05], None, &place, true)
            .unwrap_err()
            .to_string();
        assert!(e.contains("goes back in time"), "{e}");
    }
}
