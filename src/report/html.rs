//! The sign-off report: one self-contained HTML file (inline CSS, inline SVG, no fonts, scripts,
//! images or links to fetch) that a reviewer can read on screen or print on A4 or Letter.
//!
//! It formats results that were already computed — the screening figures, the audit, the
//! verification matrix and one plot per case — and decides nothing: the verdict it states is
//! counted from the matrix rows and the audit's violations. Every text that comes from an input
//! file (ids, names, descriptions, messages) is escaped. The run's time is passed in, so the same
//! inputs and time give the same bytes.

use super::figures;
use super::plot::{self, Plot};
use super::sheet::{self, Sheet};
use crate::input::Warning;
use crate::model::{Plant, Scheme};
use crate::screening::Screening;
use crate::verify::audit::{Audit, AuditRules};
use crate::verify::matrix::Matrix;
use sha2::{Digest, Sha256};
use std::fmt::Write;

/// The caution every report carries, in its own box near the top.
pub const CAUTION: &str = "Simulation results only; settings must be reviewed by a qualified \
protection engineer, coordinated with the grid operator, and conform to local codes.";

/// One input file as the report identifies it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputFile {
    /// `plant`, `cases`, `scheme`, `record` or `record data` (a COMTRADE data file).
    pub role: String,
    /// The path as the report shows it (relative to the working directory).
    pub path: String,
    pub size_bytes: u64,
    /// Lower-case hexadecimal SHA-256 of the file's bytes (FIPS 180-4).
    pub sha256_hex: String,
}

impl InputFile {
    /// Identify a file from the bytes that were parsed.
    pub fn from_bytes(role: &str, path: &str, bytes: &[u8]) -> InputFile {
        InputFile {
            role: role.to_string(),
            path: path.to_string(),
            size_bytes: bytes.len() as u64,
            sha256_hex: sha256_hex(bytes),
        }
    }
}

/// The plot of one case with every operating point it applies to overlaid.
#[derive(Debug, Clone, PartialEq)]
pub struct CasePlot {
    pub case: String,
    pub description: String,
    pub plot: Plot,
}

/// Everything a report shows; all of it computed before.
#[derive(Debug, Clone, Copy)]
pub struct ReportInputs<'a> {
    pub plant: &'a Plant,
    pub scheme: &'a Scheme,
    pub screening: &'a Screening,
    pub audit: &'a Audit,
    pub audit_rules: &'a AuditRules,
    pub matrix: &'a Matrix,
    /// In the cases file's order.
    pub plots: &'a [CasePlot],
    pub files: &'a [InputFile],
    /// The relay setting sheet of the scheme.
    pub sheet: &'a Sheet,
    /// When the run was made, e.g. from [`utc_timestamp`].
    pub generated_utc: &'a str,
    /// The nadir version that made the report.
    pub tool_version: &'a str,
    /// Plausibility warnings and notes of the input files, acknowledged ones included.
    pub warnings: &'a [Warning],
    /// The model against a recorded event, when the report was given a record.
    pub record: Option<&'a super::record::RecordSection>,
}

/// Lower-case hexadecimal SHA-256 of `bytes`.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    let mut s = String::with_capacity(64);
    for b in digest {
        let _ = write!(s, "{b:02x}");
    }
    s
}

/// Seconds since 1970-01-01 00:00:00 UTC as `YYYY-MM-DD HH:MM:SS UTC` (proleptic Gregorian
/// calendar; the day count is H. Hinnant's `civil_from_days`, "chrono-Compatible Low-Level Date
/// Algorithms", 2013).
pub fn utc_timestamp(unix_s: u64) -> String {
    let days = (unix_s / 86_400) as i64;
    let secs = unix_s % 86_400;
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = doy - (153 * mp + 2) / 5 + 1;
    let month = if mp < 10 { mp + 3 } else { mp - 9 };
    let year = yoe + era * 400 + i64::from(month <= 2);
    format!(
        "{year:04}-{month:02}-{day:02} {:02}:{:02}:{:02} UTC",
        secs / 3600,
        (secs % 3600) / 60,
        secs % 60
    )
}

/// What the caption under each plot says its lines are.
pub const PLOT_CAPTION: &str = "Each line is one island's frequency at one operating point \
(sections whose frequency is the same are one island), in its own colour, dash and marker. Red \
dashed lines: the minimum and maximum frequency; green: the recovery level with its deadline and the \
settling band; grey: stage pickups (dash-dot for df/dt-supervised stages). Vertical lines mark each \
event, each breaker-armed stage's trip and each generator tripped by its own protection; a filled \
marker, each line's nadir (and peak above nominal). A circled slash marks a pickup a line crossed \
without the stage operating, with the reason from the run's event log. Lower panel: MW shed, \
cumulative, each step labelled by stage; undervoltage drop-outs dotted. Time axis: the first 5 s \
after each event are drawn wider (shaded), so the part where stages act can be read; the scale is \
stated under the axis.";

/// The whole report as HTML text.
pub fn render(r: &ReportInputs) -> String {
    let mut h = String::with_capacity(256 * 1024);
    let title = format!("UFLS verification report: {}", r.plant.name);
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n<title>{}</title>\n<style>\n{STYLE}</style>\n</head>\n<body>\n",
        esc(&title)
    );
    title_block(&mut h, r);
    contents(&mut h, r);
    h.push_str("<div id=\"warnings\">\n");
    if r.warnings.is_empty() {
        h.push_str("<section class=\"warnings none\">\n<strong>Warnings about the inputs:</strong> none raised.\n</section>\n");
    } else {
        warnings_box(&mut h, r.warnings);
    }
    h.push_str("</div>\n");
    verdict(&mut h, r);
    caution(&mut h);
    inputs(&mut h, r);
    plant_summary(&mut h, r);
    shedding_table(&mut h, r);
    setting_sheet(&mut h, r);
    audit_section(&mut h, r);
    matrix_section(&mut h, r);
    plots(&mut h, r);
    if let Some(rec) = r.record {
        super::record::section(&mut h, rec);
    }
    sign_off(&mut h, r);
    h.push_str("</body>\n</html>\n");
    h
}

const STYLE: &str = r#"body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; font-size: 10.5pt;
  color: #111; margin: 0 auto; padding: 16px 24px; max-width: 1180px; line-height: 1.35; }
h1 { font-size: 18pt; margin: 0 0 4px 0; }
h2 { font-size: 13pt; border-bottom: 1.5px solid #333; padding-bottom: 2px; margin: 22px 0 8px 0; }
h3 { font-size: 11pt; margin: 14px 0 4px 0; }
p { margin: 4px 0 8px 0; }
.meta { color: #333; margin: 0 0 10px 0; }
.meta td { padding: 1px 12px 1px 0; border: none; }
table { border-collapse: collapse; margin: 4px 0 10px 0; font-size: 9pt; }
th, td { border: 1px solid #999; padding: 2px 5px; vertical-align: top; text-align: left; }
th { background: #eee; font-weight: bold; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.id, .nw { white-space: nowrap; }
td.hash { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 8pt; word-break: break-all; }
table.wide { width: 100%; }
table.matrix { font-size: 8pt; }
table.matrix td.msg { min-width: 14em; }
tr.fail td { background: #fde8e6; font-weight: bold; }
tr.fail td, .caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
tr.fail td.result::before { content: "\2716\00a0"; }
td.result { white-space: nowrap; }
.verdict { border: 2px solid #333; padding: 8px 12px; margin: 10px 0; font-size: 11.5pt; }
.verdict.fail { border-color: #a00; border-width: 3px; }
.warnings { border: 3px solid #b35900; background: #fff1e0; padding: 8px 12px; margin: 10px 0;
  -webkit-print-color-adjust: exact; print-color-adjust: exact; break-inside: avoid; page-break-inside: avoid; }
.warnings ul { margin: 4px 0; padding-left: 18px; }
.warnings li { margin: 3px 0; }
.warnings code { font-size: 9pt; }
.caution { border: 2px solid #8a6d00; background: #fff8dc; padding: 8px 12px; margin: 10px 0; }
.caution strong { display: block; margin-bottom: 2px; }
figure { margin: 8px 0 18px 0; break-inside: avoid; page-break-inside: avoid; }
figure svg { width: 100%; height: auto; max-width: 1000px; display: block; border: 1px solid #ccc; }
figcaption { font-size: 9pt; color: #222; margin-top: 3px; max-width: 1000px; }
.signoff td { border: none; padding: 22px 10px 2px 0; }
.signoff .line { border-bottom: 1px solid #000; width: 22em; }
.note { font-size: 9pt; color: #333; }
nav.toc { border: 1px solid #bbb; padding: 4px 14px; margin: 10px 0; font-size: 9.5pt; columns: 2; }
nav.toc h2 { border: none; margin: 4px 0; font-size: 11pt; column-span: all; }
nav.toc ol { margin: 0; padding-left: 20px; }
nav.toc ol.cases { columns: 1; font-size: 9pt; }
nav.toc a { color: #113; text-decoration: none; }
.warnings.none { border: 1px solid #8a4b00; background: #f7f7f7; }
table.sheet { font-size: 8.5pt; }
table.sheet td.blank { min-width: 5em; }
@page { size: landscape; margin: 11mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 9pt; }
  nav.toc a::after { content: ""; }
  table { page-break-inside: auto; }
  tr { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  h2, h3 { break-after: avoid; page-break-after: avoid; }
  figure { break-inside: avoid; page-break-inside: avoid; margin: 4px 0 10px 0; }
  figure svg { width: auto; height: auto; max-height: 158mm; max-width: 100%; }
  .caution, .verdict, .warnings, .signoff-block, nav.toc { break-inside: avoid; page-break-inside: avoid; }
}
"#;

fn title_block(h: &mut String, r: &ReportInputs) {
    let _ = write!(
        h,
        "<header>\n<h1>Under-frequency load shedding: verification report</h1>\n<table class=\"meta\">\n\
<tr><td>Plant</td><td><strong>{}</strong></td></tr>\n<tr><td>Shedding table</td><td><strong>{}</strong></td></tr>\n\
<tr><td>Run made</td><td>{}</td></tr>\n<tr><td>Made with</td><td>nadir {}</td></tr>\n</table>\n</header>\n",
        esc(&r.plant.name),
        esc(&r.scheme.name),
        esc(r.generated_utc),
        esc(r.tool_version)
    );
}

/// The input warnings, above the verdict: open ones first (each with its place, field, value, why
/// and fix), then those acknowledged in the files with their reasons, then notes. Nothing when
/// there are none.
pub fn warnings_box(h: &mut String, warnings: &[Warning]) {
    if warnings.is_empty() {
        return;
    }
    let open: Vec<&Warning> = warnings.iter().filter(|w| w.is_open()).collect();
    let acked: Vec<&Warning> = warnings
        .iter()
        .filter(|w| !w.code.is_note() && w.acknowledged.is_some())
        .collect();
    let notes: Vec<&Warning> = warnings.iter().filter(|w| w.code.is_note()).collect();
    let item = |h: &mut String, w: &Warning| {
        let _ = write!(
            h,
            "<li><code>{}</code> <code>{}</code> = <strong>{}</strong>{}: {}.",
            esc(&w.place()),
            esc(&w.path),
            esc(&w.value),
            if w.code.is_note() {
                String::new()
            } else {
                format!(" [{}]", esc(w.code.name()))
            },
            esc(&w.message),
        );
        if !w.help.is_empty() && !w.code.is_note() {
            let _ = write!(h, " Likely fix: {}.", esc(&w.help));
        }
        match &w.acknowledged {
            Some(reason) if !reason.is_empty() => {
                let _ = write!(h, " Acknowledged in the file: {}.", esc(reason));
            }
            Some(_) => h.push_str(" Acknowledged in the file."),
            None => {}
        }
        h.push_str("</li>\n");
    };
    h.push_str("<section class=\"warnings\">\n");
    if !open.is_empty() {
        let _ = write!(
            h,
            "<strong>Input warnings: {} {} not acknowledged.</strong> Each value below is allowed but looks like a slip; the verdict assumes it is right.\n<ul>\n",
            open.len(),
            plural(open.len(), "value", "values")
        );
        for w in &open {
            item(h, w);
        }
        h.push_str("</ul>\n");
    }
    if !acked.is_empty() {
        let _ = write!(
            h,
            "<strong>Acknowledged input warnings ({}):</strong>\n<ul>\n",
            acked.len()
        );
        for w in &acked {
            item(h, w);
        }
        h.push_str("</ul>\n");
    }
    if !notes.is_empty() {
        h.push_str("<strong>Computed input figures:</strong>\n<ul>\n");
        for w in &notes {
            item(h, w);
        }
        h.push_str("</ul>\n");
    }
    h.push_str("</section>\n");
}

fn verdict(h: &mut String, r: &ReportInputs) {
    let total = r.matrix.rows.len();
    let failed = r.matrix.rows.iter().filter(|x| !x.pass).count();
    let violations = r.audit.violations.len();
    let runs = if failed == 0 {
        format!(
            "All {} case × operating-point {} hold every criterion",
            words(total),
            plural(total, "run", "runs")
        )
    } else {
        format!(
            "{} of {} case × operating-point runs FAIL ({} {})",
            capitalised(&words(failed)),
            words(total),
            words(total - failed),
            if total - failed == 1 {
                "passes"
            } else {
                "pass"
            }
        )
    };
    let audit = if violations == 0 {
        "the audit of the table against the plant's own rules found no violation".to_string()
    } else {
        format!(
            "the audit found {} {} of the plant's own rules",
            words(violations),
            plural(violations, "violation", "violations")
        )
    };
    let ok = failed == 0 && violations == 0;
    let open = r.warnings.iter().filter(|w| w.is_open()).count();
    let assumes = if open == 0 {
        String::new()
    } else {
        format!(
            " It assumes the {} input {} flagged above {} right.",
            words(open),
            plural(open, "value", "values"),
            plural(open, "is", "are")
        )
    };
    let _ = write!(
        h,
        "<section class=\"verdict{}\" id=\"verdict\">\n<strong>Verdict: {}.</strong> {runs}; {audit}. \
({total} runs: {} pass, {failed} fail; {violations} audit {}.){assumes}\n</section>\n",
        if ok { "" } else { " fail" },
        if ok {
            "the table holds every case"
        } else {
            "the table DOES NOT hold"
        },
        total - failed,
        plural(violations, "violation", "violations")
    );
}

fn caution(h: &mut String) {
    let _ = write!(
        h,
        "<section class=\"caution\">\n<strong>Caution</strong>\n{CAUTION} The figures come from a \
frequency-only model (one frequency per island; no voltage or angle stability, no network losses, \
no unbalanced faults) and are study aids; they do not replace a protection study. No setting may \
be applied on the strength of this report alone.\n</section>\n"
    );
}

fn inputs(h: &mut String, r: &ReportInputs) {
    h.push_str("<section id=\"inputs\">\n<h2>Inputs</h2>\n<table class=\"wide\">\n<thead><tr><th>file</th><th>path</th><th>bytes</th><th>SHA-256</th></tr></thead>\n<tbody>\n");
    for f in r.files {
        let _ = writeln!(
            h,
            "<tr><td class=\"id\">{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"hash\">{}</td></tr>",
            esc(&f.role),
            esc(&f.path),
            f.size_bytes,
            esc(&f.sha256_hex)
        );
    }
    let _ = write!(
        h,
        "</tbody>\n</table>\n<p class=\"note\">Tool: nadir {}. A file whose SHA-256 differs from the \
one above is not the file this report verified.</p>\n</section>\n",
        esc(r.tool_version)
    );
}

fn plant_summary(h: &mut String, r: &ReportInputs) {
    let p = r.plant;
    let _ = write!(
        h,
        "<section id=\"plant\">\n<h2>Plant</h2>\n<p>{} bus {}, {} {}, {} {}, {} operating {}; \
nominal frequency {} Hz; {} utility connection.</p>\n",
        p.sections.len(),
        plural(p.sections.len(), "section", "sections"),
        p.generators.len(),
        plural(p.generators.len(), "generator", "generators"),
        p.loads.len(),
        plural(p.loads.len(), "load", "loads"),
        p.operating_points.len(),
        plural(p.operating_points.len(), "point", "points"),
        num(p.nominal_hz, 0),
        if p.utility.is_some() { "with a" } else { "no" }
    );
    h.push_str("<h3>Operating points, before any event</h3>\n<table>\n<thead><tr><th>point</th><th>island (sections)</th><th>utility</th><th>load MW</th><th>generation MW</th><th>import MW</th><th>reserve MW</th><th>E_k MW·s</th><th>H_sys s</th></tr></thead>\n<tbody>\n");
    for pf in &r.screening.operating_points {
        for (i, isl) in pf.islands.iter().enumerate() {
            let point = if i == 0 {
                esc(&pf.operating_point)
            } else {
                String::new()
            };
            let _ = writeln!(
                h,
                "<tr><td class=\"id\">{point}</td><td>{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td></tr>",
                esc(&isl.sections.join(" + ")),
                if isl.on_utility { "connected" } else { "islanded" },
                num(isl.load_mw, 2),
                num(isl.generation_mw, 2),
                num(isl.import_mw, 2),
                num(isl.spinning_reserve_mw, 2),
                num(isl.generator_energy_mws + isl.motor_energy_mws, 1),
                isl.h_sys_s.map(|v| num(v, 2)).unwrap_or_else(|| "—".into())
            );
        }
    }
    h.push_str("</tbody>\n</table>\n<p class=\"note\">Reserve: headroom of the governed machines. E_k: Σ H·S of the online machines plus Σ H·P of motor loads. H_sys: E_k over the online MVA.</p>\n");
    h.push_str("<h3>Acceptance criteria</h3>\n<p>Every case, at every operating point it applies to:</p>\n<ul>\n");
    for c in figures::criteria_words(&p.criteria) {
        let _ = writeln!(h, "<li>{}</li>", esc(&c.words));
    }
    h.push_str("</ul>\n</section>\n");
}

fn shedding_table(h: &mut String, r: &ReportInputs) {
    let a = r.audit;
    h.push_str("<section id=\"table\">\n<h2>Shedding table, in operating order</h2>\n<p class=\"note\">Armed stages first, then frequency stages by falling pickup. Each cell: MW the stage opens at that operating point, and in brackets the cumulative MW, each load counted once however many stages list it. A stage sized from the pre-event flow shows the most it can open (it opens the rank-order part of its loads that covers the flow; the audit's flow-sized note says what, in each case); a stage with setting groups lists each group's settings, and shows 0 MW where a group takes it out of service.</p>\n<table class=\"wide\">\n<thead><tr><th>stage</th><th>trigger</th><th>delay s</th><th>breaker s</th><th>loads (rank)</th>");
    for op in &a.operating_points {
        let _ = write!(h, "<th>{} MW (cum.)</th>", esc(op));
    }
    h.push_str("</tr></thead>\n<tbody>\n");
    for s in &a.order {
        let loads = s
            .loads
            .iter()
            .map(|(id, rank)| format!("{} ({rank})", esc(id)))
            .collect::<Vec<_>>()
            .join(", ");
        let _ = write!(
            h,
            "<tr><td class=\"id\">{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td>{loads}</td>",
            esc(&s.id),
            esc(&s.trigger),
            num(s.delay_s, 2),
            num(s.breaker_s, 2)
        );
        for (mw, cum) in s.mw.iter().zip(&s.cumulative_mw) {
            let _ = write!(h, "<td class=\"n\">{} ({})</td>", num(*mw, 2), num(*cum, 2));
        }
        h.push_str("</tr>\n");
    }
    h.push_str("</tbody>\n</table>\n</section>\n");
}

fn audit_section(h: &mut String, r: &ReportInputs) {
    let rules = r.audit_rules;
    let _ = write!(
        h,
        "<section id=\"audit\">\n<h2>Audit against the plant's own rules</h2>\n<p>Rules: {}.</p>\n<p>Rank order judged in {}.</p>\n",
        esc(&rules.statement()),
        esc(&r.audit.rank_order_judged_in)
    );
    if r.audit.violations.is_empty() {
        h.push_str("<p><strong>Violations: none.</strong></p>\n");
    } else {
        let _ = write!(
            h,
            "<p><strong>{} {}:</strong></p>\n<table class=\"wide\">\n<thead><tr><th>rule</th><th>violation</th></tr></thead>\n<tbody>\n",
            r.audit.violations.len(),
            plural(r.audit.violations.len(), "violation", "violations")
        );
        for v in &r.audit.violations {
            let _ = writeln!(
                h,
                "<tr class=\"fail\"><td class=\"id result\">{}</td><td>{}</td></tr>",
                esc(v.rule),
                esc(&v.message)
            );
        }
        h.push_str("</tbody>\n</table>\n");
    }
    if !r.audit.notes.is_empty() {
        let _ = write!(
            h,
            "<p>{} {}, not violations:</p>\n<ul>\n",
            r.audit.notes.len(),
            plural(r.audit.notes.len(), "note", "notes")
        );
        for n in &r.audit.notes {
            let _ = writeln!(h, "<li>[{}] {}</li>", esc(n.rule), esc(&n.message));
        }
        h.push_str("</ul>\n");
    }
    h.push_str("</section>\n");
}

fn matrix_section(h: &mut String, r: &ReportInputs) {
    let m = r.matrix;
    let failed = m.rows.iter().filter(|x| !x.pass).count();
    let _ = write!(
        h,
        "<section id=\"matrix\">\n<h2>Verification matrix</h2>\n<p>{} case × operating-point runs; {} pass, {failed} fail. Failing rows are marked ✖ FAIL and set in bold.</p>\n",
        m.rows.len(),
        m.rows.len() - failed
    );
    if m.rows.iter().any(|x| x.shedding_intended) {
        let _ = writeln!(h, "<p>{}</p>", esc(crate::verify::matrix::INTENDED_LEGEND));
    }
    let _ = write!(h, "<table class=\"wide matrix\">\n<thead><tr><th>case</th><th>point</th><th>result</th><th>nadir Hz</th><th>at s</th><th>peak Hz</th><th>{}</th><th>recovery s</th><th>shed MW</th><th>UV MW</th><th>shed %</th><th>stages</th><th>cascades</th><th>disturbance ×</th><th>model error %</th><th>failed criterion</th></tr></thead>\n<tbody>\n", esc(&figures::rocof_heading(&r.plant.criteria)));
    for row in &m.rows {
        let (dist, model) = match &row.margins {
            Some(mg) => (
                margin_cell(&mg.disturbance_factor, "×"),
                margin_cell(&mg.model_error_pct, ""),
            ),
            None => ("-".into(), "-".into()),
        };
        let list = |v: &[String]| {
            if v.is_empty() {
                "-".to_string()
            } else {
                v.iter()
                    .map(|id| format!("<span class=\"nw\">{}</span>", esc(id)))
                    .collect::<Vec<_>>()
                    .join(" ")
            }
        };
        let failures = row
            .failures
            .iter()
            .map(|f| esc(&f.message))
            .collect::<Vec<_>>()
            .join("; ");
        // A run that stopped early has no figures: its status is its failure.
        let o = &row.observed;
        let [nadir, at, peak, rocof, recovered] = if row.status.is_none() {
            [
                num(o.nadir_hz, 2),
                num(o.nadir_at_s, 2),
                figures::peak_cell(o),
                num(o.max_rocof_hz_per_s, 2),
                figures::recovery_cell(o),
            ]
        } else {
            [
                super::STOPPED.into(),
                super::NO_FIGURE.into(),
                super::NO_FIGURE.into(),
                super::NO_FIGURE.into(),
                super::NO_FIGURE.into(),
            ]
        };
        let _ = writeln!(
            h,
            "<tr{}><td class=\"id\">{}</td><td class=\"id\">{}</td><td class=\"result\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td>{}</td><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"msg\">{failures}</td></tr>",
            if row.pass { "" } else { " class=\"fail\"" },
            esc(&row.case_label()),
            esc(&row.operating_point),
            if row.pass { "pass" } else { "FAIL" },
            nadir,
            at,
            peak,
            rocof,
            recovered,
            num(row.shed_mw, 2),
            num(row.dropped_mw, 2),
            num(row.shed_pct, 1),
            list(&row.stages_operated),
            list(&row.cascades),
            esc(&dist),
            esc(&model)
        );
    }
    let _ = write!(h, "</tbody>\n</table>\n<p class=\"note\">Margins: disturbance × is how far the case's lost import, generation or load step could grow before a criterion fails (— where the case has no single disturbance to grow); model error % is how much lower every inertia constant and load damping exponent could be. ≥ means the search range ended with the case still holding. {}</p>\n</section>\n", esc(figures::FIGURES_NOTE));
}

fn plots(h: &mut String, r: &ReportInputs) {
    h.push_str("<section id=\"plots\">\n<h2>Frequency after each case</h2>\n");
    let _ = writeln!(h, "<p class=\"note\">{PLOT_CAPTION}</p>");
    for (i, p) in r.plots.iter().enumerate() {
        // The caption repeats the matrix rows of this case, so a printed plot page stands alone.
        let results = r
            .matrix
            .rows
            .iter()
            .filter(|row| row.case == p.case)
            .map(|row| match &row.status {
                None => format!(
                    "{}: nadir {} Hz at {} s, {}",
                    esc(&row.operating_point),
                    num(row.observed.nadir_hz, 2),
                    num(row.observed.nadir_at_s, 2),
                    if row.pass {
                        "holds"
                    } else {
                        "<strong>FAILS</strong>"
                    }
                ),
                Some(status) => format!(
                    "{}: <strong>FAILS</strong>, {}",
                    esc(&row.operating_point),
                    esc(status)
                ),
            })
            .collect::<Vec<_>>()
            .join("; ");
        let _ = write!(
            h,
            "<figure id=\"case-{}\">\n<h3>{}</h3>\n{}<figcaption>{}. {results}.{idle}</figcaption>\n</figure>\n",
            i + 1,
            esc(&p.case),
            plot::svg::render(&p.plot),
            esc(&p.description),
            idle = idle_note(&p.plot)
        );
    }
    h.push_str("</section>\n");
}

/// Stages whose pickup a line crossed without operating, in words, for the figure's caption.
fn idle_note(p: &Plot) -> String {
    if p.idle.is_empty() {
        return String::new();
    }
    let items: Vec<String> = p
        .idle
        .iter()
        .map(|i| {
            let point = p.lines.get(i.style).map(|l| l.point.as_str()).unwrap_or("");
            format!("{} at {point}: {}", esc(&i.stage), esc(&i.reason))
        })
        .collect();
    format!(
        " Pickups crossed without the stage operating: {}.",
        items.join("; ")
    )
}

fn contents(h: &mut String, r: &ReportInputs) {
    h.push_str("<nav class=\"toc\">\n<h2>Contents</h2>\n<ol>\n<li><a href=\"#warnings\">Warnings</a></li>\n<li><a href=\"#verdict\">Verdict</a></li>\n<li><a href=\"#inputs\">Inputs</a></li>\n<li><a href=\"#plant\">Plant, operating points and criteria</a></li>\n<li><a href=\"#table\">Shedding table</a></li>\n<li><a href=\"#sheet\">Relay setting sheet</a></li>\n<li><a href=\"#audit\">Audit</a></li>\n<li><a href=\"#matrix\">Verification matrix</a></li>\n<li><a href=\"#plots\">Frequency after each case</a><ol class=\"cases\">\n");
    for (i, p) in r.plots.iter().enumerate() {
        let _ = writeln!(
            h,
            "<li><a href=\"#case-{}\">{}</a></li>",
            i + 1,
            esc(&p.case)
        );
    }
    h.push_str("</ol></li>\n");
    if r.record.is_some() {
        h.push_str("<li><a href=\"#record\">Model against a recorded event</a></li>\n");
    }
    h.push_str("<li><a href=\"#sign-off\">Review and sign-off</a></li>\n</ol>\n</nav>\n");
}

fn setting_sheet(h: &mut String, r: &ReportInputs) {
    let _ = write!(
        h,
        "<section id=\"sheet\">\n<h2>Relay setting sheet</h2>\n<p class=\"note\">One row per element a technician sets, in the scheme file's order (the same rows as <code>nadir sheet</code>). Frequency measurement lag: {} s for every stage. The as-left value and initials are filled in on site.</p>\n{}</section>\n",
        r.sheet.frequency_lag_s,
        sheet::html_table(r.sheet)
    );
}

fn sign_off(h: &mut String, r: &ReportInputs) {
    let _ = write!(
        h,
        "<section id=\"sign-off\" class=\"signoff-block\">\n<h2>Review and sign-off</h2>\n<p>I have reviewed the \
shedding table <strong>{}</strong> for <strong>{}</strong> against the inputs identified above by their \
SHA&#8209;256, and the results in this report.</p>\n<table class=\"signoff\">\n<tbody>\n\
<tr><td>Reviewed by (name)</td><td class=\"line\"></td></tr>\n\
<tr><td>Qualification / role</td><td class=\"line\"></td></tr>\n\
<tr><td>Date</td><td class=\"line\"></td></tr>\n\
<tr><td>Signature</td><td class=\"line\"></td></tr>\n\
<tr><td>Grid operator coordination (reference)</td><td class=\"line\"></td></tr>\n\
<tr><td>Remarks</td><td class=\"line\"></td></tr>\n\
</tbody>\n</table>\n<p class=\"note\">{CAUTION}</p>\n</section>\n",
        esc(&r.scheme.name),
        esc(&r.plant.name)
    );
}

pub use super::figures::margin_cell;

/// A fixed-decimal number (the one rounding rule, `figures::fixed`).
fn num(v: f64, decimals: usize) -> String {
    figures::fixed(v, decimals)
}

fn plural<'s>(n: usize, one: &'s str, many: &'s str) -> &'s str {
    if n == 1 {
        one
    } else {
        many
    }
}

fn capitalised(word: &str) -> String {
    let mut c = word.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

/// Small counts in words, larger ones in digits.
fn words(n: usize) -> String {
    const W: [&str; 13] = [
        "no", "one", "two", "three", "four", "five", "six", "seven", "eight", "nine", "ten",
        "eleven", "twelve",
    ];
    W.get(n).map(|w| w.to_string()).unwrap_or(n.to_string())
}

/// Escape text for HTML element content and quoted attribute values.
pub fn esc(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sha256_matches_the_fips_180_2_examples() {
        // FIPS 180-2, appendix B.1 ("abc") and the digest of the empty message (NIST CSRC example values).
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }

    #[test]
    fn timestamps_follow_the_gregorian_calendar() {
        assert_eq!(utc_timestamp(0), "1970-01-01 00:00:00 UTC");
        // 2000-02-29 exists (400-year rule) and 2000-03-01 follows it: 11 016 and 11 017 days
        // after the epoch [D].
        assert_eq!(utc_timestamp(11_016 * 86_400), "2000-02-29 00:00:00 UTC");
        assert_eq!(
            utc_timestamp(11_017 * 86_400 + 3_661),
            "2000-03-01 01:01:01 UTC"
        );
        // 2^31 seconds: the 32-bit time_t rollover instant, 2038-01-19 03:14:08 UTC.
        assert_eq!(utc_timestamp(1 << 31), "2038-01-19 03:14:08 UTC");
    }

    #[test]
    fn text_from_input_files_is_escaped() {
        assert_eq!(
            esc(r#"<script>alert('x') & "y"</script>"#),
            "&lt;script&gt;alert(&#39;x&#39;) &amp; &quot;y&quot;&lt;/script&gt;"
        );
    }
}
