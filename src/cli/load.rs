//! Reading the input files for a verb, with the file named in the error context.
//!
//! Each file's plausibility warnings and notes are printed to standard error as the file is read,
//! so before any result of the verb (standard output stays clean for `--format json`), and kept
//! for the report. With `--deny-warnings` a warning not acknowledged in its file ends the verb
//! with exit code 2. Both settings are process-wide (one verb runs per process), set once by
//! [`super::run`] and read here, so that every verb gets them without passing them around.

use nadir::input::Warning;
use nadir::model::{CaseSet, Plant, Scheme};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Mutex;

static DENY_WARNINGS: AtomicBool = AtomicBool::new(false);
static SEEN: Mutex<Vec<Warning>> = Mutex::new(Vec::new());

/// `--deny-warnings`: an unacknowledged warning becomes an error.
pub fn set_deny_warnings(deny: bool) {
    DENY_WARNINGS.store(deny, Ordering::Relaxed);
}

/// Every warning and note of the files read so far, in reading order.
pub fn warnings_seen() -> Vec<Warning> {
    SEEN.lock().map(|s| s.clone()).unwrap_or_default()
}

/// The line a verdict carries while warnings are open, or `None` when there are none.
pub fn verdict_caveat() -> Option<String> {
    let open = warnings_seen().iter().filter(|w| w.is_open()).count();
    (open > 0).then(|| {
        format!(
            "Input warnings: {open} value(s) flagged above are not acknowledged; these results assume they are right."
        )
    })
}

pub fn plant(path: &Path) -> anyhow::Result<Plant> {
    let loaded = nadir::input::load_plant_warned(path).map_err(|e| context(e, "plant", path))?;
    show(&loaded.warnings)?;
    Ok(loaded.value)
}

pub fn cases(path: &Path, plant: &Plant) -> anyhow::Result<CaseSet> {
    let loaded =
        nadir::input::load_cases_warned(path, plant).map_err(|e| context(e, "cases", path))?;
    show(&loaded.warnings)?;
    Ok(loaded.value)
}

pub fn scheme(path: &Path, plant: &Plant) -> anyhow::Result<Scheme> {
    let loaded =
        nadir::input::load_scheme_warned(path, plant).map_err(|e| context(e, "scheme", path))?;
    show(&loaded.warnings)?;
    Ok(loaded.value)
}

/// Prints one file's open warnings and notes to standard error (acknowledged warnings are not
/// repeated on the terminal; the report lists them) and keeps them all; under
/// `--deny-warnings` an open warning is an error.
pub fn show(warnings: &[Warning]) -> anyhow::Result<()> {
    use std::io::Write;
    let mut err = std::io::stderr().lock();
    for w in warnings.iter().filter(|w| w.acknowledged.is_none()) {
        // A closed standard error must not stop the verb.
        let _ = writeln!(err, "{w}");
    }
    if let Ok(mut seen) = SEEN.lock() {
        seen.extend(warnings.iter().cloned());
    }
    let open: Vec<&Warning> = warnings.iter().filter(|w| w.is_open()).collect();
    if DENY_WARNINGS.load(Ordering::Relaxed) && !open.is_empty() {
        anyhow::bail!(
            "{}: {} warning(s) not acknowledged, and --deny-warnings is set; correct each value, or if it is right acknowledge it with `# nadir-ok: CODE` at the end of its line",
            open[0].file,
            open.len()
        );
    }
    Ok(())
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
