//! `nadir verify`: replay every case at every operating point it applies to and print the matrix,
//! with margins; exit 1 when any row fails.

use super::check::{finish, fmt};
use super::{load, Outcome};
use nadir::model::{Criteria, Plant};
use nadir::report::figures::{
    criteria_words, peak_cell, recovery_cell, rocof_heading, setting, FIGURES_NOTE,
};
use nadir::report::output::{csv_cell, verify_document, MarginOut};
use nadir::verify::margins::Margin;
use nadir::verify::matrix::{self, Matrix, Row, VerifyConfig};
use std::io::IsTerminal;
use std::path::PathBuf;
use tabled::builder::Builder;
use tabled::settings::object::{Columns, Rows};
use tabled::settings::{Alignment, Span, Style};

/// Prove a shedding scheme against every case and operating point.
#[derive(Debug, clap::Args)]
pub struct VerifyArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML).
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// Cases file (YAML).
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Skip the margin searches (about fifteen extra runs per row) for a quick look: the verdict
    /// then says the required margins were not judged. Refused when the plant file itself
    /// writes a required margin.
    #[arg(long)]
    pub no_margins: bool,
    /// Every figure of a run on one line (wider than 120 columns): nadir and peak times,
    /// shed %, cascades and the failed criteria in the table.
    #[arg(long)]
    pub wide: bool,
}

/// How `verify` writes its matrix.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Plain-text table.
    Table,
    /// One JSON document (shape: `nadir schema`, verify-output.schema.json).
    Json,
    /// One CSV row per case and operating point.
    Csv,
}

/// The closing lines of every table output.
pub const CAUTION: &str =
    "Simulation results only; settings must be reviewed by a qualified protection \
engineer, coordinated with the grid operator, and conform to local codes.";

pub fn run(args: VerifyArgs) -> anyhow::Result<Outcome> {
    let plant = load::plant(&args.plant)?;
    let cases = load::cases(&args.cases, &plant)?;
    let scheme = load::scheme(&args.scheme, &plant)?;
    refuse_skipped_margins(args.no_margins, &plant, &args.plant)?;
    let config = VerifyConfig {
        margins: !args.no_margins,
        ..VerifyConfig::default()
    };
    let total = matrix::pairs(&cases).len() as u64;
    let bar = progress_bar(total);
    let m = matrix::verify(&plant, &cases, &scheme, &config, &|| bar.inc(1));
    bar.finish_and_clear();
    let text = match args.format {
        Format::Table => {
            let mut t = render_table(&m, &plant, &scheme.name, args.wide);
            if let Some(caveat) = load::verdict_caveat() {
                t.push_str(&caveat);
                t.push('\n');
            }
            t
        }
        Format::Json => {
            let doc = verify_document(
                &m,
                &plant,
                &scheme,
                env!("CARGO_PKG_VERSION"),
                &load::warnings_seen(),
            );
            serde_json::to_string_pretty(&doc)? + "\n"
        }
        Format::Csv => render_csv(&m, &plant)?,
    };
    super::write_stdout(&text)?;
    Ok(if m.all_pass() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

/// `--no-margins` on a plant whose file writes a required margin would print a verdict that
/// never judged it: refused (exit 2) with the requirement and the fix. Margins that come from the
/// defaults may be skipped for a quick look; the verdict then says they were not judged.
pub fn refuse_skipped_margins(
    no_margins: bool,
    plant: &nadir::model::Plant,
    path: &std::path::Path,
) -> anyhow::Result<()> {
    let c = &plant.criteria;
    if !no_margins || !c.margins_required() || !c.margins_written {
        return Ok(());
    }
    let mut wanted = Vec::new();
    if c.required_disturbance_factor > 1.0 {
        wanted.push(format!(
            "disturbance_factor {}",
            fmt(c.required_disturbance_factor, 2)
        ));
    }
    if c.required_model_error_pct > 0.0 {
        wanted.push(format!(
            "model_error_pct {}",
            fmt(c.required_model_error_pct, 0)
        ));
    }
    anyhow::bail!(
        "--no-margins: {} requires margins (criteria.required_margin: {}), so a run without the \
margin searches could not judge every criterion; leave out --no-margins",
        path.display(),
        wanted.join(", ")
    )
}

/// A progress bar on stderr, hidden when stderr is not a terminal.
pub fn progress_bar(total: u64) -> indicatif::ProgressBar {
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new(total);
    if let Ok(style) =
        indicatif::ProgressStyle::with_template("{prefix} {bar:40} {pos}/{len} runs {elapsed}")
    {
        bar.set_style(style);
    }
    bar.set_prefix("replaying");
    bar
}

pub use nadir::report::figures::margin_cell;
pub use nadir::report::{NO_FIGURE, STOPPED};

/// The widest a terminal table is laid out by default (`--wide` lifts it).
pub const TERMINAL_COLUMNS: usize = 120;

/// The matrix for a terminal: `wide` gives every figure in one row per run (today's full view);
/// otherwise a table that fits [`TERMINAL_COLUMNS`] for ids of demo length (rows grouped under
/// their case; the nadir time, cascades and failure texts below the table). Then the verdict,
/// the criteria in words, the notes and the caution.
pub fn render_table(m: &Matrix, plant: &Plant, scheme: &str, wide: bool) -> String {
    let table = if wide {
        wide_table(m, &plant.criteria)
    } else {
        narrow_table(m, &plant.criteria)
    };
    let mut out = format!("Verification of {scheme} on {}\n{table}\n", plant.name);
    if !wide {
        let failing: Vec<&Row> = m.rows.iter().filter(|r| !r.pass).collect();
        if !failing.is_empty() {
            out.push_str("Failed criteria:\n");
            for r in failing {
                let text = format!(
                    "{} at {}: {}",
                    r.case,
                    r.operating_point,
                    r.failures
                        .iter()
                        .map(|f| f.message.as_str())
                        .collect::<Vec<_>>()
                        .join("; ")
                );
                out.push_str(&wrap_text(&text, "  ", "    "));
            }
        }
        let cascading: Vec<&Row> = m.rows.iter().filter(|r| !r.cascades.is_empty()).collect();
        if !cascading.is_empty() {
            out.push_str(
                "Generators tripped by their own protection (cascades; each run went on without them):\n",
            );
            for r in cascading {
                let text = format!(
                    "{} at {}: {}",
                    r.case,
                    r.operating_point,
                    r.cascade_causes.join(", ")
                );
                out.push_str(&wrap_text(&text, "  ", "    "));
            }
        }
    }
    let failed = m.rows.iter().filter(|r| !r.pass).count();
    let unjudged = m.rows.iter().all(|r| r.margins.is_none()) && plant.criteria.margins_required();
    out.push_str(&if failed == 0 && unjudged {
        wrap_text(
            &format!(
                "All {} case × operating-point runs hold every criterion judged; the required \
margins were NOT judged (--no-margins), so this is not a full pass.",
                m.rows.len()
            ),
            "",
            "",
        )
    } else if failed == 0 {
        format!(
            "All {} case × operating-point runs hold every criterion.\n",
            m.rows.len()
        )
    } else {
        format!(
            "{failed} of {} case × operating-point runs FAIL.\n",
            m.rows.len()
        )
    });
    out.push_str("Criteria, for every case at every operating point it applies to:\n");
    for c in criteria_words(&plant.criteria) {
        out.push_str(&wrap_text(&c.words, "  - ", "    "));
    }
    if unjudged {
        let c = &plant.criteria;
        out.push_str(&wrap_text(
            &format!(
                "Margins were not searched (--no-margins): the required margins (disturbance {}×, \
model error {} %, the defaults: docs/files.md) are unchecked.",
                fmt(c.required_disturbance_factor, 2),
                fmt(c.required_model_error_pct, 0)
            ),
            "",
            "",
        ));
    } else if m.rows.iter().all(|r| r.margins.is_none()) {
        out.push_str(&wrap_text(
            "Margins were not searched (--no-margins); the plant requires none.",
            "",
            "",
        ));
    }
    out.push_str(&wrap_text(&format!("Figures: {FIGURES_NOTE}"), "", ""));
    out.push_str(&wrap_text(
        "Margins: disturbance × is how far the case's lost import, generation or load step could \
grow before a criterion fails (— where the case has none to grow); model error % is how much \
lower every inertia constant and load frequency exponent could be; ≥ means the search ended with \
the case still holding.",
        "",
        "",
    ));
    if !wide {
        out.push_str("--wide shows every figure of a run on one line.\n");
    }
    out.push_str(&wrap_text(CAUTION, "", ""));
    out
}

/// Rows grouped under a line with their case id; the columns a reviewer reads first.
fn narrow_table(m: &Matrix, c: &Criteria) -> String {
    let mut b = Builder::default();
    b.push_record([
        "case\n  point".to_string(),
        "result".into(),
        "nadir\nHz".into(),
        "peak\nHz".into(),
        format!("ROCOF\nHz/s\nover\n{} s", setting(c.rocof_window_s)),
        "recov.\ns".into(),
        "shed\nMW".into(),
        "UV\nMW".into(),
        "stages".into(),
        "dist.\n×".into(),
        "model\nerr %".into(),
    ]);
    let mut case_lines = Vec::new();
    let mut last_case: Option<usize> = None;
    for r in &m.rows {
        if last_case != Some(r.case_index) {
            last_case = Some(r.case_index);
            case_lines.push(b.count_records());
            b.push_record([r.case.clone()]);
        }
        let (dist, model) = margin_cells(r);
        let [nadir, _, peak, _, rocof, recovery] = figure_cells(r);
        b.push_record([
            format!("  {}", r.operating_point),
            if r.pass { "pass".into() } else { "FAIL".into() },
            nadir,
            peak,
            rocof,
            recovery,
            fmt(r.shed_mw, 2),
            fmt(r.dropped_mw, 2),
            wrapped_list(&r.stages_operated, 13),
            dist,
            model,
        ]);
    }
    let mut t = b.build();
    t.with(Style::sharp());
    t.modify(Columns::new(2..8), Alignment::right());
    t.modify(Columns::new(9..11), Alignment::right());
    t.modify(Rows::first(), Alignment::left());
    for row in case_lines {
        t.modify((row, 0), Span::column(0));
        t.modify((row, 0), Alignment::left());
    }
    t.to_string()
}

/// Every figure of a run on one line.
fn wide_table(m: &Matrix, c: &Criteria) -> String {
    let mut b = Builder::default();
    b.push_record([
        "case".to_string(),
        "point".into(),
        "result".into(),
        "nadir Hz".into(),
        "at s".into(),
        "peak Hz".into(),
        "at s".into(),
        rocof_heading(c),
        "recovery s".into(),
        "shed MW".into(),
        "UV MW".into(),
        "shed %".into(),
        "stages".into(),
        "cascades".into(),
        "disturbance ×".into(),
        "model error %".into(),
        "failed criterion".into(),
    ]);
    for r in &m.rows {
        let (dist, model) = margin_cells(r);
        let [nadir, at, peak, peak_at, rocof, recovery] = figure_cells(r);
        b.push_record([
            r.case.clone(),
            r.operating_point.clone(),
            if r.pass { "pass".into() } else { "FAIL".into() },
            nadir,
            at,
            peak,
            peak_at,
            rocof,
            recovery,
            fmt(r.shed_mw, 2),
            fmt(r.dropped_mw, 2),
            fmt(r.shed_pct, 1),
            list_cell(&r.stages_operated),
            list_cell(&r.cascades),
            dist,
            model,
            r.failures
                .iter()
                .map(|f| f.message.as_str())
                .collect::<Vec<_>>()
                .join("; "),
        ]);
    }
    finish(b, 3..12)
}

fn margin_cells(r: &Row) -> (String, String) {
    match &r.margins {
        Some(mg) => (
            margin_cell(&mg.disturbance_factor, "×"),
            margin_cell(&mg.model_error_pct, ""),
        ),
        None => ("-".into(), "-".into()),
    }
}

fn list_cell(v: &[String]) -> String {
    if v.is_empty() {
        "-".into()
    } else {
        v.join(" ")
    }
}

/// Ids joined by spaces, a new line before an id that would pass `width` characters.
fn wrapped_list(v: &[String], width: usize) -> String {
    if v.is_empty() {
        return "-".into();
    }
    let mut out = String::new();
    let mut line = 0;
    for id in v {
        let n = id.chars().count();
        if line > 0 && line + 1 + n > width {
            out.push('\n');
            line = 0;
        } else if line > 0 {
            out.push(' ');
            line += 1;
        }
        out.push_str(id);
        line += n;
    }
    out
}

/// `text` wrapped at word boundaries to [`TERMINAL_COLUMNS`], the first line after `first`, the
/// others after `rest`; ends with a newline.
pub fn wrap_text(text: &str, first: &str, rest: &str) -> String {
    let mut out = String::new();
    let mut line = first.to_string();
    let mut empty = true;
    for word in text.split(' ') {
        let len = line.chars().count() + word.chars().count() + usize::from(!empty);
        if !empty && len > TERMINAL_COLUMNS {
            out.push_str(line.trim_end());
            out.push('\n');
            line = rest.to_string();
            empty = true;
        }
        if !empty {
            line.push(' ');
        }
        line.push_str(word);
        empty = false;
    }
    out.push_str(line.trim_end());
    out.push('\n');
    out
}

/// One CSV row per run. Each figure has its own column and keeps its meaning: an empty cell is
/// "none" (peak when frequency never rose, recovery when it never went below the level or never
/// came back, margins not searched), a margin is its number and its kind in two columns, and every
/// text cell that a spreadsheet would run as a formula is neutralised.
/// The figure cells of a row (nadir, its time, peak, its time, ROCOF, recovery); for a run
/// that stopped early `stopped` and dashes, its status being its failed criterion.
fn figure_cells(r: &matrix::Row) -> [String; 6] {
    if r.status.is_some() {
        return [
            STOPPED.into(),
            NO_FIGURE.into(),
            NO_FIGURE.into(),
            NO_FIGURE.into(),
            NO_FIGURE.into(),
            NO_FIGURE.into(),
        ];
    }
    let o = &r.observed;
    [
        fmt(o.nadir_hz, 2),
        fmt(o.nadir_at_s, 2),
        peak_cell(o),
        o.peak_at_s.map_or_else(|| "—".into(), |t| fmt(t, 2)),
        fmt(o.max_rocof_hz_per_s, 2),
        recovery_cell(o),
    ]
}

fn render_csv(m: &Matrix, plant: &Plant) -> anyhow::Result<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "case",
        "operating_point",
        "pass",
        "nadir_hz",
        "nadir_at_s",
        "peak_hz",
        "peak_at_s",
        "rocof_window_s",
        "max_rocof_hz_per_s",
        "went_below_recover_level",
        "recovered_at_s",
        "recovery_s",
        "final_hz",
        "shed_mw",
        "uv_dropped_mw",
        "shed_pct",
        "stages_operated",
        "cascades",
        "disturbance_factor",
        "disturbance_factor_kind",
        "model_error_pct",
        "model_error_pct_kind",
        "failed_criteria",
        "failures",
    ])?;
    let opt = |v: Option<f64>| v.map(|v| format!("{v:.4}")).unwrap_or_default();
    for r in &m.rows {
        let margin = |x: Option<&Margin>| match x {
            None => (String::new(), "not_searched".to_string()),
            Some(m) => (
                MarginOut::from(*m)
                    .value
                    .map(|v| format!("{v:.3}"))
                    .unwrap_or_default(),
                MarginOut::from(*m).kind.to_string(),
            ),
        };
        let (dist, dist_kind) = margin(r.margins.as_ref().map(|m| &m.disturbance_factor));
        let (model, model_kind) = margin(r.margins.as_ref().map(|m| &m.model_error_pct));
        let o = &r.observed;
        let mut criteria: Vec<&str> = r.failures.iter().map(|f| f.criterion).collect();
        criteria.dedup();
        // A run that stopped early leaves its figure cells empty; `failures` gives its status.
        let stopped = r.status.is_some();
        let fig = |text: String| if stopped { String::new() } else { text };
        w.write_record([
            csv_cell(&r.case),
            csv_cell(&r.operating_point),
            r.pass.to_string(),
            fig(format!("{:.4}", o.nadir_hz)),
            fig(format!("{:.4}", o.nadir_at_s)),
            fig(opt(o.peak_hz)),
            fig(opt(o.peak_at_s)),
            format!("{}", plant.criteria.rocof_window_s),
            fig(format!("{:.4}", o.max_rocof_hz_per_s)),
            fig(o.went_below_recover_level.to_string()),
            fig(opt(o.recovered_at_s)),
            fig(opt(o.recovery_s)),
            fig(format!("{:.4}", r.final_hz)),
            format!("{:.4}", r.shed_mw),
            format!("{:.4}", r.dropped_mw),
            format!("{:.2}", r.shed_pct),
            csv_cell(&r.stages_operated.join(" ")),
            csv_cell(&r.cascades.join(" ")),
            dist,
            dist_kind,
            model,
            model_kind,
            criteria.join(" "),
            csv_cell(
                &r.failures
                    .iter()
                    .map(|f| f.message.as_str())
                    .collect::<Vec<_>>()
                    .join("; "),
            ),
        ])?;
    }
    Ok(String::from_utf8(w.into_inner()?)?)
}
