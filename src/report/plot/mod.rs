//! The one plotting module: what a frequency plot shows (built here from runs, for `nadir replay`
//! and `nadir report` alike) and how it is drawn ([`svg`]; PNG through [`crate::report::png`]).
//!
//! A plot shows, for one case and one or more operating points:
//! * every island's frequency — sections whose frequency is the same sample for sample are one
//!   island and one line, labelled with its sections (and the operating point when several are
//!   overlaid); each line is thinned by [`crate::report::thin`] with its exact nadir put back;
//! * the minimum and maximum limits, the recovery level and its deadline, the settling band;
//! * a marker and label at each event of the case, at each breaker-armed stage's trip, at each
//!   generator tripped by its own protection, and at each line's nadir (and peak, when above
//!   nominal) with value and time;
//! * each frequency stage's pickup, labelled by stage (df/dt-supervised ones with their df/dt
//!   setting), and, where a line crosses a pickup without that stage operating, a marker and the
//!   reason from the run's own event log (picked up and reset; df/dt supervision; measurement lag);
//! * the MW shed underneath, cumulative, each step labelled by stage, undervoltage drop-outs as a
//!   separate line; for a case with a voltage dip, a voltage panel.
//!
//! Lines differ by colour, dash pattern and marker shape together (readable in greyscale and by
//! colour-blind readers); the legend sits below the panels, never on data; the time axis is
//! stretched after each event ([`axis::TimeAxis`]). This module formats runs; it computes no physics.

pub mod axis;
pub mod record;
pub mod svg;

use crate::model::{Action, Case, Plant, Scheme, StageTrigger};
use crate::report::thin;
use crate::sim::{Cause, EventKind, Run};
use crate::verify::matrix::disturbance_span;
use axis::TimeAxis;

/// Seconds after each event that the time axis stretches.
pub const STRETCH_WINDOW_S: f64 = 5.0;
/// Columns a line is thinned to (about two pixels each on the drawn axis).
pub const COLUMNS: usize = 360;

/// The marker shapes, one per line style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    Circle,
    Square,
    Triangle,
    Diamond,
    Cross,
    TriangleDown,
    Plus,
    Star,
}

/// How a line is drawn: colour, dash pattern and marker together.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Style {
    pub colour: &'static str,
    /// SVG `stroke-dasharray`; empty for solid.
    pub dash: &'static str,
    pub marker: Marker,
}

/// Line styles in order of use. Colours from P. Tol's colour-blind-safe "bright" and "high
/// contrast" schemes (SRON technical note SRON/EPS/TN/09-002, 2021) darkened for print; every
/// style also has its own dash and marker, so greyscale keeps them apart.
pub const STYLES: [Style; 8] = [
    Style {
        colour: "#004488",
        dash: "",
        marker: Marker::Circle,
    },
    Style {
        colour: "#bb5566",
        dash: "9,4",
        marker: Marker::Square,
    },
    Style {
        colour: "#228833",
        dash: "3,3",
        marker: Marker::Triangle,
    },
    Style {
        colour: "#aa7700",
        dash: "10,3,2,3",
        marker: Marker::Diamond,
    },
    Style {
        colour: "#000000",
        dash: "5,2",
        marker: Marker::Cross,
    },
    Style {
        colour: "#6c3483",
        dash: "1,3",
        marker: Marker::TriangleDown,
    },
    Style {
        colour: "#117777",
        dash: "12,3,3,3,3,3",
        marker: Marker::Plus,
    },
    Style {
        colour: "#7f3f00",
        dash: "6,6",
        marker: Marker::Star,
    },
];

/// The style of line number `i`.
pub fn style(i: usize) -> Style {
    STYLES[i % STYLES.len()]
}

/// One island's frequency (thinned), in one operating point.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    pub label: String,
    pub style: usize,
    /// The operating point's id.
    pub point: String,
    /// Section ids of the island.
    pub sections: Vec<String>,
    /// (time s, Hz), ascending in time.
    pub points: Vec<(f64, f64)>,
}

/// A marked extreme of a line.
#[derive(Debug, Clone, PartialEq)]
pub struct Extreme {
    pub style: usize,
    /// `nadir` or `peak`.
    pub what: &'static str,
    pub at_s: f64,
    pub hz: f64,
}

/// What a horizontal level is.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LevelKind {
    Pickup,
    /// A df/dt-supervised pickup: operates only while frequency falls at least this fast.
    SupervisedPickup {
        min_rocof_hz_per_s: f64,
    },
    Min,
    Max,
    Recovery,
}

/// A labelled horizontal line in the frequency panel.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    pub label: String,
    pub hz: f64,
    pub kind: LevelKind,
}

/// A vertical marker with its label: an event of the case (no style), or something of one
/// operating point's run (an armed stage's trip, a cascade trip) drawn in that line's style.
#[derive(Debug, Clone, PartialEq)]
pub struct EventMark {
    pub at_s: f64,
    pub label: String,
    pub style: Option<usize>,
}

/// One step of shed: when, the cumulative MW after it, and its label.
#[derive(Debug, Clone, PartialEq)]
pub struct ShedStep {
    pub at_s: f64,
    pub cumulative_mw: f64,
    pub label: String,
}

/// The shed of one operating point: by stage, and by undervoltage drop-out, each cumulative.
#[derive(Debug, Clone, PartialEq)]
pub struct ShedLine {
    pub style: usize,
    pub point: String,
    pub stages: Vec<ShedStep>,
    pub undervoltage: Vec<ShedStep>,
}

/// A stage whose pickup a line crossed without the stage operating, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct Idle {
    pub style: usize,
    pub stage: String,
    pub at_s: f64,
    pub hz: f64,
    pub reason: String,
}

/// A section's voltage during a dip case, piecewise constant: (from time s, pu).
#[derive(Debug, Clone, PartialEq)]
pub struct VoltageLine {
    pub section: String,
    pub steps: Vec<(f64, f64)>,
}

/// Everything one plot shows.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    pub title: String,
    pub nominal_hz: f64,
    pub axis: TimeAxis,
    pub lines: Vec<Line>,
    pub extremes: Vec<Extreme>,
    pub levels: Vec<Level>,
    pub events: Vec<EventMark>,
    pub shed: Vec<ShedLine>,
    pub idle: Vec<Idle>,
    pub voltage: Vec<VoltageLine>,
    /// The instant by which frequency must be back above the recovery level.
    pub recovery_deadline_s: Option<f64>,
    /// The settling band: from (s), low and high (Hz).
    pub settle: Option<(f64, f64, f64)>,
}

/// One run to draw: the operating point's id and its run (with its trace kept).
#[derive(Debug, Clone, Copy)]
pub struct RunAt<'a> {
    pub point: &'a str,
    pub run: &'a Run,
}

/// Build the plot of `case` from its runs (one per operating point, in order). Lines and marks
/// name their operating point when `name_points` is set or when there are several runs.
pub fn build(
    plant: &Plant,
    scheme: &Scheme,
    case: &Case,
    runs: &[RunAt],
    title: String,
    name_points: bool,
) -> Plot {
    let events_s = event_instants(case);
    let axis = TimeAxis::new(case.duration_s, &events_s, STRETCH_WINDOW_S);
    let c = &plant.criteria;
    let (first, last) = disturbance_span(case);
    let mut plot = Plot {
        title,
        nominal_hz: plant.nominal_hz,
        lines: Vec::new(),
        extremes: Vec::new(),
        levels: levels(plant, scheme),
        events: case_events(case, runs),
        shed: Vec::new(),
        idle: Vec::new(),
        voltage: voltage_lines(plant, case),
        recovery_deadline_s: Some(last + c.recover_within_s).filter(|t| *t <= axis.duration_s),
        settle: Some((first + c.settle_within_s, c.settle_low_hz, c.settle_high_hz))
            .filter(|s| s.0 <= axis.duration_s),
        axis,
    };
    let several = name_points || runs.len() > 1;
    for r in runs {
        let first_style = plot.lines.len();
        add_lines(&mut plot, plant, r, several, &events_s);
        let own_style = if plot.lines.len() > first_style {
            first_style
        } else {
            plot.lines.len()
        };
        add_shed_and_marks(&mut plot, scheme, r, own_style, several);
        add_idle(&mut plot, plant, scheme, r, first_style);
    }
    plot
}

/// Instants the time axis stretches after and the thinning keeps: the case's events and the
/// corners of a utility frequency profile.
fn event_instants(case: &Case) -> Vec<f64> {
    let mut out: Vec<f64> = case.events.iter().map(|e| e.at_s).collect();
    out.extend(profile_corners(case).into_iter().map(|p| p.0));
    out.sort_by(f64::total_cmp);
    out.dedup();
    out
}

/// Points of the utility profile where its slope changes: (time s, Hz, slope after, Hz/s).
fn profile_corners(case: &Case) -> Vec<(f64, f64, f64)> {
    let p = &case.utility_profile;
    let slope = |a: (f64, f64), b: (f64, f64)| {
        if b.0 > a.0 {
            (b.1 - a.1) / (b.0 - a.0)
        } else {
            0.0
        }
    };
    (1..p.len().saturating_sub(1))
        .filter(|&k| (slope(p[k - 1], p[k]) - slope(p[k], p[k + 1])).abs() > 1e-9)
        .map(|k| (p[k].0, p[k].1, slope(p[k], p[k + 1])))
        .collect()
}

/// The stage pickups (stages with the same pickup and supervision share one line, their ids
/// joined) and the criteria's levels.
pub fn levels(plant: &Plant, scheme: &Scheme) -> Vec<Level> {
    let mut out: Vec<Level> = Vec::new();
    for s in &scheme.stages {
        let StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } = s.trigger
        else {
            continue;
        };
        let kind = match min_rocof_hz_per_s {
            Some(r) => LevelKind::SupervisedPickup {
                min_rocof_hz_per_s: r,
            },
            None => LevelKind::Pickup,
        };
        match out.iter_mut().find(|l| l.hz == pickup_hz && l.kind == kind) {
            Some(level) => {
                level.label.push_str(", ");
                level.label.push_str(&s.id);
            }
            None => out.push(Level {
                label: s.id.clone(),
                hz: pickup_hz,
                kind,
            }),
        }
    }
    let c = &plant.criteria;
    out.push(Level {
        label: "minimum".into(),
        hz: c.min_hz,
        kind: LevelKind::Min,
    });
    out.push(Level {
        label: "maximum".into(),
        hz: c.max_hz,
        kind: LevelKind::Max,
    });
    out.push(Level {
        label: "recovery".into(),
        hz: c.recover_above_hz,
        kind: LevelKind::Recovery,
    });
    out
}

/// The case's own events, as the first run logged them, and the utility profile's corners.
fn case_events(case: &Case, runs: &[RunAt]) -> Vec<EventMark> {
    let mut out = Vec::new();
    if let Some(r) = runs.first() {
        let ev = &r.run.events;
        for (k, e) in ev.iter().enumerate() {
            let label = match &e.what {
                EventKind::BreakerOpened {
                    breaker,
                    cause: Cause::Case,
                } => {
                    let generator = ev.get(k + 1).is_some_and(|n| {
                        matches!(&n.what, EventKind::GeneratorTripped { generator, cascade: false, .. } if generator == breaker)
                    });
                    if generator {
                        format!("{breaker} trips")
                    } else {
                        format!("{breaker} opens")
                    }
                }
                EventKind::LoadStep { section, mw } => {
                    format!("load step {} MW on {section}", signed(*mw))
                }
                EventKind::VoltageDip {
                    section,
                    remaining_pu,
                    duration_s,
                } => format!(
                    "{section} dips to {} pu for {} s",
                    trim(*remaining_pu),
                    trim(*duration_s)
                ),
                _ => continue,
            };
            out.push(EventMark {
                at_s: e.at_s,
                label,
                style: None,
            });
        }
    }
    for (t, hz, slope) in profile_corners(case) {
        let way = if slope < 0.0 {
            "falling"
        } else if slope > 0.0 {
            "rising"
        } else {
            "steady"
        };
        out.push(EventMark {
            at_s: t,
            label: format!("grid {} Hz, {way}", trim(hz)),
            style: None,
        });
    }
    out.sort_by(|a, b| a.at_s.total_cmp(&b.at_s));
    out
}

/// Group the run's sections into islands (same frequency at every sample) and add one thinned line each.
fn add_lines(plot: &mut Plot, plant: &Plant, r: &RunAt, several: bool, events_s: &[f64]) {
    let trace = r.run.sampled_trace();
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for s in 0..trace.section_hz.len() {
        match groups
            .iter_mut()
            .find(|g| trace.section_hz[g[0]] == trace.section_hz[s])
        {
            Some(g) => g.push(s),
            None => groups.push(vec![s]),
        }
    }
    let mut keep_at: Vec<f64> = events_s.to_vec();
    keep_at.extend(r.run.events.iter().map(|e| e.at_s));
    for g in groups {
        let hz = &trace.section_hz[g[0]];
        let sections: Vec<String> = g.iter().map(|&s| plant.sections[s].id.clone()).collect();
        let axis = &plot.axis;
        let kept = thin::keep(&trace.t_s, &[hz], &keep_at, 0.05, COLUMNS, |t| {
            axis.position(t)
        });
        let mut points: Vec<(f64, f64)> = kept
            .iter()
            .map(|&k| (trace.t_s[k], hz[k]))
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        let style = plot.lines.len();
        // The exact nadir and peak of the islands this line belongs to, put back on the line.
        let islands: Vec<_> = r
            .run
            .islands
            .iter()
            .filter(|i| i.sections.iter().any(|s| sections.contains(s)))
            .collect();
        let nadir = islands
            .iter()
            .map(|i| (i.nadir_at_s, i.nadir_hz))
            .filter(|p| p.1.is_finite())
            .min_by(|a, b| a.1.total_cmp(&b.1));
        let peak = islands
            .iter()
            .filter_map(|i| Some((i.peak_at_s?, i.peak_hz?)))
            .filter(|p| p.1.is_finite())
            .max_by(|a, b| a.1.total_cmp(&b.1));
        for p in [nadir, peak].into_iter().flatten() {
            let at = points.partition_point(|q| q.0 < p.0);
            if points.get(at).is_none_or(|q| q.0 != p.0) {
                points.insert(at, p);
            }
        }
        if let Some((t, f)) = nadir.filter(|p| p.1 < plot.nominal_hz - 0.02) {
            plot.extremes.push(Extreme {
                style,
                what: "nadir",
                at_s: t,
                hz: f,
            });
        }
        if let Some((t, f)) = peak.filter(|p| p.1 > plot.nominal_hz + 0.02) {
            plot.extremes.push(Extreme {
                style,
                what: "peak",
                at_s: t,
                hz: f,
            });
        }
        let island = format!("island {}", sections.join("+"));
        plot.lines.push(Line {
            label: if several {
                format!("{}, {island}", r.point)
            } else {
                island
            },
            style,
            point: r.point.to_string(),
            sections,
            points,
        });
    }
}

/// The shed of one run, its armed-stage trips, its cascade trips and its over-frequency stages'
/// actions.
fn add_shed_and_marks(plot: &mut Plot, scheme: &Scheme, r: &RunAt, style: usize, several: bool) {
    let mut line = ShedLine {
        style,
        point: r.point.to_string(),
        stages: Vec::new(),
        undervoltage: Vec::new(),
    };
    let (mut by_stage, mut by_uv) = (0.0, 0.0);
    let suffix = if several {
        format!(" ({})", r.point)
    } else {
        String::new()
    };
    for e in &r.run.events {
        match &e.what {
            EventKind::LoadsOpened { stage, mw, .. } => {
                by_stage += mw;
                line.stages.push(ShedStep {
                    at_s: e.at_s,
                    cumulative_mw: by_stage,
                    label: format!("{stage} {} MW", trim(*mw)),
                });
                let armed = scheme
                    .stages
                    .iter()
                    .any(|s| s.id == *stage && matches!(s.trigger, StageTrigger::Breaker(_)));
                if armed {
                    plot.events.push(EventMark {
                        at_s: e.at_s,
                        label: format!("{stage} (armed) trips{suffix}"),
                        style: Some(style),
                    });
                }
            }
            EventKind::LoadDroppedOut { load, mw } => {
                by_uv += mw;
                line.undervoltage.push(ShedStep {
                    at_s: e.at_s,
                    cumulative_mw: by_uv,
                    label: format!("{load} drops out (UV) {} MW", trim(*mw)),
                });
            }
            EventKind::GeneratorTripped {
                generator,
                cascade: true,
                ..
            } => plot.events.push(EventMark {
                at_s: e.at_s,
                label: format!("{generator} tripped by own protection{suffix}"),
                style: Some(style),
            }),
            // Over-frequency stages act on generators, not loads: marked, not in the shed line.
            EventKind::BreakerOpened {
                breaker,
                cause: Cause::Stage { stage },
            } => plot.events.push(EventMark {
                at_s: e.at_s,
                label: format!("{stage} trips {breaker}{suffix}"),
                style: Some(style),
            }),
            EventKind::RunBack {
                stage,
                generator,
                mw,
            } => plot.events.push(EventMark {
                at_s: e.at_s,
                label: format!("{stage} runs {generator} back {} MW{suffix}", trim(*mw)),
                style: Some(style),
            }),
            _ => {}
        }
    }
    plot.events.sort_by(|a, b| a.at_s.total_cmp(&b.at_s));
    plot.shed.push(line);
}

/// Frequency stages whose pickup a line of this run crossed without the stage operating.
fn add_idle(plot: &mut Plot, plant: &Plant, scheme: &Scheme, r: &RunAt, first_style: usize) {
    for stage in &scheme.stages {
        let StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } = stage.trigger
        else {
            continue;
        };
        let Some(&first_load) = stage.sheds.first() else {
            continue;
        };
        let measured = &plant.sections[plant.loads[first_load].section].id;
        let operated =
            r.run.events.iter().any(
                |e| matches!(&e.what, EventKind::LoadsOpened { stage: s, .. } if *s == stage.id),
            );
        if operated {
            continue;
        }
        let Some(line) = plot.lines[first_style..]
            .iter()
            .find(|l| l.point == r.point && l.sections.contains(measured))
        else {
            continue;
        };
        let Some(&(at_s, hz)) = line.points.iter().find(|p| p.1 < pickup_hz) else {
            continue;
        };
        let picked = r
            .run
            .events
            .iter()
            .find(|e| matches!(&e.what, EventKind::StagePickup { stage: s } if *s == stage.id));
        let reset = r
            .run
            .events
            .iter()
            .find(|e| matches!(&e.what, EventKind::StageReset { stage: s } if *s == stage.id));
        let reason = match (picked, reset, min_rocof_hz_per_s) {
            (Some(p), Some(q), _) => format!(
                "picked up at {} s, reset at {} s before its {} s delay ran out",
                fix(p.at_s, 2),
                fix(q.at_s, 2),
                trim(stage.delay_s)
            ),
            (Some(p), None, _) => format!("picked up at {} s, run ended first", fix(p.at_s, 2)),
            (None, _, Some(rate)) => format!(
                "no trip: fell slower than {} Hz/s (df/dt supervision)",
                trim(rate)
            ),
            (None, _, None) => format!(
                "no trip: measured frequency ({} s lag) stayed above {} Hz",
                trim(scheme.measurement.frequency_lag_s),
                trim(pickup_hz)
            ),
        };
        // Stages that did not operate at the same crossing for the same reason share one label.
        match plot
            .idle
            .iter_mut()
            .find(|i| i.style == line.style && i.at_s == at_s && i.reason == reason)
        {
            Some(idle) => {
                idle.stage.push_str(", ");
                idle.stage.push_str(&stage.id);
            }
            None => plot.idle.push(Idle {
                style: line.style,
                stage: stage.id.clone(),
                at_s,
                hz,
                reason,
            }),
        }
    }
}

/// Sections' voltage for a case with voltage dips (the dip as the case defines it; the deepest
/// of overlapping dips), nominal 1 pu elsewhere.
fn voltage_lines(plant: &Plant, case: &Case) -> Vec<VoltageLine> {
    let dips: Vec<(usize, f64, f64, f64)> = case
        .events
        .iter()
        .filter_map(|e| match e.action {
            Action::VoltageDip {
                section,
                remaining_pu,
                duration_s,
            } => Some((section, e.at_s, e.at_s + duration_s, remaining_pu)),
            _ => None,
        })
        .collect();
    let mut sections: Vec<usize> = dips.iter().map(|d| d.0).collect();
    sections.sort_unstable();
    sections.dedup();
    sections
        .into_iter()
        .map(|s| {
            let mine: Vec<_> = dips.iter().filter(|d| d.0 == s).collect();
            let mut times: Vec<f64> = vec![0.0];
            times.extend(mine.iter().flat_map(|d| [d.1, d.2]));
            times.sort_by(f64::total_cmp);
            times.dedup();
            let mut steps: Vec<(f64, f64)> = Vec::new();
            for t in times {
                let v = mine
                    .iter()
                    .filter(|d| d.1 <= t && t < d.2)
                    .map(|d| d.3.max(0.0))
                    .fold(1.0, f64::min);
                if steps.last().is_none_or(|l| l.1 != v) {
                    steps.push((t, v));
                }
            }
            VoltageLine {
                section: plant.sections[s].id.clone(),
                steps,
            }
        })
        .collect()
}

/// A number with at most two decimals, no trailing zeros.
pub fn trim(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

fn fix(v: f64, decimals: usize) -> String {
    format!("{v:.decimals$}")
}

fn signed(v: f64) -> String {
    if v >= 0.0 {
        format!("+{}", trim(v))
    } else {
        trim(v)
    }
}

/// The file format a `--plot` path asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Svg,
    Png,
}

impl Format {
    /// `.png` (any case) is PNG; `.svg` or no extension is SVG; any other extension is refused,
    /// with the message to show.
    pub fn for_path(path: &std::path::Path) -> Result<Format, String> {
        match path.extension().map(|e| e.to_string_lossy().to_lowercase()) {
            None => Ok(Format::Svg),
            Some(e) if e == "svg" => Ok(Format::Svg),
            Some(e) if e == "png" => Ok(Format::Png),
            Some(e) => Err(format!(
                "{}: a plot is written as .svg or .png, not .{e}; name the file FILE.svg or FILE.png",
                path.display()
            )),
        }
    }

    /// The plot in this format.
    pub fn bytes(self, plot: &Plot) -> Result<Vec<u8>, crate::report::png::PngError> {
        let text = svg::render(plot);
        match self {
            Format::Svg => Ok(text.into_bytes()),
            Format::Png => crate::report::png::svg_to_png(&text),
        }
    }
}
