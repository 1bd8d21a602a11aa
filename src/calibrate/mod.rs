//! Calibration against a recorded event: replay a case beside a frequency record, compare the
//! figures that matter, and fit chosen plant parameters to the record.
//!
//! Owns aligning a record to a case ([`align`]: the event time given, or the record's trigger,
//! or the onset found by [`figures::onset`]), the model's frequency at the record's samples
//! ([`replay_at`], every one a [`crate::sim::simulate`] replay), the comparison ([`compare`]),
//! the parameters a user may fit ([`params`]) and the fit itself ([`fit`]). Works on plain
//! slices of times and frequencies, so it does not depend on how a record was read; it must not
//! read or write files (the calibrated plant file's text is made by
//! [`crate::input::plant_with_values`] and written by `report::write`).
//!
//! docs/calibration.md states every definition and rule used here, with its source.

pub mod figures;
pub mod fit;
pub mod params;

use crate::model::{Case, Plant, Scheme};
use crate::sim::{self, SimConfig};
pub use figures::Figures;

/// Most samples a compared window keeps; a longer record is averaged in equal blocks down to
/// this many (each block's mean at its mean time). Bounds the fit's memory and time whatever the
/// record's sampling rate: 2000 samples over a 30 s window is one every 15 ms, finer than the
/// 0.1 s smoothing the figures use.
pub const MAX_COMPARED_SAMPLES: usize = 2000;

/// The record on the case's time axis, over the compared window.
#[derive(Debug, Clone, PartialEq)]
pub struct Recorded {
    /// Case time, seconds (ascending, within the case's duration).
    pub t_s: Vec<f64>,
    pub hz: Vec<f64>,
    /// Record time minus case time, seconds: a record time is `t_s + shift_s`.
    pub shift_s: f64,
}

/// What a replay needs besides the plant (which a fit changes).
#[derive(Debug, Clone)]
pub struct Setup<'a> {
    pub plant: &'a Plant,
    pub case: &'a Case,
    pub operating_point: usize,
    pub scheme: &'a Scheme,
    /// The section whose frequency the record holds.
    pub section: usize,
    pub config: SimConfig,
}

impl<'a> Setup<'a> {
    /// A setup with the run options `verify` uses (criteria's ROCOF window), trace kept.
    pub fn new(
        plant: &'a Plant,
        case: &'a Case,
        operating_point: usize,
        scheme: &'a Scheme,
        section: usize,
    ) -> Setup<'a> {
        let config = crate::verify::matrix::sim_config_for(plant, &SimConfig::default());
        Setup {
            plant,
            case,
            operating_point,
            scheme,
            section,
            config: SimConfig {
                record_trace: true,
                ..config
            },
        }
    }
}

/// The case time the record's event is aligned to: the start of the case's disturbance (its
/// first event, or where a utility frequency profile first leaves nominal; 0 with neither).
pub fn case_event_s(case: &Case) -> f64 {
    case.disturbance_span().0
}

/// Why a record cannot be compared with a case.
#[derive(Debug, Clone, PartialEq)]
pub enum AlignError {
    /// Fewer than ten samples fall inside the case's time once aligned.
    TooFewSamples {
        inside: usize,
        from_s: f64,
        to_s: f64,
    },
}

/// The record (`times_s`, `hz`, on its own axis) shifted so that `event_at_s` falls on the
/// case's first event, kept over [0, case duration], averaged down to at most
/// [`MAX_COMPARED_SAMPLES`].
pub fn align(
    times_s: &[f64],
    hz: &[f64],
    event_at_s: f64,
    case: &Case,
) -> Result<Recorded, AlignError> {
    let shift_s = event_at_s - case_event_s(case);
    let inside: Vec<(f64, f64)> = times_s
        .iter()
        .zip(hz)
        .map(|(t, f)| (t - shift_s, *f))
        .filter(|(t, _)| *t >= 0.0 && *t <= case.duration_s)
        .collect();
    if inside.len() < 10 {
        return Err(AlignError::TooFewSamples {
            inside: inside.len(),
            from_s: shift_s,
            to_s: shift_s + case.duration_s,
        });
    }
    let block = inside.len().div_ceil(MAX_COMPARED_SAMPLES);
    let (mut t_s, mut out_hz) = (Vec::new(), Vec::new());
    for chunk in inside.chunks(block) {
        let n = chunk.len() as f64;
        t_s.push(chunk.iter().map(|p| p.0).sum::<f64>() / n);
        out_hz.push(chunk.iter().map(|p| p.1).sum::<f64>() / n);
    }
    Ok(Recorded {
        t_s,
        hz: out_hz,
        shift_s,
    })
}

/// The model's frequency at the section of `setup`, replayed with `plant`, at times `at_s`
/// (linear between the run's samples). Err with the run's status when it did not reach its end.
pub fn replay_at(setup: &Setup, plant: &Plant, at_s: &[f64]) -> Result<Vec<f64>, String> {
    let run = sim::simulate(
        plant,
        setup.case,
        setup.operating_point,
        setup.scheme,
        &setup.config,
    );
    if let Some(status) = run.stop.status() {
        return Err(status);
    }
    let Some(trace) = &run.trace else {
        return Err("the run kept no samples".into());
    };
    let hz = &trace.section_hz[setup.section];
    Ok(at_s
        .iter()
        .map(|&t| figures::interpolate(&trace.t_s, hz, t))
        .collect())
}

/// Record and model side by side.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Comparison {
    pub record: Figures,
    pub model: Figures,
    /// RMS of model − record over the compared window, Hz.
    pub rms_hz: f64,
}

/// The figures of the record and of a model curve at the record's samples.
pub fn compare(record: &Recorded, model_hz: &[f64], rocof_window_s: f64) -> Comparison {
    Comparison {
        record: figures::figures(&record.t_s, &record.hz, rocof_window_s),
        model: figures::figures(&record.t_s, model_hz, rocof_window_s),
        rms_hz: figures::rms(model_hz, &record.hz),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn case(first_at: f64) -> Case {
        use crate::model::{Action, BreakerRef, CaseEvent, Start};
        Case {
            id: "c".into(),
            description: String::new(),
            start: Start::Connected,
            applies_to: vec![0],
            duration_s: 10.0,
            weight: 1.0,
            shedding_intended: false,
            events: vec![CaseEvent {
                at_s: first_at,
                action: Action::Open(BreakerRef::Utility),
            }],
            utility_profile: Vec::new(),
        }
    }

    #[test]
    fn alignment_puts_the_event_on_the_case_event_and_averages_long_records() {
        let c = case(1.0);
        let t: Vec<f64> = (0..100_000).map(|k| k as f64 * 1e-4).collect();
        let f: Vec<f64> = t.iter().map(|&t| 50.0 - t * 0.01).collect();
        let r = align(&t, &f, 2.5, &c).unwrap();
        assert_eq!(r.shift_s, 1.5);
        assert!(r.t_s.len() <= MAX_COMPARED_SAMPLES);
        assert!(r.t_s[0] >= 0.0 && *r.t_s.last().unwrap() <= c.duration_s);
        // A record time t_s + shift has the record's own value (linear record, block means).
        for (t, f) in r.t_s.iter().zip(&r.hz) {
            assert!((f - (50.0 - (t + r.shift_s) * 0.01)).abs() < 1e-9);
        }
    }
}
