//! Behaviour of the simulator on the demo plant (examples/biorefinery): agreement with the
//! closed-form screening of `nadir check`, event timing, and one expectation across code paths.
//! Each test names the law or source it checks.

use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::model::{CaseSet, Plant, Scheme, Start};
use nadir::screening::{screen_cases, SteadyState};
use nadir::sim::{initial_dispatch_mw, simulate, EventKind, Run, SimConfig, StopReason};
use std::path::Path;

fn demo() -> (Plant, CaseSet, Scheme) {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = load_plant(&root.join("examples/biorefinery/plant.yaml")).expect("plant");
    let cases = load_cases(&root.join("examples/biorefinery/cases.yaml"), &plant).expect("cases");
    let scheme = load_scheme(&root.join("schemes/biorefinery.yaml"), &plant).expect("scheme");
    (plant, cases, scheme)
}

fn case_index(cases: &CaseSet, id: &str) -> usize {
    cases.cases.iter().position(|c| c.id == id).expect("case")
}

fn all_runs(plant: &Plant, cases: &CaseSet, scheme: &Scheme, cfg: &SimConfig) -> Vec<Run> {
    cases
        .cases
        .iter()
        .flat_map(|c| c.applies_to.iter().map(move |&op| (c, op)))
        .map(|(c, op)| simulate(plant, c, op, scheme, cfg))
        .collect()
}

#[test]
fn islanded_start_shares_the_import_by_droop_gain_like_screening() {
    // Rule of src/screening/mod.rs (module doc): the import is taken up by the governed machines in
    // proportion to S/R within their headroom. Closed form at turndown: import 3.07 MW,
    // K = 16/0.04, 8/0.05, 2.5/0.04 MW/pu (no unit reaches its limit).
    let (plant, cases, _) = demo();
    let op = plant
        .operating_points
        .iter()
        .position(|o| o.id == "turndown")
        .expect("turndown");
    let k = [16.0 / 0.04, 8.0 / 0.05, 2.5 / 0.04];
    let dispatch = [8.0, 3.5, 1.6];
    let total_k: f64 = k.iter().sum();
    let figures = screen_cases(&plant, &cases, None);
    for case in cases.cases.iter().filter(|c| c.start == Start::Islanded) {
        let got = initial_dispatch_mw(&plant, case, op);
        for g in 0..3 {
            let expect = dispatch[g] + 3.07 * k[g] / total_k;
            assert!(
                (got[g] - expect).abs() < 1e-9,
                "{}: {} {} vs {expect}",
                case.id,
                plant.generators[g].id,
                got[g]
            );
        }
        // Screening's deficit the moment after the first event follows from the same outputs.
        let fig = figures
            .iter()
            .find(|f| f.case == case.id && f.operating_point == "turndown")
            .expect("figures");
        let after = fig.after_first.as_ref().expect("after first");
        for isl in &after.islands {
            let in_island = |section: usize| {
                isl.sections
                    .iter()
                    .any(|s| *s == plant.sections[section].id)
            };
            let load: f64 = plant
                .loads
                .iter()
                .enumerate()
                .filter(|(_, l)| in_island(l.section))
                .map(|(i, _)| plant.operating_points[op].load_mw[i])
                .sum::<f64>()
                + after.load_step_mw;
            let gen: f64 = plant
                .generators
                .iter()
                .enumerate()
                .filter(|(g, gen)| {
                    in_island(gen.section) && !after.tripped_generators.contains(&gen.id) && *g < 3
                })
                .map(|(g, _)| got[g])
                .sum();
            if case.id == "load-step-islanded" && isl.sections.len() == 2 {
                // The step is on the whole island.
                assert!((isl.deficit_mw - (load - gen)).abs() < 1e-9);
            } else if case.id != "load-step-islanded" {
                let load_only = load - after.load_step_mw;
                assert!(
                    (isl.deficit_mw - (load_only - gen)).abs() < 1e-9,
                    "{}: screening deficit {} vs {}",
                    case.id,
                    isl.deficit_mw,
                    load_only - gen
                );
            }
        }
    }
}

#[test]
fn bus_split_each_part_settles_at_its_own_droop_and_damping_balance() {
    // Kundur 1994 ch. 11: steady state per island Δf = −ΔP_i/(D_i + Σ S/R) (with each unit's
    // dead band offsetting its response), as evaluated by src/screening/mod.rs for each part.
    let (plant, cases, scheme) = demo();
    let c = case_index(&cases, "bus-split-islanded");
    let case = &cases.cases[c];
    let op = case.applies_to[0];
    let run = simulate(&plant, case, op, &scheme, &SimConfig::default());
    assert_eq!(run.stop, StopReason::EndTime);
    assert_eq!(run.shed_mw, 0.0, "the split must not shed for this check");
    let figures = screen_cases(&plant, &cases, None);
    let fig = figures.iter().find(|f| f.case == case.id).expect("figures");
    let after = fig.after_first.as_ref().expect("after first");
    assert_eq!(after.islands.len(), 2);
    for isl in &after.islands {
        let SteadyState::Held { hz, .. } = isl.steady_state else {
            panic!("screening holds each part");
        };
        let sim = run
            .islands
            .iter()
            .find(|s| s.sections == isl.sections && s.end == nadir::sim::IslandEnd::Running)
            .expect("island in the run");
        eprintln!(
            "{:?}: sim {:.5} Hz, closed form {hz:.5} Hz",
            isl.sections, sim.final_hz
        );
        assert!(
            (sim.final_hz - hz).abs() < 2e-3,
            "{:?}: {} vs {hz}",
            isl.sections,
            sim.final_hz
        );
    }
}

#[test]
fn armed_stage_opens_delay_plus_breaker_after_the_utility_breaker() {
    // Event semantics of docs/models.md §6 (armed stage): loads open delay_s + breaker_s after
    // the named breaker opens; demo armed-utility 0.1 s + 0.08 s.
    let (plant, cases, scheme) = demo();
    let case = &cases.cases[case_index(&cases, "utility-loss")];
    for &op in &case.applies_to {
        let run = simulate(&plant, case, op, &scheme, &SimConfig::default());
        let opened = |pred: &dyn Fn(&EventKind) -> bool| {
            run.events.iter().find(|e| pred(&e.what)).map(|e| e.at_s)
        };
        let utility = opened(
            &|k| matches!(k, EventKind::BreakerOpened { breaker, .. } if breaker == "utility"),
        )
        .expect("utility opened");
        let loads = opened(
            &|k| matches!(k, EventKind::LoadsOpened { stage, .. } if stage == "armed-utility"),
        )
        .expect("armed stage opened");
        assert!(
            (loads - utility - 0.18).abs() < 1e-3,
            "{loads} vs {utility}"
        );
    }
}

#[test]
fn fine_fixed_cap_and_default_adaptive_cap_agree() {
    // STYLE item 9, one expectation on every code path: a 2 ms cap everywhere against the
    // default (20 ms while pending, 0.5 s when quiet) gives the same nadir within 0.002 Hz and
    // the same load-opening times within 2 ms, on every demo case and operating point.
    let (plant, cases, scheme) = demo();
    let fine = SimConfig {
        max_step_s: 0.002,
        quiet_max_step_s: 0.002,
        ..SimConfig::default()
    };
    let a = all_runs(&plant, &cases, &scheme, &SimConfig::default());
    let b = all_runs(&plant, &cases, &scheme, &fine);
    for (ra, rb) in a.iter().zip(&b) {
        assert!(
            (ra.nadir_hz - rb.nadir_hz).abs() < 2e-3,
            "nadir {} vs {}",
            ra.nadir_hz,
            rb.nadir_hz
        );
        let opens = |r: &Run| -> Vec<(String, f64)> {
            r.events
                .iter()
                .filter_map(|e| match &e.what {
                    EventKind::LoadsOpened { stage, .. } => Some((stage.clone(), e.at_s)),
                    _ => None,
                })
                .collect()
        };
        let (oa, ob) = (opens(ra), opens(rb));
        assert_eq!(
            oa.iter().map(|o| &o.0).collect::<Vec<_>>(),
            ob.iter().map(|o| &o.0).collect::<Vec<_>>()
        );
        for (x, y) in oa.iter().zip(&ob) {
            assert!((x.1 - y.1).abs() < 2e-3, "{} at {} vs {}", x.0, x.1, y.1);
        }
        assert_eq!(
            ra.stop == StopReason::EndTime,
            rb.stop == StopReason::EndTime
        );
    }
}

#[test]
fn reruns_are_bit_identical_and_the_trace_changes_nothing_else() {
    // Definition (docs/models.md, sim module doc): same inputs, same Run; recording the trace
    // only adds the trace.
    let (plant, cases, scheme) = demo();
    let traced = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let a = all_runs(&plant, &cases, &scheme, &SimConfig::default());
    let b = all_runs(&plant, &cases, &scheme, &SimConfig::default());
    assert_eq!(a, b);
    let t = all_runs(&plant, &cases, &scheme, &traced);
    for (x, mut y) in a.into_iter().zip(t) {
        assert!(y.trace.take().is_some());
        assert_eq!(x, y);
    }
}
