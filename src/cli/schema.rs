//! `nadir schema`: the JSON Schemas of the three input files, generated from the raw serde types
//! so that the field reference has one source (the doc comments in `nadir::input::raw`), and of
//! the JSON that `verify` and `compare` write (from `nadir::report::output`).
//!
//! Owns writing or printing the schemas; must not describe any field by hand.

use super::Outcome;
use anyhow::Context;
use nadir::input::raw::{CasesFile, PlantFile, SchemeFile};
use std::path::PathBuf;

/// Write the JSON Schemas (2020-12) of the input files (plant.schema.json, cases.schema.json,
/// scheme.schema.json) and of the JSON output of verify and compare
/// (verify-output.schema.json, compare-output.schema.json).
#[derive(Debug, clap::Args)]
pub struct SchemaArgs {
    /// Directory to write the five files into; without it one JSON object is printed whose keys
    /// are the file names.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
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
            std::fs::create_dir_all(&dir)
                .with_context(|| format!("creating directory {}", dir.display()))?;
            for (name, schema) in files {
                let path = dir.join(name);
                let text = serde_json::to_string_pretty(&schema)?;
                std::fs::write(&path, text + "\n")
                    .with_context(|| format!("writing {}", path.display()))?;
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
