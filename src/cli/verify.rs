//! `nadir verify`: replay every case at every operating point it applies to and print the matrix,
//! with margins; exit 1 when any row fails.

use super::check::{finish, fmt};
use super::{load, Outcome};
use nadir::verify::margins::Margin;
use nadir::verify::matrix::{self, Matrix, VerifyConfig};
use std::io::IsTerminal;
use std::path::PathBuf;
use tabled::builder::Builder;

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
    /// Skip the margin searches (about fifteen extra runs per row); refused when the plant's
    /// criteria require a margin.
    #[arg(long)]
    pub no_margins: bool,
}

/// How `verify` writes its matrix.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// Plain-text table.
    Table,
    /// One JSON document.
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
            let mut t = render_table(&m, &plant.name, &scheme.name);
            if let Some(caveat) = load::verdict_caveat() {
                t.push_str(&caveat);
                t.push('\n');
            }
            t
        }
        Format::Json => serde_json::to_string_pretty(&m)? + "\n",
        Format::Csv => render_csv(&m)?,
    };
    super::write_stdout(&text)?;
    Ok(if m.all_pass() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

/// `--no-margins` on a plant that requires margins would print a verdict that never judged them:
/// refused (exit 2) with the requirement and the fix.
pub fn refuse_skipped_margins(
    no_margins: bool,
    plant: &nadir::model::Plant,
    path: &std::path::Path,
) -> anyhow::Result<()> {
    let c = &plant.criteria;
    if !no_margins || !c.margins_required() {
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

pub use nadir::report::html::margin_cell;

/// The matrix as a table with a verdict line and the caution.
pub fn render_table(m: &Matrix, plant: &str, scheme: &str) -> String {
    let mut b = Builder::default();
    b.push_record([
        "case",
        "point",
        "result",
        "nadir Hz",
        "at s",
        "peak Hz",
        "ROCOF Hz/s",
        "recovered s",
        "shed MW",
        "shed %",
        "stages",
        "cascades",
        "disturbance ×",
        "model error %",
        "failed criterion",
    ]);
    for r in &m.rows {
        let (dist, model) = match &r.margins {
            Some(mg) => (
                margin_cell(&mg.disturbance_factor, "×"),
                margin_cell(&mg.model_error_pct, ""),
            ),
            None => ("-".into(), "-".into()),
        };
        b.push_record([
            r.case.clone(),
            r.operating_point.clone(),
            if r.pass { "pass".into() } else { "FAIL".into() },
            fmt(r.observed.nadir_hz, 2),
            fmt(r.observed.nadir_at_s, 2),
            fmt(r.observed.max_hz, 2),
            fmt(r.observed.max_rocof_hz_per_s, 2),
            r.observed
                .recovered_at_s
                .map(|t| fmt(t, 2))
                .unwrap_or_else(|| "never".into()),
            fmt(r.shed_mw, 2),
            fmt(r.shed_pct, 1),
            if r.stages_operated.is_empty() {
                "-".into()
            } else {
                r.stages_operated.join(" ")
            },
            if r.cascades.is_empty() {
                "-".into()
            } else {
                r.cascades.join(" ")
            },
            dist,
            model,
            r.failures
                .iter()
                .map(|f| f.message.as_str())
                .collect::<Vec<_>>()
                .join("; "),
        ]);
    }
    let failed = m.rows.iter().filter(|r| !r.pass).count();
    let verdict = if failed == 0 {
        format!(
            "All {} case × operating-point runs hold every criterion.",
            m.rows.len()
        )
    } else {
        format!(
            "{failed} of {} case × operating-point runs FAIL.",
            m.rows.len()
        )
    };
    format!(
        "Verification of {scheme} on {plant}\n{}\n{verdict}\n\
Margins: disturbance × is how far the case's lost import, generation or load step could grow \
before a criterion fails; model error % is how much lower inertia and load damping could be.\n{CAUTION}\n",
        finish(b, 3..10)
    )
}

fn render_csv(m: &Matrix) -> anyhow::Result<String> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "case",
        "operating_point",
        "pass",
        "nadir_hz",
        "nadir_at_s",
        "peak_hz",
        "max_rocof_hz_per_s",
        "recovered_at_s",
        "final_hz",
        "shed_mw",
        "shed_pct",
        "stages_operated",
        "cascades",
        "disturbance_factor",
        "model_error_pct",
        "failures",
    ])?;
    for r in &m.rows {
        let margin = |x: Option<&Margin>| {
            x.and_then(|v| v.value())
                .map(|v| format!("{v:.3}"))
                .unwrap_or_default()
        };
        w.write_record([
            r.case.clone(),
            r.operating_point.clone(),
            r.pass.to_string(),
            format!("{:.4}", r.observed.nadir_hz),
            format!("{:.4}", r.observed.nadir_at_s),
            format!("{:.4}", r.observed.max_hz),
            format!("{:.4}", r.observed.max_rocof_hz_per_s),
            r.observed
                .recovered_at_s
                .map(|t| format!("{t:.4}"))
                .unwrap_or_default(),
            format!("{:.4}", r.final_hz),
            format!("{:.4}", r.shed_mw),
            format!("{:.2}", r.shed_pct),
            r.stages_operated.join(" "),
            r.cascades.join(" "),
            margin(r.margins.as_ref().map(|m| &m.disturbance_factor)),
            margin(r.margins.as_ref().map(|m| &m.model_error_pct)),
            r.failures
                .iter()
                .map(|f| f.message.as_str())
                .collect::<Vec<_>>()
                .join("; "),
        ])?;
    }
    Ok(String::from_utf8(w.into_inner()?)?)
}
