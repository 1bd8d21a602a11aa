//! Reading the input files for a verb, with the file named in the error context.

use nadir::model::{CaseSet, Plant, Scheme};
use std::path::Path;

pub fn plant(path: &Path) -> anyhow::Result<Plant> {
    nadir::input::load_plant(path).map_err(|e| context(e, "plant", path))
}

pub fn cases(path: &Path, plant: &Plant) -> anyhow::Result<CaseSet> {
    nadir::input::load_cases(path, plant).map_err(|e| context(e, "cases", path))
}

pub fn scheme(path: &Path, plant: &Plant) -> anyhow::Result<Scheme> {
    nadir::input::load_scheme(path, plant).map_err(|e| context(e, "scheme", path))
}

/// "reading plant file PATH" before the error; a file that cannot be opened says why in words,
/// naming the path once.
fn context(e: nadir::Error, role: &str, path: &Path) -> anyhow::Error {
    match e {
        nadir::Error::Io { source, .. } => anyhow::anyhow!(
            "reading {role} file {}: {}",
            path.display(),
            nadir::report::write::cause(&source)
        ),
        other => {
            anyhow::Error::new(other).context(format!("reading {role} file {}", path.display()))
        }
    }
}
