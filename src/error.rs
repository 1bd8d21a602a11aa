//! The library's error type. Input mistakes travel as a list of [`Diagnostic`]s so that a user sees
//! every problem in a file at once; outcomes such as a failed criterion are values, never errors.

pub use crate::input::Diagnostic;

/// Every way a library call can fail.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// One or more input files are wrong; each diagnostic names file, place, field and fix.
    #[error("{}", render_diagnostics(.0))]
    Input(Vec<Diagnostic>),
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        path: String,
        #[source]
        source: std::io::Error,
    },
    /// A state the code believes impossible; a bug to report, raised instead of a panic.
    #[error("internal error (please report): {0}")]
    Internal(String),
}

fn render_diagnostics(list: &[Diagnostic]) -> String {
    let mut out = String::new();
    for (i, d) in list.iter().enumerate() {
        if i > 0 {
            out.push('\n');
        }
        out.push_str(&d.to_string());
    }
    out
}
