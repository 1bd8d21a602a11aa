//! A frequency-against-time plot as a self-contained SVG: frequency traces in the upper panel with the
//! stage pickups and the criteria drawn as horizontal lines, cumulative MW shed in the lower panel.
//!
//! Hand-written SVG (text elements, no fonts to ship), so the same file can be opened alone or embedded
//! in an HTML report. It draws what it is given and computes nothing about the run.

use std::fmt::Write;

/// One frequency trace (an island, or an operating point when several are overlaid).
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub label: String,
    /// (time s, frequency Hz), ascending in time.
    pub points: Vec<(f64, f64)>,
    /// (time s, cumulative MW shed), ascending; drawn as a step line in the lower panel.
    pub shed_mw: Vec<(f64, f64)>,
}

/// What a horizontal line means; it decides the line's style.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LevelKind {
    /// A stage's pickup frequency.
    Pickup,
    /// A hard limit (minimum or maximum frequency).
    Limit,
    /// The level frequency must recover above.
    Recovery,
}

/// A labelled horizontal line in the frequency panel.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    pub label: String,
    pub hz: f64,
    pub kind: LevelKind,
}

/// Everything one plot shows.
#[derive(Debug, Clone, PartialEq)]
pub struct FrequencyPlot {
    pub title: String,
    pub nominal_hz: f64,
    pub duration_s: f64,
    pub series: Vec<Series>,
    pub levels: Vec<Level>,
}

const WIDTH: f64 = 960.0;
const HEIGHT: f64 = 600.0;
const LEFT: f64 = 70.0;
const RIGHT: f64 = 190.0;
const TOP: f64 = 44.0;
const FREQ_BOTTOM: f64 = 410.0;
const SHED_TOP: f64 = 450.0;
const SHED_BOTTOM: f64 = 560.0;
/// Trace colours, chosen to stay distinguishable for common colour-vision deficiencies.
const PALETTE: [&str; 8] = [
    "#1f5fa8", "#c0392b", "#2e8b57", "#8e44ad", "#d68910", "#17202a", "#148f9c", "#a04000",
];

/// Render the plot as SVG text.
pub fn render(plot: &FrequencyPlot) -> String {
    let duration = if plot.duration_s.is_finite() && plot.duration_s > 0.0 {
        plot.duration_s
    } else {
        1.0
    };
    let (f_lo, f_hi) = frequency_range(plot);
    let shed_max = plot
        .series
        .iter()
        .flat_map(|s| s.shed_mw.iter().map(|p| p.1))
        .fold(0.0_f64, f64::max)
        .max(1.0);
    let x = |t: f64| LEFT + (t.clamp(0.0, duration) / duration) * (WIDTH - LEFT - RIGHT);
    let yf =
        |f: f64| FREQ_BOTTOM - (f.clamp(f_lo, f_hi) - f_lo) / (f_hi - f_lo) * (FREQ_BOTTOM - TOP);
    let ys = |mw: f64| SHED_BOTTOM - (mw / (shed_max * 1.1)) * (SHED_BOTTOM - SHED_TOP);

    let mut s = String::new();
    let _ = write!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{HEIGHT}" viewBox="0 0 {WIDTH} {HEIGHT}" font-family="sans-serif" font-size="12">"#
    );
    let _ = write!(s, r##"<rect width="100%" height="100%" fill="#ffffff"/>"##);
    let _ = write!(
        s,
        r#"<text x="{LEFT}" y="24" font-size="15" font-weight="bold">{}</text>"#,
        escape(&plot.title)
    );

    // Frequency panel: grid and ticks.
    for tick in ticks(f_lo, f_hi, 14) {
        let y = yf(tick);
        let _ = write!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#e4e4e4"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            WIDTH - RIGHT,
            LEFT - 6.0,
            y + 4.0,
            trim(tick)
        );
    }
    for tick in ticks(0.0, duration, 10) {
        let xx = x(tick);
        let _ = write!(
            s,
            r##"<line x1="{xx:.1}" y1="{TOP}" x2="{xx:.1}" y2="{FREQ_BOTTOM}" stroke="#e4e4e4"/><line x1="{xx:.1}" y1="{SHED_TOP}" x2="{xx:.1}" y2="{SHED_BOTTOM}" stroke="#e4e4e4"/><text x="{xx:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
            SHED_BOTTOM + 16.0,
            trim(tick)
        );
    }
    let _ = write!(
        s,
        r##"<text x="18" y="{:.1}" transform="rotate(-90 18 {:.1})" text-anchor="middle">frequency (Hz)</text>"##,
        (TOP + FREQ_BOTTOM) / 2.0,
        (TOP + FREQ_BOTTOM) / 2.0
    );
    let _ = write!(
        s,
        r##"<text x="{:.1}" y="{:.1}" text-anchor="middle">time (s)</text>"##,
        (LEFT + WIDTH - RIGHT) / 2.0,
        HEIGHT - 8.0
    );

    // Levels: pickups dotted grey, limits dashed red, recovery dashed green; labels at the right edge.
    let mut label_ys: Vec<f64> = Vec::new();
    // Levels outside the axis are left out rather than drawn at its edge.
    let mut levels: Vec<&Level> = plot
        .levels
        .iter()
        .filter(|l| l.hz.is_finite() && l.hz >= f_lo && l.hz <= f_hi)
        .collect();
    levels.sort_by(|a, b| b.hz.total_cmp(&a.hz));
    for level in levels {
        let (colour, dash) = match level.kind {
            LevelKind::Pickup => ("#7f8c8d", "2,3"),
            LevelKind::Limit => ("#c0392b", "8,4"),
            LevelKind::Recovery => ("#2e8b57", "8,4"),
        };
        let y = yf(level.hz);
        let _ = write!(
            s,
            r#"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="{colour}" stroke-dasharray="{dash}"/>"#,
            WIDTH - RIGHT
        );
        // Push labels apart so that close settings stay readable.
        let mut ly = y + 4.0;
        while label_ys.iter().any(|&o| (o - ly).abs() < 12.0) {
            ly += 12.0;
        }
        label_ys.push(ly);
        let _ = write!(
            s,
            r#"<text x="{:.1}" y="{ly:.1}" fill="{colour}">{} {} Hz</text>"#,
            WIDTH - RIGHT + 6.0,
            escape(&level.label),
            trim(level.hz)
        );
    }

    // Traces.
    for (i, series) in plot.series.iter().enumerate() {
        let colour = PALETTE[i % PALETTE.len()];
        let path = polyline(series.points.iter().map(|&(t, f)| (x(t), yf(f))));
        let _ = write!(
            s,
            r#"<polyline fill="none" stroke="{colour}" stroke-width="1.8" points="{path}"/>"#
        );
        let steps = step_points(&series.shed_mw, duration);
        let path = polyline(steps.iter().map(|&(t, mw)| (x(t), ys(mw))));
        let _ = write!(
            s,
            r#"<polyline fill="none" stroke="{colour}" stroke-width="1.5" points="{path}"/>"#
        );
        let ly = TOP + 14.0 + 16.0 * i as f64;
        let _ = write!(
            s,
            r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{colour}" stroke-width="2"/><text x="{:.1}" y="{:.1}">{}</text>"#,
            LEFT + 10.0,
            ly - 4.0,
            LEFT + 30.0,
            ly - 4.0,
            LEFT + 36.0,
            ly,
            escape(&series.label)
        );
    }

    // Shed panel axes.
    for tick in ticks(0.0, shed_max * 1.1, 4) {
        let y = ys(tick);
        let _ = write!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#e4e4e4"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            WIDTH - RIGHT,
            LEFT - 6.0,
            y + 4.0,
            trim(tick)
        );
    }
    let _ = write!(
        s,
        r##"<text x="18" y="{:.1}" transform="rotate(-90 18 {:.1})" text-anchor="middle">shed (MW)</text>"##,
        (SHED_TOP + SHED_BOTTOM) / 2.0,
        (SHED_TOP + SHED_BOTTOM) / 2.0
    );
    for (top, bottom) in [(TOP, FREQ_BOTTOM), (SHED_TOP, SHED_BOTTOM)] {
        let _ = write!(
            s,
            r##"<rect x="{LEFT}" y="{top}" width="{:.1}" height="{:.1}" fill="none" stroke="#555555"/>"##,
            WIDTH - LEFT - RIGHT,
            bottom - top
        );
    }
    s.push_str("</svg>\n");
    s
}

/// The frequency axis: the traces and every level below nominal, and levels above nominal only when
/// a trace comes within a quarter of the way to them, so that an over-frequency limit far from the
/// action does not squash the under-frequency picture.
fn frequency_range(plot: &FrequencyPlot) -> (f64, f64) {
    let mut lo = plot.nominal_hz;
    let mut hi = plot.nominal_hz;
    for v in plot
        .series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.1))
        .filter(|v| v.is_finite())
    {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let data_hi = hi;
    for level in plot.levels.iter().filter(|l| l.hz.is_finite()) {
        let above = level.hz > plot.nominal_hz;
        if !above || data_hi >= plot.nominal_hz + 0.75 * (level.hz - plot.nominal_hz) {
            lo = lo.min(level.hz);
            hi = hi.max(level.hz);
        }
    }
    let pad = ((hi - lo) * 0.06).max(0.05);
    (lo - pad, hi + pad)
}

/// Round tick positions, about `count` of them, covering [lo, hi].
fn ticks(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    let span = (hi - lo).max(1e-9);
    let raw = span / count.max(1) as f64;
    let magnitude = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * magnitude)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * magnitude);
    let mut out = Vec::new();
    let mut t = (lo / step).ceil() * step;
    while t <= hi + step * 1e-9 && out.len() < 100 {
        out.push(t);
        t += step;
    }
    out
}

/// Step-line vertices: hold each value until the next change, and carry the last to the end.
fn step_points(points: &[(f64, f64)], duration: f64) -> Vec<(f64, f64)> {
    let mut out = vec![(0.0, 0.0)];
    let mut last = 0.0;
    for &(t, mw) in points {
        out.push((t, last));
        out.push((t, mw));
        last = mw;
    }
    out.push((duration, last));
    out
}

fn polyline(points: impl Iterator<Item = (f64, f64)>) -> String {
    let mut s = String::new();
    for (x, y) in points {
        if x.is_finite() && y.is_finite() {
            let _ = write!(s, "{x:.1},{y:.1} ");
        }
    }
    s
}

fn trim(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// Escape text for SVG element content.
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn plot() -> FrequencyPlot {
        FrequencyPlot {
            title: "utility-loss at full-rate".into(),
            nominal_hz: 50.0,
            duration_s: 10.0,
            series: vec![Series {
                label: "island 1".into(),
                points: vec![(0.0, 50.0), (1.0, 48.9), (10.0, 49.7)],
                shed_mw: vec![(0.8, 2.5)],
            }],
            levels: vec![
                Level {
                    label: "uf-1".into(),
                    hz: 49.0,
                    kind: LevelKind::Pickup,
                },
                Level {
                    label: "min".into(),
                    hz: 47.5,
                    kind: LevelKind::Limit,
                },
            ],
        }
    }

    #[test]
    fn draws_every_series_level_and_label() {
        let svg = render(&plot());
        assert!(svg.starts_with("<svg"));
        assert!(svg.trim_end().ends_with("</svg>"));
        assert_eq!(svg.matches("<polyline").count(), 2);
        assert!(svg.contains("uf-1 49 Hz"));
        assert!(svg.contains("min 47.5 Hz"));
        assert!(svg.contains("island 1"));
    }

    #[test]
    fn a_far_over_frequency_limit_does_not_stretch_the_axis() {
        let mut p = plot();
        p.levels.push(Level {
            label: "max".into(),
            hz: 51.5,
            kind: LevelKind::Limit,
        });
        let (_, hi) = frequency_range(&p);
        assert!(hi < 50.3, "axis top {hi}");
        assert!(!render(&p).contains("max 51.5 Hz"));
        // A trace that overshoots towards the limit brings it into view.
        p.series[0].points.push((10.0, 51.2));
        assert!(render(&p).contains("max 51.5 Hz"));
    }

    #[test]
    fn ticks_are_round_and_cover_the_range() {
        assert_eq!(
            ticks(0.0, 10.0, 10),
            (0..=10).map(f64::from).collect::<Vec<_>>()
        );
        let t = ticks(47.3, 50.1, 8);
        assert!(t.first().unwrap() >= &47.3 && t.last().unwrap() <= &50.1);
    }

    #[test]
    fn text_is_escaped() {
        let mut p = plot();
        p.title = "a<b & c".into();
        assert!(render(&p).contains("a&lt;b &amp; c"));
    }
}
