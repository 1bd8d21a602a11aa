//! Simulator throughput on the demo plant: every case × operating point of
//! examples/biorefinery, repeated to at least 1000 runs, replayed serially and with rayon.
//!
//! `cargo run --release --example bench_sim [-- RUNS]` prints runs per second and µs per run
//! for each, with and without the sampled trace, the ratio of the two on one core, and checks that every run gives the same
//! result whichever thread count replayed it (a benchmark, not a timed test).

use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::sim::{simulate, Run, SimConfig};
use rayon::prelude::*;
use std::path::Path;
use std::time::Instant;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = load_plant(&root.join("examples/biorefinery/plant.yaml"))?;
    let cases = load_cases(&root.join("examples/biorefinery/cases.yaml"), &plant)?;
    let scheme = load_scheme(&root.join("schemes/biorefinery.yaml"), &plant)?;
    let min_runs: usize = match std::env::args().nth(1) {
        Some(s) => s.parse()?,
        None => 1000,
    };
    let set: Vec<(usize, usize)> = cases
        .cases
        .iter()
        .enumerate()
        .flat_map(|(c, case)| case.applies_to.iter().map(move |&op| (c, op)))
        .collect();
    let repeats = min_runs.div_ceil(set.len().max(1));
    let jobs: Vec<(usize, usize)> = (0..repeats).flat_map(|_| set.iter().copied()).collect();
    let threads = rayon::current_num_threads();
    println!(
        "demo: {} case × operating-point runs, repeated {repeats}× = {} runs; rayon threads {threads}",
        set.len(),
        jobs.len()
    );
    let mut serial_us = [0.0f64; 2];
    for (k, record_trace) in [false, true].into_iter().enumerate() {
        let cfg = SimConfig {
            record_trace,
            ..SimConfig::default()
        };
        let one = |&(c, op): &(usize, usize)| simulate(&plant, &cases.cases[c], op, &scheme, &cfg);
        // Warm up caches and the thread pool.
        let _: Vec<Run> = set.par_iter().map(one).collect();
        let start = Instant::now();
        let serial: Vec<Run> = jobs.iter().map(one).collect();
        let t_serial = start.elapsed().as_secs_f64();
        let start = Instant::now();
        let parallel: Vec<Run> = jobs.par_iter().map(one).collect();
        let t_parallel = start.elapsed().as_secs_f64();
        let single = rayon::ThreadPoolBuilder::new().num_threads(1).build()?;
        let one_thread: Vec<Run> = single.install(|| set.par_iter().map(one).collect());
        let identical = serial == parallel
            && serial
                .chunks(set.len())
                .all(|chunk| chunk == one_thread.as_slice());
        let n = jobs.len() as f64;
        serial_us[k] = 1e6 * t_serial / n;
        println!(
            "record_trace {record_trace:5}: serial {:9.0} runs/s ({:7.1} µs/run); rayon {:9.0} runs/s ({:7.1} µs/run); identical across thread counts: {identical}",
            n / t_serial,
            1e6 * t_serial / n,
            n / t_parallel,
            1e6 * t_parallel / n,
        );
        if !identical {
            return Err("results differ between thread counts".into());
        }
    }
    println!(
        "one core: {:.1} µs/run without the trace, {:.1} µs/run with it; the trace costs {:.2}× \
         (ratio measured in this invocation)",
        serial_us[0],
        serial_us[1],
        serial_us[1] / serial_us[0]
    );
    let cfg = SimConfig::default();
    println!("per run (record_trace false):");
    for &(c, op) in &set {
        let case = &cases.cases[c];
        let reps = 200;
        let start = Instant::now();
        let mut run = None;
        for _ in 0..reps {
            run = Some(simulate(&plant, case, op, &scheme, &cfg));
        }
        let us = 1e6 * start.elapsed().as_secs_f64() / reps as f64;
        let Some(run) = run else { continue };
        println!(
            "  {:32} {:18} {:7.1} µs  nadir {:.4} Hz at {:.4} s, shed {:.2} MW, {} events",
            case.id,
            plant.operating_points[op].id,
            us,
            run.nadir_hz,
            run.nadir_at_s,
            run.shed_mw,
            run.events.len()
        );
    }
    Ok(())
}
