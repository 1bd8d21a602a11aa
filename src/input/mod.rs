//! Reading the three input files: YAML text → raw serde types → validated [`crate::model`] types;
//! and writing a scheme back as scheme-file text ([`scheme_yaml`]).
//!
//! Returns the model or **every** diagnostic found in a file, never only the first. Nothing outside
//! this module knows that YAML exists.

pub mod defaults;
pub mod limits;
pub mod load_list;
mod locate;
pub mod raw;
mod read;
mod validate;
pub mod warn;
mod write_plant;
mod write_scheme;

use crate::error::Error;
use crate::model::{CaseSet, Plant, Scheme};
pub use limits::{Limit, Limits};
use read::Reader;
use std::fmt;
use std::io::Read;
use std::path::Path;
pub use warn::{Code, Warning};
pub use write_plant::{plant_with_values, ValueEdit};
pub use write_scheme::scheme_yaml;

/// A validated file with its plausibility warnings and notes (acknowledged ones included, marked).
#[derive(Debug, Clone)]
pub struct Loaded<T> {
    pub value: T,
    pub warnings: Vec<Warning>,
}

/// Largest input file read by default, in bytes (4 MiB); see [`limits::FILE_BYTES`].
pub const MAX_FILE_BYTES: u64 = limits::FILE_BYTES.default;

/// Validates a plant file's text; `file` is the name used in messages. Limits come from the
/// environment ([`Limits::from_env`]).
pub fn parse_plant(text: &str, file: &str) -> Result<Plant, Vec<Diagnostic>> {
    parse_plant_with(text, file, &env_limits(file)?)
}

/// Validates a cases file's text against its plant.
pub fn parse_cases(text: &str, file: &str, plant: &Plant) -> Result<CaseSet, Vec<Diagnostic>> {
    parse_cases_with(text, file, plant, &env_limits(file)?)
}

/// Validates a scheme file's text against its plant. A scheme without `name` is named after the
/// file's stem.
pub fn parse_scheme(text: &str, file: &str, plant: &Plant) -> Result<Scheme, Vec<Diagnostic>> {
    parse_scheme_with(text, file, plant, &env_limits(file)?)
}

/// [`parse_plant`] under the given limits instead of the environment's.
pub fn parse_plant_with(text: &str, file: &str, limits: &Limits) -> Result<Plant, Vec<Diagnostic>> {
    plant_warned(text, file, limits).map(|l| l.value)
}

/// [`parse_plant`] with the file's plausibility warnings and notes.
pub fn parse_plant_warned(text: &str, file: &str) -> Result<Loaded<Plant>, Vec<Diagnostic>> {
    plant_warned(text, file, &env_limits(file)?)
}

fn plant_warned(text: &str, file: &str, limits: &Limits) -> Result<Loaded<Plant>, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file, limits)?;
    if validate::wrong_kind(&mut r, &map, validate::FileKind::Plant) {
        return Err(nonempty(r, file));
    }
    let plant = validate::plant(&mut r, &map);
    r.check_acknowledgements();
    match plant {
        Some(value) if r.diagnostics.is_empty() => Ok(Loaded {
            value,
            warnings: std::mem::take(&mut r.warnings),
        }),
        _ => Err(nonempty(r, file)),
    }
}

/// [`parse_cases`] under the given limits instead of the environment's.
pub fn parse_cases_with(
    text: &str,
    file: &str,
    plant: &Plant,
    limits: &Limits,
) -> Result<CaseSet, Vec<Diagnostic>> {
    cases_warned(text, file, plant, limits).map(|l| l.value)
}

/// [`parse_cases`] with the file's plausibility warnings and notes.
pub fn parse_cases_warned(
    text: &str,
    file: &str,
    plant: &Plant,
) -> Result<Loaded<CaseSet>, Vec<Diagnostic>> {
    cases_warned(text, file, plant, &env_limits(file)?)
}

fn cases_warned(
    text: &str,
    file: &str,
    plant: &Plant,
    limits: &Limits,
) -> Result<Loaded<CaseSet>, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file, limits)?;
    if validate::wrong_kind(&mut r, &map, validate::FileKind::Cases) {
        return Err(nonempty(r, file));
    }
    let cases = validate::cases(&mut r, &map, plant);
    r.check_acknowledgements();
    match cases {
        Some(value) if r.diagnostics.is_empty() => Ok(Loaded {
            value,
            warnings: std::mem::take(&mut r.warnings),
        }),
        _ => Err(nonempty(r, file)),
    }
}

/// [`parse_scheme`] under the given limits instead of the environment's.
pub fn parse_scheme_with(
    text: &str,
    file: &str,
    plant: &Plant,
    limits: &Limits,
) -> Result<Scheme, Vec<Diagnostic>> {
    scheme_warned(text, file, plant, limits).map(|l| l.value)
}

/// [`parse_scheme`] with the file's plausibility warnings and notes.
pub fn parse_scheme_warned(
    text: &str,
    file: &str,
    plant: &Plant,
) -> Result<Loaded<Scheme>, Vec<Diagnostic>> {
    scheme_warned(text, file, plant, &env_limits(file)?)
}

fn scheme_warned(
    text: &str,
    file: &str,
    plant: &Plant,
    limits: &Limits,
) -> Result<Loaded<Scheme>, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file, limits)?;
    if validate::wrong_kind(&mut r, &map, validate::FileKind::Scheme) {
        return Err(nonempty(r, file));
    }
    let stem = Path::new(file)
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or(file);
    let scheme = validate::scheme(&mut r, &map, plant, stem);
    r.check_acknowledgements();
    match scheme {
        Some(value) if r.diagnostics.is_empty() => Ok(Loaded {
            value,
            warnings: std::mem::take(&mut r.warnings),
        }),
        _ => Err(nonempty(r, file)),
    }
}

/// Reads and validates a plant file.
pub fn load_plant(path: &Path) -> Result<Plant, Error> {
    load_plant_warned(path).map(|l| l.value)
}

/// [`load_plant`] with the file's plausibility warnings and notes.
pub fn load_plant_warned(path: &Path) -> Result<Loaded<Plant>, Error> {
    let (text, file) = read_capped(path)?;
    parse_plant_warned(&text, &file).map_err(Error::Input)
}

/// Reads and validates a cases file against its plant.
pub fn load_cases(path: &Path, plant: &Plant) -> Result<CaseSet, Error> {
    load_cases_warned(path, plant).map(|l| l.value)
}

/// [`load_cases`] with the file's plausibility warnings and notes.
pub fn load_cases_warned(path: &Path, plant: &Plant) -> Result<Loaded<CaseSet>, Error> {
    let (text, file) = read_capped(path)?;
    parse_cases_warned(&text, &file, plant).map_err(Error::Input)
}

/// Reads and validates a scheme file against its plant.
pub fn load_scheme(path: &Path, plant: &Plant) -> Result<Scheme, Error> {
    load_scheme_warned(path, plant).map(|l| l.value)
}

/// [`load_scheme`] with the file's plausibility warnings and notes.
pub fn load_scheme_warned(path: &Path, plant: &Plant) -> Result<Loaded<Scheme>, Error> {
    let (text, file) = read_capped(path)?;
    parse_scheme_warned(&text, &file, plant).map_err(Error::Input)
}

/// The environment's limits; a malformed `NADIR_MAX_*` variable is a diagnostic of the file being
/// read, since the file cannot be checked without knowing its limits.
fn env_limits(file: &str) -> Result<Limits, Vec<Diagnostic>> {
    Limits::from_env().map_err(|e| {
        vec![Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: e.to_string(),
            help: Some(format!(
                "unset {} to use the default, or set it to a whole number such as 5000",
                e.env
            )),
        }]
    })
}

/// A validator that returns `None` has always recorded why; this guards that promise. Diagnostics
/// past the cap are summed up in one last entry.
fn nonempty(r: Reader, file: &str) -> Vec<Diagnostic> {
    let mut list = r.diagnostics;
    if list.is_empty() {
        list.push(Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: "internal error (please report): validation failed without a diagnostic"
                .to_string(),
            help: None,
        });
    }
    if r.suppressed > 0 {
        list.push(Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: format!(
                "{} more mistake(s) not shown; only the first {} are listed",
                r.suppressed,
                limits::MAX_DIAGNOSTICS
            ),
            help: Some(
                "fix the mistakes shown (or check that this is the intended file) and run again"
                    .to_string(),
            ),
        });
    }
    list
}

/// Reads an input file as text under the size limit in force (`NADIR_MAX_FILE_BYTES`), with the
/// name its messages use: for a caller that needs the bytes as well as the model (the report
/// identifies each input by the bytes it parsed). The loaders read through it.
pub fn read_text(path: &Path) -> Result<(String, String), Error> {
    read_capped(path)
}

/// Reads a file as text, refusing one above the size limit before reading it: first by its
/// metadata length, then (for pipes and devices, whose length is unknown) by reading at most one
/// byte past the limit. Memory use is bounded by the limit either way.
fn read_capped(path: &Path) -> Result<(String, String), Error> {
    let file = path.display().to_string();
    let limits = env_limits(&file).map_err(Error::Input)?;
    let max = limits.get(limits::FILE_BYTES);
    let io = |source| Error::Io {
        path: file.clone(),
        source,
    };
    let f = std::fs::File::open(path).map_err(io)?;
    let meta = f.metadata().map_err(io)?;
    if meta.is_file() && meta.len() > max {
        return Err(Error::Input(vec![read::size_diagnostic(
            &file,
            &limits,
            Some(meta.len()),
        )]));
    }
    let mut bytes = Vec::new();
    f.take(max.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > max {
        return Err(Error::Input(vec![read::size_diagnostic(
            &file, &limits, None,
        )]));
    }
    match String::from_utf8(bytes) {
        Ok(text) => Ok((text, file)),
        Err(e) => Err(Error::Input(vec![Diagnostic {
            file: file.clone(),
            line: None,
            column: None,
            path: String::new(),
            message: format!(
                "the file is not utf-8 text (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ),
            help: Some("save the file as utf-8".to_string()),
        }])),
    }
}

/// One mistake in an input file, with where it is and how to fix it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Diagnostic {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line, when the place is known.
    pub line: Option<usize>,
    /// 1-based column, when the place is known.
    pub column: Option<usize>,
    /// Field path such as `generators[2].governor.droop_pct`; empty for the whole file.
    pub path: String,
    /// Lower case, no full stop: names the bad value and what is allowed.
    pub message: String,
    /// The fix, when one can be said.
    pub help: Option<String>,
}

impl fmt::Display for Diagnostic {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
            if let Some(col) = self.column {
                write!(f, ":{col}")?;
            }
        }
        if !self.path.is_empty() {
            write!(f, ": {}", self.path)?;
        }
        write!(f, ": {}", self.message)?;
        if let Some(help) = &self.help {
            write!(f, "\n    help: {help}")?;
        }
        Ok(())
    }
}
