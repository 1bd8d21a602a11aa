//! `nadir schema`: the JSON Schemas of the three input files, generated from the raw serde types
//! so that the field reference has one source (the doc comments in `nadir::input::raw`), and of
//! the JSON that `verify` and `compare` write (from `nadir::report::output`).
//!
//! Owns writing or printing the schemas; must not describe any field by hand.

use super::Outcome;
use nadir::input::raw::{CasesFile, PlantFile, SchemeFile};
use std::path::PathBuf;

/// Write the JSON Schemas (2020-12) of the input files (plant.schema.json, cases.schema.json,
/// scheme.schema.json) and of the JSON output of verify and compare
/// (verify-output.schema.json, compare-output.schema.json).
#[derive(Debug, clap::Args)]
pub struct SchemaArgs {
    /// Folder to write the five files into (created if missing; existing files need --force);
    /// without it one JSON object is printed whose keys are the file names.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Replace the schema files in DIR if they exist. A symbolic link there is replaced as a
    /// link; the file it points to is not written.
    #[arg(long)]
    pub force: bool,
}

/// The schema files: name and schema.
fn schemas() -> Vec<(&'static str, schemars::Schema)> {
    vec![
        ("plant.schema.json", schemars::schema_for!(PlantFile)),
        ("cases.schema.json", schemars::schema_for!(CasesFile)),
        ("scheme.schema.json", schemars::schema_for!(SchemeFile)),
    ]
    .into_iter()
    .chain(nadir::report::output::schemas())
    .collect()
}

pub fn run(args: SchemaArgs) -> anyhow::Result<Outcome> {
    let files = schemas();
    match args.out {
        Some(dir) => {
            std::fs::create_dir_all(&dir).map_err(|e| {
                anyhow::anyhow!(
                    "{}: cannot create the folder: {}",
                    dir.display(),
                    nadir::report::write::cause(&e)
                )
            })?;
            let paths: Vec<PathBuf> = files.iter().map(|(name, _)| dir.join(name)).collect();
            let outputs: Vec<&std::path::Path> = paths.iter().map(PathBuf::as_path).collect();
            let targets = super::check_outputs(&outputs, &[], args.force)?;
            for ((_, schema), target) in files.iter().zip(&targets) {
                let text = serde_json::to_string_pretty(schema)? + "\n";
                target.write(text.as_bytes())?;
            }
        }
        None => {
            let all: serde_json::Map<String, serde_json::Value> = files
                .into_iter()
                .map(|(name, schema)| (name.to_string(), schema.to_value()))
                .collect();
            super::write_stdout(&(serde_json::to_string_pretty(&all)? + "\n"))?;
        }
    }
    Ok(Outcome::Pass)
}
