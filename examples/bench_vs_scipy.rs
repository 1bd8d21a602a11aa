//! Throughput benchmark (not a test): the same set of case × operating-point runs replayed by
//! nadir (serially, and in parallel with rayon on all cores) and by the independent scipy
//! reference (tests/scipy_reference/reference.py, one invocation over the whole batch) at its own
//! tolerances and again as a plain solve_ivp RK45 at nadir's tolerances; prints runs per second
//! for each, the ratio to nadir serial and the agreement (largest |Δf|, |Δ trip time|) beside it, and checks that nadir's results are identical at
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
    // The same runs twice in scipy: the reference at its own tolerances, and a plain solve_ivp
    // RK45 at nadir's (rtol 1e-6, atol 1e-9; step cap 0.5 s, nadir's cap while nothing is
    // pending, so scipy is never held to a smaller step than nadir's largest).
    let nadir_per_run = serial_s / xs.len() as f64;
    println!(
        "{:<44} {:>10} {:>12} {:>13} {:>10} {:>10} {:>7}",
        "scipy solve_ivp, same runs",
        "runs/s",
        "µs/run",
        "nadir serial×",
        "|Δf| Hz",
        "|Δt| ms",
        "differ"
    );
    for (label, tag, solver) in [
        ("reference: DOP853 rtol 1e-9 atol 1e-11", "bench", &[][..]),
        (
            "plain: RK45 rtol 1e-6 atol 1e-9 (nadir's)",
            "bench-rk45",
            &["RK45", "1e-6", "1e-9", "0.5"][..],
        ),
    ] {
        let out = match run_reference_with(&xs, tag, solver) {
            Ok(o) => o,
            Err(e) => {
                eprintln!("scipy ({label}) did not run: {e:?}");
                std::process::exit(1)
            }
        };
        let per_run = out.wall_s / xs.len() as f64;
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
            "{label:<44} {:>10.1} {:>12.1} {:>12.0}× {hz:>10.2e} {:>10.3} {differ:>7}",
            1.0 / per_run,
            per_run * 1e6,
            per_run / nadir_per_run,
            dt * 1e3
        );
    }
    println!(
        "(scipy time is measured inside the script, one process, start-up excluded; nadir serial \
         {:.1} µs/run. |Δf| largest difference of any section minimum, |Δt| of any stage or trip \
         time; differ: runs whose set of operations differs, left out of |Δf| and |Δt|)",
        nadir_per_run * 1e6
    );
}
