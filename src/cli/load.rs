//! Reading the input files for a verb, with the file named in the error context.

use anyhow::Context;
use nadir::model::{CaseSet, Plant, Scheme};
use std::path::Path;

pub fn plant(path: &Path) -> anyhow::Result<Plant> {
    nadir::input::load_plant(path).with_context(|| format!("reading plant file {}", path.display()))
}

pub fn cases(path: &Path, plant: &Plant) -> anyhow::Result<CaseSet> {
    nadir::input::load_cases(path, plant)
        .with_context(|| format!("reading cases file {}", path.display()))
}

pub fn scheme(path: &Path, plant: &Plant) -> anyhow::Result<Scheme> {
    nadir::input::load_scheme(path, plant)
        .with_context(|| format!("reading scheme file {}", path.display()))
}
