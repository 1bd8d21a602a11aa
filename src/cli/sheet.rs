//! `nadir sheet`: the relay setting sheet of a scheme — one row per element a site technician
//! sets — as CSV, Markdown or a printable HTML page (by the output file's extension), or as
//! Markdown on standard output.

use super::{load, Outcome};
use anyhow::{bail, Context};
use nadir::report::sheet;
use std::path::{Path, PathBuf};

/// Write the relay setting sheet: stage, element (under-frequency, df/dt supervision,
/// breaker-armed), pickup, delay, df/dt setting and window, loads opened, MW at each operating
/// point, and blank as-left and initials columns.
#[derive(Debug, clap::Args)]
pub struct SheetArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML).
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// The file to write: .csv for spreadsheets, .html for a printable page, .md for Markdown.
    /// Without it, the sheet is printed as Markdown.
    #[arg(
        short = 'o',
        long = "output",
        value_name = "FILE.csv|FILE.html|FILE.md"
    )]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists (never one of the input files).
    #[arg(long)]
    pub force: bool,
}

/// What the output file's extension asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Csv,
    Html,
    Markdown,
}

fn kind_of(path: &Path) -> anyhow::Result<Kind> {
    match path
        .extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .as_deref()
    {
        Some("csv") => Ok(Kind::Csv),
        Some("html" | "htm") => Ok(Kind::Html),
        Some("md") => Ok(Kind::Markdown),
        _ => bail!(
            "{}: the sheet is written as .csv, .html or .md; name the file accordingly",
            path.display()
        ),
    }
}

pub fn run(args: SheetArgs) -> anyhow::Result<Outcome> {
    let target = match &args.output {
        Some(path) => {
            let kind = kind_of(path)?;
            let mut targets = super::check_outputs(
                &[path.as_path()],
                &[
                    ("plant", args.plant.as_path()),
                    ("scheme", args.scheme.as_path()),
                ],
                args.force,
            )?;
            Some((targets.remove(0), kind))
        }
        None => None,
    };
    let plant = load::plant(&args.plant)?;
    let scheme = load::scheme(&args.scheme, &plant)?;
    let s = sheet::sheet(&plant, &scheme);
    match target {
        None => super::write_stdout(&sheet::markdown(&s))?,
        Some((target, kind)) => {
            let text = match kind {
                Kind::Csv => sheet::csv(&s),
                Kind::Html => sheet::html_page(&s),
                Kind::Markdown => sheet::markdown(&s),
            };
            target
                .write(text.as_bytes())
                .context("writing the setting sheet")?;
            super::write_stdout(&format!(
                "Setting sheet written to {} ({} rows for {} stages).\n{}\n",
                target.path().display(),
                s.rows.len(),
                scheme.stages.len(),
                super::verify::CAUTION
            ))?;
        }
    }
    Ok(Outcome::Pass)
}
