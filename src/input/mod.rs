//! Reading the three input files: YAML text → raw serde types → validated [`crate::model`] types.
//!
//! Returns the model or **every** diagnostic found in a file, never only the first. Nothing outside
//! this module knows that YAML exists.

pub mod defaults;
mod locate;
pub mod raw;
mod read;
mod validate;

use crate::error::Error;
use crate::model::{CaseSet, Plant, Scheme};
use read::Reader;
use std::fmt;
use std::io::Read;
use std::path::Path;

/// Largest input file read, in bytes (4 MiB): far above any real plant, small enough that a wrong
/// file (a log, a binary) is refused before parsing.
pub const MAX_FILE_BYTES: u64 = 4 * 1024 * 1024;

/// Validates a plant file's text; `file` is the name used in messages.
pub fn parse_plant(text: &str, file: &str) -> Result<Plant, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file)?;
    match validate::plant(&mut r, &map) {
        Some(p) if r.diagnostics.is_empty() => Ok(p),
        _ => Err(nonempty(r, file)),
    }
}

/// Validates a cases file's text against its plant.
pub fn parse_cases(text: &str, file: &str, plant: &Plant) -> Result<CaseSet, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file)?;
    match validate::cases(&mut r, &map, plant) {
        Some(c) if r.diagnostics.is_empty() => Ok(c),
        _ => Err(nonempty(r, file)),
    }
}

/// Validates a scheme file's text against its plant. A scheme without `name` is named after the
/// file's stem.
pub fn parse_scheme(text: &str, file: &str, plant: &Plant) -> Result<Scheme, Vec<Diagnostic>> {
    let (mut r, map) = Reader::open(text, file)?;
    let stem = Path::new(file)
        .file_stem()
        .and_then(|s| s.to_str())
        .unwrap_or(file);
    match validate::scheme(&mut r, &map, plant, stem) {
        Some(s) if r.diagnostics.is_empty() => Ok(s),
        _ => Err(nonempty(r, file)),
    }
}

/// Reads and validates a plant file.
pub fn load_plant(path: &Path) -> Result<Plant, Error> {
    let (text, file) = read_capped(path)?;
    parse_plant(&text, &file).map_err(Error::Input)
}

/// Reads and validates a cases file against its plant.
pub fn load_cases(path: &Path, plant: &Plant) -> Result<CaseSet, Error> {
    let (text, file) = read_capped(path)?;
    parse_cases(&text, &file, plant).map_err(Error::Input)
}

/// Reads and validates a scheme file against its plant.
pub fn load_scheme(path: &Path, plant: &Plant) -> Result<Scheme, Error> {
    let (text, file) = read_capped(path)?;
    parse_scheme(&text, &file, plant).map_err(Error::Input)
}

/// A validator that returns `None` has always recorded why; this guards that promise.
fn nonempty(r: Reader, file: &str) -> Vec<Diagnostic> {
    if r.diagnostics.is_empty() {
        vec![Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: "internal error (please report): validation failed without a diagnostic"
                .to_string(),
            help: None,
        }]
    } else {
        r.diagnostics
    }
}

fn read_capped(path: &Path) -> Result<(String, String), Error> {
    let file = path.display().to_string();
    let io = |source| Error::Io {
        path: file.clone(),
        source,
    };
    let f = std::fs::File::open(path).map_err(io)?;
    let mut bytes = Vec::new();
    // Read one byte past the cap so that an oversized file (or an endless device) is noticed
    // without reading it all.
    f.take(MAX_FILE_BYTES + 1)
        .read_to_end(&mut bytes)
        .map_err(io)?;
    let whole = |message: String, help: &str| {
        Error::Input(vec![Diagnostic {
            file: file.clone(),
            line: None,
            column: None,
            path: String::new(),
            message,
            help: Some(help.to_string()),
        }])
    };
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(whole(
            format!(
                "the file is larger than the input size limit of 4 MiB ({MAX_FILE_BYTES} bytes)"
            ),
            "check that this is the intended file; plant, cases and scheme files are small",
        ));
    }
    match String::from_utf8(bytes) {
        Ok(text) => Ok((text, file)),
        Err(e) => Err(whole(
            format!(
                "the file is not utf-8 text (invalid byte at offset {})",
                e.utf8_error().valid_up_to()
            ),
            "save the file as utf-8",
        )),
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
