//! Calibration time on the demo: four parameters of examples/biorefinery/plant.yaml fitted to the
//! FICTIONAL record examples/biorefinery/record-utility-loss.csv (case utility-loss at full
//! rate), every evaluation a replay of the case.
//!
//! `cargo run --release --example bench_calibrate [-- REPEATS]` prints the wall time of each fit
//! (the median of REPEATS, default 5), the replays it took, the time per replay, and the fitted
//! values; the target is under 10 s for four parameters (a benchmark, not a timed test).

use nadir::calibrate::{self, fit, params, Setup};
use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::recording::{read_frequency_record, ReadOptions};
use std::path::Path;
use std::time::Instant;

const FIT: [&str; 4] = [
    "inertia_s:stg-1=1..10",
    "freq_exp:@2.5=0..4",
    "droop_pct:stg-1=2..10",
    "turbine_s:stg-1=0.1..2",
];

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant_path = root.join("examples/biorefinery/plant.yaml");
    let plant = load_plant(&plant_path)?;
    let cases = load_cases(&root.join("examples/biorefinery/cases.yaml"), &plant)?;
    let scheme = load_scheme(&root.join("schemes/biorefinery.yaml"), &plant)?;
    let repeats: usize = match std::env::args().nth(1) {
        Some(s) => s.parse()?,
        None => 5,
    };
    let case = cases
        .cases
        .iter()
        .find(|c| c.id == "utility-loss")
        .ok_or("no utility-loss case")?;
    let record = read_frequency_record(
        &root.join("examples/biorefinery/record-utility-loss.csv"),
        &ReadOptions::default(),
    )?;
    let onset = calibrate::figures::onset(&record.times_s, &record.frequency_hz)
        .ok_or("no onset in the record")?;
    let recorded = calibrate::align(&record.times_s, &record.frequency_hz, onset.at_s, case)
        .map_err(|e| format!("{e:?}"))?;
    let setup = Setup::new(&plant, case, 0, &scheme, 0);
    let file = plant_path.display().to_string();
    let ps: Vec<params::Parameter> = FIT
        .iter()
        .map(|r| params::parse(r, &plant, &file))
        .collect::<Result<_, _>>()
        .map_err(|e| e.to_string())?;
    println!(
        "demo record: {} samples compared; fitting {} parameters; rayon threads {}",
        recorded.t_s.len(),
        ps.len(),
        rayon::current_num_threads()
    );
    let mut times = Vec::new();
    let mut last = None;
    for _ in 0..repeats.max(1) {
        let start = Instant::now();
        let r = fit::fit(&setup, &recorded, &ps).ok_or("a replay failed")?;
        times.push(start.elapsed().as_secs_f64());
        last = Some(r);
    }
    times.sort_by(f64::total_cmp);
    let median = times[times.len() / 2];
    let r = last.ok_or("no fit")?;
    println!(
        "fit: median {:.3} s over {} repeat(s) (fastest {:.3} s); {} replays, {:.1} ms per replay; {}",
        median,
        times.len(),
        times[0],
        r.replays,
        1000.0 * median / r.replays as f64,
        r.stop
    );
    for f in &r.fitted {
        println!(
            "  {:<24} {:>8.4} → {:>8.4}{}  se {}",
            f.name,
            f.initial,
            f.value,
            f.unit,
            f.std_error.map_or("—".into(), |s| format!("{s:.4}"))
        );
    }
    for (i, k, c) in &r.strongly_correlated {
        println!(
            "  strongly correlated: {} and {} ({c:.3})",
            r.fitted[*i].name, r.fitted[*k].name
        );
    }
    println!(
        "residual RMS {:.4} Hz before, {:.4} Hz after; target < 10 s: {}",
        r.rms_before_hz,
        r.rms_after_hz,
        if median < 10.0 { "met" } else { "NOT met" }
    );
    Ok(())
}
