//! `nadir compare`: the settings difference between two tables and, side by side, the
//! verification of both; exit 1 when the new table fails a case the old one held.

use super::check::{finish, fmt};
use super::verify::{margin_cell, progress_bar, wrap_text, CAUTION};
use super::{load, Outcome};
use nadir::verify::compare::{self, Change};
use nadir::verify::matrix::{self, VerifyConfig};
use std::path::PathBuf;
use tabled::builder::Builder;
use tabled::settings::object::{Columns, Rows};
use tabled::settings::{Alignment, Span, Style, Width};

/// Show what a settings change does.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// The table in service (YAML).
    #[arg(value_name = "OLD_SCHEME")]
    pub old: PathBuf,
    /// The proposed table (YAML).
    #[arg(value_name = "NEW_SCHEME")]
    pub new: PathBuf,
    /// Cases file (YAML).
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = super::check::Format::Table)]
    pub format: super::check::Format,
    /// Skip the margin searches; refused when the plant's criteria require a margin.
    #[arg(long)]
    pub no_margins: bool,
    /// One line per run with the new failure in the table (wider than 120 columns).
    #[arg(long)]
    pub wide: bool,
}

pub fn run(args: CompareArgs) -> anyhow::Result<Outcome> {
    let plant = load::plant(&args.plant)?;
    let cases = load::cases(&args.cases, &plant)?;
    let old = load::scheme(&args.old, &plant)?;
    let new = load::scheme(&args.new, &plant)?;
    super::verify::refuse_skipped_margins(args.no_margins, &plant, &args.plant)?;
    let config = VerifyConfig {
        margins: !args.no_margins,
        ..VerifyConfig::default()
    };
    let bar = progress_bar(2 * matrix::pairs(&cases).len() as u64);
    let c = compare::compare(&plant, &cases, &old, &new, &config, &|| bar.inc(1));
    bar.finish_and_clear();
    let text = match args.format {
        super::check::Format::Json => {
            let doc = nadir::report::output::compare_document(
                &c,
                &plant,
                &old,
                &new,
                env!("CARGO_PKG_VERSION"),
                &super::load::warnings_seen(),
            );
            serde_json::to_string_pretty(&doc)? + "\n"
        }
        super::check::Format::Table => render(&c, &old.name, &new.name, args.wide),
    };
    super::write_stdout(&text)?;
    Ok(if c.has_regression() {
        Outcome::Fail
    } else {
        Outcome::Pass
    })
}

/// The settings difference as a table (stage, setting, old, new), or a line saying none differs.
pub fn settings_table(changes: &[nadir::verify::diff::SettingChange]) -> String {
    if changes.is_empty() {
        return "  (no setting differs)\n".into();
    }
    let mut b = Builder::default();
    b.push_record(["stage", "setting", "old", "new"]);
    for s in changes {
        b.push_record([
            s.stage.clone(),
            s.what.to_string(),
            s.old.clone(),
            s.new.clone(),
        ]);
    }
    let mut t = b.build();
    t.with(Style::sharp());
    // Old and new settings wrap at word boundaries, so the table fits 120 columns.
    t.modify(Columns::new(2..4), Width::wrap(40).keep_words(true));
    t.to_string() + "\n"
}

fn render(c: &compare::Comparison, old: &str, new: &str, wide: bool) -> String {
    let mut out = format!("Settings changed from {old} to {new}\n");
    out.push_str(&settings_table(&c.settings));
    out.push_str("\nVerification, old → new\n");
    let mut b = Builder::default();
    if wide {
        b.push_record([
            "case",
            "point",
            "outcome",
            "nadir Hz old → new",
            "Δ nadir Hz",
            "shed MW old → new",
            "disturbance × old → new",
            "new failure",
        ]);
    } else {
        b.push_record([
            "case\n  point",
            "outcome",
            "nadir Hz\nold → new",
            "Δ nadir\nHz",
            "shed MW\nold → new",
            "disturbance ×\nold → new",
        ]);
    }
    let mut case_lines = Vec::new();
    let mut last_case = None;
    for (o, n, change) in c.pairs() {
        let outcome = match change {
            Change::StillHolds => "holds",
            Change::StillFails => "still fails",
            Change::NowFails => "NOW FAILS",
            Change::NowHolds => "now holds",
        };
        let dist = |r: &matrix::Row| {
            r.margins
                .map(|m| margin_cell(&m.disturbance_factor, "×"))
                .unwrap_or("-".into())
        };
        let mut row = if wide {
            vec![n.case.clone(), n.operating_point.clone()]
        } else {
            if last_case != Some(n.case_index) {
                last_case = Some(n.case_index);
                case_lines.push(b.count_records());
                b.push_record([n.case.clone()]);
            }
            vec![format!("  {}", n.operating_point)]
        };
        row.extend([
            outcome.to_string(),
            format!(
                "{} → {}",
                fmt(o.observed.nadir_hz, 2),
                fmt(n.observed.nadir_hz, 2)
            ),
            fmt(n.observed.nadir_hz - o.observed.nadir_hz, 3),
            format!("{} → {}", fmt(o.shed_mw, 2), fmt(n.shed_mw, 2)),
            format!("{} → {}", dist(o), dist(n)),
        ]);
        if wide {
            row.push(
                n.failures
                    .iter()
                    .map(|f| f.message.as_str())
                    .collect::<Vec<_>>()
                    .join("; "),
            );
        }
        b.push_record(row);
    }
    if wide {
        out.push_str(&finish(b, 4..5));
    } else {
        let mut t = b.build();
        t.with(Style::sharp());
        t.modify(Columns::new(3..4), Alignment::right());
        t.modify(Rows::first(), Alignment::left());
        for row in case_lines {
            t.modify((row, 0), Span::column(0));
        }
        out.push_str(&t.to_string());
        let failing: Vec<_> = c.pairs().filter(|p| !p.1.pass).collect();
        if !failing.is_empty() {
            out.push_str("\nFailed criteria with the new table:\n");
            for (_, n, _) in failing {
                let text = format!(
                    "{} at {}: {}",
                    n.case,
                    n.operating_point,
                    n.failures
                        .iter()
                        .map(|f| f.message.as_str())
                        .collect::<Vec<_>>()
                        .join("; ")
                );
                out.push_str(&wrap_text(&text, "  ", "    "));
            }
        }
    }
    let regressions = c.pairs().filter(|p| p.2 == Change::NowFails).count();
    out.push_str(&if regressions == 0 {
        "\nThe new table holds every case the old one held.\n".to_string()
    } else {
        format!("\nThe new table FAILS {regressions} case(s) the old one held.\n")
    });
    out.push_str(&wrap_text(CAUTION, "", ""));
    out
}
