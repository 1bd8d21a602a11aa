//! Reading the three input files: YAML text → raw serde types → validated [`crate::model`] types.
//!
//! Returns the model or **every** diagnostic found in a file, never only the first. Nothing outside
//! this module knows that YAML exists.

pub mod raw;

use std::fmt;

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
