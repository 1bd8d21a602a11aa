//! The report's section on a recorded event (`nadir report --record`): the record, how its event
//! was placed, record and model figures side by side, and the plot of both.
//!
//! Formats a comparison made by [`crate::calibrate`]; computes nothing itself.

use super::html::esc;
use super::plot::{svg, Plot};
use crate::calibrate::Comparison;
use std::fmt::Write;

/// What the section shows.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordSection {
    /// The record file as the report shows it.
    pub file: String,
    /// The channel and whether it was measured or estimated (with the method).
    pub origin: String,
    pub case: String,
    pub point: String,
    pub section: String,
    /// The event time on the record's axis and how it was found, in words.
    pub event: String,
    pub samples: usize,
    pub comparison: Comparison,
    pub rocof_window_s: f64,
    pub plot: Plot,
}

/// Writes the section (id `record`).
pub fn section(h: &mut String, r: &RecordSection) {
    let _ = write!(
        h,
        "<section id=\"record\">\n<h2>Model against a recorded event</h2>\n<p>Record <code>{}</code>: {}. \
Compared with case <strong>{}</strong> at <strong>{}</strong>, section {}, over {} sample(s); event {}.</p>\n",
        esc(&r.file),
        esc(&r.origin),
        esc(&r.case),
        esc(&r.point),
        esc(&r.section),
        r.samples,
        esc(&r.event)
    );
    h.push_str("<table>\n<thead><tr><th></th><th>record</th><th>model</th><th>difference</th></tr></thead>\n<tbody>\n");
    let c = &r.comparison;
    let rows: [(String, f64, f64, usize); 4] = [
        ("nadir Hz".into(), c.record.nadir_hz, c.model.nadir_hz, 3),
        (
            "nadir at s".into(),
            c.record.nadir_at_s,
            c.model.nadir_at_s,
            2,
        ),
        (
            format!("max ROCOF Hz/s over {} s", trim(r.rocof_window_s)),
            c.record.max_rocof_hz_per_s,
            c.model.max_rocof_hz_per_s,
            2,
        ),
        (
            "settling value Hz".into(),
            c.record.settling_hz,
            c.model.settling_hz,
            3,
        ),
    ];
    for (name, rec, model, d) in rows {
        let _ = writeln!(
            h,
            "<tr><td>{}</td><td class=\"n\">{rec:.d$}</td><td class=\"n\">{model:.d$}</td><td class=\"n\">{:+.d$}</td></tr>",
            esc(&name),
            model - rec
        );
    }
    let _ = writeln!(
        h,
        "<tr><td>RMS difference Hz</td><td class=\"n\">—</td><td class=\"n\"></td><td class=\"n\">{:.4}</td></tr>\n</tbody>\n</table>",
        c.rms_hz
    );
    h.push_str("<p class=\"note\">Record and model are read the same way at the record's samples: nadir after a 0.1 s centred mean, ROCOF as the largest |f(t) − f(t − W)|/W, settling value as the mean of the last 1 s (docs/calibration.md). To fit the plant's parameters to the record, use <code>nadir calibrate</code>.</p>\n");
    let _ = write!(
        h,
        "<figure>\n{}\n<figcaption>The record (first line) and the model with this report's plant file, on the case's time axis; the record's event is marked where it was placed.</figcaption>\n</figure>\n</section>\n",
        svg::render(&r.plot)
    );
}

fn trim(v: f64) -> String {
    super::plot::trim(v)
}
