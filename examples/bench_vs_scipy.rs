//! Throughput benchmark (not a test): the same set of case × operating-point runs replayed by
//! nadir (serially, and in parallel with rayon on all cores) and by the independent scipy
//! reference (tests/scipy_reference/reference.py, one invocation over the whole batch); prints
//! runs per second for each and their ratio, and checks that nadir's results are identical at
//! 1 and N threads. Run: `cargo run --release --example bench_vs_scipy [-- --runs N] [--no-scipy]`.

#[path = "../tests/scipy_reference/cases.rs"]
mod cases;
#[path = "../tests/common/mod.rs"]
mod common;

use cases::*;
use nadir::sim::Run;
use rayon::prelude::*;
use std::time::Instant;

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let mut runs = 1000usize;
    let mut scipy = true;
    let mut i = 1;
    while i < args.len() {
        match args[i].as_str() {
            "--runs" => {
                runs = args
                    .get(i + 1)
                    .and_then(|v| v.parse().ok())
                    .unwrap_or_else(|| {
                        eprintln!("--runs needs a number");
                        std::process::exit(2)
                    });
                i += 1;
            }
            "--no-scipy" => scipy = false,
            other => {
                eprintln!("unknown argument {other}; use --runs N and --no-scipy");
                std::process::exit(2)
            }
        }
        i += 1;
    }
    let xs = perturbed(runs);
    let threads = rayon::current_num_threads();
    println!(
        "{} runs ({} cases of the scipy cross-check, loads and import scaled 0.8–1.2)",
        xs.len(),
        cases().len()
    );

    let t = Instant::now();
    let serial: Vec<Run> = xs.iter().map(run_nadir).collect();
    let serial_s = t.elapsed().as_secs_f64();

    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .expect("a one-thread pool");
    let single: Vec<Run> = one.install(|| xs.par_iter().map(run_nadir).collect());

    let t = Instant::now();
    let parallel: Vec<Run> = xs.par_iter().map(run_nadir).collect();
    let parallel_s = t.elapsed().as_secs_f64();

    let identical = serial == single && serial == parallel;
    println!(
        "nadir serial     {:>10.1} runs/s  ({serial_s:.3} s)",
        xs.len() as f64 / serial_s
    );
    println!(
        "nadir {threads:>2} threads {:>10.1} runs/s  ({parallel_s:.3} s, speed-up {:.2})",
        xs.len() as f64 / parallel_s,
        serial_s / parallel_s
    );
    println!(
        "results at 1 and {threads} threads identical to the serial runs: {}",
        if identical { "yes" } else { "NO" }
    );
    if !identical {
        std::process::exit(1);
    }
    if !scipy {
        return;
    }
    let t = Instant::now();
    let out = match run_reference(&xs, "bench") {
        Ok(o) => o,
        Err(e) => {
            eprintln!("scipy reference did not run: {e:?}");
            std::process::exit(1)
        }
    };
    let total_s = t.elapsed().as_secs_f64();
    let scipy_rate = xs.len() as f64 / out.wall_s;
    println!(
        "scipy reference  {:>10.1} runs/s  ({:.3} s in the script, {total_s:.3} s with start-up; one process)",
        scipy_rate, out.wall_s
    );
    println!(
        "ratio nadir/scipy: serial {:.0}×, {threads} threads {:.0}×",
        xs.len() as f64 / serial_s / scipy_rate,
        xs.len() as f64 / parallel_s / scipy_rate
    );
    let (mut hz, mut dt, mut differ) = (0.0f64, 0.0f64, 0usize);
    for ((x, run), r) in xs.iter().zip(&serial).zip(&out.results) {
        let (h, d, problems) = differences(&nadir_figures(x, run), &reference_figures(r));
        if problems.is_empty() {
            hz = hz.max(h);
            dt = dt.max(d);
        } else {
            differ += 1;
        }
    }
    println!(
        "agreement over the batch: largest |Δf| {hz:.2e} Hz, |Δt| {:.3} ms; {differ} runs with a different set of operations",
        dt * 1e3
    );
}
