//! `nadir replay`: one case at one operating point, printed as an event log and a summary, with
//! an optional CSV of the samples and an SVG plot.

use super::check::{finish, fmt};
use super::verify::wrap_text;
use super::{load, Outcome};
use anyhow::{bail, Context};
use nadir::model::{Case, Plant};
use nadir::report::figures::{criteria_words, setting, FIGURES_NOTE};
use nadir::report::plot::{self, RunAt};
use nadir::sim::{self, Cause, EventKind, IslandEnd, Run};
use nadir::verify::criteria::{judge, Observed};
use nadir::verify::matrix::{observe, sim_config_for};
use std::path::PathBuf;
use tabled::builder::Builder;

/// Replay one case at one operating point and show what happened.
#[derive(Debug, clap::Args)]
pub struct ReplayArgs {
    /// Plant file (YAML).
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Scheme file (YAML).
    #[arg(value_name = "SCHEME")]
    pub scheme: PathBuf,
    /// Cases file (YAML).
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// The case to replay (its id).
    #[arg(long, value_name = "ID")]
    pub case: String,
    /// Operating point (its id); default: the first the case applies to.
    #[arg(long, value_name = "OPERATING_POINT")]
    pub at: Option<String>,
    /// Write the sampled frequencies and shed MW as CSV.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Write a plot of every island's frequency, the limits, events, stages and MW shed against
    /// time: PNG when FILE ends in .png, SVG when it ends in .svg (other extensions are refused).
    #[arg(long, value_name = "FILE.svg|FILE.png")]
    pub plot: Option<PathBuf>,
    /// Replace the --csv and --plot files if they exist (never one of the input files). A
    /// symbolic link there is replaced as a link; the file it points to is not written.
    #[arg(long)]
    pub force: bool,
}

pub fn run(args: ReplayArgs) -> anyhow::Result<Outcome> {
    let outputs: Vec<&std::path::Path> = [&args.csv, &args.plot]
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
        ],
        args.force,
    )?;
    let plot_format = match &args.plot {
        Some(path) => Some(plot::Format::for_path(path).map_err(anyhow::Error::msg)?),
        None => None,
    };
    let mut targets = targets.into_iter();
    let csv_target = args.csv.as_ref().and_then(|_| targets.next());
    let plot_target = args.plot.as_ref().and_then(|_| targets.next());
    let plant = load::plant(&args.plant)?;
    let cases = load::cases(&args.cases, &plant)?;
    let scheme = load::scheme(&args.scheme, &plant)?;
    let Some(case) = cases.cases.iter().find(|c| c.id == args.case) else {
        let known: Vec<&str> = cases.cases.iter().map(|c| c.id.as_str()).collect();
        bail!(
            "--case {}: no such case in {}; cases are: {}",
            args.case,
            args.cases.display(),
            known.join(", ")
        );
    };
    let op = match &args.at {
        None => case.applies_to[0],
        Some(id) => {
            let names: Vec<&str> = case
                .applies_to
                .iter()
                .map(|&o| plant.operating_points[o].id.as_str())
                .collect();
            match case
                .applies_to
                .iter()
                .find(|&&o| plant.operating_points[o].id == *id)
            {
                Some(&o) => o,
                None => bail!(
                    "--at {id}: case {} applies to {}",
                    case.id,
                    names.join(", ")
                ),
            }
        }
    };
    let config = sim_config_for(&plant, &sim::SimConfig::default());
    let run = sim::simulate(&plant, case, op, &scheme, &config);
    let observed = observe(&run, case, &plant.criteria);
    let failures = judge(&observed, &plant.criteria);

    let mut out = String::new();
    let point = &plant.operating_points[op];
    out.push_str(&format!(
        "Replay of {} at {} ({} applies to {} point{})\n\n",
        case.id,
        point.id,
        case.id,
        case.applies_to.len(),
        if case.applies_to.len() == 1 { "" } else { "s" }
    ));
    out.push_str("Event log\n");
    for e in &run.events {
        out.push_str(&format!("  {:>9.4} s  {}\n", e.at_s, describe(&e.what)));
    }
    if let Some(status) = run.stop.status() {
        // No figure from a broken run: the status instead of nadir, peak, ROCOF and final.
        out.push_str(&format!(
            "\nSummary\n  stopped early    {status}\n  figures          none from a run that stopped early\n  shed             {} MW opened before the stop\n",
            fmt(run.shed_mw, 2),
        ));
    } else {
        out.push_str(&summary(&plant, case, op, &run, &observed));
    }
    if failures.is_empty() {
        out.push_str("\nResult: every criterion holds.\n");
    } else {
        out.push_str("\nResult: FAIL\n");
        for f in &failures {
            out.push_str(&format!("  {}: {}\n", f.criterion, f.message));
        }
    }
    if let Some(target) = &csv_target {
        target.write(csv_text(&plant, &run)?.as_bytes())?;
        out.push_str(&format!("Samples written to {}\n", target.path().display()));
    }
    if let (Some(target), Some(format)) = (&plot_target, plot_format) {
        let title = format!("{} at {} — {}", case.id, point.id, scheme.name);
        let runs = [RunAt {
            point: &point.id,
            run: &run,
        }];
        let drawn = plot::build(&plant, &scheme, case, &runs, title, false);
        target.write(&format.bytes(&drawn).context("drawing the plot")?)?;
        out.push_str(&format!("Plot written to {}\n", target.path().display()));
    }
    out.push_str("Criteria:\n");
    for c in criteria_words(&plant.criteria) {
        out.push_str(&wrap_text(&c.words, "  - ", "    "));
    }
    out.push_str(&wrap_text(super::verify::CAUTION, "", ""));
    super::write_stdout(&out)?;
    Ok(if failures.is_empty() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

/// The run's figures, with the meaning `verify` gives them, then one row per island.
fn summary(plant: &Plant, case: &Case, op: usize, run: &Run, o: &Observed) -> String {
    let c = &plant.criteria;
    let load: f64 = plant.operating_points[op].load_mw.iter().sum();
    let peak = match (o.peak_hz, o.peak_at_s) {
        (Some(hz), Some(at)) => format!("{} Hz at {} s", fmt(hz, 3), fmt(at, 3)),
        _ => "— (frequency never rose after the disturbance started)".into(),
    };
    let level = setting(c.recover_above_hz);
    let recovery = match (o.went_below_recover_level, o.recovered_at_s, o.recovery_s) {
        (false, _, _) => format!("— (never below {level} Hz)"),
        (true, Some(at), Some(after)) => format!(
            "{} s after the event at {} s (back above {level} Hz to stay from {} s)",
            fmt(after, 2),
            fmt(at - after, 2),
            fmt(at, 3)
        ),
        _ => format!("never (below {level} Hz at the end of the run)"),
    };
    let mut out = format!(
        "\nSummary\n  nadir            {} Hz at {} s\n  peak             {peak}\n  max ROCOF        {} Hz/s over {} s\n  final            {} Hz at {} s\n  recovery         {recovery}\n  shed by stages   {} MW ({} % of {} MW)\n  dropped on UV    {} MW\n",
        fmt(o.nadir_hz, 3),
        fmt(o.nadir_at_s, 3),
        fmt(o.max_rocof_hz_per_s, 2),
        setting(c.rocof_window_s),
        fmt(run.final_hz, 3),
        fmt(case.duration_s, 1),
        fmt(run.shed_mw, 2),
        fmt(percent(run.shed_mw, load), 1),
        fmt(load, 2),
        fmt(run.dropped_mw, 2),
    );
    out.push_str("\nIslands\n");
    let mut b = Builder::default();
    b.push_record([
        "island".to_string(),
        "sections".into(),
        "from–to s".into(),
        "nadir\nHz".into(),
        "at s".into(),
        "peak\nHz".into(),
        "at s".into(),
        "final\nHz".into(),
        format!("ROCOF\nHz/s\nover {} s", setting(c.rocof_window_s)),
        "shed\nMW".into(),
        "UV\nMW".into(),
        "end".into(),
    ]);
    for i in &run.islands {
        b.push_record([
            (i.index + 1).to_string(),
            format!(
                "{}{}",
                i.sections.join("+"),
                if i.on_utility { "\n(utility)" } else { "" }
            ),
            format!("{}–{}", fmt(i.from_s, 2), fmt(i.to_s, 2)),
            fmt(i.nadir_hz, 3),
            fmt(i.nadir_at_s, 2),
            i.peak_hz.map_or_else(|| "—".into(), |v| fmt(v, 3)),
            i.peak_at_s.map_or_else(|| "—".into(), |v| fmt(v, 2)),
            fmt(i.final_hz, 3),
            fmt(i.max_rocof_hz_per_s, 2),
            fmt(i.shed_mw, 2),
            fmt(i.dropped_mw, 2),
            match i.end {
                IslandEnd::Running => "running",
                IslandEnd::Changed => "replaced",
                IslandEnd::Collapsed => "COLLAPSED",
                IslandEnd::Overspeed => "OVER SPEED",
                IslandEnd::Blackout => "BLACKOUT",
            }
            .into(),
        ]);
    }
    out.push_str(&finish(b, 2..11));
    out.push('\n');
    out.push_str(&wrap_text(&format!("Figures: {FIGURES_NOTE}"), "", ""));
    out
}

fn percent(part: f64, whole: f64) -> f64 {
    if whole > 0.0 {
        100.0 * part / whole
    } else {
        0.0
    }
}

/// One event in words.
pub fn describe(what: &EventKind) -> String {
    match what {
        EventKind::InitialDeficit { island, mw } => {
            format!(
                "island {}: {} MW the machines cannot take up at the start",
                island + 1,
                fmt(*mw, 2)
            )
        }
        EventKind::BreakerOpened {
            breaker,
            cause: Cause::Case,
        } => format!("breaker {breaker} opens (case)"),
        EventKind::BreakerOpened {
            breaker,
            cause: Cause::Protection { element },
        } => {
            format!("breaker {breaker} opens (protection {element})")
        }
        EventKind::BreakerOpened {
            breaker,
            cause: Cause::Stage { stage },
        } => format!("breaker {breaker} opens (over-frequency stage {stage})"),
        EventKind::LoadStep { section, mw } => {
            format!("load step of {} MW on {section}", fmt(*mw, 2))
        }
        EventKind::VoltageDip {
            section,
            remaining_pu,
            duration_s,
        } => {
            format!(
                "voltage dip on {section} to {} pu for {} s",
                fmt(*remaining_pu, 2),
                fmt(*duration_s, 3)
            )
        }
        EventKind::VoltageRestored { section } => format!("voltage restored on {section}"),
        EventKind::StagePickup { stage } => format!("stage {stage} picks up"),
        EventKind::StageReset { stage } => format!("stage {stage} resets"),
        EventKind::StageTripCommand { stage } => format!("stage {stage} trip command"),
        EventKind::StageSized {
            stage,
            flow_mw,
            allowance_mw,
            loads,
        } => {
            let what = if loads.is_empty() {
                "nothing to open, no trip".to_string()
            } else {
                format!("will open {}", loads.join(", "))
            };
            let flow = if *flow_mw < 0.0 {
                format!("{} MW flowing out (exported)", fmt(-flow_mw, 2))
            } else {
                format!("{} MW flowing in", fmt(*flow_mw, 2))
            };
            format!(
                "stage {stage} sized from {flow} just before the breaker opened, less {} MW allowance: {what}",
                fmt(*allowance_mw, 2)
            )
        }
        EventKind::LoadsOpened { stage, loads, mw } => {
            format!(
                "stage {stage} opens {} ({} MW)",
                loads.join(", "),
                fmt(*mw, 2)
            )
        }
        EventKind::LoadDroppedOut { load, mw } => {
            format!("load {load} drops out on undervoltage ({} MW)", fmt(*mw, 2))
        }
        EventKind::ProtectionPickup { element } => format!("protection {element} picks up"),
        EventKind::ProtectionReset { element } => format!("protection {element} resets"),
        EventKind::GeneratorTripped {
            generator,
            element,
            cascade,
        } => {
            if *cascade {
                format!("CASCADE: generator {generator} tripped by its own protection ({element})")
            } else {
                format!("generator {generator} tripped ({element})")
            }
        }
        EventKind::IslandFormed {
            island,
            sections,
            on_utility,
        } => format!(
            "island {} formed: {}{}",
            island + 1,
            sections.join("+"),
            if *on_utility { " (on the utility)" } else { "" }
        ),
        EventKind::Collapse { island } => {
            format!("island {} COLLAPSES below the floor", island + 1)
        }
        EventKind::Overspeed { island } => {
            format!(
                "island {} OVER SPEED above the over-speed level",
                island + 1
            )
        }
        EventKind::Blackout { island } => {
            format!("island {} BLACKOUT: no generator left", island + 1)
        }
        EventKind::RunBack {
            stage,
            generator,
            mw,
        } => format!("stage {stage} runs {generator} back by {} MW", fmt(*mw, 2)),
        EventKind::SpeedControl { generator } => {
            format!("{generator} transfers from steam-pressure control to speed control")
        }
    }
}

fn csv_text(plant: &Plant, run: &Run) -> anyhow::Result<String> {
    let trace = run.sampled_trace();
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["t_s".to_string()];
    header.extend(
        plant
            .sections
            .iter()
            .map(|s| nadir::report::output::csv_cell(&format!("{}_hz", s.id))),
    );
    header.push("shed_mw".into());
    w.write_record(&header)?;
    for (k, t) in trace.t_s.iter().enumerate() {
        let mut rec = vec![format!("{t:.4}")];
        rec.extend(trace.section_hz.iter().map(|s| format!("{:.5}", s[k])));
        rec.push(format!("{:.4}", trace.shed_mw[k]));
        w.write_record(&rec)?;
    }
    Ok(String::from_utf8(w.into_inner()?)?)
}
