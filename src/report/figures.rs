//! The figures of a verification as every output states them: one meaning per figure, one
//! wording per criterion, shared by the terminal tables, the HTML report, CSV and JSON.
//!
//! * **peak**: the highest frequency of any island after the disturbance starts, never the value
//!   held at that instant ([`crate::sim::IslandSummary::peak_hz`]); "—" / null when frequency
//!   never rose.
//! * **recovery**: seconds from the event before the recovery (the disturbance start or a later
//!   event) to the moment frequency came back above the recovery level to stay; "—" / null when
//!   it never went below the level, "never" / null with `recovered: false` when it did not come
//!   back.
//! * **ROCOF**: the largest |df/dt| averaged over the criteria's window, and every heading says
//!   which window.
//! * **shed** is load opened by stages; **UV** is load dropped by its own undervoltage release,
//!   counted apart.
//!
//! Owns wording only: it decides no pass or fail (that is [`crate::verify::criteria`]).

use crate::model::Criteria;
use crate::verify::criteria::Observed;
use crate::verify::margins::Margin;

/// One acceptance criterion in exact words.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CriterionWords {
    /// The criterion's key, as in [`crate::verify::criteria::Failure::criterion`].
    pub key: &'static str,
    pub words: String,
}

/// Every criterion a run is judged on, in exact words, in the order they are judged.
pub fn criteria_words(c: &Criteria) -> Vec<CriterionWords> {
    let mut out = vec![
        CriterionWords {
            key: "min_hz",
            words: format!(
                "frequency stays at or above {} Hz throughout the run",
                setting(c.min_hz)
            ),
        },
        CriterionWords {
            key: "max_hz",
            words: format!(
                "frequency stays at or below {} Hz throughout the run",
                setting(c.max_hz)
            ),
        },
        CriterionWords {
            key: "rocof",
            words: format!(
                "ROCOF, averaged over {} s, stays at or below {} Hz/s",
                setting(c.rocof_window_s),
                setting(c.max_rocof_hz_per_s)
            ),
        },
        CriterionWords {
            key: "recover",
            words: format!(
                "recovers above {} Hz within {} s after the last event and stays above it to the end of the run",
                setting(c.recover_above_hz),
                setting(c.recover_within_s)
            ),
        },
        CriterionWords {
            key: "settle",
            words: format!(
                "stays within {}–{} Hz from {} s after the disturbance starts to the end of the run",
                setting(c.settle_low_hz),
                setting(c.settle_high_hz),
                setting(c.settle_within_s)
            ),
        },
        CriterionWords {
            key: "run",
            words: "every island runs to the end (no collapse below the floor, no blackout, no numerical fault)".into(),
        },
    ];
    if c.required_disturbance_factor > 1.0 {
        out.push(CriterionWords {
            key: "margin",
            words: format!(
                "still holds with the case's lost import, lost generation or load step grown {}×",
                setting(c.required_disturbance_factor)
            ),
        });
    }
    if c.required_model_error_pct > 0.0 {
        out.push(CriterionWords {
            key: "margin",
            words: format!(
                "still holds with every inertia constant and load frequency exponent {} % lower",
                setting(c.required_model_error_pct)
            ),
        });
    }
    out
}

/// The ROCOF heading with its window, e.g. "ROCOF Hz/s over 0.5 s".
pub fn rocof_heading(c: &Criteria) -> String {
    format!("ROCOF Hz/s over {} s", setting(c.rocof_window_s))
}

/// The peak as a cell: "50.39", or "—" when frequency never rose after the disturbance.
pub fn peak_cell(o: &Observed) -> String {
    o.peak_hz.map_or_else(|| "—".into(), |v| fixed(v, 2))
}

/// The recovery time as a cell: "2.38" (s from the event before it), "—" when frequency never
/// went below the recovery level, "never" when it did not come back above it.
pub fn recovery_cell(o: &Observed) -> String {
    match (o.went_below_recover_level, o.recovery_s) {
        (false, _) => "—".into(),
        (true, Some(s)) => fixed(s, 2),
        (true, None) => "never".into(),
    }
}

/// What the peak and recovery cells mean, for a note under a table.
pub const FIGURES_NOTE: &str = "peak: highest frequency after the disturbance starts (— when it \
never rose); recovery: s from the event before it until frequency is back above the recovery \
level to stay (— when it never went below); shed: MW opened by stages; UV: MW dropped by \
undervoltage releases.";

/// A margin in a table cell: "1.37×", "≥2.00×", "fails", "—" (not applicable).
pub fn margin_cell(m: &Margin, unit: &str) -> String {
    let number = |v: f64| {
        if unit == "×" {
            format!("{v:.2}")
        } else {
            format!("{v:.0}")
        }
    };
    match m {
        Margin::NotApplicable => "—".into(),
        Margin::FailsAsIs => "fails".into(),
        Margin::AtLeast(v) => format!("≥{}{unit}", number(*v)),
        Margin::Found(v) => format!("{}{unit}", number(*v)),
    }
}

/// A setting as the user wrote it: no trailing zeros.
pub fn setting(v: f64) -> String {
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".into()
    } else {
        s.to_string()
    }
}

/// Fixed decimals, halves rounded away from zero, with −0.00 shown as 0.00 and a non-finite value
/// as "—": the one rounding rule of every printed figure (tables, reports, design's rows).
///
/// The value is first taken to 13 significant digits, so that the same quantity summed in another
/// order (3.395 as 3.3950000000000002 in one report and 3.3949999999999996 in another) prints the
/// same digits everywhere; binary rounding alone would print 3.40 in one place and 3.39 in the other.
pub fn fixed(v: f64, decimals: usize) -> String {
    if !v.is_finite() {
        return "—".into();
    }
    let scale = 10f64.powi(decimals.min(15) as i32);
    let scaled = significant(v * scale);
    let rounded = if scaled.is_finite() && scaled.abs() < 1e15 {
        scaled.round() / scale
    } else {
        v
    };
    let s = format!("{rounded:.decimals$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// `v` to 13 significant digits: below the digits any figure prints, above the rounding error
/// of a sum of a few thousand terms.
fn significant(v: f64) -> f64 {
    format!("{v:.12e}").parse().unwrap_or(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_quantity_summed_in_two_orders_prints_the_same_digits() {
        // 1.155 + 2.24 and 2.24 + 1.155 differ in the last bit of the binary sum; a figure is
        // printed from either, in different reports, and must read the same (halves round away
        // from zero, as on paper).
        let (a, b) = (3.3950000000000002_f64, 3.3949999999999996_f64);
        assert_ne!(a, b);
        assert_eq!(fixed(a, 2), "3.40");
        assert_eq!(fixed(b, 2), "3.40");
        assert_eq!(fixed(-0.004, 2), "0.00");
        assert_eq!(fixed(-2.5, 0), "-3");
        assert_eq!(fixed(0.125, 2), "0.13");
        assert_eq!(fixed(1.2345, 3), "1.235");
        assert_eq!(fixed(49.0, 2), "49.00");
        assert_eq!(fixed(f64::NAN, 2), "—");
        assert_eq!(fixed(1e300, 2), format!("{:.2}", 1e300));
        assert_eq!(fixed(123456789.125, 2), "123456789.13");
    }

    #[test]
    fn criteria_read_as_they_are_judged() {
        let words = criteria_words(&Criteria::defaults(50.0));
        let recover = words.iter().find(|w| w.key == "recover").unwrap();
        assert_eq!(
            recover.words,
            "recovers above 49.5 Hz within 10 s after the last event and stays above it to the end of the run"
        );
        let settle = words.iter().find(|w| w.key == "settle").unwrap();
        assert_eq!(
            settle.words,
            "stays within 49.5–50.5 Hz from 20 s after the disturbance starts to the end of the run"
        );
        // The default margins (1.2× disturbance, 10 % model error) are criteria too.
        assert!(words.iter().any(|w| w.key == "margin"));
        let mut none = Criteria::defaults(50.0);
        none.required_disturbance_factor = 1.0;
        none.required_model_error_pct = 0.0;
        assert!(criteria_words(&none).iter().all(|w| w.key != "margin"));
        let mut c = Criteria::defaults(60.0);
        c.required_disturbance_factor = 1.2;
        let words = criteria_words(&c);
        assert!(words.iter().any(|w| w.words
            == "still holds with the case's lost import, lost generation or load step grown 1.2×"));
        assert_eq!(rocof_heading(&c), "ROCOF Hz/s over 0.5 s");
    }

    #[test]
    fn margins_and_numbers_read_the_same_everywhere() {
        assert_eq!(margin_cell(&Margin::AtLeast(2.0), "×"), "≥2.00×");
        assert_eq!(margin_cell(&Margin::Found(35.0), ""), "35");
        assert_eq!(margin_cell(&Margin::NotApplicable, "×"), "—");
        assert_eq!(fixed(-0.001, 2), "0.00");
        assert_eq!(setting(49.50), "49.5");
    }
}
