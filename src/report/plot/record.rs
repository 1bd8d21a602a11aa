//! A recorded frequency on a plot of model runs: the record as one more line (thinned like the
//! model's), and the event as the record places it, for `nadir calibrate`.
//!
//! Owns only the record's line and mark; the runs, levels, events and shed come from
//! [`super::build`]. Computes nothing about the record: it draws the samples it is given.

use super::{EventMark, Line, Plot, COLUMNS};
use crate::report::thin;

/// Adds the record (`t_s` on the case's time axis, `hz`) as the first line of `plot` (drawn in
/// the first style; the runs' lines move one style along), and a mark at `event_at_s` (case
/// time) labelled `event_label`.
pub fn add_record(
    plot: &mut Plot,
    label: &str,
    t_s: &[f64],
    hz: &[f64],
    event_at_s: f64,
    event_label: &str,
) {
    let axis = &plot.axis;
    let inside: Vec<usize> = (0..t_s.len())
        .filter(|&k| t_s[k] >= 0.0 && t_s[k] <= axis.duration_s && hz[k].is_finite())
        .collect();
    let t: Vec<f64> = inside.iter().map(|&k| t_s[k]).collect();
    let f: Vec<f64> = inside.iter().map(|&k| hz[k]).collect();
    let kept = thin::keep(&t, &[&f], &[event_at_s], 0.05, COLUMNS, |x| {
        axis.position(x)
    });
    let points: Vec<(f64, f64)> = kept.iter().map(|&k| (t[k], f[k])).collect();
    for l in &mut plot.lines {
        l.style += 1;
    }
    for e in &mut plot.extremes {
        e.style += 1;
    }
    for s in &mut plot.shed {
        s.style += 1;
    }
    for i in &mut plot.idle {
        i.style += 1;
    }
    for e in &mut plot.events {
        if let Some(s) = &mut e.style {
            *s += 1;
        }
    }
    plot.lines.insert(
        0,
        Line {
            label: label.to_string(),
            style: 0,
            point: label.to_string(),
            sections: Vec::new(),
            points,
        },
    );
    plot.events.push(EventMark {
        at_s: event_at_s,
        label: event_label.to_string(),
        style: Some(0),
    });
    plot.events.sort_by(|a, b| a.at_s.total_cmp(&b.at_s));
}
