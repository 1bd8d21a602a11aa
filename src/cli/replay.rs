//! `nadir replay`: one case at one operating point, printed as an event log and a summary, with
//! an optional CSV of the samples and an SVG plot.

use super::check::fmt;
use super::{load, Outcome};
use anyhow::bail;
use nadir::model::{Plant, Scheme, StageTrigger};
use nadir::report::svg::{self, FrequencyPlot, Level, LevelKind, Series};
use nadir::sim::{self, Cause, EventKind, Run};
use nadir::verify::criteria::judge;
use nadir::verify::matrix::{observe, sim_config_for};
use std::path::PathBuf;

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
    /// Write a plot of frequency and shed MW against time as SVG.
    #[arg(long, value_name = "FILE.svg")]
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
    let mut targets = targets.into_iter();
    let csv_target = args.csv.as_ref().and(targets.next());
    let plot_target = args.plot.as_ref().and(targets.next());
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
    out.push_str(&format!(
        "\nSummary\n  nadir            {} Hz at {} s\n  peak after nadir {} Hz at {} s\n  max ROCOF        {} Hz/s over {} s\n  final            {} Hz at {} s\n  recovered above  {} Hz: {}\n  shed             {} MW ({} % of {} MW)\n",
        fmt(run.nadir_hz, 3),
        fmt(run.nadir_at_s, 3),
        fmt(run.peak_after_nadir_hz, 3),
        fmt(run.peak_at_s, 3),
        fmt(run.max_rocof_hz_per_s, 2),
        plant.criteria.rocof_window_s,
        fmt(run.final_hz, 3),
        fmt(case.duration_s, 1),
        plant.criteria.recover_above_hz,
        run.recovered_above_at_s.map(|t| format!("at {} s", fmt(t, 3))).unwrap_or_else(|| "never".into()),
        fmt(run.shed_mw, 2),
        fmt(percent(run.shed_mw, point.load_mw.iter().sum()), 1),
        fmt(point.load_mw.iter().sum(), 2),
    ));
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
    if let Some(target) = &plot_target {
        let title = format!("{} at {} — {}", case.id, point.id, scheme.name);
        let plot = plot_for(&plant, &scheme, &run, title, case.duration_s);
        target.write(svg::render(&plot).as_bytes())?;
        out.push_str(&format!("Plot written to {}\n", target.path().display()));
    }
    out.push_str(&format!("{}\n", super::verify::CAUTION));
    super::write_stdout(&out)?;
    Ok(if failures.is_empty() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
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
        EventKind::Blackout { island } => {
            format!("island {} BLACKOUT: no generator left", island + 1)
        }
    }
}

fn csv_text(plant: &Plant, run: &Run) -> anyhow::Result<String> {
    let Some(trace) = &run.trace else {
        bail!("the run kept no samples")
    };
    let mut w = csv::Writer::from_writer(Vec::new());
    let mut header = vec!["t_s".to_string()];
    header.extend(plant.sections.iter().map(|s| format!("{}_hz", s.id)));
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

/// The plot of one run: one trace per section (sections of one island overlap), the scheme's
/// pickups, the criteria's limits and recovery level, and the cumulative shed.
pub fn plot_for(
    plant: &Plant,
    scheme: &Scheme,
    run: &Run,
    title: String,
    duration_s: f64,
) -> FrequencyPlot {
    let mut series = Vec::new();
    if let Some(trace) = &run.trace {
        let shed: Vec<(f64, f64)> = trace
            .t_s
            .iter()
            .copied()
            .zip(trace.shed_mw.iter().copied())
            .collect();
        for (s, hz) in trace.section_hz.iter().enumerate() {
            series.push(Series {
                label: plant.sections[s].id.clone(),
                points: trace.t_s.iter().copied().zip(hz.iter().copied()).collect(),
                shed_mw: if s == 0 { shed.clone() } else { Vec::new() },
            });
        }
    }
    FrequencyPlot {
        title,
        nominal_hz: plant.nominal_hz,
        duration_s,
        series,
        levels: levels(plant, scheme),
    }
}

/// Stage pickups and the criteria as labelled lines.
pub fn levels(plant: &Plant, scheme: &Scheme) -> Vec<Level> {
    let mut levels: Vec<Level> = scheme
        .stages
        .iter()
        .filter_map(|s| match s.trigger {
            StageTrigger::Frequency { pickup_hz, .. } => Some(Level {
                label: s.id.clone(),
                hz: pickup_hz,
                kind: LevelKind::Pickup,
            }),
            StageTrigger::Breaker(_) => None,
        })
        .collect();
    let c = &plant.criteria;
    levels.push(Level {
        label: "min".into(),
        hz: c.min_hz,
        kind: LevelKind::Limit,
    });
    levels.push(Level {
        label: "max".into(),
        hz: c.max_hz,
        kind: LevelKind::Limit,
    });
    levels.push(Level {
        label: "recover".into(),
        hz: c.recover_above_hz,
        kind: LevelKind::Recovery,
    });
    levels
}
