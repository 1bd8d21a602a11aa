//! Recorded events: a frequency record read from a disturbance recorder's or relay's file, for
//! comparing the plant model with what really happened.
//!
//! Owns the record formats (`csv.rs` a time column with a frequency or voltage columns;
//! `comtrade/` IEEE C37.111 configuration and data files), the checks every record's time axis
//! must pass (`axis.rs`: strictly increasing, no sampling gap), frequency estimated from voltage
//! waveforms (`estimate.rs`, zero crossings over whole cycles) and the bounded reading of a file
//! (`bytes.rs`, under the `max_record_bytes` and `max_record_samples` limits). It must not know
//! the plant, the simulator or how a record is used: it returns one time series of frequency with
//! where it came from, or every diagnostic that stops it (exit 2 at the binary).

mod axis;
mod bytes;
pub mod comtrade;
mod csv;
pub mod estimate;

use crate::error::Error;
use crate::input::limits::Limits;
use crate::input::Diagnostic;
use std::path::{Path, PathBuf};

/// A recorded frequency: one time series on the record's own time axis.
#[derive(Debug, Clone, PartialEq)]
pub struct FrequencyRecord {
    /// The file read (the `.cfg` of a COMTRADE pair), for messages and reports.
    pub source: PathBuf,
    /// Strictly increasing, in seconds on the record's own axis (a COMTRADE record's first sample
    /// is 0; a CSV record keeps the times it gives, negative ones included).
    pub times_s: Vec<f64>,
    /// Same length as `times_s`, every value finite.
    pub frequency_hz: Vec<f64>,
    /// The record's own trigger (event) time on the same axis, when the file states one (a
    /// COMTRADE configuration does; a CSV record does not).
    pub trigger_s: Option<f64>,
    /// Where the frequency came from: a measured channel, or estimated from a voltage.
    pub origin: FrequencyOrigin,
    /// The nominal frequency the file states (COMTRADE `lf`), if any.
    pub nominal_hz: Option<f64>,
    /// The wall-clock time of the record's first sample as the file writes it
    /// (`dd/mm/yyyy,hh:mm:ss.ssssss` in COMTRADE), if it states one; for reports only.
    pub start_time: Option<String>,
}

/// Where a record's frequency came from.
#[derive(Debug, Clone, PartialEq)]
pub enum FrequencyOrigin {
    /// A channel that holds frequency in Hz.
    Measured { channel: String },
    /// Estimated from a voltage waveform channel; `method` names the estimator, its window and its
    /// published source, as reports show it.
    Estimated { channel: String, method: String },
}

/// How a time column's numbers are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeUnit {
    Seconds,
    Milliseconds,
    Microseconds,
}

/// Choices a caller can make when reading a record; [`Default`] suits a record with one
/// frequency channel, or with voltages only.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadOptions {
    /// The channel to use, by its CSV heading or COMTRADE channel id (compared ignoring case,
    /// spaces and a unit in brackets). Without it: the one frequency channel, else the first
    /// voltage channel.
    pub channel: Option<String>,
    /// The unit of a CSV time column whose heading does not say it (`time` rather than
    /// `time_s` or `time [ms]`). When the heading says it too, the two must agree.
    pub time_unit: Option<TimeUnit>,
    /// Whole cycles in each window of the waveform estimator ([`estimate`]); from 1 to
    /// [`estimate::MAX_CYCLES`].
    pub estimate_cycles: usize,
    /// Largest step between two samples that is not a sampling gap, in seconds. Without it a step
    /// above 1.5 times the record's median step is a gap (one lost sample on a fixed rate is).
    pub max_step_s: Option<f64>,
    /// The limits in force; `None` reads them from the environment (`NADIR_MAX_*`).
    pub limits: Option<Limits>,
}

impl Default for ReadOptions {
    fn default() -> ReadOptions {
        ReadOptions {
            channel: None,
            time_unit: None,
            estimate_cycles: estimate::DEFAULT_CYCLES,
            max_step_s: None,
            limits: None,
        }
    }
}

/// Every file the reader takes for the record at `path`: the file itself and, for a COMTRADE
/// configuration (`.cfg`), the data file beside it, so that a report can identify the whole record
/// by its bytes.
pub fn files_of(path: &Path) -> Vec<std::path::PathBuf> {
    let mut files = vec![path.to_path_buf()];
    let is_cfg = path
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("cfg"));
    if is_cfg {
        files.extend(comtrade::data_path(path));
    }
    files
}

/// Reads a recorded event's frequency from `path`: a CSV record (`.csv`, `.txt`), or a COMTRADE
/// record by its configuration file (`.cfg`, with the `.dat` beside it) or its single file
/// (`.cff`). Every problem is a diagnostic naming the file, the line or sample, and the fix.
pub fn read_frequency_record(path: &Path, options: &ReadOptions) -> Result<FrequencyRecord, Error> {
    let file = path.display().to_string();
    let limits = match &options.limits {
        Some(l) => l.clone(),
        None => Limits::from_env().map_err(|e| {
            Error::Input(vec![diagnostic(
                &file,
                None,
                e.to_string(),
                format!(
                    "unset {} to use the default, or set it to a whole number",
                    e.env
                ),
            )])
        })?,
    };
    check_options(&file, options)?;
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase)
        .unwrap_or_default();
    match ext.as_str() {
        "csv" | "txt" | "tsv" => csv::read(path, options, &limits),
        "cfg" | "cff" => comtrade::read(path, options, &limits),
        "dat" => Err(Error::Input(vec![diagnostic(
            &file,
            None,
            "a COMTRADE record is read through its configuration file, not its data file"
                .to_string(),
            format!(
                "give `{}` (the .cfg beside the .dat) instead",
                path.with_extension("cfg").display()
            ),
        )])),
        _ => Err(Error::Input(vec![diagnostic(
            &file,
            None,
            format!(
                "`{}` is not a record format nadir reads (by its extension)",
                path.file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default()
            ),
            "give a CSV record (.csv, with a time column and a frequency or voltage columns) or \
             a COMTRADE record (.cfg with its .dat, or .cff); see docs/files.md, section records"
                .to_string(),
        )])),
    }
}

/// Options a caller got wrong are diagnostics too (the binary passes them from the command line).
fn check_options(file: &str, options: &ReadOptions) -> Result<(), Error> {
    if !(1..=estimate::MAX_CYCLES).contains(&options.estimate_cycles) {
        return Err(Error::Input(vec![diagnostic(
            file,
            None,
            format!(
                "the estimator window of {} cycles is outside 1 to {}",
                options.estimate_cycles,
                estimate::MAX_CYCLES
            ),
            format!(
                "use a few cycles ({} by default): fewer follow fast changes, more smooth noise",
                estimate::DEFAULT_CYCLES
            ),
        )]));
    }
    if let Some(step) = options.max_step_s {
        if !(step.is_finite() && step > 0.0) {
            return Err(Error::Input(vec![diagnostic(
                file,
                None,
                format!("the largest allowed sampling step {step} s is not a positive number"),
                "give the largest step between two samples in seconds, such as 0.02".to_string(),
            )]));
        }
    }
    Ok(())
}

/// A diagnostic of a record file at a line (CSV, COMTRADE configuration or ASCII data) or none.
fn diagnostic(file: &str, line: Option<usize>, message: String, help: String) -> Diagnostic {
    Diagnostic {
        file: file.to_string(),
        line,
        column: None,
        path: String::new(),
        message,
        help: Some(help),
    }
}

/// A single diagnostic as the library's error.
fn refuse(file: &str, line: Option<usize>, message: String, help: String) -> Error {
    Error::Input(vec![diagnostic(file, line, message, help)])
}

/// The largest step between two consecutive frequency samples that can be the system's frequency:
/// both more than [`JUMP_HZ`] and faster than [`JUMP_HZ_PER_S`]. The rate is a whole plant's
/// generation lost on an island of 1 s inertia at 50 Hz, f0·ΔP/(2H) = 50·1/(2·1) = 25 Hz/s, beyond
/// any islanding a plant with synchronous machines shows; the size keeps fine sampling with noise
/// (a few mHz over 0.1 ms) clear of the rate. A faster, larger step is a lost sample (a recorder
/// writing 0 or a full-scale value) or a measurement artefact at a switching instant (common
/// practice, no source); read as frequency it would set the record's nadir or ROCOF.
const JUMP_HZ: f64 = 1.0;
const JUMP_HZ_PER_S: f64 = 25.0;

/// Checks a measured frequency channel's values: finite, in Hz rather than per unit or mHz, and
/// free of steps no system frequency can take ([`JUMP_HZ`], [`JUMP_HZ_PER_S`]). `place(i)` names
/// sample `i` for messages (a CSV line or a COMTRADE sample number).
fn check_hz(
    file: &str,
    channel: &str,
    times: &[f64],
    values: &[f64],
    place: &dyn Fn(usize) -> (Option<usize>, String),
) -> Result<(), Error> {
    if let Some(i) = values.iter().position(|v| !v.is_finite()) {
        let (line, at) = place(i);
        return Err(refuse(
            file,
            line,
            format!("{at}: the frequency in `{channel}` is not a finite number"),
            "the recorder lost this sample: cut the record before it, or fill it".to_string(),
        ));
    }
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    let median = sorted[sorted.len() / 2];
    if !(10.0..=1000.0).contains(&median) {
        let guess = if median.abs() < 10.0 {
            "per unit or a deviation from nominal"
        } else {
            "mHz or another unit"
        };
        return Err(refuse(
            file,
            None,
            format!(
                "the frequency channel `{channel}` has a median of {median} Hz, which looks like \
                 {guess}, not Hz"
            ),
            "give the frequency in Hz (multiply per unit by the nominal frequency; add a \
             deviation to it); nadir does not convert a frequency it has to guess the unit of"
                .to_string(),
        ));
    }
    for i in 1..values.len().min(times.len()) {
        let step_hz = values[i] - values[i - 1];
        let dt = times[i] - times[i - 1];
        if step_hz.abs() > JUMP_HZ && step_hz.abs() > JUMP_HZ_PER_S * dt {
            let (line, at) = place(i);
            return Err(refuse(
                file,
                line,
                format!(
                    "{at}: the frequency in `{channel}` steps from {} Hz to {} Hz in {:.3} ms, \
                     {:.0} Hz/s; no system frequency moves that fast (a lost sample or a \
                     measurement artefact)",
                    values[i - 1],
                    values[i],
                    dt * 1e3,
                    step_hz.abs() / dt
                ),
                format!(
                    "check the samples around this one; cut the record before it, or replace a \
                     lost sample by its neighbours' mean; nadir refuses a step of more than {JUMP_HZ} Hz \
                     faster than {JUMP_HZ_PER_S} Hz/s rather than read it as the frequency"
                ),
            ));
        }
    }
    Ok(())
}

/// The record from one channel's samples: the time axis checked, then a frequency channel's
/// values checked, or a voltage's frequency estimated. `place(i)` names sample `i`. `gaps` is false
/// when the times come from declared sampling rates (COMTRADE), which may change mid-record and
/// cannot leave a gap.
#[allow(clippy::too_many_arguments)]
fn series(
    file: &str,
    path: &Path,
    times: Vec<f64>,
    values: Vec<f64>,
    channel: String,
    measured: bool,
    place: &dyn Fn(usize) -> (Option<usize>, String),
    options: &ReadOptions,
    gaps: bool,
) -> Result<FrequencyRecord, Error> {
    axis::check(
        file,
        &times,
        options.max_step_s.filter(|_| gaps),
        place,
        gaps,
    )?;
    let (times_s, frequency_hz, origin) = if measured {
        check_hz(file, &channel, &times, &values, place)?;
        (times, values, FrequencyOrigin::Measured { channel })
    } else {
        if let Some(i) = values.iter().position(|v| !v.is_finite()) {
            let (line, at) = place(i);
            return Err(refuse(
                file,
                line,
                format!("{at}: the voltage in `{channel}` is not a finite number"),
                "the recorder lost this sample: cut the record before it, or fill it".to_string(),
            ));
        }
        let cycles = options.estimate_cycles;
        let e = estimate::zero_crossings(&times, &values, cycles).map_err(|e| {
            refuse(
                file,
                None,
                format!("cannot estimate frequency from `{channel}`: {e}"),
                "give a record with a frequency channel, or voltage samples of at least a few \
                 cycles at a rate of 8 or more samples per cycle"
                    .to_string(),
            )
        })?;
        (
            e.times_s,
            e.frequency_hz,
            FrequencyOrigin::Estimated {
                channel,
                method: estimate::method_text(cycles),
            },
        )
    };
    Ok(FrequencyRecord {
        source: path.to_path_buf(),
        times_s,
        frequency_hz,
        trigger_s: None,
        origin,
        nominal_hz: None,
        start_time: None,
    })
}
