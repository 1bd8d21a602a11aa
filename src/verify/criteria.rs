//! Acceptance criteria judged on what a run observed: minimum and maximum frequency, ROCOF,
//! recovery above a level within a time, settling inside a band, and how the run ended.
//!
//! A failure is a value with its reason in words ("fell to 47.31 Hz at 1.84 s, below 47.5 Hz
//! minimum"); judging never fails.

use crate::model::Criteria;
use serde::Serialize;

/// What a run showed, reduced to what the criteria look at.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Observed {
    /// When the disturbance starts (the first event, or the utility profile leaving nominal);
    /// settling counts from it.
    pub first_event_s: f64,
    /// When the last disturbance happens (the last event, or the start for a profile); recovery
    /// counts from it, so a second trip in a sequence gets its own recovery time.
    pub last_event_s: f64,
    pub nadir_hz: f64,
    pub nadir_at_s: f64,
    /// Highest frequency after the disturbance starts, never the value held at that instant
    /// ([`crate::sim::IslandSummary::peak_hz`]); `None` when frequency never rose.
    pub peak_hz: Option<f64>,
    pub peak_at_s: Option<f64>,
    /// Largest |df/dt| averaged over the criteria's window.
    pub max_rocof_hz_per_s: f64,
    /// Frequency went below the recovery level at some time.
    pub went_below_recover_level: bool,
    /// When frequency came back above the recovery level to stay until the end of the run;
    /// `None` when it never went below or never came back (told apart by
    /// `went_below_recover_level`).
    pub recovered_at_s: Option<f64>,
    /// `recovered_at_s` measured from the event before it (the disturbance start or a later
    /// event): the recovery time shown in tables.
    pub recovery_s: Option<f64>,
    /// Lowest and highest frequency from the settling time on; `None` when the run ended before it.
    pub settle_range_hz: Option<(f64, f64)>,
    /// How the run ended, when not at its end time: collapse, blackout or a numerical fault.
    pub abnormal_end: Option<String>,
}

/// One criterion that did not hold.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Failure {
    /// `min_hz`, `max_hz`, `rocof`, `recover`, `settle` or `run`.
    pub criterion: &'static str,
    pub message: String,
    /// How far past the limit, in the criterion's unit (Hz, Hz/s or s); 0 for `run`.
    pub excess: f64,
}

/// Judge a run against the criteria; empty when every criterion holds.
pub fn judge(seen: &Observed, c: &Criteria) -> Vec<Failure> {
    let mut out = Vec::new();
    if let Some(why) = &seen.abnormal_end {
        out.push(Failure {
            criterion: "run",
            message: why.clone(),
            excess: 0.0,
        });
    }
    if seen.nadir_hz < c.min_hz {
        out.push(Failure {
            criterion: "min_hz",
            message: format!(
                "fell to {:.2} Hz at {:.2} s, below {} Hz minimum",
                seen.nadir_hz,
                seen.nadir_at_s,
                num(c.min_hz)
            ),
            excess: c.min_hz - seen.nadir_hz,
        });
    }
    if let (Some(peak), Some(at)) = (seen.peak_hz, seen.peak_at_s) {
        if peak > c.max_hz {
            out.push(Failure {
                criterion: "max_hz",
                message: format!(
                    "rose to {:.2} Hz at {:.2} s, above {} Hz maximum",
                    peak,
                    at,
                    num(c.max_hz)
                ),
                excess: peak - c.max_hz,
            });
        }
    }
    if seen.max_rocof_hz_per_s > c.max_rocof_hz_per_s {
        out.push(Failure {
            criterion: "rocof",
            message: format!(
                "ROCOF reached {:.2} Hz/s over {} s, above the {} Hz/s limit",
                seen.max_rocof_hz_per_s,
                num(c.rocof_window_s),
                num(c.max_rocof_hz_per_s)
            ),
            excess: seen.max_rocof_hz_per_s - c.max_rocof_hz_per_s,
        });
    }
    let deadline = seen.last_event_s + c.recover_within_s;
    match seen.recovered_at_s {
        _ if !seen.went_below_recover_level => {}
        Some(t) if t <= deadline => {}
        Some(t) => out.push(Failure {
            criterion: "recover",
            message: format!(
                "recovered above {} Hz only at {:.2} s, after the {:.2} s limit ({} s after the last event at {:.2} s)",
                num(c.recover_above_hz),
                t,
                deadline,
                num(c.recover_within_s),
                seen.last_event_s
            ),
            excess: t - deadline,
        }),
        None => out.push(Failure {
            criterion: "recover",
            message: format!(
                "did not recover above {} Hz and stay there (limit {:.2} s, {} s after the last event at {:.2} s)",
                num(c.recover_above_hz),
                deadline,
                num(c.recover_within_s),
                seen.last_event_s
            ),
            excess: f64::INFINITY,
        }),
    }
    let from = seen.first_event_s + c.settle_within_s;
    if seen.settle_range_hz.is_none() && seen.abnormal_end.is_none() {
        // Input validation refuses such a case; a case built in code gets a failure, not a pass.
        out.push(Failure {
            criterion: "settle",
            message: format!(
                "the run ended before the settling band could be judged (from {from:.2} s)"
            ),
            excess: f64::INFINITY,
        });
    }
    if let Some((lo, hi)) = seen.settle_range_hz {
        if lo < c.settle_low_hz {
            out.push(Failure {
                criterion: "settle",
                message: format!(
                    "was as low as {:.2} Hz from {:.2} s on, below the {}–{} Hz settling band",
                    lo,
                    from,
                    num(c.settle_low_hz),
                    num(c.settle_high_hz)
                ),
                excess: c.settle_low_hz - lo,
            });
        }
        if hi > c.settle_high_hz {
            out.push(Failure {
                criterion: "settle",
                message: format!(
                    "was as high as {:.2} Hz from {:.2} s on, above the {}–{} Hz settling band",
                    hi,
                    from,
                    num(c.settle_low_hz),
                    num(c.settle_high_hz)
                ),
                excess: hi - c.settle_high_hz,
            });
        }
    }
    out
}

/// A setting as the user wrote it: no trailing zeros.
fn num(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn healthy() -> Observed {
        Observed {
            first_event_s: 1.0,
            last_event_s: 1.0,
            nadir_hz: 48.6,
            nadir_at_s: 2.1,
            peak_hz: Some(50.1),
            peak_at_s: Some(9.0),
            max_rocof_hz_per_s: 1.2,
            went_below_recover_level: true,
            recovered_at_s: Some(6.0),
            recovery_s: Some(5.0),
            settle_range_hz: Some((49.7, 50.05)),
            abnormal_end: None,
        }
    }

    #[test]
    fn a_run_inside_every_limit_passes() {
        assert!(judge(&healthy(), &Criteria::defaults(50.0)).is_empty());
    }

    #[test]
    fn each_limit_is_named_in_words() {
        let c = Criteria::defaults(50.0);
        let mut seen = healthy();
        seen.nadir_hz = 47.31;
        seen.nadir_at_s = 1.84;
        let f = judge(&seen, &c);
        assert_eq!(f.len(), 1);
        assert_eq!(
            f[0].message,
            "fell to 47.31 Hz at 1.84 s, below 47.5 Hz minimum"
        );
        assert!((f[0].excess - 0.19).abs() < 1e-9);

        let mut seen = healthy();
        seen.peak_hz = Some(51.8);
        assert_eq!(judge(&seen, &c)[0].criterion, "max_hz");
        let mut seen = healthy();
        seen.max_rocof_hz_per_s = 2.4;
        assert!(judge(&seen, &c)[0]
            .message
            .contains("ROCOF reached 2.40 Hz/s over 0.5 s"));
        let mut seen = healthy();
        seen.recovered_at_s = Some(11.5); // first event at 1 s, 10 s allowed
        assert!(judge(&seen, &c)[0].message.contains(
            "only at 11.50 s, after the 11.00 s limit (10 s after the last event at 1.00 s)"
        ));
        let mut seen = healthy();
        seen.recovered_at_s = None;
        assert_eq!(judge(&seen, &c)[0].criterion, "recover");
        // Never below the level: nothing to recover from, and no failure.
        seen.went_below_recover_level = false;
        assert!(judge(&seen, &c).is_empty());
        let mut seen = healthy();
        seen.settle_range_hz = Some((49.2, 49.9));
        assert_eq!(judge(&seen, &c)[0].criterion, "settle");
        let mut seen = healthy();
        seen.settle_range_hz = None;
        assert_eq!(
            judge(&seen, &c)[0].message,
            "the run ended before the settling band could be judged (from 21.00 s)"
        );
        let mut seen = healthy();
        seen.abnormal_end = Some("island 1 collapsed at 2.40 s".into());
        assert_eq!(judge(&seen, &c)[0].criterion, "run");
    }
}
