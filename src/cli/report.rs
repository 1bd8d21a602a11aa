//! `nadir report`: one self-contained HTML file for sign-off — screening, audit, verification
//! matrix with margins and one plot per case — written atomically; exit 1 when any run fails or
//! the audit finds a violation (the report is written all the same).
//!
//! Each input file is read once: the bytes that are hashed for the report are the bytes parsed.

use super::Outcome;
use anyhow::Context;
use nadir::model::{CaseSet, Plant, Scheme};
use nadir::report::html::{self, CasePlot, InputFile, ReportInputs};
use nadir::report::plot::{self, RunAt};
use nadir::report::record::RecordSection;
use nadir::report::sheet;
use nadir::verify::audit::{self, AuditRules};
use nadir::verify::matrix::{self, sim_config_for, VerifyConfig};
use std::path::{Path, PathBuf};

/// Write a self-contained HTML report for sign-off: inputs with SHA-256, verdict, plant summary,
/// shedding table, audit, verification matrix with margins and a frequency plot per case.
#[derive(Debug, clap::Args)]
pub struct ReportArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML).
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// Cases file (YAML).
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// The HTML file to write.
    #[arg(short = 'o', long = "output", value_name = "FILE.html")]
    pub output: PathBuf,
    /// Replace the output file if it exists (never one of the input files). A symbolic link at
    /// the output is replaced as a link; the file it points to is not written.
    #[arg(long)]
    pub force: bool,
    /// A record of a real event (CSV or COMTRADE) to compare with the model in a section of its
    /// own, as `nadir calibrate` compares them (needs --case).
    #[arg(long, value_name = "FILE", requires = "case")]
    pub record: Option<PathBuf>,
    /// With --record: the case that describes the recorded event (its id).
    #[arg(long, value_name = "ID", requires = "record")]
    pub case: Option<String>,
    /// With --record: the operating point before the event; default: the first the case applies to.
    #[arg(long, value_name = "OPERATING_POINT", requires = "record")]
    pub at: Option<String>,
    /// With --record: the bus section the record measured; default: the first section.
    #[arg(long, value_name = "SECTION", requires = "record")]
    pub section: Option<String>,
    /// With --record: the record's channel to use.
    #[arg(long, value_name = "NAME", requires = "record")]
    pub channel: Option<String>,
    /// With --record: how to read its time axis (--time-unit, --max-step).
    #[command(flatten)]
    pub record_axis: super::calibrate::RecordAxisArgs,
    /// With --record: when the event happened, seconds on the record's axis; default: the
    /// record's trigger, else the onset found in it.
    #[arg(
        long,
        value_name = "S",
        allow_negative_numbers = true,
        requires = "record"
    )]
    pub event_at: Option<f64>,
}

pub fn run(args: ReportArgs) -> anyhow::Result<Outcome> {
    let mut inputs = vec![
        ("plant", args.plant.as_path()),
        ("cases", args.cases.as_path()),
        ("scheme", args.scheme.as_path()),
    ];
    if let Some(r) = &args.record {
        inputs.push(("record", r.as_path()));
    }
    let target = super::check_outputs(&[args.output.as_path()], &inputs, args.force)?;
    let (plant_text, plant_file) = read_input("plant", &args.plant)?;
    let plant = nadir::input::parse_plant_warned(&plant_text, &args.plant.display().to_string())
        .map_err(nadir::Error::Input)
        .with_context(|| format!("reading plant file {}", args.plant.display()))?;
    super::load::show(&plant.warnings)?;
    let plant = plant.value;
    let (cases_text, cases_file) = read_input("cases", &args.cases)?;
    let cases =
        nadir::input::parse_cases_warned(&cases_text, &args.cases.display().to_string(), &plant)
            .map_err(nadir::Error::Input)
            .with_context(|| format!("reading cases file {}", args.cases.display()))?;
    super::load::show(&cases.warnings)?;
    let cases = cases.value;
    let (scheme_text, scheme_file) = read_input("scheme", &args.scheme)?;
    let scheme =
        nadir::input::parse_scheme_warned(&scheme_text, &args.scheme.display().to_string(), &plant)
            .map_err(nadir::Error::Input)
            .with_context(|| format!("reading scheme file {}", args.scheme.display()))?;
    super::load::show(&scheme.warnings)?;
    let scheme = scheme.value;

    let screening = nadir::screening::screen(&plant, Some(&cases), Some(&scheme));
    // The plant's own rules and the studied events, exactly as `nadir audit --cases` judges them.
    let rules = AuditRules::for_plant(&plant);
    let audit = audit::audit_cases(&plant, &scheme, Some(&cases), &rules);
    let config = VerifyConfig::default();
    let pairs = matrix::pairs(&cases).len() as u64;
    let bar = super::verify::progress_bar(2 * pairs);
    let m = matrix::verify(&plant, &cases, &scheme, &config, &|| bar.inc(1));
    let plots = case_plots(&plant, &cases, &scheme, &config, &|| bar.inc(1));
    bar.finish_and_clear();

    let generated_utc = html::utc_timestamp(run_time_unix_s()?);
    let setting_sheet = sheet::sheet(&plant, &scheme);
    let record = match &args.record {
        Some(path) => Some(record_section(&args, path, &plant, &cases, &scheme)?),
        None => None,
    };
    let mut files = vec![plant_file, cases_file, scheme_file];
    if let Some((_, f)) = &record {
        files.extend(f.iter().cloned());
    }
    let text = html::render(&ReportInputs {
        plant: &plant,
        scheme: &scheme,
        screening: &screening,
        audit: &audit,
        audit_rules: &rules,
        matrix: &m,
        plots: &plots,
        sheet: &setting_sheet,
        files: &files,
        generated_utc: &generated_utc,
        tool_version: env!("CARGO_PKG_VERSION"),
        warnings: &super::load::warnings_seen(),
        record: record.as_ref().map(|r| &r.0),
    });
    check_size(&text)?;
    target[0].write(text.as_bytes())?;

    let failed = m.rows.iter().filter(|r| !r.pass).count();
    let mut out = format!(
        "Report written to {} ({} runs: {} pass, {failed} fail; {} audit violation(s)).\n",
        args.output.display(),
        m.rows.len(),
        m.rows.len() - failed,
        audit.violations.len()
    );
    if let Some(caveat) = super::load::verdict_caveat() {
        out.push_str(&caveat);
        out.push('\n');
    }
    out.push_str(super::verify::CAUTION);
    out.push('\n');
    super::write_stdout(&out)?;
    Ok(if failed == 0 && audit.violations.is_empty() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

/// A report is bounded like an input file: at most `max_file_bytes` (`NADIR_MAX_FILE_BYTES`), so
/// that many long cases cannot make a file of hundreds of megabytes; nothing is written when it
/// would be larger.
fn check_size(text: &str) -> anyhow::Result<()> {
    use nadir::input::limits::{over_limit_message, FILE_BYTES};
    let limits = nadir::input::Limits::from_env().map_err(|e| anyhow::anyhow!("{e}"))?;
    let bytes = text.len() as u64;
    if !limits.exceeded(FILE_BYTES, bytes) {
        return Ok(());
    }
    anyhow::bail!(
        "{}; nothing was written\n    help: report fewer cases or operating points at a time, \
         or raise the limit by setting the environment variable {}={bytes} (or higher); see \
         docs/guarantees.md, section limits",
        over_limit_message(&limits, FILE_BYTES, "the report would have", bytes),
        FILE_BYTES.env
    )
}

/// Read an input file once, under the size limit in force like the loaders
/// (`NADIR_MAX_FILE_BYTES`), and identify it by its bytes.
fn read_input(role: &str, path: &Path) -> anyhow::Result<(String, InputFile)> {
    let (text, _) = nadir::input::read_text(path)
        .with_context(|| format!("reading {role} file {}", path.display()))?;
    let file = InputFile::from_bytes(role, &relative_to_working_directory(path), text.as_bytes());
    Ok((text, file))
}

/// The section on a recorded event: the record placed on its case and compared with the model,
/// as `nadir calibrate` does it; and the record identified by its bytes for the inputs table.
fn record_section(
    args: &ReportArgs,
    path: &Path,
    plant: &Plant,
    cases: &CaseSet,
    scheme: &Scheme,
) -> anyhow::Result<(RecordSection, Vec<InputFile>)> {
    use nadir::calibrate::{self, Setup};
    let ev = super::calibrate::recorded_event(
        &super::calibrate::EventRequest {
            record: path,
            channel: args.channel.as_deref(),
            axis: &args.record_axis,
            case: args.case.as_deref().unwrap_or_default(),
            at: args.at.as_deref(),
            section: args.section.as_deref(),
            event_at: args.event_at,
            plant_file: &args.plant,
            cases_file: &args.cases,
        },
        plant,
        cases,
    )?;
    let case = &cases.cases[ev.case];
    let setup = Setup::new(plant, case, ev.operating_point, scheme, ev.section);
    let model = calibrate::replay_at(&setup, plant, &ev.recorded.t_s).map_err(|status| {
        anyhow::anyhow!(
            "--record: the model of {} does not run to its end ({status}); no comparison can be made",
            case.id
        )
    })?;
    let window = plant.criteria.rocof_window_s;
    let comparison = calibrate::compare(&ev.recorded, &model, window);
    let run = nadir::sim::simulate(plant, case, ev.operating_point, scheme, &setup.config);
    let point = plant.operating_points[ev.operating_point].id.clone();
    let views = [RunAt {
        point: "model",
        run: &run,
    }];
    let mut drawn = plot::build(
        plant,
        scheme,
        case,
        &views,
        format!("{} at {point} against the record", case.id),
        true,
    );
    let shown: Vec<f64> = ev
        .record
        .times_s
        .iter()
        .map(|t| t - ev.recorded.shift_s)
        .collect();
    plot::record::add_record(
        &mut drawn,
        "record",
        &shown,
        &ev.record.frequency_hz,
        calibrate::case_event_s(case),
        "event in the record",
    );
    let origin = match &ev.record.origin {
        nadir::recording::FrequencyOrigin::Measured { channel } => {
            format!("channel {channel}, measured frequency")
        }
        nadir::recording::FrequencyOrigin::Estimated { channel, method } => {
            format!("estimated from channel {channel}: {method}")
        }
    };
    // The whole record is identified: a COMTRADE configuration and its data file each by its bytes.
    let mut record_files = Vec::new();
    for (k, p) in nadir::recording::files_of(path).iter().enumerate() {
        let bytes = std::fs::read(p).with_context(|| format!("reading record {}", p.display()))?;
        let role = if k == 0 { "record" } else { "record data" };
        record_files.push(InputFile::from_bytes(
            role,
            &relative_to_working_directory(p),
            &bytes,
        ));
    }
    let file = record_files[0].clone();
    Ok((
        RecordSection {
            file: file.path.clone(),
            origin,
            case: case.id.clone(),
            point,
            section: plant.sections[ev.section].id.clone(),
            event: format!(
                "at {:.3} s on the record's axis ({})",
                ev.event_at, ev.event_how
            ),
            samples: ev.recorded.t_s.len(),
            comparison,
            rocof_window_s: window,
            plot: drawn,
        },
        record_files,
    ))
}

/// One plot per case, every operating point it applies to overlaid.
fn case_plots(
    plant: &Plant,
    cases: &CaseSet,
    scheme: &Scheme,
    config: &VerifyConfig,
    progress: &(dyn Fn() + Sync),
) -> Vec<CasePlot> {
    use rayon::prelude::*;
    let sim_config = sim_config_for(plant, &config.sim);
    cases
        .cases
        .par_iter()
        .map(|case| {
            let runs: Vec<(String, nadir::sim::Run)> = case
                .applies_to
                .iter()
                .map(|&op| {
                    let run = nadir::sim::simulate(plant, case, op, scheme, &sim_config);
                    progress();
                    (plant.operating_points[op].id.clone(), run)
                })
                .collect();
            let views: Vec<RunAt> = runs
                .iter()
                .map(|(point, run)| RunAt { point, run })
                .collect();
            CasePlot {
                case: case.id.clone(),
                description: case.description.clone(),
                plot: plot::build(plant, scheme, case, &views, case.description.clone(), true),
            }
        })
        .collect()
}

/// A path as the report shows it: relative to the working directory (`../x.yaml` when outside
/// it), so that a report names no folder of the machine it was made on. The path as given when
/// either cannot be resolved.
fn relative_to_working_directory(path: &Path) -> String {
    let (Ok(file), Ok(cwd)) = (
        std::fs::canonicalize(path),
        std::env::current_dir().and_then(std::fs::canonicalize),
    ) else {
        return path.display().to_string();
    };
    let f: Vec<_> = file.components().collect();
    let c: Vec<_> = cwd.components().collect();
    let common = f.iter().zip(&c).take_while(|(a, b)| a == b).count();
    let mut rel = PathBuf::new();
    for _ in common..c.len() {
        rel.push("..");
    }
    for part in &f[common..] {
        rel.push(part);
    }
    rel.display().to_string()
}

/// The time the report states: `SOURCE_DATE_EPOCH` when set (reproducible-builds.org
/// specification, so a rerun can give identical bytes), else the clock.
fn run_time_unix_s() -> anyhow::Result<u64> {
    match std::env::var("SOURCE_DATE_EPOCH") {
        Ok(v) => v
            .trim()
            .parse::<u64>()
            .with_context(|| format!("SOURCE_DATE_EPOCH={v}: not a whole number of seconds")),
        Err(_) => Ok(std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map(|d| d.as_secs())
            .unwrap_or(0)),
    }
}
