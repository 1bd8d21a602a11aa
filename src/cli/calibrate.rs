//! `nadir calibrate`: one case replayed beside a recorded event, the figures that matter side by
//! side, and (with `--fit`) chosen plant parameters fitted to the record, written to a new plant
//! file with a note beside each fitted value.

use super::check::{finish, fmt};
use super::verify::wrap_text;
use super::{load, Outcome};
use anyhow::{bail, Context};
use nadir::calibrate::{self, fit, params, Comparison, Recorded, Setup};
use nadir::recording::{self, FrequencyOrigin, FrequencyRecord, ReadOptions, TimeUnit};
use nadir::report::plot::{self, RunAt};
use std::path::{Path, PathBuf};
use tabled::builder::Builder;

/// Replay a case beside a recorded event, compare nadir, ROCOF and settling value, and fit the
/// plant parameters you name to the record.
///
/// The record's event is placed on the case's first event: at --event-at when given, else at the
/// record's own trigger time, else at the onset of the frequency's departure from its level
/// (docs/calibration.md gives the rule). Exit code 0 when the comparison (and the fit) ran, 1
/// when a fit did not converge (no plant file is written then), 2 for bad input.
#[derive(Debug, clap::Args)]
pub struct CalibrateArgs {
    /// Plant file (YAML); read, never written.
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML): the table in service during the recorded event.
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// Cases file (YAML).
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// The case that describes what happened (its id).
    #[arg(long, value_name = "ID")]
    pub case: String,
    /// Operating point before the event (its id); default: the first the case applies to.
    #[arg(long, value_name = "OPERATING_POINT")]
    pub at: Option<String>,
    /// The record: CSV (time and frequency or voltage columns) or COMTRADE (.cfg with its .dat,
    /// or .cff); docs/files.md, section "Records".
    #[arg(long, value_name = "FILE")]
    pub record: PathBuf,
    /// The record's channel to use (heading or channel id); default: its one frequency channel,
    /// else its first voltage channel.
    #[arg(long, value_name = "NAME")]
    pub channel: Option<String>,
    #[command(flatten)]
    pub axis: RecordAxisArgs,
    /// The bus section the record measured (its id); default: the first section.
    #[arg(long, value_name = "SECTION")]
    pub section: Option<String>,
    /// When the event happened, seconds on the record's own time axis.
    #[arg(long, value_name = "S", allow_negative_numbers = true)]
    pub event_at: Option<f64>,
    /// A parameter to fit, with bounds: KIND:ID=LO..HI, for example inertia_s:stg-1=2..8 or
    /// freq_exp:@2.5=0..4. Kinds: inertia_s (generator or motor load), freq_exp, droop_pct,
    /// governor_s, turbine_s; for loads ID may be `all` or `@VALUE` (every load whose value is
    /// VALUE, fitted as one). Repeat for several.
    #[arg(long = "fit", value_name = "KIND:ID=LO..HI")]
    pub fit: Vec<String>,
    /// Write the calibrated plant file here (.yaml): the plant file with the fitted values and a
    /// note beside each. Needs --fit.
    #[arg(short = 'o', long = "output", value_name = "FILE.yaml")]
    pub output: Option<PathBuf>,
    /// Plot the record, the model before and (with --fit) after, with the event marked: PNG
    /// when FILE ends in .png, SVG when it ends in .svg.
    #[arg(long, value_name = "FILE.svg|FILE.png")]
    pub plot: Option<PathBuf>,
    /// Replace the output and plot files if they exist (never one of the input files).
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: CalibrateArgs) -> anyhow::Result<Outcome> {
    if args.output.is_some() && args.fit.is_empty() {
        bail!("--output writes a calibrated plant file, so it needs at least one --fit KIND:ID=LO..HI");
    }
    if let Some(path) = &args.output {
        let ext = path
            .extension()
            .map(|e| e.to_string_lossy().to_lowercase())
            .unwrap_or_default();
        if !matches!(ext.as_str(), "yaml" | "yml") {
            bail!(
                "{}: --output writes a plant file; name it .yaml",
                path.display()
            );
        }
    }
    let outputs: Vec<&Path> = [&args.output, &args.plot]
        .into_iter()
        .flatten()
        .map(PathBuf::as_path)
        .collect();
    let targets = super::check_outputs(
        &outputs,
        &[
            ("plant", args.plant.as_path()),
            ("scheme", args.scheme.as_path()),
            ("cases", args.cases.as_path()),
            ("record", args.record.as_path()),
        ],
        args.force,
    )?;
    let plot_format = match &args.plot {
        Some(path) => Some(plot::Format::for_path(path).map_err(anyhow::Error::msg)?),
        None => None,
    };
    let mut targets = targets.into_iter();
    let output_target = args.output.as_ref().and_then(|_| targets.next());
    let plot_target = args.plot.as_ref().and_then(|_| targets.next());

    let plant = load::plant(&args.plant)?;
    let cases = load::cases(&args.cases, &plant)?;
    let scheme = load::scheme(&args.scheme, &plant)?;
    let plant_file = args.plant.display().to_string();
    let mut requested = Vec::new();
    for r in &args.fit {
        requested.push(params::parse(r, &plant, &plant_file).map_err(anyhow::Error::msg)?);
    }
    params::check_disjoint(&requested).map_err(anyhow::Error::msg)?;
    let ev = recorded_event(
        &EventRequest {
            record: &args.record,
            channel: args.channel.as_deref(),
            axis: &args.axis,
            case: &args.case,
            at: args.at.as_deref(),
            section: args.section.as_deref(),
            event_at: args.event_at,
            plant_file: &args.plant,
            cases_file: &args.cases,
        },
        &plant,
        &cases,
    )?;
    let (case, op, section) = (&cases.cases[ev.case], ev.operating_point, ev.section);
    let (record, recorded, event_at, event_how) =
        (&ev.record, &ev.recorded, ev.event_at, &ev.event_how);
    let setup = Setup::new(&plant, case, op, &scheme, section);
    let window = plant.criteria.rocof_window_s;
    let before = calibrate::replay_at(&setup, &plant, &recorded.t_s).map_err(|status| {
        anyhow::anyhow!(
            "the model of {} at {} does not run to its end ({status}); no comparison can be made",
            case.id,
            plant.operating_points[op].id
        )
    })?;
    let compared = calibrate::compare(&recorded, &before, window);

    let point = &plant.operating_points[op];
    let mut out = format!(
        "Calibration of {} at {} against {}\n\n",
        case.id,
        point.id,
        args.record.display()
    );
    out.push_str(&record_lines(
        &record,
        &recorded,
        &plant.sections[section].id,
    ));
    out.push_str(&format!(
        "  event            {} s on the record's axis ({event_how}), placed at case time {} s\n\n",
        fmt(event_at, 3),
        fmt(calibrate::case_event_s(case), 3)
    ));
    let mut outcome = Outcome::Pass;
    let fitted = if requested.is_empty() {
        out.push_str(&figures_table(&compared, None, window));
        None
    } else {
        let result = fit::fit(&setup, &recorded, &requested).ok_or_else(|| {
            anyhow::anyhow!(
                "the fit stopped: a replay within the bounds did not run to its end; narrow the bounds"
            )
        })?;
        let mut fitted_plant = plant.clone();
        for (p, f) in requested.iter().zip(&result.fitted) {
            params::apply(&mut fitted_plant, p, f.value);
        }
        let after = calibrate::replay_at(&setup, &fitted_plant, &recorded.t_s)
            .map_err(|s| anyhow::anyhow!("the fitted model does not run to its end ({s})"))?;
        let compared_after = calibrate::compare(&recorded, &after, window);
        out.push_str(&figures_table(&compared, Some(&compared_after), window));
        out.push('\n');
        out.push_str(&fit_lines(&result));
        if !result.converged {
            outcome = Outcome::Fail;
        }
        Some((result, fitted_plant))
    };

    if let (Some(target), Some((result, _))) = (&output_target, &fitted) {
        if result.converged {
            let text = calibrated_text(&args, &requested, result, event_at)?;
            target
                .write(text.as_bytes())
                .context("writing the calibrated plant file")?;
            out.push_str(&format!(
                "\nCalibrated plant file written to {}. Check it with `nadir check {}`, then verify \
                 the table on it: nadir verify {} {} --cases {}\n",
                target.path().display(),
                target.path().display(),
                target.path().display(),
                args.scheme.display(),
                args.cases.display()
            ));
        } else {
            out.push_str("\nNo plant file written: the fit did not converge.\n");
        }
    }
    if let (Some(target), Some(format)) = (&plot_target, plot_format) {
        let runs_before = nadir::sim::simulate(&plant, case, op, &scheme, &setup.config);
        let after_run = fitted
            .as_ref()
            .map(|(_, p)| nadir::sim::simulate(p, case, op, &scheme, &setup.config));
        let mut runs = vec![RunAt {
            point: "model (plant file)",
            run: &runs_before,
        }];
        if let Some(r) = &after_run {
            runs.push(RunAt {
                point: "model (fitted)",
                run: r,
            });
        }
        let title = format!(
            "{} at {} — record {}",
            case.id,
            point.id,
            file_name(&args.record)
        );
        let mut drawn = plot::build(&plant, &scheme, case, &runs, title, true);
        let shown: Vec<f64> = record
            .times_s
            .iter()
            .map(|t| t - recorded.shift_s)
            .collect();
        plot::record::add_record(
            &mut drawn,
            "record",
            &shown,
            &record.frequency_hz,
            calibrate::case_event_s(case),
            "event in the record",
        );
        target.write(&format.bytes(&drawn).context("drawing the plot")?)?;
        out.push_str(&format!("Plot written to {}\n", target.path().display()));
    }
    out.push('\n');
    out.push_str(&wrap_text(
        "Figures of record and model are read the same way, at the record's samples: nadir after a \
         0.1 s centred mean; ROCOF as the largest |f(t) − f(t − W)|/W; settling value as the mean \
         of the last 1 s (docs/calibration.md).",
        "",
        "",
    ));
    out.push_str(&wrap_text(super::verify::CAUTION, "", ""));
    super::write_stdout(&out)?;
    Ok(outcome)
}

/// How to read a record's time axis: the flags of `calibrate` and of `report --record`, named as
/// the record reader's fix texts name them.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct RecordAxisArgs {
    /// Unit of a CSV record's time column when its heading does not say it (`time` rather than
    /// `time_s` or `time [ms]`); when the heading says it too, the two must agree.
    #[arg(long, value_enum, value_name = "UNIT")]
    pub time_unit: Option<TimeUnitArg>,
    /// Largest step between two samples that is not a sampling gap, seconds; default: 1.5 times
    /// the record's median step.
    #[arg(long, value_name = "S")]
    pub max_step: Option<f64>,
}

/// A record's time unit as typed on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum TimeUnitArg {
    /// Seconds.
    S,
    /// Milliseconds.
    Ms,
    /// Microseconds.
    Us,
}

impl From<TimeUnitArg> for TimeUnit {
    fn from(u: TimeUnitArg) -> TimeUnit {
        match u {
            TimeUnitArg::S => TimeUnit::Seconds,
            TimeUnitArg::Ms => TimeUnit::Milliseconds,
            TimeUnitArg::Us => TimeUnit::Microseconds,
        }
    }
}

/// Which record, case, point and section a comparison uses (the flags of `calibrate`, and of
/// `report --record`).
pub struct EventRequest<'a> {
    pub record: &'a Path,
    pub channel: Option<&'a str>,
    pub axis: &'a RecordAxisArgs,
    pub case: &'a str,
    pub at: Option<&'a str>,
    pub section: Option<&'a str>,
    pub event_at: Option<f64>,
    pub plant_file: &'a Path,
    pub cases_file: &'a Path,
}

/// A record read, checked against the plant, and aligned to its case.
pub struct RecordedEvent {
    /// Index into the cases.
    pub case: usize,
    pub operating_point: usize,
    pub section: usize,
    pub record: FrequencyRecord,
    pub recorded: Recorded,
    pub event_at: f64,
    pub event_how: String,
}

/// Reads the record and places it on its case: every mistake is an error naming the flag or file
/// and the fix.
pub fn recorded_event(
    req: &EventRequest,
    plant: &nadir::model::Plant,
    cases: &nadir::model::CaseSet,
) -> anyhow::Result<RecordedEvent> {
    if let Some(t) = req.event_at {
        if !t.is_finite() {
            bail!("--event-at {t}: give the event time as a finite number of seconds on the record's axis");
        }
    }
    let Some(case_idx) = cases.cases.iter().position(|c| c.id == req.case) else {
        let known: Vec<&str> = cases.cases.iter().map(|c| c.id.as_str()).collect();
        bail!(
            "--case {}: no such case in {}; cases are: {}",
            req.case,
            req.cases_file.display(),
            known.join(", ")
        );
    };
    let case = &cases.cases[case_idx];
    let op = match req.at {
        None => case.applies_to[0],
        Some(id) => match case
            .applies_to
            .iter()
            .find(|&&o| plant.operating_points[o].id == id)
        {
            Some(&o) => o,
            None => {
                let names: Vec<&str> = case
                    .applies_to
                    .iter()
                    .map(|&o| plant.operating_points[o].id.as_str())
                    .collect();
                bail!(
                    "--at {id}: case {} applies to {}",
                    case.id,
                    names.join(", ")
                )
            }
        },
    };
    let section = match req.section {
        None => 0,
        Some(id) => match plant.sections.iter().position(|s| s.id == id) {
            Some(s) => s,
            None => {
                let names: Vec<&str> = plant.sections.iter().map(|s| s.id.as_str()).collect();
                bail!(
                    "--section {id}: no such section in {}; sections are: {}",
                    req.plant_file.display(),
                    names.join(", ")
                )
            }
        },
    };
    let options = ReadOptions {
        channel: req.channel.map(str::to_string),
        time_unit: req.axis.time_unit.map(TimeUnit::from),
        max_step_s: req.axis.max_step,
        ..ReadOptions::default()
    };
    let record = recording::read_frequency_record(req.record, &options)
        .with_context(|| format!("reading record {}", req.record.display()))?;
    if let Some(f0) = record.nominal_hz {
        if (f0 - plant.nominal_hz).abs() > 1e-6 {
            bail!(
                "{}: the record states a {} Hz system and {} a {} Hz plant; give the record of this plant",
                req.record.display(),
                fmt(f0, 0),
                req.plant_file.display(),
                fmt(plant.nominal_hz, 0)
            );
        }
    }
    // A record of another system (60 Hz against a 50 Hz plant) or in another unit (per unit,
    // mHz of deviation) is refused before any comparison: its level is far from the plant's.
    let mut sorted = record.frequency_hz.clone();
    sorted.sort_by(f64::total_cmp);
    if let Some(&median) = sorted.get(sorted.len() / 2) {
        if (median - plant.nominal_hz).abs() > 0.1 * plant.nominal_hz {
            bail!(
                "{}: the record's frequency is mostly near {} Hz, far from the plant's nominal {} Hz; \
                 check that the channel holds frequency in Hz (--channel) and that the record is of this plant",
                req.record.display(),
                fmt(median, 3),
                fmt(plant.nominal_hz, 0)
            );
        }
    }
    let (event_at, event_how) = event_time(req, &record)?;
    let recorded = calibrate::align(&record.times_s, &record.frequency_hz, event_at, case)
        .map_err(|e| match e {
            calibrate::AlignError::TooFewSamples {
                inside,
                from_s,
                to_s,
            } => anyhow::anyhow!(
                "{}: only {inside} sample(s) lie within the case once the event is placed at {} s \
                 (the case covers {} s to {} s of the record); check --event-at and that the \
                 record is of this event",
                req.record.display(),
                fmt(event_at, 3),
                fmt(from_s, 3),
                fmt(to_s, 3)
            ),
        })?;
    Ok(RecordedEvent {
        case: case_idx,
        operating_point: op,
        section,
        record,
        recorded,
        event_at,
        event_how,
    })
}

/// The event time on the record's axis and how it was found.
fn event_time(req: &EventRequest, record: &FrequencyRecord) -> anyhow::Result<(f64, String)> {
    if let Some(t) = req.event_at {
        let (first, last) = (
            record.times_s.first().copied().unwrap_or(0.0),
            record.times_s.last().copied().unwrap_or(0.0),
        );
        if t < first || t > last {
            bail!(
                "--event-at {}: the record runs from {} s to {} s on its own axis; give a time within it",
                fmt(t, 3),
                fmt(first, 3),
                fmt(last, 3)
            );
        }
        return Ok((t, "given by --event-at".into()));
    }
    if let Some(t) = record.trigger_s {
        return Ok((t, "the record's trigger time".into()));
    }
    match calibrate::figures::onset(&record.times_s, &record.frequency_hz) {
        Some(o) => Ok((
            o.at_s,
            format!(
                "onset found: left its {} Hz level by over {} Hz",
                fmt(o.level_hz, 3),
                fmt(o.threshold_hz, 3)
            ),
        )),
        None => bail!(
            "{}: no event found in the record (it needs at least {} s before the event, and a \
             departure of more than {} Hz from the level there); give the event time with \
             --event-at S (seconds on the record's axis)",
            req.record.display(),
            fmt(calibrate::figures::PRE_EVENT_S, 1),
            fmt(calibrate::figures::MIN_DEPARTURE_HZ, 2)
        ),
    }
}

fn record_lines(record: &FrequencyRecord, recorded: &Recorded, section: &str) -> String {
    let origin = match &record.origin {
        FrequencyOrigin::Measured { channel } => format!("channel {channel} (measured frequency)"),
        FrequencyOrigin::Estimated { channel, method } => {
            format!("estimated from channel {channel}: {method}")
        }
    };
    let (first, last) = (
        record.times_s.first().copied().unwrap_or(0.0),
        record.times_s.last().copied().unwrap_or(0.0),
    );
    let mut out = format!(
        "Record\n  source           {origin}\n  samples          {} from {} s to {} s\n",
        record.times_s.len(),
        fmt(first, 3),
        fmt(last, 3)
    );
    if let Some(start) = &record.start_time {
        out.push_str(&format!("  first sample     {start}\n"));
    }
    out.push_str(&format!(
        "  compared         {} sample(s) from {} s to {} s case time, against section {section}\n",
        recorded.t_s.len(),
        fmt(recorded.t_s.first().copied().unwrap_or(0.0), 2),
        fmt(recorded.t_s.last().copied().unwrap_or(0.0), 2)
    ));
    out
}

fn figures_table(before: &Comparison, after: Option<&Comparison>, window: f64) -> String {
    let mut b = Builder::default();
    let mut head = vec![
        "".to_string(),
        "record".into(),
        "model\n(plant file)".into(),
        "difference".into(),
    ];
    if after.is_some() {
        head.push("model\n(fitted)".into());
        head.push("difference".into());
    }
    b.push_record(head);
    type Pick = fn(&nadir::calibrate::Figures) -> f64;
    let rows: [(String, Pick, usize); 4] = [
        ("nadir Hz".into(), |f| f.nadir_hz, 3),
        ("nadir at s".into(), |f| f.nadir_at_s, 2),
        (
            format!("max ROCOF Hz/s over {} s", fmt(window, 2)),
            |f| f.max_rocof_hz_per_s,
            2,
        ),
        ("settling value Hz".into(), |f| f.settling_hz, 3),
    ];
    for (name, pick, d) in rows {
        let rec = pick(&before.record);
        let mut row = vec![
            name,
            fmt(rec, d),
            fmt(pick(&before.model), d),
            signed(pick(&before.model) - rec, d),
        ];
        if let Some(a) = after {
            row.push(fmt(pick(&a.model), d));
            row.push(signed(pick(&a.model) - rec, d));
        }
        b.push_record(row);
    }
    let mut row = vec![
        "RMS difference Hz".to_string(),
        "—".into(),
        "".into(),
        fmt(before.rms_hz, 4),
    ];
    if let Some(a) = after {
        row.push("".into());
        row.push(fmt(a.rms_hz, 4));
    }
    b.push_record(row);
    let cols = if after.is_some() { 6 } else { 4 };
    let mut out = String::from("Record and model\n");
    out.push_str(&finish(b, 1..cols));
    out.push('\n');
    out
}

fn signed(v: f64, d: usize) -> String {
    let s = fmt(v, d);
    if s.starts_with('-') || s.chars().all(|c| c == '0' || c == '.') {
        s
    } else {
        format!("+{s}")
    }
}

fn fit_lines(r: &fit::FitResult) -> String {
    let mut b = Builder::default();
    b.push_record([
        "parameter",
        "plant file",
        "fitted",
        "95 % interval",
        "std. error",
    ]);
    for f in &r.fitted {
        let interval = match (f.low, f.high) {
            (Some(lo), Some(hi)) => format!("{} to {}{}", value(lo), value(hi), f.unit),
            _ => "— (not identifiable)".into(),
        };
        b.push_record([
            f.name.clone(),
            format!("{}{}", value(f.initial), f.unit),
            format!(
                "{}{}{}",
                value(f.value),
                f.unit,
                if f.at_bound { " AT BOUND" } else { "" }
            ),
            interval,
            f.std_error.map_or("—".into(), value),
        ]);
    }
    let mut out = String::from("Fit (every evaluation a replay of the case)\n");
    out.push_str(&finish(b, 1..5));
    out.push('\n');
    out.push_str(&format!(
        "  residual RMS     {} Hz before, {} Hz after ({} samples, {} degrees of freedom)\n  optimiser        {}; {} replays\n",
        fmt(r.rms_before_hz, 4),
        fmt(r.rms_after_hz, 4),
        r.samples,
        r.dof,
        r.stop,
        r.replays
    ));
    for f in r.fitted.iter().filter(|f| f.at_bound) {
        out.push_str(&wrap_text(
            &format!(
                "WARNING: {} ended at a bound: the record asks for a value beyond it, and its \
                 interval does not describe that; widen the bound if the value is physical, or \
                 look for what else differs between the model and the event.",
                f.name
            ),
            "",
            "  ",
        ));
    }
    for (i, k, c) in &r.strongly_correlated {
        out.push_str(&wrap_text(
            &format!(
                "WARNING: {} and {} are strongly correlated (correlation {}): this record cannot \
                 separate them; a change in one is almost undone by the other. Fix one of them \
                 from other evidence, or fit them against a record that excites them differently.",
                r.fitted[*i].name,
                r.fitted[*k].name,
                fmt(*c, 3)
            ),
            "",
            "  ",
        ));
    }
    if r.fitted.iter().any(|f| f.std_error.is_none()) {
        out.push_str(&wrap_text(
            "WARNING: the record cannot tell some parameter at all (changing it does not change \
             the compared frequency); leave it out of the fit.",
            "",
            "  ",
        ));
    }
    out.push_str(&wrap_text(
        "Intervals assume independent residuals; recorder noise and model error are correlated in \
         time, so the true uncertainty is larger (docs/calibration.md).",
        "",
        "",
    ));
    out
}

fn value(v: f64) -> String {
    let a = v.abs();
    let d = if a >= 100.0 {
        1
    } else if a >= 1.0 {
        3
    } else {
        4
    };
    fmt(v, d)
}

fn file_name(p: &Path) -> String {
    p.file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| p.display().to_string())
}

/// The plant file's text with the fitted values written in and noted.
fn calibrated_text(
    args: &CalibrateArgs,
    requested: &[params::Parameter],
    result: &fit::FitResult,
    event_at: f64,
) -> anyhow::Result<String> {
    let (text, file) = nadir::input::read_text(&args.plant)
        .with_context(|| format!("reading plant file {}", args.plant.display()))?;
    let source = format!(
        "record {} (case {}, event at {} s)",
        file_name(&args.record),
        args.case,
        fmt(event_at, 3)
    );
    let mut edits = Vec::new();
    for (p, f) in requested.iter().zip(&result.fitted) {
        let interval = match (f.low, f.high) {
            (Some(lo), Some(hi)) => format!("95 % interval {} to {}", value(lo), value(hi)),
            _ => "interval not identifiable".into(),
        };
        let note = format!(
            "calibrated: {} fitted to {source}; was {}, {interval}{}",
            f.name,
            value(f.initial),
            if f.at_bound { "; AT ITS BOUND" } else { "" }
        );
        edits.extend(params::edits(p, f.value, &note));
    }
    let header = vec![
        format!(
            "CALIBRATED copy of {} written by `nadir calibrate`.",
            file_name(&args.plant)
        ),
        format!("Values fitted to {source} are marked `calibrated:` below."),
        format!(
            "Residual RMS {} Hz before, {} Hz after the fit. Review before use.",
            fmt(result.rms_before_hz, 4),
            fmt(result.rms_after_hz, 4)
        ),
    ];
    nadir::input::plant_with_values(&text, &file, &header, &edits)
        .map_err(nadir::Error::Input)
        .context("writing the fitted values into the plant file")
}
