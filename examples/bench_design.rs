//! Benchmark of `nadir design` (not a timed test): wall time, total shed, shed against the lower
//! bound, and objective against the plain baseline, on the demo plant and on a family of
//! generated plants (examples/support/synthetic.rs).
//!
//! Run: `cargo run --release --example bench_design [-- quick | N]`. `quick` runs the demo and
//! the small members only; a number N runs only the N-th generated member (from 0). Targets (issue: design): the demo under 30 s; 200 loads × 50 cases × 10
//! operating points under 5 minutes; total shed within 10 % of the bound on the demo; never more
//! than the baseline.

#[path = "support/synthetic.rs"]
mod synthetic;

use nadir::design::{self, Proposal};
use nadir::model::{CaseSet, Plant};
use std::time::Instant;

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let only: Option<usize> = std::env::args().skip(1).find_map(|a| a.parse().ok());
    println!(
        "{:<28} {:>5} {:>5} {:>4} {:>6} {:>8} {:>9} {:>9} {:>7} {:>10} {:>10} {:>7}",
        "instance",
        "loads",
        "cases",
        "ops",
        "rows",
        "wall s",
        "shed MW",
        "bound MW",
        "ratio",
        "objective",
        "baseline",
        "vs base"
    );
    let plant =
        nadir::input::load_plant("examples/biorefinery/plant.yaml".as_ref()).expect("demo plant");
    let cases = nadir::input::load_cases("examples/biorefinery/cases.yaml".as_ref(), &plant)
        .expect("demo cases");
    if only.is_none() {
        run("demo (biorefinery)", &plant, &cases);
    }

    let mut family = vec![
        (10, 5, 1, 3),
        (10, 10, 3, 3),
        (50, 20, 3, 5),
        (50, 50, 10, 6),
    ];
    if !quick {
        family.push((200, 20, 5, 8));
        family.push((200, 50, 10, 8));
    }
    for (n, (loads, cases_n, ops, stages)) in family.into_iter().enumerate() {
        if only.is_some_and(|o| o != n) {
            continue;
        }
        let g = synthetic::generate(&synthetic::Spec {
            loads,
            cases: cases_n,
            operating_points: ops,
            max_stages: stages,
            seed: 1,
        });
        let name = format!("synthetic {loads}×{cases_n}×{ops}, ≤{stages} st");
        run(&name, &g.plant, &g.cases);
    }
}

fn run(name: &str, plant: &Plant, cases: &CaseSet) {
    let t = Instant::now();
    let result = design::design(plant, cases, None, &|_| {});
    let wall = t.elapsed().as_secs_f64();
    let rows = nadir::verify::matrix::pairs(cases).len();
    match result {
        Ok(p) => print_row(name, plant, cases, rows, wall, &p),
        Err(e) => println!("{name:<28} failed after {wall:.1} s: {e:?}"),
    }
}

fn print_row(name: &str, plant: &Plant, cases: &CaseSet, rows: usize, wall: f64, p: &Proposal) {
    let shed: f64 = p.rows.iter().map(|r| r.weight * r.shed_mw).sum();
    let bound: f64 = p.rows.iter().map(|r| r.weight * r.bound_mw).sum();
    let (base, vs) = match &p.baseline {
        Some(b) => (
            format!("{:.2}", b.objective),
            format!("{:+.1}%", 100.0 * (p.objective / b.objective - 1.0)),
        ),
        None => ("none".into(), "-".into()),
    };
    println!(
        "{:<28} {:>5} {:>5} {:>4} {:>6} {:>8.1} {:>8} {:>8} {:>9.2} {:>9.2} {:>7} {:>10.2} {:>10} {:>7}",
        name,
        plant.loads.len(),
        cases.cases.len(),
        plant.operating_points.len(),
        rows,
        wall,
        p.layouts_sized,
        p.replays,
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
