//! Drawing a [`Plot`] as a self-contained SVG: a strip of event labels, the frequency panel, the
//! shed panel, a voltage panel for dip cases, the time axis, and the legend below everything.
//!
//! Hand-written SVG (text elements; the viewer supplies a sans-serif font), so the same text can be
//! saved alone, embedded in an HTML report, or rendered to PNG. Labels are placed so that none
//! overlaps another; the legend is outside the panels, so it never covers data.

use super::{style, trim, LevelKind, Marker, Plot, Style};
use std::fmt::Write;

const WIDTH: f64 = 1000.0;
const LEFT: f64 = 64.0;
/// Room right of the panels for the level labels.
const RIGHT: f64 = 196.0;
const PANEL_RIGHT: f64 = WIDTH - RIGHT;
const PANEL_WIDTH: f64 = PANEL_RIGHT - LEFT;
const ROW: f64 = 13.0;
const FREQ_HEIGHT: f64 = 330.0;
const SHED_HEIGHT: f64 = 120.0;
const VOLT_HEIGHT: f64 = 80.0;
const GAP: f64 = 26.0;
/// Estimated width of one character at the label size (11 px sans-serif).
const CHAR_W: f64 = 6.1;
const EVENT_ROWS: usize = 5;

/// An axis-aligned box taken by a label.
#[derive(Debug, Clone, Copy)]
struct Rect {
    x0: f64,
    y0: f64,
    x1: f64,
    y1: f64,
}

impl Rect {
    fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
}

/// Labels placed so far; a new one takes the first candidate position that overlaps none.
struct Placer {
    taken: Vec<Rect>,
}

impl Placer {
    /// Place text of `chars` characters with its anchor at one of `candidates` (x of the start,
    /// baseline y), inside `bounds`; returns the chosen anchor.
    fn place(&mut self, chars: usize, candidates: &[(f64, f64)], bounds: Rect) -> (f64, f64) {
        let w = chars as f64 * CHAR_W;
        let rect = |(x, y): (f64, f64)| Rect {
            x0: x,
            y0: y - 10.0,
            x1: x + w,
            y1: y + 3.0,
        };
        let inside = |r: &Rect| {
            r.x0 >= bounds.x0 && r.x1 <= bounds.x1 && r.y0 >= bounds.y0 && r.y1 <= bounds.y1
        };
        let free = |r: &Rect, taken: &[Rect]| taken.iter().all(|t| !t.overlaps(r));
        let chosen = candidates
            .iter()
            .copied()
            .find(|&c| {
                let r = rect(c);
                inside(&r) && free(&r, &self.taken)
            })
            .or_else(|| {
                // Slide down the panel from the first candidate until free.
                let (x0, y0) = *candidates.first()?;
                let x = x0.clamp(bounds.x0, (bounds.x1 - w).max(bounds.x0));
                (0..200)
                    .map(|k| (x, y0 + ROW * k as f64))
                    .chain((1..200).map(|k| (x, y0 - ROW * k as f64)))
                    .find(|&c| {
                        let r = rect(c);
                        inside(&r) && free(&r, &self.taken)
                    })
            })
            .unwrap_or(
                candidates
                    .first()
                    .copied()
                    .unwrap_or((bounds.x0, bounds.y1)),
            );
        self.taken.push(rect(chosen));
        chosen
    }
}

/// Render the plot as SVG text.
pub fn render(plot: &Plot) -> String {
    let axis = &plot.axis;
    let x = |t: f64| LEFT + axis.position(t) * PANEL_WIDTH;

    // Event labels: rows above the frequency panel, each label in the first row where it fits.
    let mut rows: Vec<Vec<(f64, f64)>> = vec![Vec::new(); EVENT_ROWS];
    let mut event_rows: Vec<usize> = Vec::new();
    for e in &plot.events {
        let x0 = x(e.at_s) + 2.0;
        let w = (e.label.chars().count() as f64 + 1.0) * CHAR_W;
        let x0 = x0.min(WIDTH - 4.0 - w);
        let row = (0..EVENT_ROWS)
            .find(|&r| rows[r].iter().all(|&(a, b)| x0 + w <= a || x0 >= b))
            .unwrap_or(EVENT_ROWS - 1);
        rows[row].push((x0, x0 + w));
        event_rows.push(row);
    }
    let used_rows = event_rows.iter().map(|r| r + 1).max().unwrap_or(0);
    let strip_top = 34.0;
    let freq_top = strip_top + used_rows as f64 * ROW + 8.0;
    let freq_bottom = freq_top + FREQ_HEIGHT;
    let shed_top = freq_bottom + GAP;
    let shed_bottom = shed_top + SHED_HEIGHT;
    let (volt_top, volt_bottom) = if plot.voltage.is_empty() {
        (shed_bottom, shed_bottom)
    } else {
        (shed_bottom + GAP, shed_bottom + GAP + VOLT_HEIGHT)
    };
    let axis_bottom = volt_bottom;
    let legend_top = axis_bottom + 44.0;
    let legend = legend_entries(plot);
    let per_row = 3;
    let legend_rows = legend.len().div_ceil(per_row);
    let height = legend_top + legend_rows as f64 * 17.0 + 10.0;

    let (f_lo, f_hi) = frequency_range(plot);
    let yf = |f: f64| {
        freq_bottom - (f.clamp(f_lo, f_hi) - f_lo) / (f_hi - f_lo) * (freq_bottom - freq_top)
    };
    let shed_max = plot
        .shed
        .iter()
        .flat_map(|l| l.stages.iter().chain(&l.undervoltage))
        .map(|s| s.cumulative_mw)
        .fold(0.0_f64, f64::max)
        .max(1.0)
        * 1.25;
    let ys = |mw: f64| shed_bottom - (mw / shed_max).clamp(0.0, 1.0) * (shed_bottom - shed_top);
    let yv = |pu: f64| volt_bottom - (pu.clamp(0.0, 1.1) / 1.1) * (volt_bottom - volt_top);

    let mut s = String::with_capacity(64 * 1024);
    let _ = write!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height:.0}" viewBox="0 0 {WIDTH} {height:.0}" font-family="DejaVu Sans, Arial, sans-serif" font-size="11">"#
    );
    let _ = write!(
        s,
        r##"<rect width="100%" height="100%" fill="#ffffff"/><text x="{LEFT}" y="22" font-size="14" font-weight="bold">{}</text>"##,
        escape(&plot.title)
    );

    // Stretched stretches of the time axis, shaded in every panel.
    let panels: Vec<(f64, f64)> = [
        Some((freq_top, freq_bottom)),
        Some((shed_top, shed_bottom)),
        (!plot.voltage.is_empty()).then_some((volt_top, volt_bottom)),
    ]
    .into_iter()
    .flatten()
    .collect();
    for &(a, b) in &axis.stretched {
        for &(top, bottom) in &panels {
            let _ = write!(
                s,
                r##"<rect class="stretched" x="{:.1}" y="{top:.1}" width="{:.1}" height="{:.1}" fill="#ececec"/>"##,
                x(a),
                x(b) - x(a),
                bottom - top
            );
        }
    }
    // Settling band.
    if let Some((from, lo, hi)) = plot.settle {
        let x0 = x(from).min(PANEL_RIGHT - 6.0);
        let _ = write!(
            s,
            r##"<rect class="settle" x="{x0:.1}" y="{:.1}" width="{:.1}" height="{:.1}" fill="#d9ead3" fill-opacity="0.7" stroke="#5a8f4e" stroke-dasharray="2,2"/>"##,
            yf(hi),
            PANEL_RIGHT - x0,
            (yf(lo) - yf(hi)).max(1.0)
        );
    }

    // Grids and ticks.
    for tick in super::axis::ticks(f_lo, f_hi, 12) {
        let y = yf(tick);
        let _ = write!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{PANEL_RIGHT}" y2="{y:.1}" stroke="#e2e2e2"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            LEFT - 5.0,
            y + 4.0,
            trim(tick)
        );
    }
    for tick in super::axis::ticks(0.0, shed_max, 4) {
        let y = ys(tick);
        let _ = write!(
            s,
            r##"<line x1="{LEFT}" y1="{y:.1}" x2="{PANEL_RIGHT}" y2="{y:.1}" stroke="#e2e2e2"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            LEFT - 5.0,
            y + 4.0,
            trim(tick)
        );
    }
    if !plot.voltage.is_empty() {
        for tick in [0.0, 0.5, 1.0] {
            let y = yv(tick);
            let _ = write!(
                s,
                r##"<line x1="{LEFT}" y1="{y:.1}" x2="{PANEL_RIGHT}" y2="{y:.1}" stroke="#e2e2e2"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
                LEFT - 5.0,
                y + 4.0,
                trim(tick)
            );
        }
    }
    for tick in axis.ticks(PANEL_WIDTH, 34.0) {
        let xx = x(tick);
        for &(top, bottom) in &panels {
            let _ = write!(
                s,
                r##"<line x1="{xx:.1}" y1="{top:.1}" x2="{xx:.1}" y2="{bottom:.1}" stroke="#e2e2e2"/>"##
            );
        }
        let _ = write!(
            s,
            r#"<text x="{xx:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
            axis_bottom + 14.0,
            trim(tick)
        );
    }
    let axis_note = if axis.stretch > 1.0 {
        format!(
            "time (s); shaded: the first {} s after each event, drawn {}× wider",
            trim(super::STRETCH_WINDOW_S),
            trim(axis.stretch)
        )
    } else {
        "time (s)".to_string()
    };
    let _ = write!(
        s,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
        (LEFT + PANEL_RIGHT) / 2.0,
        axis_bottom + 30.0,
        escape(&axis_note)
    );
    let mut side = |label: &str, top: f64, bottom: f64| {
        let mid = (top + bottom) / 2.0;
        let _ = write!(
            s,
            r#"<text x="16" y="{mid:.1}" transform="rotate(-90 16 {mid:.1})" text-anchor="middle">{label}</text>"#
        );
    };
    side("frequency (Hz)", freq_top, freq_bottom);
    side("shed (MW)", shed_top, shed_bottom);
    if !plot.voltage.is_empty() {
        side("voltage (pu)", volt_top, volt_bottom);
    }

    // Levels: drawn across the panel, labelled right of it, labels pushed apart.
    let mut levels: Vec<_> = plot.levels.iter().filter(|l| l.hz.is_finite()).collect();
    levels.sort_by(|a, b| b.hz.total_cmp(&a.hz));
    // Each label in lines that fit the room right of the panel.
    let texts: Vec<Vec<String>> = levels
        .iter()
        .map(|level| {
            let text = match level.kind {
                LevelKind::SupervisedPickup { min_rocof_hz_per_s } => format!(
                    "{} {} Hz if df/dt ≤ −{} Hz/s",
                    level.label,
                    trim(level.hz),
                    trim(min_rocof_hz_per_s)
                ),
                _ => format!("{} {} Hz", level.label, trim(level.hz)),
            };
            wrap(&text, ((RIGHT - 10.0) / CHAR_W) as usize)
        })
        .collect();
    let heights: Vec<f64> = texts.iter().map(|t| 12.0 * t.len() as f64).collect();
    let mut label_y: Vec<f64> = levels.iter().map(|l| yf(l.hz) + 4.0).collect();
    spread(&mut label_y, &heights, freq_top + 4.0, freq_bottom + 30.0);
    for ((level, ly), lines) in levels.iter().zip(&label_y).zip(&texts) {
        let (colour, dash, width, class) = level_style(level.kind);
        let y = yf(level.hz);
        let mut text = String::new();
        for (k, line) in lines.iter().enumerate() {
            let _ = write!(
                text,
                r#"<tspan x="{:.1}" dy="{}">{}</tspan>"#,
                PANEL_RIGHT + 6.0,
                if k == 0 { 0 } else { 12 },
                escape(line)
            );
        }
        let _ = write!(
            s,
            r#"<g class="{class}"><line x1="{LEFT}" y1="{y:.1}" x2="{PANEL_RIGHT}" y2="{y:.1}" stroke="{colour}" stroke-width="{width}" stroke-dasharray="{dash}"/><line x1="{PANEL_RIGHT}" y1="{y:.1}" x2="{:.1}" y2="{:.1}" stroke="{colour}" stroke-width="0.6"/><text x="{:.1}" y="{ly:.1}" fill="{colour}" data-text="{}">{text}</text></g>"#,
            PANEL_RIGHT + 4.0,
            ly - 4.0,
            PANEL_RIGHT + 6.0,
            escape(&lines.join(" "))
        );
    }
    // Event markers and their labels.
    for (e, row) in plot.events.iter().zip(&event_rows) {
        let xx = x(e.at_s);
        let (colour, dash) = match e.style {
            Some(i) => (style(i).colour, "2,2"),
            None => ("#333333", "5,3"),
        };
        let ly = strip_top + ROW * (*row as f64 + 1.0) - 3.0;
        let lx = (xx + 2.0).min(WIDTH - 4.0 - e.label.chars().count() as f64 * CHAR_W);
        let _ = write!(
            s,
            r#"<g class="event"><line x1="{xx:.1}" y1="{:.1}" x2="{xx:.1}" y2="{axis_bottom:.1}" stroke="{colour}" stroke-width="0.9" stroke-dasharray="{dash}"/><path d="M{:.1},{:.1}l4,-6h-8z" fill="{colour}"/><text x="{lx:.1}" y="{ly:.1}" fill="{colour}">{}</text></g>"#,
            ly + 3.0,
            xx - 0.0,
            freq_top,
            escape(&e.label)
        );
    }

    // Frequency lines with their markers.
    for line in &plot.lines {
        let st = style(line.style);
        let pts: Vec<(f64, f64)> = line.points.iter().map(|&(t, f)| (x(t), yf(f))).collect();
        let _ = write!(
            s,
            r#"<g class="trace" data-label="{}"><polyline fill="none" stroke="{}" stroke-width="1.7" stroke-dasharray="{}" points="{}"/>"#,
            escape(&line.label),
            st.colour,
            st.dash,
            polyline(&pts)
        );
        for (mx, my) in along(&pts, 95.0, 14.0 + 23.0 * (line.style % 4) as f64) {
            marker(&mut s, st, mx, my, 3.5, false);
        }
        s.push_str("</g>");
    }

    // Labels keep off the lines: every drawn vertex of a frequency line is taken.
    let mut placer = Placer {
        taken: plot
            .lines
            .iter()
            .flat_map(|l| l.points.iter())
            .map(|&(t, f)| {
                let (px, py) = (x(t), yf(f));
                Rect {
                    x0: px - 1.5,
                    y0: py - 1.5,
                    x1: px + 1.5,
                    y1: py + 1.5,
                }
            })
            .collect(),
    };
    let freq_box = Rect {
        x0: LEFT + 2.0,
        y0: freq_top + 2.0,
        x1: PANEL_RIGHT - 2.0,
        y1: freq_bottom - 2.0,
    };
    if let Some(deadline) = plot.recovery_deadline_s {
        let level = plot
            .levels
            .iter()
            .find(|l| l.kind == LevelKind::Recovery)
            .map(|l| l.hz)
            .unwrap_or(plot.nominal_hz);
        let xx = x(deadline);
        let y = yf(level);
        let text = format!("recover by {} s", trim(deadline));
        let w = text.chars().count() as f64 * CHAR_W;
        let (lx, ly) = placer.place(
            text.chars().count(),
            &[
                (xx - 4.0 - w, y + 14.0),
                (xx + 4.0, y + 14.0),
                (xx - 4.0 - w, y - 6.0),
                (xx + 4.0, y - 6.0),
            ],
            freq_box,
        );
        let _ = write!(
            s,
            r##"<g class="deadline"><line x1="{xx:.1}" y1="{:.1}" x2="{xx:.1}" y2="{:.1}" stroke="#1b5e20" stroke-width="2"/><text x="{lx:.1}" y="{ly:.1}" fill="#1b5e20">{}</text></g>"##,
            y - 14.0,
            y + 14.0,
            escape(&text)
        );
    }
    // Nadirs and peaks.
    for e in &plot.extremes {
        let st = style(e.style);
        let (px, py) = (x(e.at_s), yf(e.hz));
        marker(&mut s, st, px, py, 5.5, true);
        let text = format!("{} {} Hz at {} s", e.what, fix(e.hz, 2), fix(e.at_s, 2));
        let w = text.chars().count() as f64 * CHAR_W;
        let (dy1, dy2) = if e.what == "peak" {
            (-9.0, 18.0)
        } else {
            (18.0, -9.0)
        };
        let (lx, ly) = placer.place(
            text.chars().count(),
            &[
                (px + 8.0, py + dy1),
                (px - 8.0 - w, py + dy1),
                (px + 8.0, py + dy2),
                (px - 8.0 - w, py + dy2),
                (px + 8.0, py + dy1 + ROW),
                (px - 8.0 - w, py + dy1 + ROW),
            ],
            freq_box,
        );
        leader(&mut s, st.colour, (px, py), (lx, ly), text.chars().count());
        let _ = write!(
            s,
            r#"<text class="extreme" x="{lx:.1}" y="{ly:.1}" fill="{}" font-weight="bold">{}</text>"#,
            st.colour,
            escape(&text)
        );
    }
    // Stages that saw their pickup and did not operate.
    for idle in &plot.idle {
        let st = style(idle.style);
        let (px, py) = (x(idle.at_s), yf(idle.hz));
        let text = match plot.lines.iter().find(|l| l.style == idle.style) {
            Some(l) if plot.lines.iter().any(|o| o.point != l.point) => {
                format!("{} ({}) {}", idle.stage, l.point, idle.reason)
            }
            _ => format!("{} {}", idle.stage, idle.reason),
        };
        let w = text.chars().count() as f64 * CHAR_W;
        let (lx, ly) = placer.place(
            text.chars().count(),
            &[
                (px + 10.0, py - 6.0),
                (px + 10.0, py + 14.0),
                (px - 10.0 - w, py - 6.0),
                (px - 10.0 - w, py + 14.0),
                (px + 10.0, py - 6.0 - ROW),
                (px + 10.0, py + 14.0 + ROW),
                (px - 10.0 - w, py - 6.0 - ROW),
                (px - 10.0 - w, py + 14.0 + ROW),
                (px + 10.0, py + 14.0 + 2.0 * ROW),
                (px - 10.0 - w, py + 14.0 + 2.0 * ROW),
            ],
            freq_box,
        );
        leader(&mut s, st.colour, (px, py), (lx, ly), text.chars().count());
        let _ = write!(
            s,
            r#"<g class="idle"><circle cx="{px:.1}" cy="{py:.1}" r="6" fill="none" stroke="{c}" stroke-width="1.4"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{c}" stroke-width="1.4"/><text x="{lx:.1}" y="{ly:.1}" fill="{c}">{}</text></g>"#,
            px - 4.2,
            py + 4.2,
            px + 4.2,
            py - 4.2,
            escape(&text),
            c = st.colour
        );
    }

    // Shed: cumulative by stage (line in the operating point's style, a label per step) and
    // undervoltage drop-outs (thin dotted line, hollow markers).
    let shed_box = Rect {
        x0: LEFT + 2.0,
        y0: shed_top + 2.0,
        x1: PANEL_RIGHT - 2.0,
        y1: shed_bottom - 2.0,
    };
    let end = axis.duration_s;
    for line in &plot.shed {
        let st = style(line.style);
        for (steps, uv) in [(&line.stages, false), (&line.undervoltage, true)] {
            if steps.is_empty() {
                continue;
            }
            let mut pts = vec![(x(0.0), ys(0.0))];
            let mut last = 0.0;
            for step in steps.iter() {
                pts.push((x(step.at_s), ys(last)));
                pts.push((x(step.at_s), ys(step.cumulative_mw)));
                last = step.cumulative_mw;
            }
            pts.push((x(end), ys(last)));
            let (width, dash, class) = if uv {
                (1.2, "1,2", "shed-uv")
            } else {
                (1.8, st.dash, "shed")
            };
            let _ = write!(
                s,
                r#"<g class="{class}"><polyline fill="none" stroke="{}" stroke-width="{width}" stroke-dasharray="{dash}" points="{}"/>"#,
                st.colour,
                polyline(&pts)
            );
            for step in steps.iter() {
                let (px, py) = (x(step.at_s), ys(step.cumulative_mw));
                marker(&mut s, st, px, py, 4.0, !uv);
                let w = step.label.chars().count() as f64 * CHAR_W;
                // Beside the step first, then further along the flat line to its right (a leader
                // line joins a label that had to move).
                let mut candidates = vec![(px - 6.0 - w, py - 4.0)];
                for dx in [6.0, 70.0, 140.0, 210.0, 280.0, 350.0, 420.0] {
                    for dy in [-4.0, 12.0, -4.0 - ROW, 12.0 + ROW] {
                        candidates.push((px + dx, py + dy));
                    }
                }
                candidates.swap(0, 1);
                let (lx, ly) = placer.place(step.label.chars().count(), &candidates, shed_box);
                leader(
                    &mut s,
                    st.colour,
                    (px, py),
                    (lx, ly),
                    step.label.chars().count(),
                );
                let _ = write!(
                    s,
                    r#"<text x="{lx:.1}" y="{ly:.1}" fill="{}">{}</text>"#,
                    st.colour,
                    escape(&step.label)
                );
            }
            s.push_str("</g>");
        }
    }
    if plot
        .shed
        .iter()
        .all(|l| l.stages.is_empty() && l.undervoltage.is_empty())
    {
        let _ = write!(
            s,
            r##"<text x="{:.1}" y="{:.1}" fill="#555555">no load shed</text>"##,
            LEFT + 8.0,
            shed_top + 16.0
        );
    }

    // Voltage.
    for (i, v) in plot.voltage.iter().enumerate() {
        let dash = ["", "6,3", "2,2"][i % 3];
        let mut pts = Vec::new();
        let mut last = 1.0;
        for &(t, pu) in &v.steps {
            pts.push((x(t), yv(last)));
            pts.push((x(t), yv(pu)));
            last = pu;
        }
        pts.push((x(end), yv(last)));
        let lowest = v.steps.iter().map(|p| p.1).fold(1.0, f64::min);
        let _ = write!(
            s,
            r##"<g class="voltage"><polyline fill="none" stroke="#222222" stroke-width="1.6" stroke-dasharray="{dash}" points="{}"/><text x="{:.1}" y="{:.1}">{} (lowest {} pu)</text></g>"##,
            polyline(&pts),
            PANEL_RIGHT + 6.0,
            yv(1.0) + 4.0 + 12.0 * i as f64,
            escape(&v.section),
            trim(lowest)
        );
    }

    for &(top, bottom) in &panels {
        let _ = write!(
            s,
            r##"<rect x="{LEFT}" y="{top:.1}" width="{PANEL_WIDTH:.1}" height="{:.1}" fill="none" stroke="#555555"/>"##,
            bottom - top
        );
    }

    // Legend, below the panels.
    for (k, entry) in legend.iter().enumerate() {
        let col = (k % per_row) as f64;
        let row = (k / per_row) as f64;
        let lx = LEFT + col * 300.0;
        let ly = legend_top + row * 17.0;
        let _ = write!(
            s,
            r#"<g class="legend"><line x1="{lx:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{}" stroke-width="{}" stroke-dasharray="{}"/>"#,
            ly - 4.0,
            lx + 34.0,
            ly - 4.0,
            entry.colour,
            entry.width,
            entry.dash
        );
        if entry.idle {
            let _ = write!(
                s,
                r#"<circle cx="{:.1}" cy="{:.1}" r="5" fill="none" stroke="{c}" stroke-width="1.3"/><line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{c}" stroke-width="1.3"/>"#,
                lx + 17.0,
                ly - 4.0,
                lx + 13.5,
                ly - 0.5,
                lx + 20.5,
                ly - 7.5,
                c = entry.colour
            );
        }
        if let Some(m) = entry.marker {
            marker(
                &mut s,
                Style {
                    colour: entry.colour,
                    dash: "",
                    marker: m,
                },
                lx + 17.0,
                ly - 4.0,
                3.5,
                false,
            );
        }
        let _ = write!(
            s,
            r#"<text x="{:.1}" y="{ly:.1}">{}</text></g>"#,
            lx + 40.0,
            escape(&entry.text)
        );
    }
    s.push_str("</svg>\n");
    s
}

struct LegendEntry {
    /// Draw the crossed-circle mark of a stage that did not operate instead of a line.
    idle: bool,
    colour: &'static str,
    dash: &'static str,
    width: f64,
    marker: Option<Marker>,
    text: String,
}

fn legend_entries(plot: &Plot) -> Vec<LegendEntry> {
    let mut out: Vec<LegendEntry> = plot
        .lines
        .iter()
        .map(|l| {
            let st = style(l.style);
            LegendEntry {
                idle: false,
                colour: st.colour,
                dash: st.dash,
                width: 1.7,
                marker: Some(st.marker),
                text: l.label.clone(),
            }
        })
        .collect();
    let has = |k: fn(LevelKind) -> bool| plot.levels.iter().any(|l| k(l.kind));
    let mut key = |kind: LevelKind, text: &str| {
        let (colour, dash, width, _) = level_style(kind);
        out.push(LegendEntry {
            idle: false,
            colour,
            dash,
            width,
            marker: None,
            text: text.to_string(),
        });
    };
    key(LevelKind::Min, "frequency limit (minimum, maximum)");
    if has(|k| k == LevelKind::Pickup) {
        key(LevelKind::Pickup, "stage pickup");
    }
    if has(|k| matches!(k, LevelKind::SupervisedPickup { .. })) {
        key(
            LevelKind::SupervisedPickup {
                min_rocof_hz_per_s: 0.0,
            },
            "df/dt-supervised stage pickup",
        );
    }
    key(LevelKind::Recovery, "recovery level and deadline");
    if plot.settle.is_some() {
        out.push(LegendEntry {
            idle: false,
            colour: "#5a8f4e",
            dash: "2,2",
            width: 6.0,
            marker: None,
            text: "settling band".into(),
        });
    }
    if plot.shed.iter().any(|l| !l.undervoltage.is_empty()) {
        out.push(LegendEntry {
            idle: false,
            colour: "#333333",
            dash: "1,2",
            width: 1.2,
            marker: None,
            text: "undervoltage drop-out (shed panel)".into(),
        });
    }
    if !plot.idle.is_empty() {
        out.push(LegendEntry {
            idle: true,
            colour: "#333333",
            dash: "",
            width: 0.0,
            marker: None,
            text: "pickup crossed, no trip (reason beside it)".into(),
        });
    }
    out
}

/// Colour, dash, width and class of a level line.
fn level_style(kind: LevelKind) -> (&'static str, &'static str, f64, &'static str) {
    match kind {
        LevelKind::Pickup => ("#555555", "2,3", 1.0, "pickup"),
        LevelKind::SupervisedPickup { .. } => ("#555555", "8,3,1,3", 1.0, "pickup supervised"),
        LevelKind::Min => ("#b00020", "10,4", 1.6, "limit min"),
        LevelKind::Max => ("#b00020", "10,4", 1.6, "limit max"),
        LevelKind::Recovery => ("#1b5e20", "6,3", 1.3, "recovery"),
    }
}

/// The frequency axis: every line, every level (limits included) and the settling band, padded.
fn frequency_range(plot: &Plot) -> (f64, f64) {
    let mut lo = plot.nominal_hz;
    let mut hi = plot.nominal_hz;
    let values = plot
        .lines
        .iter()
        .flat_map(|l| l.points.iter().map(|p| p.1))
        .chain(plot.levels.iter().map(|l| l.hz))
        .chain(plot.settle.iter().flat_map(|s| [s.1, s.2]))
        .filter(|v| v.is_finite());
    for v in values {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    let pad = ((hi - lo) * 0.04).max(0.05);
    (lo - pad, hi + pad)
}

/// Move label baselines (sorted top to bottom) apart by each label's height, within [top, bottom].
fn spread(ys: &mut [f64], heights: &[f64], top: f64, bottom: f64) {
    for k in 0..ys.len() {
        let min = if k == 0 {
            top
        } else {
            ys[k - 1] + heights[k - 1]
        };
        ys[k] = ys[k].max(min);
    }
    for k in (0..ys.len()).rev() {
        let max = if k + 1 == ys.len() {
            bottom - (heights[k] - 12.0)
        } else {
            ys[k + 1] - heights[k]
        };
        ys[k] = ys[k].min(max);
    }
}

/// Split text at spaces into lines of at most `width` characters (a longer word stays whole).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut line = String::new();
    for word in text.split(' ') {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            lines.push(std::mem::take(&mut line));
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    lines.push(line);
    lines
}

/// A thin line from a marker at (px, py) to its label at (lx, ly) (start of the baseline) when the
/// label had to move away from the marker.
fn leader(s: &mut String, colour: &str, (px, py): (f64, f64), (lx, ly): (f64, f64), chars: usize) {
    let w = chars as f64 * CHAR_W;
    // The nearest point of the label's box.
    let nx = px.clamp(lx, lx + w);
    let ny = py.clamp(ly - 10.0, ly + 3.0);
    if ((nx - px).powi(2) + (ny - py).powi(2)).sqrt() > 24.0 {
        let _ = write!(
            s,
            r#"<line class="leader" x1="{px:.1}" y1="{py:.1}" x2="{nx:.1}" y2="{ny:.1}" stroke="{colour}" stroke-width="0.7"/>"#
        );
    }
}

/// Points every `spacing` of x along a polyline, starting at `offset`.
fn along(pts: &[(f64, f64)], spacing: f64, offset: f64) -> Vec<(f64, f64)> {
    let mut out = Vec::new();
    let Some(&(x0, _)) = pts.first() else {
        return out;
    };
    let mut next = x0 + offset;
    for w in pts.windows(2) {
        let ((ax, ay), (bx, by)) = (w[0], w[1]);
        while bx > ax && next >= ax && next <= bx {
            let f = (next - ax) / (bx - ax);
            out.push((next, ay + f * (by - ay)));
            next += spacing;
        }
        if next < ax {
            next = ax + spacing;
        }
    }
    out
}

/// A marker shape at (x, y) of half-size `r`.
fn marker(s: &mut String, st: Style, x: f64, y: f64, r: f64, filled: bool) {
    let fill = if filled { st.colour } else { "#ffffff" };
    let c = st.colour;
    let _ = match st.marker {
        Marker::Circle => write!(
            s,
            r#"<circle cx="{x:.1}" cy="{y:.1}" r="{r:.1}" fill="{fill}" stroke="{c}" stroke-width="1.3"/>"#
        ),
        Marker::Square => write!(
            s,
            r#"<rect x="{:.1}" y="{:.1}" width="{:.1}" height="{:.1}" fill="{fill}" stroke="{c}" stroke-width="1.3"/>"#,
            x - r * 0.9,
            y - r * 0.9,
            r * 1.8,
            r * 1.8
        ),
        Marker::Triangle => write!(
            s,
            r#"<path d="M{x:.1},{:.1}L{:.1},{:.1}H{:.1}Z" fill="{fill}" stroke="{c}" stroke-width="1.3"/>"#,
            y - r,
            x + r,
            y + r * 0.8,
            x - r
        ),
        Marker::TriangleDown => write!(
            s,
            r#"<path d="M{x:.1},{:.1}L{:.1},{:.1}H{:.1}Z" fill="{fill}" stroke="{c}" stroke-width="1.3"/>"#,
            y + r,
            x + r,
            y - r * 0.8,
            x - r
        ),
        Marker::Diamond => write!(
            s,
            r#"<path d="M{x:.1},{:.1}L{:.1},{y:.1}L{x:.1},{:.1}L{:.1},{y:.1}Z" fill="{fill}" stroke="{c}" stroke-width="1.3"/>"#,
            y - r * 1.2,
            x + r,
            y + r * 1.2,
            x - r
        ),
        Marker::Cross => write!(
            s,
            r#"<path d="M{:.1},{:.1}l{:.1},{:.1}m0,{:.1}l{:.1},{:.1}" stroke="{c}" stroke-width="{}"/>"#,
            x - r,
            y - r,
            2.0 * r,
            2.0 * r,
            -2.0 * r,
            -2.0 * r,
            2.0 * r,
            if filled { 2.6 } else { 1.6 }
        ),
        Marker::Plus => write!(
            s,
            r#"<path d="M{:.1},{y:.1}h{:.1}M{x:.1},{:.1}v{:.1}" stroke="{c}" stroke-width="{}"/>"#,
            x - r * 1.2,
            2.4 * r,
            y - r * 1.2,
            2.4 * r,
            if filled { 2.6 } else { 1.6 }
        ),
        Marker::Star => write!(
            s,
            r#"<path d="M{x:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}L{x:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z" fill="{fill}" stroke="{c}" stroke-width="1.2"/>"#,
            y - r * 1.3,
            x + r * 0.4,
            y - r * 0.3,
            x + r * 1.2,
            y + r * 0.9,
            y + r * 0.4,
            x - r * 1.2,
            y + r * 0.9,
            x - r * 0.4,
            y - r * 0.3
        ),
    };
}

fn polyline(points: &[(f64, f64)]) -> String {
    let mut s = String::with_capacity(points.len() * 12);
    for &(x, y) in points {
        if x.is_finite() && y.is_finite() {
            let _ = write!(s, "{x:.1},{y:.1} ");
        }
    }
    s.pop();
    s
}

fn fix(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Escape text for SVG element content and attribute values.
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}
