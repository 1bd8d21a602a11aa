//! `nadir loads import` and `nadir loads export`: the plant's load list to and from a spreadsheet
//! (CSV). The mapping lives in the library (`input::load_list`, `report::load_list`); this file
//! reads the files, checks the output against the inputs and writes.

use super::{load, Outcome};
use anyhow::{bail, Context};
use nadir::input::{self, load_list, Limits};
use std::path::{Path, PathBuf};

/// The plant's loads to and from a CSV load list (spreadsheet).
#[derive(Debug, clap::Args)]
pub struct LoadsArgs {
    #[command(subcommand)]
    pub action: Action,
}

#[derive(Debug, clap::Subcommand)]
pub enum Action {
    /// Read a CSV load list into a plant file: writes the plant file with its `loads:` block
    /// replaced by the list's loads (every other line kept as it is). Columns (any case): id,
    /// section, p_mw, rank, and optionally never_shed, load_type, freq_exp, inertia_s,
    /// uv_below_pu, uv_after_s, description; docs/files.md lists the headings read for each and
    /// the load types.
    Import(ImportArgs),
    /// Write the plant's loads as a CSV load list that `nadir loads import` reads back to the
    /// same loads.
    Export(ExportArgs),
}

#[derive(Debug, clap::Args)]
pub struct ImportArgs {
    /// The plant file whose loads the list replaces (YAML); it is read, never written.
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// The load list (CSV: comma, semicolon or tab separated, UTF-8).
    #[arg(value_name = "LIST.csv")]
    pub list: PathBuf,
    /// The new plant file to write (.yaml). Without it, the new plant file is printed.
    #[arg(short = 'o', long = "output", value_name = "FILE.yaml")]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists (never one of the input files).
    #[arg(long)]
    pub force: bool,
}

#[derive(Debug, clap::Args)]
pub struct ExportArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// The list to write (.csv). Without it, the list is printed.
    #[arg(short = 'o', long = "output", value_name = "FILE.csv")]
    pub output: Option<PathBuf>,
    /// Replace the output file if it exists (never the plant file).
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: LoadsArgs) -> anyhow::Result<Outcome> {
    match args.action {
        Action::Import(a) => import(a),
        Action::Export(a) => export(a),
    }
}

fn extension(path: &Path) -> String {
    path.extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .unwrap_or_default()
}

fn import(args: ImportArgs) -> anyhow::Result<Outcome> {
    if extension(&args.plant) == "csv" && matches!(extension(&args.list).as_str(), "yaml" | "yml") {
        bail!(
            "the files look swapped: {} is a CSV list and {} a YAML file; give the plant file \
             first, then the list: nadir loads import {} {}",
            args.plant.display(),
            args.list.display(),
            args.list.display(),
            args.plant.display()
        );
    }
    let target = match &args.output {
        Some(path) => {
            if !matches!(extension(path).as_str(), "yaml" | "yml") {
                bail!(
                    "{}: loads import writes a plant file; name it .yaml (loads export writes \
                     the .csv list)",
                    path.display()
                );
            }
            let mut t = super::check_outputs(
                &[path.as_path()],
                &[
                    ("plant", args.plant.as_path()),
                    ("load list", args.list.as_path()),
                ],
                args.force,
            )?;
            Some(t.remove(0))
        }
        None => None,
    };
    let limits = Limits::from_env().map_err(|e| anyhow::anyhow!("{e}"))?;
    let (plant_text, plant_file) = input::read_text(&args.plant)
        .with_context(|| format!("reading plant file {}", args.plant.display()))?;
    let (list_text, list_file) = input::read_text(&args.list)
        .with_context(|| format!("reading load list {}", args.list.display()))?;
    let imported = load_list::import(&plant_text, &plant_file, &list_text, &list_file, &limits)
        .map_err(nadir::Error::Input)
        .with_context(|| format!("importing load list {}", args.list.display()))?;
    load::show(&imported.plant.warnings)?;
    let plant = &imported.plant.value;
    let summary = format!(
        "{} loads ({:.3} MW, {} never shed) from {}; {} exponent(s) from a load type.",
        plant.loads.len(),
        plant.loads.iter().map(|l| l.p_mw).sum::<f64>(),
        plant.loads.iter().filter(|l| l.never_shed).count(),
        list_file,
        imported.typed
    );
    match target {
        None => {
            super::write_stdout(&imported.text)?;
            eprintln!("{summary}");
        }
        Some(t) => {
            t.write(imported.text.as_bytes())
                .context("writing the plant file")?;
            super::write_stdout(&format!(
                "Plant file written to {}: {summary}\nCheck it with `nadir check {}` before use.\n",
                t.path().display(),
                t.path().display()
            ))?;
        }
    }
    Ok(Outcome::Pass)
}

fn export(args: ExportArgs) -> anyhow::Result<Outcome> {
    let target = match &args.output {
        Some(path) => {
            if extension(path) != "csv" {
                bail!(
                    "{}: loads export writes a CSV list; name it .csv",
                    path.display()
                );
            }
            let mut t = super::check_outputs(
                &[path.as_path()],
                &[("plant", args.plant.as_path())],
                args.force,
            )?;
            Some(t.remove(0))
        }
        None => None,
    };
    let plant = load::plant(&args.plant)?;
    let text = nadir::report::load_list::csv(&plant);
    match target {
        None => super::write_stdout(&text)?,
        Some(t) => {
            t.write(text.as_bytes()).context("writing the load list")?;
            super::write_stdout(&format!(
                "Load list written to {} ({} loads).\n",
                t.path().display(),
                plant.loads.len()
            ))?;
        }
    }
    Ok(Outcome::Pass)
}
