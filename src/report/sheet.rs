//! The relay setting sheet: one row per element a site technician sets, from the scheme exactly as
//! validated — under-frequency pickup and delay, df/dt supervision with its measurement window,
//! breaker-armed stages with the breaker that arms them, over-frequency stages with the generator
//! they trip or run back — with the loads each stage opens (or the generator it acts on), the MW
//! that is at each operating point, and blank columns for the as-left value and initials.
//!
//! A breaker-armed stage sized from the pre-event flow gets an `allowance` column (its setting)
//! and says in its logic how it picks its loads, which it lists in rank order. With setting
//! groups, every stage has one set of rows per group (and one for the points in no group), with
//! a `setting group` column; a stage out of service in a group has one row saying so, and the MW
//! columns are filled at the group's own points only.
//!
//! Written as CSV for spreadsheets, Markdown, a printable HTML page, and as a table inside the
//! report. Setting values are written in Rust's shortest round-trip form (the value read from the
//! scheme file, `49.2`, not `49.20000000000000284`), so the CSV reads back to the same scheme.

use crate::model::{Allowance, BreakerRef, OverAction, Plant, Scheme, Sizing, Stage, StageTrigger};
use std::fmt::Write;

/// What a row sets.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Element {
    UnderFrequency,
    DfDtSupervision,
    BreakerArmed,
    OverFrequency,
}

impl Element {
    /// The words in the sheet's `element` column.
    pub fn words(self) -> &'static str {
        match self {
            Element::UnderFrequency => "under-frequency",
            Element::DfDtSupervision => "df/dt supervision",
            Element::BreakerArmed => "breaker-armed",
            Element::OverFrequency => "over-frequency",
        }
    }
}

/// One element of one stage.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub stage: String,
    /// The setting group these settings belong to, with its points ("island (island-a,
    /// island-b)"); empty when the scheme has no setting groups.
    pub group: String,
    /// A flow-sized stage's allowance as set ("2.0 MW", "50.0 % of spinning reserve").
    pub allowance: Option<String>,
    pub element: Element,
    pub pickup_hz: Option<f64>,
    /// The breaker whose opening starts a breaker-armed stage.
    pub armed_by: Option<String>,
    pub delay_s: Option<f64>,
    /// df/dt supervision: the stage operates only while frequency falls at least this fast.
    pub dfdt_fall_hz_per_s: Option<f64>,
    pub dfdt_window_s: Option<f64>,
    pub breaker_s: Option<f64>,
    /// Load ids the stage opens (empty on a supervision row: the stage's row lists them).
    pub opens: Vec<String>,
    /// MW of those loads at each operating point (in the plant's order); `None` at points
    /// where another setting group is in force.
    pub mw: Vec<Option<f64>>,
    /// How the element works with the others, in words.
    pub logic: String,
}

/// The whole sheet.
#[derive(Debug, Clone, PartialEq)]
pub struct Sheet {
    pub plant: String,
    pub scheme: String,
    /// Operating point ids, the MW columns' order.
    pub points: Vec<String>,
    /// The frequency measurement's lag, seconds (a relay setting for every stage).
    pub frequency_lag_s: f64,
    pub rows: Vec<Row>,
    /// The scheme has setting groups: the `setting group` column is shown.
    pub grouped: bool,
    /// Some stage is sized from the pre-event flow: the `allowance` column is shown.
    pub sized: bool,
}

/// The sheet of `scheme` on `plant`, stages in the scheme file's order; with setting groups,
/// each stage's rows for every group in the file's order of groups, then for the points in no
/// group.
pub fn sheet(plant: &Plant, scheme: &Scheme) -> Sheet {
    let points: Vec<String> = plant
        .operating_points
        .iter()
        .map(|p| p.id.clone())
        .collect();
    let n = plant.operating_points.len();
    let grouped = !scheme.groups.is_empty();
    let by_group = scheme.points_by_group(n);
    let mut rows = Vec::new();
    for st in &scheme.stages {
        if !grouped {
            stage_rows(
                plant,
                scheme,
                st,
                String::new(),
                &(0..n).collect::<Vec<_>>(),
                &mut rows,
            );
            continue;
        }
        for (group, at) in &by_group {
            let ids: Vec<&str> = at
                .iter()
                .map(|&op| plant.operating_points[op].id.as_str())
                .collect();
            let label = match group {
                Some(g) => format!("{} ({})", scheme.groups[*g].id, ids.join(", ")),
                None => format!("no group ({})", ids.join(", ")),
            };
            match st.in_group(*group) {
                Some(held) => stage_rows(plant, scheme, &held, label, at, &mut rows),
                None => rows.push(Row {
                    stage: st.id.clone(),
                    group: label,
                    element: match st.trigger {
                        StageTrigger::Frequency { .. } => Element::UnderFrequency,
                        StageTrigger::Breaker(_) => Element::BreakerArmed,
                    },
                    allowance: None,
                    pickup_hz: None,
                    armed_by: None,
                    delay_s: None,
                    dfdt_fall_hz_per_s: None,
                    dfdt_window_s: None,
                    breaker_s: None,
                    opens: Vec::new(),
                    mw: Vec::new(),
                    logic: "out of service in this setting group".to_string(),
                }),
            }
        }
    }
    for o in &scheme.over_frequency {
        let g = o.action.generator();
        let gen = &plant.generators[g];
        let (opens, mw, what) = match o.action {
            OverAction::Trip { .. } => (
                format!("generator {} (trip)", gen.id),
                plant
                    .operating_points
                    .iter()
                    .map(|op| Some(if op.online[g] { op.output_mw[g] } else { 0.0 }))
                    .collect(),
                format!("trips generator {}", gen.id),
            ),
            OverAction::RunBack { mw, .. } => (
                format!("generator {} (run back {} MW)", gen.id, setting(mw)),
                plant
                    .operating_points
                    .iter()
                    .map(|op| Some(if op.online[g] { mw } else { 0.0 }))
                    .collect(),
                format!("runs generator {} back by {} MW", gen.id, setting(mw)),
            ),
        };
        rows.push(Row {
            stage: o.id.clone(),
            group: String::new(),
            allowance: None,
            element: Element::OverFrequency,
            pickup_hz: Some(o.pickup_hz),
            armed_by: None,
            delay_s: Some(o.delay_s),
            dfdt_fall_hz_per_s: None,
            dfdt_window_s: None,
            breaker_s: Some(o.breaker_s),
            opens: vec![opens],
            mw,
            logic: format!(
                "{what} when above {} Hz for {} s (MW columns: generation it removes)",
                setting(o.pickup_hz),
                setting(o.delay_s)
            ),
        });
    }
    Sheet {
        plant: plant.name.clone(),
        scheme: scheme.name.clone(),
        points,
        frequency_lag_s: scheme.measurement.frequency_lag_s,
        rows,
        grouped,
        sized: scheme.stages.iter().any(|s| {
            matches!(s.sizing, Sizing::Flow(_))
                || s.groups.iter().any(|g| matches!(g.sizing, Sizing::Flow(_)))
        }),
    }
}

/// The rows of one stage with the settings `st` holds, MW filled at the operating points `at`.
fn stage_rows(
    plant: &Plant,
    scheme: &Scheme,
    st: &Stage,
    group: String,
    at: &[usize],
    rows: &mut Vec<Row>,
) {
    // A flow-sized stage lists its loads in the order it takes them: by rank, then as listed.
    let mut listed = st.sheds.clone();
    if matches!(st.sizing, Sizing::Flow(_)) {
        listed.sort_by_key(|&l| plant.loads[l].rank);
    }
    let opens: Vec<String> = listed.iter().map(|&l| plant.loads[l].id.clone()).collect();
    let mw: Vec<Option<f64>> = plant
        .operating_points
        .iter()
        .enumerate()
        .map(|(k, op)| {
            at.contains(&k)
                .then(|| st.sheds.iter().map(|&l| op.load_mw[l]).sum())
        })
        .collect();
    match st.trigger {
        StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } => {
            rows.push(Row {
                stage: st.id.clone(),
                group: group.clone(),
                element: Element::UnderFrequency,
                allowance: None,
                pickup_hz: Some(pickup_hz),
                armed_by: None,
                delay_s: Some(st.delay_s),
                dfdt_fall_hz_per_s: None,
                dfdt_window_s: None,
                breaker_s: Some(st.breaker_s),
                opens,
                mw,
                logic: match min_rocof_hz_per_s {
                    Some(_) => format!(
                        "trips when below {} Hz for {} s while the df/dt element is picked up",
                        setting(pickup_hz),
                        setting(st.delay_s)
                    ),
                    None => format!(
                        "trips when below {} Hz for {} s",
                        setting(pickup_hz),
                        setting(st.delay_s)
                    ),
                },
            });
            if let Some(rate) = min_rocof_hz_per_s {
                rows.push(Row {
                    stage: st.id.clone(),
                    group,
                    element: Element::DfDtSupervision,
                    allowance: None,
                    pickup_hz: None,
                    armed_by: None,
                    delay_s: None,
                    dfdt_fall_hz_per_s: Some(rate),
                    dfdt_window_s: Some(scheme.measurement.rocof_window_s),
                    breaker_s: None,
                    opens: Vec::new(),
                    mw: Vec::new(),
                    logic: format!(
                        "picked up while df/dt ≤ −{} Hz/s over {} s; AND with the under-frequency element",
                        setting(rate),
                        setting(scheme.measurement.rocof_window_s)
                    ),
                });
            }
        }
        StageTrigger::Breaker(b) => {
            let name = breaker_name(plant, b);
            let trips = format!("trips {} s after breaker {name} opens", setting(st.delay_s));
            let (allowance, logic) = match st.sizing {
                Sizing::All => (None, trips),
                Sizing::Flow(a) => {
                    let flow = match b {
                        BreakerRef::Utility => "the import",
                        BreakerRef::Generator(_) => "the machine's output",
                        BreakerRef::Tie(_) => "the flow into its loads' side",
                    };
                    let less = match a {
                        Allowance::Mw(mw) => format!("{} MW", setting(mw)),
                        Allowance::ReservePct(pct) => {
                            format!("{} % of the spinning reserve", setting(pct))
                        }
                    };
                    (
                        Some(less.clone()),
                        format!(
                            "{trips}, opening in the order listed the fewest loads whose MW covers {flow} through {name} just before it opened, less {less}; opens nothing when that flow was the other way"
                        ),
                    )
                }
            };
            rows.push(Row {
                stage: st.id.clone(),
                group,
                element: Element::BreakerArmed,
                allowance,
                pickup_hz: None,
                armed_by: Some(name.clone()),
                delay_s: Some(st.delay_s),
                dfdt_fall_hz_per_s: None,
                dfdt_window_s: None,
                breaker_s: Some(st.breaker_s),
                opens,
                mw,
                logic,
            });
        }
    }
}

/// The name a case or scheme file uses for a breaker.
pub fn breaker_name(plant: &Plant, b: BreakerRef) -> String {
    match b {
        BreakerRef::Utility => plant
            .utility
            .as_ref()
            .map_or_else(|| "utility".to_string(), |u| u.breaker_id.clone()),
        BreakerRef::Tie(i) => plant.ties[i].id.clone(),
        BreakerRef::Generator(g) => plant.generators[g].id.clone(),
    }
}

/// Column titles, in order (the MW columns are `MW at POINT`).
pub fn header(sheet: &Sheet) -> Vec<String> {
    let mut h: Vec<String> = vec!["stage".to_string()];
    if sheet.grouped {
        h.push("setting group".to_string());
    }
    h.extend(["element", "pickup Hz", "armed by breaker"].map(String::from));
    if sheet.sized {
        h.push("allowance".to_string());
    }
    h.extend(
        [
            "delay s",
            "df/dt fall at least Hz/s",
            "df/dt window s",
            "breaker s",
            "opens (loads)",
        ]
        .map(String::from),
    );
    h.extend(sheet.points.iter().map(|p| format!("MW at {p}")));
    h.extend(["logic", "as-left value", "initials"].map(String::from));
    h
}

/// The cells of a row, as in [`header`] (settings in shortest round-trip form, MW to 0.01; no
/// MW at a point where another setting group is in force).
pub fn cells(sheet: &Sheet, row: &Row) -> Vec<String> {
    let points = sheet.points.len();
    let opt = |v: Option<f64>| v.map(setting).unwrap_or_default();
    let mut c = vec![row.stage.clone()];
    if sheet.grouped {
        c.push(row.group.clone());
    }
    c.extend([
        row.element.words().to_string(),
        opt(row.pickup_hz),
        row.armed_by.clone().unwrap_or_default(),
    ]);
    if sheet.sized {
        c.push(row.allowance.clone().unwrap_or_default());
    }
    c.extend([
        opt(row.delay_s),
        opt(row.dfdt_fall_hz_per_s),
        opt(row.dfdt_window_s),
        opt(row.breaker_s),
        row.opens.join("; "),
    ]);
    if row.mw.is_empty() {
        c.extend(std::iter::repeat_n(String::new(), points));
    } else {
        c.extend(
            row.mw
                .iter()
                .map(|v| v.map(|v| super::figures::fixed(v, 2)).unwrap_or_default()),
        );
    }
    c.extend([row.logic.clone(), String::new(), String::new()]);
    c
}

/// A setting in its shortest round-trip form with at least one decimal (`49.0`, `0.15`, `0.0375`):
/// exact, unlike the rounded `figures::setting` of the tables, because a technician sets this value.
pub fn setting(v: f64) -> String {
    let s = v.to_string();
    if s.contains(['.', 'e', 'E']) || !v.is_finite() {
        s
    } else {
        format!("{s}.0")
    }
}

/// The sheet as CSV (RFC 4180). Text cells go through [`super::output::csv_cell`] (the one CSV
/// injection rule); numbers nadir formats itself are written as they are.
pub fn csv(sheet: &Sheet) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    let _ = w.write_record(header(sheet).iter().map(|c| guard(c)));
    for row in &sheet.rows {
        let _ = w.write_record(cells(sheet, row).iter().map(|c| guard(c)));
    }
    String::from_utf8(w.into_inner().unwrap_or_default()).unwrap_or_default()
}

fn guard(cell: &str) -> String {
    if cell.parse::<f64>().is_ok() {
        cell.to_string()
    } else {
        super::output::csv_cell(cell)
    }
}

/// The sheet as a Markdown table with a heading.
pub fn markdown(sheet: &Sheet) -> String {
    let mut s = format!(
        "# Relay setting sheet: {}\n\nPlant: {}. Frequency measurement lag: {} s (every stage).\n\n",
        md(&sheet.scheme),
        md(&sheet.plant),
        setting(sheet.frequency_lag_s)
    );
    let h = header(sheet);
    let _ = writeln!(
        s,
        "| {} |",
        h.iter().map(|c| md(c)).collect::<Vec<_>>().join(" | ")
    );
    let _ = writeln!(s, "|{}", "---|".repeat(h.len()));
    for row in &sheet.rows {
        let c = cells(sheet, row);
        let _ = writeln!(
            s,
            "| {} |",
            c.iter().map(|c| md(c)).collect::<Vec<_>>().join(" | ")
        );
    }
    let _ = write!(
        s,
        "\nChecked by (name) ____________________  Date __________  Signature ____________________\n\n{}\n",
        super::html::CAUTION
    );
    s
}

fn md(text: &str) -> String {
    text.replace('|', "\\|").replace('\n', " ")
}

/// The sheet as an HTML table (for the report and the printable page).
pub fn html_table(sheet: &Sheet) -> String {
    use super::html::esc;
    let mut s = String::from("<table class=\"wide sheet\">\n<thead><tr>");
    for h in header(sheet) {
        let _ = write!(s, "<th>{}</th>", esc(&h));
    }
    s.push_str("</tr></thead>\n<tbody>\n");
    let points = sheet.points.len();
    // Column positions shift by the optional group and allowance columns.
    let g = usize::from(sheet.grouped);
    let a = usize::from(sheet.sized);
    let opens_at = 8 + g + a;
    let numeric = |k: usize| {
        k == 2 + g
            || (4 + g + a..opens_at).contains(&k)
            || (opens_at + 1..opens_at + 1 + points).contains(&k)
    };
    for row in &sheet.rows {
        s.push_str("<tr>");
        for (k, c) in cells(sheet, row).iter().enumerate() {
            let class = if numeric(k) {
                " class=\"n\""
            } else if k > opens_at + 1 + points {
                " class=\"blank\""
            } else {
                ""
            };
            let text = if k == opens_at {
                row.opens
                    .iter()
                    .map(|o| esc(o))
                    .collect::<Vec<_>>()
                    .join(", ")
            } else {
                esc(c)
            };
            let _ = write!(s, "<td{class}>{text}</td>");
        }
        s.push_str("</tr>\n");
    }
    s.push_str("</tbody>\n</table>\n");
    s
}

/// A printable HTML page holding the sheet alone (A4 or Letter, landscape).
pub fn html_page(sheet: &Sheet) -> String {
    use super::html::{esc, CAUTION};
    format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>Relay setting sheet: {scheme}</title>\n<style>\n{STYLE}</style>\n</head>\n<body>\n\
<h1>Relay setting sheet</h1>\n<p><strong>{scheme}</strong> on <strong>{plant}</strong>. Frequency measurement lag: {lag} s (every stage). \
One row per element to set; the as-left value and initials are filled in on site.</p>\n{table}\
<table class=\"sign\"><tr><td>Set and checked by (name)</td><td class=\"line\"></td><td>Date</td><td class=\"line short\"></td><td>Signature</td><td class=\"line\"></td></tr></table>\n\
<p class=\"note\">{CAUTION}</p>\n</body>\n</html>\n",
        scheme = esc(&sheet.scheme),
        plant = esc(&sheet.plant),
        lag = sheet.frequency_lag_s,
        table = html_table(sheet),
    )
}

const STYLE: &str = r#"body { font-family: "DejaVu Sans", Arial, sans-serif; font-size: 10pt; margin: 16px; color: #111; }
h1 { font-size: 15pt; margin: 0 0 6px 0; }
table { border-collapse: collapse; margin: 8px 0; }
th, td { border: 1px solid #777; padding: 3px 5px; text-align: left; vertical-align: top; }
th { background: #eee; font-size: 9pt; }
td.n { text-align: right; white-space: nowrap; }
td.blank { min-width: 6em; }
table.wide { width: 100%; }
table.sign td { border: none; padding: 18px 8px 2px 0; white-space: nowrap; }
table.sign td.line { border-bottom: 1px solid #000; width: 16em; }
table.sign td.line.short { width: 8em; }
.note { font-size: 8.5pt; color: #333; }
@page { size: landscape; margin: 10mm; }
@media print { body { margin: 0; } tr { break-inside: avoid; } thead { display: table-header-group; } }
"#;
