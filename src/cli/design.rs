//! `nadir design`: propose a shedding table, write it (atomically, never over an existing file
//! without `--force`), then print the shed against the lower bound and the plain baseline, and
//! the verification matrix of the proposal. Exit 1 when the proposal does not verify, or when no
//! table can hold a case (with the shortfall in words).

use super::check::{finish, fmt};
use super::{load, Outcome};
use nadir::design::backstop::Backstop;
use nadir::design::{self, DesignError, FromOutcome, Proposal, Source};
use nadir::verify::audit::{audit_cases, AuditRules};
use nadir::verify::matrix::{self, VerifyConfig};
use std::io::IsTerminal;
use std::path::PathBuf;
use tabled::builder::Builder;

/// Propose stage pickups, delays and load blocks that hold every case with the least shed.
#[derive(Debug, clap::Args)]
pub struct DesignArgs {
    /// Plant file (YAML); its `design` block sets the limits.
    #[arg(value_name = "PLANT")]
    pub plant: PathBuf,
    /// Cases file (YAML); a case's `weight` scales its shed in the objective.
    #[arg(long, value_name = "CASES")]
    pub cases: PathBuf,
    /// The scheme file to write.
    #[arg(short = 'o', long = "output", value_name = "SCHEME")]
    pub output: PathBuf,
    /// Start from this table: keep its settings where they still hold and change as few
    /// assignments as possible.
    #[arg(long, value_name = "EXISTING_SCHEME")]
    pub from: Option<PathBuf>,
    /// Replace the output file if it exists (never one of the input files). A symbolic link at
    /// the output is replaced as a link; the file it points to is not written.
    #[arg(long)]
    pub force: bool,
    /// Name of the written table (default: the `--from` table's name, else "proposed by nadir
    /// design").
    #[arg(long, value_name = "NAME")]
    pub name: Option<String>,
}

pub fn run(args: DesignArgs) -> anyhow::Result<Outcome> {
    let mut inputs = vec![
        ("plant", args.plant.as_path()),
        ("cases", args.cases.as_path()),
    ];
    if let Some(from) = &args.from {
        inputs.push(("scheme", from.as_path()));
    }
    let target = super::check_outputs(&[args.output.as_path()], &inputs, args.force)?;
    let plant = load::plant(&args.plant)?;
    let cases = load::cases(&args.cases, &plant)?;
    let existing = match &args.from {
        Some(p) => Some(load::scheme(p, &plant)?),
        None => None,
    };
    if let (Some(old), Some(path)) = (&existing, &args.from) {
        refuse_unsupported(old, path)?;
    }

    let spinner = spinner();
    let progress = |what: &str| spinner.set_message(what.to_string());
    let result = design::design(&plant, &cases, existing.as_ref(), &progress);
    spinner.finish_and_clear();
    let mut proposal = match result {
        Ok(p) => p,
        Err(DesignError::Unholdable(list)) => {
            let mut text = String::from("No shedding table can hold every case:\n");
            for s in &list {
                text.push_str(&format!("  - {}\n", s.message()));
            }
            text.push_str("Nothing was written.\n");
            super::write_stdout(&text)?;
            return Ok(Outcome::Fail);
        }
        Err(DesignError::NothingNeeded) => {
            super::write_stdout(
                "No case needs shedding: every case holds every criterion, with the required margins, with no table at all.\n\
The plant's design block turns the backstop off (`backstop: false`), so there is no table to propose.\n\
Nothing was written.\n",
            )?;
            return Ok(Outcome::Pass);
        }
        Err(DesignError::NoLayout(why)) => {
            super::write_stdout(&format!(
                "No table proposed: {why}.\nNothing was written.\n"
            ))?;
            return Ok(Outcome::Fail);
        }
    };

    if let Some(name) = &args.name {
        proposal.scheme.name = name.clone();
    }
    let yaml = scheme_text(&plant, &proposal, &args);
    target[0].write(yaml.as_bytes())?;

    let bar = super::verify::progress_bar(matrix::pairs(&cases).len() as u64);
    let m = matrix::verify(
        &plant,
        &cases,
        &proposal.scheme,
        &VerifyConfig::default(),
        &|| bar.inc(1),
    );
    bar.finish_and_clear();
    // The studied cases decide which breakers open together, as in `nadir audit --cases`.
    let violations = audit_cases(
        &plant,
        &proposal.scheme,
        Some(&cases),
        &AuditRules::for_plant(&plant),
    )
    .violations;

    let mut text = format!("Wrote {}.\n\n", args.output.display());
    if let (Some(old), Some(outcome)) = (&existing, proposal.from) {
        text.push_str(&from_summary(&plant, old, &proposal, outcome));
    }
    text.push_str(&stage_table(&plant, &proposal));
    text.push('\n');
    text.push_str(&shed_table(&proposal));
    text.push('\n');
    text.push_str(&super::verify::render_table(
        &m,
        &plant,
        &proposal.scheme.name,
        false,
    ));
    if !violations.is_empty() {
        text.push_str("\nAudit violations in the proposal:\n");
        for v in &violations {
            text.push_str(&format!("  - {}: {}\n", v.rule, v.message));
        }
    }
    super::write_stdout(&text)?;
    Ok(if m.all_pass() && violations.is_empty() {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}

fn spinner() -> indicatif::ProgressBar {
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let bar = indicatif::ProgressBar::new_spinner();
    if let Ok(style) =
        indicatif::ProgressStyle::with_template("{spinner} designing: {msg} {elapsed}")
    {
        bar.set_style(style);
    }
    bar.enable_steady_tick(std::time::Duration::from_millis(120));
    bar
}

/// The scheme file: provenance and caution, then the table.
fn scheme_text(plant: &nadir::model::Plant, p: &Proposal, args: &DesignArgs) -> String {
    let header = vec![
        format!(
            "Proposed by nadir design {} for {}.",
            env!("CARGO_PKG_VERSION"),
            plant.name
        ),
        format!(
            "Inputs: {} and {}{}.",
            args.plant.display(),
            args.cases.display(),
            args.from
                .as_ref()
                .map(|f| format!(", starting from {}", f.display()))
                .unwrap_or_default()
        ),
        "A proposal only: it must be reviewed by a qualified protection engineer, coordinated"
            .into(),
        "with the grid operator, and conform to local codes and licensed practice.".into(),
    ];
    nadir::input::scheme_yaml(plant, &p.scheme, &header)
}

fn stage_table(plant: &nadir::model::Plant, p: &Proposal) -> String {
    let mut b = Builder::default();
    let mut head = vec![
        "stage".to_string(),
        "trigger".into(),
        "delay s".into(),
        "breaker s".into(),
        "loads (rank)".into(),
    ];
    for op in &plant.operating_points {
        head.push(format!("MW at {}", op.id));
    }
    b.push_record(head);
    for s in &p.scheme.stages {
        let mut row = vec![
            s.id.clone(),
            nadir::verify::audit::describe_trigger(plant, &s.trigger),
            fmt(s.delay_s, 2),
            fmt(s.breaker_s, 2),
            loads_in_words(plant, &s.sheds),
        ];
        for op in &plant.operating_points {
            row.push(fmt(s.sheds.iter().map(|&l| op.load_mw[l]).sum(), 2));
        }
        b.push_record(row);
    }
    let source = match p.source {
        Source::Search => format!(
            "found by the settings search ({} layouts sized, {} replays)",
            p.layouts_sized, p.replays
        ),
        Source::Baseline => {
            "the plain baseline table: the search found nothing that sheds less".into()
        }
        Source::Existing => "the existing table's settings".into(),
        Source::BackstopOnly => "the backstop alone: no studied case needs shedding (every case holds with no table), so its one stage at the lowest pickup holds every sheddable load, in rank order, for events beyond the studied ones".into(),
    };
    let backstop = match &p.backstop {
        Backstop::NewStage if p.source != Source::BackstopOnly => {
            "Backstop: the loads no studied case needs are in the last stage, at the lowest pickup; no studied case operates it unless its shed is shown below.\n".to_string()
        }
        Backstop::LastStage => {
            "Backstop: the loads no studied case needs were added to the last frequency stage.\n".to_string()
        }
        Backstop::Off => format!(
            "No backstop (the design block says `backstop: false`): {} sheddable load(s) in no stage.\n",
            p.unassigned.len()
        ),
        Backstop::NotHeld(why) => format!(
            "No backstop: {why}; these sheddable loads are in no stage: {}.\n",
            p.unassigned.join(", ")
        ),
        _ => String::new(),
    };
    let unsolved = if p.solver.unsolved > 0 {
        format!(
            "Warning: {} assignment solve(s) exhausted the solver's node budget ({} nodes) and \
             their layouts were dropped: a better table may exist.\n",
            p.solver.unsolved,
            nadir::design::assign::NODE_LIMIT
        )
    } else {
        String::new()
    };
    format!(
        "Proposed table, {source}:\n{}\n{backstop}{unsolved}{}",
        finish(b, 2..4 + 1 + plant.operating_points.len()),
        headroom_lines(p)
    )
}

/// Per operating point, the sheddable load in the table against the most any studied case sheds:
/// roughly how much larger a disturbance the table can meet before it runs out of load to shed.
fn headroom_lines(p: &Proposal) -> String {
    let mut out = String::from(
        "Room to shed (the load in the table's stages against the most a studied case sheds at the point):\n",
    );
    for h in &p.headroom {
        let line = match h.worst_shed_mw {
            None => format!(
                "no studied case applies; {} MW sheddable",
                fmt(h.sheddable_mw, 2)
            ),
            Some(w) if w > 1e-6 => format!(
                "{} MW sheddable, {} MW shed at most: {}× the worst studied shed before the table runs out of load",
                fmt(h.sheddable_mw, 2),
                fmt(w, 2),
                fmt(h.sheddable_mw / w, 1)
            ),
            Some(_) => format!(
                "{} MW sheddable; no studied case sheds here",
                fmt(h.sheddable_mw, 2)
            ),
        };
        out.push_str(&format!("  {}: {line}\n", h.operating_point));
    }
    out
}

/// A stage's loads with their ranks; a long list as its first and last load and a count, so
/// that the table stays readable (the scheme file lists every load).
fn loads_in_words(plant: &nadir::model::Plant, sheds: &[usize]) -> String {
    let one = |l: usize| format!("{} ({})", plant.loads[l].id, plant.loads[l].rank);
    let mut sorted = sheds.to_vec();
    sorted.sort_by_key(|&l| (plant.loads[l].rank, l));
    let sheds = sorted.as_slice();
    match sheds {
        [first, .., last] if sheds.len() > 4 => {
            format!("{} … {}: {} loads", one(*first), one(*last), sheds.len())
        }
        _ => sheds.iter().map(|&l| one(l)).collect::<Vec<_>>().join(", "),
    }
}

/// Beside a case whose shedding is intended, in design's table (verify's says it in words).
const INTENDED_MARK: &str = "(intended)";

fn shed_table(p: &Proposal) -> String {
    let mut b = Builder::default();
    b.push_record([
        "case",
        "point",
        "weight",
        "shed MW",
        "ideal bound MW",
        "realisable bound MW",
        "shed / realisable",
        "baseline MW",
    ]);
    let ratio = |shed: f64, bound: f64| {
        if bound > 1e-6 {
            fmt(shed / bound, 2)
        } else if shed > 1e-6 {
            "bound 0".into()
        } else {
            "-".into()
        }
    };
    let (mut shed, mut bound, mut real, mut base) = (0.0, 0.0, 0.0, 0.0);
    let (mut intended_shed, mut intended_base) = (0.0, 0.0);
    for r in &p.rows {
        // A case whose shedding is intended counts in no total but its own.
        if r.intended {
            intended_shed += r.weight * r.shed_mw;
            intended_base += r.weight * r.baseline_mw.unwrap_or(0.0);
        } else {
            shed += r.weight * r.shed_mw;
            bound += r.weight * r.bound_mw;
            real += r.weight * r.realisable_mw;
            base += r.weight * r.baseline_mw.unwrap_or(0.0);
        }
        b.push_record([
            if r.intended {
                format!("{} {INTENDED_MARK}", r.case)
            } else {
                r.case.clone()
            },
            r.operating_point.clone(),
            fmt(r.weight, 2),
            fmt(r.shed_mw, 2),
            fmt(r.bound_mw, 2),
            fmt(r.realisable_mw, 2),
            ratio(r.shed_mw, r.realisable_mw),
            r.baseline_mw
                .map(|v| fmt(v, 2))
                .unwrap_or_else(|| "-".into()),
        ]);
    }
    let baseline_line = match &p.baseline {
        Some(bl) => format!(
            "Plain baseline ({} equal steps, rank order): {} MW weighted by case in unwanted-shedding cases, objective {}; the proposal's objective is {} ({:+.1} %).",
            bl.stages,
            fmt(base, 2),
            fmt(bl.objective, 2),
            fmt(p.objective, 2),
            100.0 * (p.objective - bl.objective) / bl.objective.max(1e-9)
        ) + if bl.rules_clean {
            ""
        } else {
            " The plain table breaks the plant's rank-order rule in some event (`nadir audit --cases`), so it is not proposed."
        },
        None => "Plain baseline: no equal-step table within the limits holds every case.".into(),
    };
    let above = |total: f64| {
        if total > 1e-6 {
            format!("{:+.1} %", 100.0 * (shed / total - 1.0))
        } else {
            "bound 0".into()
        }
    };
    let mut why = String::new();
    for r in &p.rows {
        why.push_str(&format!(
            "  {} at {}: {}\n",
            r.case, r.operating_point, r.why
        ));
    }
    let intended_line = if p.rows.iter().any(|r| r.intended) {
        format!(
            "Rows marked {INTENDED_MARK}: the case declares shedding its intended response; their shed, {} MW weighted by case{}, counts in no total, bound or objective.\n",
            fmt(intended_shed, 2),
            match &p.baseline {
                Some(_) => format!(" (plain baseline {} MW)", fmt(intended_base, 2)),
                None => String::new(),
            }
        )
    } else {
        String::new()
    };
    format!(
        "Shed per case (MW at nominal frequency) against two lower bounds: the ideal bound (relief at the very instant of each event, in any amount) and the realisable bound (relief no sooner than the fastest allowed relay — minimum delay, breaker time, measurement lag — in whole loads in rank order, each row on its own):\n{}\n{intended_line}\
Total weighted by case, cases where shedding is unwanted: {} MW shed; ideal bound {} MW ({}); realisable bound {} MW ({}).\n\
Row by row:\n{why}{baseline_line}\n\
Objective = Σ case weight × rank weight × MW shed, over cases where shedding is unwanted.\n",
        finish(b, 2..8),
        fmt(shed, 2),
        fmt(bound, 2),
        above(bound),
        fmt(real, 2),
        above(real),
    )
}

fn from_summary(
    plant: &nadir::model::Plant,
    old: &nadir::model::Scheme,
    p: &Proposal,
    outcome: FromOutcome,
) -> String {
    let changes = nadir::verify::diff::diff(plant, old, &p.scheme);
    let head = match outcome {
        FromOutcome::Unchanged => {
            "The existing table still holds every case; it is kept unchanged."
        }
        FromOutcome::Reassigned => "The existing settings are kept; loads were moved where needed (old → new):",
        FromOutcome::Redesigned => {
            "The existing settings could not hold every case; the table was designed afresh (old → new):"
        }
    };
    let mut out = format!("{head}\n");
    for why in &p.from_why_not {
        out.push_str(&format!("  Not kept by {why}.\n"));
    }
    if outcome != FromOutcome::Unchanged {
        out.push_str(&super::compare::settings_table(&changes));
    }
    out.push_str(&cost_of_keeping(p));
    out.push('\n');
    out
}

/// What keeping the existing settings costs against a fresh design and the plain baseline, and
/// which is cheaper by how much (objective: Σ case weight × rank weight × MW shed).
fn cost_of_keeping(p: &Proposal) -> String {
    let kept = p.objective;
    let against = |what: &str, other: f64| {
        let diff = kept - other;
        if diff.abs() <= 1e-6 * kept.abs().max(other.abs()).max(1.0) {
            format!("Keeping the existing settings costs the same as {what} ({kept:.2}).\n")
        } else if diff > 0.0 {
            format!(
                "{} is cheaper: objective {other:.2} against {kept:.2} for keeping the existing settings ({:.2} less; keeping costs {:.1} % more).\n",
                capitalise(what),
                diff,
                100.0 * diff / other.max(1e-9)
            )
        } else {
            format!(
                "Keeping the existing settings is cheaper than {what}: objective {kept:.2} against {other:.2} ({:.2} less, {:.1} %).\n",
                -diff,
                100.0 * -diff / other.max(1e-9)
            )
        }
    };
    let mut out = String::new();
    if let Some(f) = &p.fresh {
        out.push_str(&against("a fresh design", f.objective));
        if f.objective < kept - 1e-9 {
            out.push_str("Run `nadir design` without --from for the fresh design.\n");
        }
    }
    if let Some(b) = &p.baseline {
        out.push_str(&against("the plain baseline", b.objective));
    }
    out
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

/// `--from` starts from one set of settings with fixed load lists: a table with setting groups,
/// a stage out of service, a stage sized from the pre-event flow, or over-frequency stages is
/// refused (exit 2) rather than redesigned as if it were something else.
fn refuse_unsupported(old: &nadir::model::Scheme, path: &std::path::Path) -> anyhow::Result<()> {
    let mut what = Vec::new();
    if !old.groups.is_empty() {
        what.push("setting groups".to_string());
    }
    let sized: Vec<&str> = old
        .stages
        .iter()
        .filter(|s| matches!(s.sizing, nadir::model::Sizing::Flow(_)))
        .map(|s| s.id.as_str())
        .collect();
    if !sized.is_empty() {
        what.push(format!(
            "stages sized from the pre-event flow ({})",
            sized.join(", ")
        ));
    }
    let out: Vec<&str> = old
        .stages
        .iter()
        .filter(|s| !s.in_service)
        .map(|s| s.id.as_str())
        .collect();
    if !out.is_empty() {
        what.push(format!("stages out of service ({})", out.join(", ")));
    }
    // The proposal is an under-frequency table; it would silently lose these.
    let over: Vec<&str> = old.over_frequency.iter().map(|o| o.id.as_str()).collect();
    if !over.is_empty() {
        what.push(format!("over-frequency stages ({})", over.join(", ")));
    }
    if what.is_empty() {
        return Ok(());
    }
    anyhow::bail!(
        "{}: design --from does not start from a table with {}; \
run `nadir verify` and `nadir audit` on it as it is, or give --from a copy with one set of settings and \
fixed load lists",
        path.display(),
        what.join(" or ")
    )
}
