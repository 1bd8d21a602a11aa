//! `nadir report`: one self-contained HTML file for sign-off — screening, audit, verification
//! matrix with margins and one plot per case — written atomically; exit 1 when any run fails or
//! the audit finds a violation (the report is written all the same).
//!
//! Each input file is read once: the bytes that are hashed for the report are the bytes parsed.

use super::Outcome;
use anyhow::{bail, Context};
use nadir::model::{CaseSet, Plant, Scheme};
use nadir::report::html::{self, CasePlot, InputFile, ReportInputs};
use nadir::report::plot::{self, RunAt};
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
}

pub fn run(args: ReportArgs) -> anyhow::Result<Outcome> {
    let target = super::check_outputs(
        &[args.output.as_path()],
        &[
            ("plant", args.plant.as_path()),
            ("cases", args.cases.as_path()),
            ("scheme", args.scheme.as_path()),
        ],
        args.force,
    )?;
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
    let files = [plant_file, cases_file, scheme_file];
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
    });
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

/// Read an input file once, capped like the loaders, and identify it by its bytes.
fn read_input(role: &str, path: &Path) -> anyhow::Result<(String, InputFile)> {
    use std::io::Read;
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| {
            f.take(nadir::input::MAX_FILE_BYTES + 1)
                .read_to_end(&mut bytes)
        })
        .map_err(|e| {
            anyhow::anyhow!(
                "reading {role} file {}: {}",
                path.display(),
                nadir::report::write::cause(&e)
            )
        })?;
    if bytes.len() as u64 > nadir::input::MAX_FILE_BYTES {
        bail!(
            "reading {role} file {}: more than the {} bytes an input file may have",
            path.display(),
            nadir::input::MAX_FILE_BYTES
        );
    }
    let file = InputFile::from_bytes(role, &relative_to_working_directory(path), &bytes);
    let text = String::from_utf8(bytes)
        .with_context(|| format!("reading {role} file {}: not UTF-8 text", path.display()))?;
    Ok((text, file))
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
