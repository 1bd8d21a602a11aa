//! The command line: clap definitions, one file per verb, and how errors are shown.
//!
//! Owns argument parsing, choosing a verb and turning library results into text. Must not do
//! physics (that lives in the library) and nothing in the library imports this module.
//! `anyhow` is used here and in main.rs only, to add context such as which file was being read.
//!
//! To add a verb: write `src/cli/<verb>.rs` with an `Args` struct (clap derive, its doc comment
//! is the `--help`) and a `run(args) -> anyhow::Result<Outcome>`, then add one variant to
//! [`Command`] and one arm to [`run`].

pub mod audit;
pub mod calibrate;
pub mod check;
pub mod compare;
pub mod design;
pub mod load;
pub mod loads;
pub mod replay;
pub mod report;
pub mod schema;
pub mod sheet;
pub mod verify;

use clap::{Parser, Subcommand};

/// Under-frequency load-shedding checks for plants with their own generation.
///
/// Results are screening and study aids: settings must be reviewed by a qualified protection
/// engineer, coordinated with the grid operator, and conform to local codes.
#[derive(Debug, Parser)]
#[command(name = "nadir", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
    /// Refuse to run (exit code 2) while an input file has a plausibility warning that it does
    /// not acknowledge with a `# nadir-ok: CODE` comment; for automated checks.
    #[arg(long, global = true)]
    pub deny_warnings: bool,
}

/// The verbs.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Screening figures: balance, reserve, inertia, deficits, initial ROCOF, steady frequency
    /// and the load each stage sheds.
    Check(check::CheckArgs),
    /// Replay one case at one operating point: event log, summary, CSV and plot.
    Replay(replay::ReplayArgs),
    /// Replay every case at every operating point and judge each run against the criteria.
    Verify(verify::VerifyArgs),
    /// The shedding order and every violation of the plant's own rules (no simulation).
    Audit(audit::AuditArgs),
    /// What a settings change does: the settings difference and both verifications side by side.
    Compare(compare::CompareArgs),
    /// Write one self-contained HTML report for sign-off: inputs with SHA-256, verdict, plant,
    /// shedding table, audit, verification matrix with margins and a plot per case.
    Report(report::ReportArgs),
    /// Propose a shedding table that holds every case with the least load shed, and show it
    /// against the lower bound and a plain baseline.
    Design(design::DesignArgs),
    /// Write the JSON Schemas of the plant, cases and scheme files.
    Schema(schema::SchemaArgs),
    /// Write the relay setting sheet: one row per element a technician sets (CSV, HTML or
    /// Markdown).
    Sheet(sheet::SheetArgs),
    /// The plant's loads to and from a CSV load list: `loads import PLANT LIST.csv` writes the
    /// plant file with the list's loads, `loads export PLANT` writes the list.
    Loads(loads::LoadsArgs),
    /// Replay a case beside a recorded event (CSV or COMTRADE), compare nadir, ROCOF and
    /// settling value, and fit the plant parameters you name to the record.
    Calibrate(calibrate::CalibrateArgs),
}

/// How a verb that ran to the end came out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Exit code 0.
    Pass,
    /// A criterion or audit rule fails: exit code 1 (used by the verbs that judge criteria).
    Fail,
}

/// Runs the chosen verb.
pub fn run(cli: Cli) -> anyhow::Result<Outcome> {
    load::set_deny_warnings(cli.deny_warnings);
    // verify and report put the caveat beside their verdict; every other verb gets it last.
    let says_it_itself = matches!(cli.command, Command::Verify(_) | Command::Report(_));
    let outcome = match cli.command {
        Command::Check(args) => check::run(args),
        Command::Schema(args) => schema::run(args),
        Command::Verify(args) => verify::run(args),
        Command::Replay(args) => replay::run(args),
        Command::Audit(args) => audit::run(args),
        Command::Compare(args) => compare::run(args),
        Command::Report(args) => report::run(args),
        Command::Design(args) => design::run(args),
        Command::Sheet(args) => sheet::run(args),
        Command::Loads(args) => loads::run(args),
        Command::Calibrate(args) => calibrate::run(args),
    }?;
    if !says_it_itself {
        if let Some(caveat) = load::verdict_caveat() {
            use std::io::Write;
            let _ = writeln!(std::io::stderr(), "{caveat}");
        }
    }
    Ok(outcome)
}

/// A verb's output files, checked before any work against its inputs (`(role, path)`) and the one
/// overwrite rule (`--force` allows replacing an existing file, never an input); the rule and the
/// checks live in `nadir::report::write`. A verb writes each file with `Target::write`.
pub fn check_outputs(
    outputs: &[&std::path::Path],
    inputs: &[(&str, &std::path::Path)],
    force: bool,
) -> anyhow::Result<Vec<nadir::report::write::Target>> {
    use nadir::report::write::{self, Overwrite};
    Ok(write::check_outputs(
        outputs,
        inputs,
        Overwrite::from_force(force),
    )?)
}

/// `nadir: ` and the cause chain joined by `: `; input diagnostics each on their own line.
pub fn render_error(err: &anyhow::Error) -> String {
    let mut out = String::from("nadir: ");
    let mut first = true;
    for cause in err.chain() {
        if let Some(nadir::Error::Input(list)) = cause.downcast_ref::<nadir::Error>() {
            for d in list {
                out.push('\n');
                out.push_str(&d.to_string());
            }
            break;
        }
        let text = cause.to_string();
        // A cause that its context already quotes (an I/O error shown inside its wrapper) is
        // not repeated.
        if !first && out.ends_with(&text) {
            continue;
        }
        if !first {
            out.push_str(": ");
        }
        out.push_str(&text);
        first = false;
    }
    out
}

/// Writes a verb's output to standard output. When the reader has closed the pipe
/// (`nadir verify … | head -1` once `head` has exited), nadir follows the usual convention for
/// SIGPIPE: it removes any temporary file and ends by SIGPIPE, which a shell reports as exit
/// status 141; it never panics and never exits 0 with its output cut short.
pub fn write_stdout(text: &str) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => {
            end_by_signal(SIGPIPE);
            anyhow::bail!("standard output was closed before the output was complete")
        }
        other => Ok(other?),
    }
}

#[cfg(unix)]
const SIGPIPE: i32 = signal_hook::consts::SIGPIPE;
#[cfg(not(unix))]
const SIGPIPE: i32 = 13;

/// Removes every temporary output file, then ends the process by `signal` with its default
/// action (so the parent sees "killed by SIGINT", exit status 130 in a shell; SIGTERM 143;
/// SIGPIPE 141). Returns only where signals cannot be raised.
fn end_by_signal(signal: i32) {
    nadir::report::write::remove_temporaries_then(|| {
        #[cfg(unix)]
        {
            let _ = signal_hook::low_level::emulate_default_handler(signal);
            std::process::exit(128 + signal);
        }
        #[cfg(not(unix))]
        let _ = signal;
    })
}

/// On SIGINT and SIGTERM, remove the temporary files of any write in progress, then end by the
/// signal as the default action would. A thread waits for the signals, so the clean-up runs in
/// normal code, not in a signal handler.
pub fn clean_up_on_signals() {
    #[cfg(unix)]
    {
        use signal_hook::consts::{SIGINT, SIGTERM};
        let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
            return;
        };
        let _ = std::thread::Builder::new()
            .name("signals".into())
            .spawn(move || {
                if let Some(signal) = signals.forever().next() {
                    end_by_signal(signal);
                }
            });
    }
}
