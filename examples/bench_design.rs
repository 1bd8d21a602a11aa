//! Benchmark of `nadir design` (not a timed test): wall time, CPU time (user and system, every
//! thread: unlike the wall time it does not grow when other work shares the machine), layouts sized, replays, assignment
//! solves and the most branch-and-bound nodes any one took (marked `!` when a solve exhausted its
//! node budget), total shed, shed against the lower bound, and objective against the plain baseline, on the demo plant and
//! on a family of generated plants (examples/support/synthetic.rs).
//!
//! Run: `cargo run --release --example bench_design [-- quick | N | large] [--budget S]
//! [--verbose]`; `--verbose` prints design's steps with the elapsed time to stderr.
//! `quick` runs the demo and the small members only; a number N runs only the N-th generated
//! member (from 0); `large` runs only the 500, 1,000 and 2,000-load members. Each member from 200
//! loads up runs in a child process that is stopped after `--budget` seconds (default 180), so a
//! size that takes longer is reported as such instead of holding the machine. Targets (issues on
//! design and speed): the demo under 30 s; 200 loads × 50 cases × 10 operating points under 5
//! minutes; 1,000 loads × 50 × 10 under 2 minutes; total shed within 10 % of the bound on the demo;
//! never more than the baseline (a `*` after "vs base" marks a baseline that breaks the plant's
//! rank-order rule and so may never be proposed).

#[path = "support/synthetic.rs"]
mod synthetic;

use nadir::design::{self, Proposal};
use nadir::model::{CaseSet, Plant};
use std::io::Read;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// (loads, cases, operating points, most stages) of each generated member, in order.
const FAMILY: [(usize, usize, usize, usize); 9] = [
    (10, 5, 1, 3),
    (10, 10, 3, 3),
    (50, 20, 3, 5),
    (50, 50, 10, 6),
    (200, 20, 5, 8),
    (200, 50, 10, 8),
    (500, 50, 10, 8),
    (1000, 50, 10, 8),
    (2000, 50, 10, 8),
];
/// Members from this index up are the 500 to 2,000-load ones.
const LARGE: usize = 6;
/// Members from this index up run in a child process under the budget.
const CHILD: usize = 4;

fn header() -> String {
    format!(
        "{:<28} {:>5} {:>5} {:>4} {:>6} {:>8} {:>8} {:>8} {:>8} {:>6} {:>6} {:>9} {:>9} {:>7} {:>10} {:>10} {:>7}",
        "instance",
        "loads",
        "cases",
        "ops",
        "rows",
        "wall s",
        "cpu s",
        "layouts",
        "replays",
        "solves",
        "nodes",
        "shed MW",
        "bound MW",
        "ratio",
        "objective",
        "baseline",
        "vs base"
    )
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let quick = args.iter().any(|a| a == "quick");
    let large = args.iter().any(|a| a == "large");
    let child = args.iter().any(|a| a == "--child");
    let budget: u64 = args
        .iter()
        .position(|a| a == "--budget")
        .and_then(|i| args.get(i + 1))
        .and_then(|v| v.parse().ok())
        .unwrap_or(180);
    let only: Option<usize> = args
        .iter()
        .enumerate()
        .filter(|(i, _)| *i == 0 || args[i - 1] != "--budget")
        .find_map(|(_, a)| a.parse().ok());
    if child {
        // One member, in this process: its row only.
        if let Some(n) = only {
            member(n);
        }
        return;
    }
    println!("{}", header());
    println!("(load average at the start: {})", load_average());
    if only.is_none() && !large {
        let plant = nadir::input::load_plant("examples/biorefinery/plant.yaml".as_ref())
            .expect("demo plant");
        let cases = nadir::input::load_cases("examples/biorefinery/cases.yaml".as_ref(), &plant)
            .expect("demo cases");
        run("demo (biorefinery)", &plant, &cases);
    }
    for n in 0..FAMILY.len() {
        let wanted = match only {
            Some(o) => o == n,
            None if large => n >= LARGE,
            None if quick => n < CHILD,
            None => true,
        };
        if !wanted {
            continue;
        }
        if n < CHILD {
            member(n);
        } else {
            in_child(n, budget);
        }
    }
}

fn name(n: usize) -> String {
    let (loads, cases, ops, stages) = FAMILY[n];
    format!("synthetic {loads}×{cases}×{ops}, ≤{stages} st")
}

/// Generates member `n` and designs it here, printing its row.
fn member(n: usize) {
    let (loads, cases_n, ops, stages) = FAMILY[n];
    let t = Instant::now();
    let g = synthetic::generate(&synthetic::Spec {
        loads,
        cases: cases_n,
        operating_points: ops,
        max_stages: stages,
        seed: 1,
    });
    let generated = t.elapsed().as_secs_f64();
    if generated > 5.0 {
        eprintln!("({} generated in {generated:.1} s, not counted)", name(n));
    }
    run(&name(n), &g.plant, &g.cases);
}

/// Runs member `n` in a child process (this example with `--child N`), stopping it after
/// `budget` seconds.
fn in_child(n: usize, budget: u64) {
    let exe = std::env::current_exe().expect("the benchmark's own path");
    let mut args = vec!["--child".to_string(), n.to_string()];
    if std::env::args().any(|a| a == "--verbose") {
        args.push("--verbose".into());
    }
    let mut child = match Command::new(exe).args(&args).stdout(Stdio::piped()).spawn() {
        Ok(c) => c,
        Err(e) => {
            println!("{:<28} could not start: {e}", name(n));
            return;
        }
    };
    let start = Instant::now();
    loop {
        match child.try_wait() {
            Ok(Some(_)) => {
                let mut out = String::new();
                if let Some(mut s) = child.stdout.take() {
                    let _ = s.read_to_string(&mut out);
                }
                print!("{out}");
                return;
            }
            Ok(None) if start.elapsed() > Duration::from_secs(budget) => {
                let _ = child.kill();
                let _ = child.wait();
                println!(
                    "{:<28} stopped after {budget} s without a result (over the budget; \
                     `--budget S` allows longer)",
                    name(n)
                );
                return;
            }
            Ok(None) => std::thread::sleep(Duration::from_millis(200)),
            Err(e) => {
                println!("{:<28} lost: {e}", name(n));
                return;
            }
        }
    }
}

fn run(name: &str, plant: &Plant, cases: &CaseSet) {
    let t = Instant::now();
    let cpu_before = cpu_seconds();
    let verbose = std::env::args().any(|a| a == "--verbose");
    let progress = move |what: &str| {
        if verbose {
            eprintln!("  [{:7.1} s] {what}", t.elapsed().as_secs_f64());
        }
    };
    let result = design::design(plant, cases, None, &progress);
    let wall = t.elapsed().as_secs_f64();
    let cpu = match (cpu_before, cpu_seconds()) {
        (Some(a), Some(b)) => format!("{:.1}", b - a),
        _ => "-".into(),
    };
    let rows = nadir::verify::matrix::pairs(cases).len();
    match result {
        Ok(p) => print_row(name, plant, cases, rows, wall, &cpu, &p),
        Err(e) => println!("{name:<28} failed after {wall:.1} s: {e:?}"),
    }
}

/// CPU seconds (user and system, every thread) this process has used so far, from
/// `/proc/self/stat` (fields 14 and 15, in Linux's clock ticks of 1/100 s); `None` where that file
/// is not there. Unlike the wall time, it does not grow when other work shares the machine.
fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    // The command name (field 2) is in parentheses and may hold spaces: count from after it.
    let after = &stat[stat.rfind(')')? + 1..];
    let fields: Vec<&str> = after.split_whitespace().collect();
    let ticks = |i: usize| fields.get(i)?.parse::<f64>().ok();
    // Field 14 is the 12th after the name (field 3 is the first).
    Some((ticks(11)? + ticks(12)?) / 100.0)
}

/// The machine's load average over the last minute, as `/proc/loadavg` gives it.
fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|s| s.split_whitespace().next().map(str::to_string))
        .unwrap_or_else(|| "-".into())
}

#[allow(clippy::too_many_arguments)]
fn print_row(
    name: &str,
    plant: &Plant,
    cases: &CaseSet,
    rows: usize,
    wall: f64,
    cpu: &str,
    p: &Proposal,
) {
    let shed: f64 = p.rows.iter().map(|r| r.weight * r.shed_mw).sum();
    let bound: f64 = p.rows.iter().map(|r| r.weight * r.bound_mw).sum();
    let (base, vs) = match &p.baseline {
        Some(b) => (
            format!("{:.2}", b.objective),
            // `*`: the plain table breaks the plant's rank-order rule, so it may not be proposed.
            format!(
                "{:+.1}%{}",
                100.0 * (p.objective / b.objective - 1.0),
                if b.rules_clean { "" } else { "*" }
            ),
        ),
        None => ("none".into(), "-".into()),
    };
    println!(
        "{:<28} {:>5} {:>5} {:>4} {:>6} {:>8.1} {:>8} {:>8} {:>8} {:>6} {:>6} {:>9.2} {:>9.2} {:>7} {:>10.2} {:>10} {:>7}",
        name,
        plant.loads.len(),
        cases.cases.len(),
        plant.operating_points.len(),
        rows,
        wall,
        cpu,
        p.layouts_sized,
        p.replays,
        p.solver.solves,
        if p.solver.unsolved > 0 {
            format!("{}!", p.solver.most_nodes)
        } else {
            p.solver.most_nodes.to_string()
        },
        shed,
        bound,
        if bound > 1e-9 {
            format!("{:.3}", shed / bound)
        } else {
            "-".into()
        },
        p.objective,
        base,
        vs
    );
}
