//! Readings on the sample grid against their definitions, evaluated point by point.
//!
//! docs/models.md §8 defines the reported ROCOF as the largest |f(t) − f(t − W)|/W over sections
//! and grid points (linear interpolation for f(t − W)); src/verify/offnominal.rs defines a
//! generator's time in a band as the sum of the grid intervals whose starting sample is in the
//! band; the settling check takes the lowest and highest sample from its start on. The run
//! computes each of these while skipping the grid points that cannot matter (bounded by the
//! knots, between which the frequency is monotone). Here each is recomputed by brute force on
//! every grid point of the same run, with the same evaluation of the dense output
//! (`Trajectory::grid_hz`), and must agree exactly. The runs are the examples' cases at every
//! operating point, as written and with the disturbance grown or the model weakened as the
//! margin searches do, so runs that hold, that fail late and that recover after a dip are all
//! met. Last, the ROCOF and the band time of an island whose frequency has a closed form
//! (Kundur 1994, §11.1) are checked against it.

use nadir::input::{parse_cases, parse_plant, parse_scheme};
use nadir::model::{CaseSet, Plant, Scheme};
use nadir::sim::{simulate, EventKind, Run, SimConfig};
use nadir::verify::margins::{grow_disturbance, weaken_model};
use nadir::verify::matrix::{observe, pairs, sim_config_for};
use nadir::verify::offnominal::{band_times, default_bands};

fn read(path: &str) -> String {
    let root = env!("CARGO_MANIFEST_DIR");
    std::fs::read_to_string(format!("{root}/{path}")).expect(path)
}

fn load(plant: &str, scheme: &str, cases: &str) -> (Plant, Scheme, CaseSet) {
    let p = parse_plant(&read(plant), plant).expect("plant");
    let s = parse_scheme(&read(scheme), scheme, &p).expect("scheme");
    let c = parse_cases(&read(cases), cases, &p).expect("cases");
    (p, s, c)
}

fn examples() -> Vec<(Plant, Scheme, CaseSet)> {
    vec![
        load(
            "examples/biorefinery/plant.yaml",
            "schemes/biorefinery.yaml",
            "examples/biorefinery/cases.yaml",
        ),
        load(
            "examples/biorefinery/plant.yaml",
            "schemes/biorefinery-proposed.yaml",
            "examples/biorefinery/cases.yaml",
        ),
        load(
            "examples/canemill/plant.yaml",
            "schemes/canemill.yaml",
            "examples/canemill/cases.yaml",
        ),
    ]
}

/// Every run of the examples, as written and varied as the margin searches vary them.
fn for_each_run(mut check: impl FnMut(&Plant, &nadir::model::Case, usize, &SimConfig, &Run)) {
    for (plant, scheme, cases) in examples() {
        let cfg = sim_config_for(&plant, &SimConfig::default());
        for (ci, op) in pairs(&cases) {
            let case = &cases.cases[ci];
            for k in [1.0, 1.3, 1.7, 2.0, 3.0] {
                let grown = grow_disturbance(&plant, case, op, k);
                let run = simulate(&plant, &grown, op, &scheme, &cfg);
                check(&plant, &grown, op, &cfg, &run);
            }
            for pct in [25.0, 50.0, 70.0] {
                let weaker = weaken_model(&plant, pct);
                let run = simulate(&weaker, case, op, &scheme, &cfg);
                check(&weaker, case, op, &cfg, &run);
            }
        }
    }
}

/// |f(t_i) − f(t_i − W)|/W at every grid point i with W ≤ t_i, from < t_i ≤ to (docs/models.md
/// §8), the largest.
fn brute_rocof(run: &Run, s: usize, window: f64, dt: f64, from: f64, to: f64) -> f64 {
    let tr = &run.trajectory;
    let f = |k: usize| tr.grid_hz(s, k);
    let w = window / dt;
    let mut best: f64 = 0.0;
    for i in 0..tr.grid_len() {
        let t = tr.grid_time(i);
        if t < window - 1e-12 || t <= from || t > to + 1e-12 {
            continue;
        }
        let p = (i as f64 - w).max(0.0);
        let lo = p.floor() as usize;
        let frac = p - lo as f64;
        let back = if lo + 1 < tr.grid_len() && frac != 0.0 {
            f(lo) * (1.0 - frac) + f(lo + 1) * frac
        } else {
            f(lo)
        };
        best = best.max(((f(i) - back) / window).abs());
    }
    best
}

#[test]
fn the_reported_rocof_is_the_largest_windowed_difference_on_the_grid() {
    let mut runs = 0;
    for_each_run(|plant, _, _, cfg, run| {
        let window = cfg.rocof_window_s.max(cfg.sample_interval_s);
        let t_end = run.trajectory.grid_time(run.trajectory.grid_len() - 1);
        let end = run.islands.iter().map(|i| i.to_s).fold(t_end, f64::max);
        let whole = (0..plant.sections.len())
            .map(|s| {
                brute_rocof(
                    run,
                    s,
                    window,
                    cfg.sample_interval_s,
                    f64::NEG_INFINITY,
                    end,
                )
            })
            .fold(0.0, f64::max);
        assert_eq!(run.max_rocof_hz_per_s, whole, "run ROCOF");
        for isl in &run.islands {
            let s0 = plant
                .sections
                .iter()
                .position(|s| s.id == isl.sections[0])
                .expect("section");
            let own = brute_rocof(run, s0, window, cfg.sample_interval_s, isl.from_s, isl.to_s);
            assert_eq!(isl.max_rocof_hz_per_s, own, "island {} ROCOF", isl.index);
        }
        runs += 1;
    });
    assert!(runs > 100, "{runs} runs");
}

#[test]
fn band_times_are_the_grid_intervals_that_start_in_the_band() {
    let mut nonzero = 0;
    for_each_run(|plant, _, op, _, run| {
        let tr = &run.trajectory;
        let defaults = default_bands(plant.nominal_hz);
        let mut expected = Vec::new();
        for (g, gen) in plant.generators.iter().enumerate() {
            if !plant.operating_points[op].online[g] {
                continue;
            }
            let tripped_at = run
                .events
                .iter()
                .find(|e| matches!(&e.what, EventKind::GeneratorTripped { generator, .. } if *generator == gen.id))
                .map_or(f64::INFINITY, |e| e.at_s);
            let bands = if gen.off_frequency_limits.is_empty() {
                &defaults
            } else {
                &gen.off_frequency_limits
            };
            for band in bands {
                let mut time_s = 0.0;
                for k in 1..tr.grid_len() {
                    let (t0, t1) = (tr.grid_time(k - 1), tr.grid_time(k).min(tripped_at));
                    let f = tr.grid_hz(gen.section, k - 1);
                    if t1 > t0 && f >= band.low_hz && f < band.high_hz {
                        time_s += t1 - t0;
                    }
                }
                if time_s > 0.0 {
                    expected.push((gen.id.clone(), *band, time_s));
                }
            }
        }
        let got: Vec<_> = band_times(plant, op, run)
            .into_iter()
            .map(|b| (b.generator, b.band, b.time_s))
            .collect();
        nonzero += got.len();
        assert_eq!(got, expected);
    });
    assert!(nonzero > 50, "only {nonzero} band times met");
}

/// Here the run reads only the first and last grid point of each knot interval, which is exact
/// while the frequency is monotone between knots. In a settled tail the frequency can wiggle by
/// less than a microhertz inside one long step without a sign change of its slope at the step
/// ends, so the knots miss the wiggle: the two readings then differ by that much (found:
/// 1.7e-7 Hz on a tail whose whole range is 6e-7 Hz wide). Tolerance 1e-6 Hz, far below any
/// settling band.
#[test]
fn the_settling_range_is_the_lowest_and_highest_sample_from_its_start() {
    let mut worst: f64 = 0.0;
    for_each_run(|plant, case, _, _, run| {
        let tr = &run.trajectory;
        let from = case.disturbance_span().0 + plant.criteria.settle_within_s;
        let mut range: Option<(f64, f64)> = None;
        for s in 0..plant.sections.len() {
            for k in 0..tr.grid_len() {
                if tr.grid_time(k) + 1e-9 >= from {
                    let f = tr.grid_hz(s, k);
                    range = Some(range.map_or((f, f), |(lo, hi)| (lo.min(f), hi.max(f))));
                }
            }
        }
        let seen = observe(run, case, &plant.criteria);
        match (seen.settle_range_hz, range) {
            (Some((lo, hi)), Some((blo, bhi))) => {
                assert!(lo >= blo && hi <= bhi, "a reading outside the samples");
                worst = worst.max(lo - blo).max(bhi - hi);
            }
            (a, b) => assert_eq!(a, b),
        }
    });
    assert!(worst <= 1e-6, "settling range off by {worst} Hz");
}

/// One machine with fixed output (no governor) and one 100 MW load with frequency exponent 1:
/// load damping D = 100 MW per pu exactly, stored energy E = H·S = 5 s × 120 MVA = 600 MW·s.
/// After a constant-power load step ΔP = 3 MW at t = 0, Kundur (Power System Stability and
/// Control, 1994, §11.1, with 1/R = 0) gives Δω(t) = −(ΔP/D)(1 − e^{−t/T}), T = 2E/D = 12 s.
const LINEAR_ISLAND: &str = r#"
plant: { name: hand-computable island, nominal_hz: 50 }
generators:
  - { id: g, section: main, rating_mva: 120, inertia_s: 5.0, output_mw: 100, min_mw: 0, max_mw: 120,
      governor: { model: fixed } }
loads:
  - { id: l, section: main, p_mw: 100, rank: 1, freq_exp: 1.0 }
criteria:
  min_hz: 47.5
  recover: { above_hz: 47.6, within_s: 10 }
  settle: { within_s: 20, low_hz: 47.0, high_hz: 51.0 }
"#;

const STEP: &str = r#"
cases:
  - { id: step, duration_s: 30, events: [ { at_s: 0.0, load_step: { section: main, mw: 3.0 } } ] }
"#;

#[test]
fn rocof_and_band_time_of_a_linear_island_match_the_closed_form() {
    let plant = parse_plant(LINEAR_ISLAND, "plant.yaml").expect("plant");
    let cases = parse_cases(STEP, "cases.yaml", &plant).expect("cases");
    // A stage the frequency never reaches (it settles towards 48.5 Hz).
    let scheme = parse_scheme(
        "stages:\n  - { id: uf-1, pickup_hz: 47.0, delay_s: 0.1, sheds: [l] }\n",
        "scheme.yaml",
        &plant,
    )
    .expect("scheme");
    let cfg = sim_config_for(&plant, &SimConfig::default());
    let run = simulate(&plant, &cases.cases[0], 0, &scheme, &cfg);
    let (f0, dp, d, t) = (50.0_f64, 3.0, 100.0, 12.0);
    let f = |s: f64| f0 * (1.0 - dp / d * (1.0 - (-s / t).exp()));
    // The frequency falls ever more slowly, so the steepest 0.5 s window is the first one,
    // [0, 0.5] s, both ends on the 0.01 s grid: (f(0) − f(0.5))/0.5 = 0.12243 Hz/s.
    let rocof = (f(0.0) - f(0.5)) / 0.5;
    assert!(
        (run.max_rocof_hz_per_s - rocof).abs() <= 1e-5 * rocof,
        "ROCOF {} Hz/s, closed form {rocof} Hz/s",
        run.max_rocof_hz_per_s
    );
    // It reaches 49.0 Hz when (ΔP/D)(1 − e^{−t/T}) = 0.02, at t = T·ln 3 = 13.183 s, and stays
    // in the 48.5–49.0 Hz band (Regulation (EU) 2016/631 Table 2, the default bands) to the end
    // at 30 s, approaching 48.5 Hz from above: 30 − 13.183 = 16.817 s, counted on the 0.01 s
    // grid from the first sample below 49.0 Hz (13.19 s): 16.81 s.
    let bands = band_times(&plant, 0, &run);
    assert_eq!(bands.len(), 1, "{bands:?}");
    assert_eq!((bands[0].band.low_hz, bands[0].band.high_hz), (48.5, 49.0));
    let exact = 30.0 - t * 3f64.ln();
    assert!(
        bands[0].time_s <= exact && exact - bands[0].time_s < 0.01,
        "{} s in the band, closed form {exact} s",
        bands[0].time_s
    );
}
