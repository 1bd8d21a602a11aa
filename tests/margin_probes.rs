//! A margin probe that stops once it is certain to fail gets the verdict of the full run.
//!
//! The margin searches ask of each probe only whether it holds, so a probe stops as soon as its
//! failure is certain (a recorded windowed ROCOF above the limit, a section below the recovery
//! level after the recovery deadline, a separated island below the minimum frequency). The
//! criteria are those of docs/models.md §8 and `verify::criteria::judge`; the check here is the
//! law the early stop rests on: for every probe, the stopped run and the run simulated to its
//! end are judged the same. The probes sweep each example row's disturbance factor and model
//! error finely across the searched ranges, so they include probes that fail marginally, probes
//! that fail only late (recovery), probes that dip and recover, and probes that hold.

use nadir::input::{parse_cases, parse_plant, parse_scheme};
use nadir::model::{Case, Plant, Scheme};
use nadir::sim::{simulate, FailLimits, SimConfig, StopReason};
use nadir::verify::margins::{grow_disturbance, has_scalable_event, search, weaken_model, Margin};
use nadir::verify::matrix::{pairs, passes, sim_config_for};

fn read(path: &str) -> String {
    let root = env!("CARGO_MANIFEST_DIR");
    std::fs::read_to_string(format!("{root}/{path}")).expect(path)
}

/// The settings a margin probe of `case` runs with: the criteria's limits watched.
fn probe(plant: &Plant, case: &Case, base: &SimConfig) -> SimConfig {
    let c = &plant.criteria;
    SimConfig {
        stop_below_hz: Some(c.min_hz),
        stop_when_failing: Some(FailLimits {
            max_rocof_hz_per_s: c.max_rocof_hz_per_s,
            recovered_by_s: case.disturbance_span().1 + c.recover_within_s,
        }),
        ..*base
    }
}

#[derive(Default, Debug)]
struct Tally {
    probes: usize,
    hold: usize,
    /// Holding probes that went below the recovery level and came back in time.
    dipped_and_held: usize,
    stopped_rocof: usize,
    stopped_recover: usize,
    /// Probes at a margin found and one bisection step above it.
    marginal: usize,
}

fn check(plant: &Plant, case: &Case, op: usize, scheme: &Scheme, tally: &mut Tally) {
    let full = sim_config_for(plant, &SimConfig::default());
    let stopped = simulate(plant, case, op, scheme, &probe(plant, case, &full));
    let whole = simulate(plant, case, op, scheme, &full);
    let verdict = passes(plant, case, &whole);
    assert_eq!(
        passes(plant, case, &stopped),
        verdict,
        "case {} at point {op}: the stopped probe ({:?}) is judged otherwise than the full run",
        case.id,
        stopped.stop
    );
    tally.probes += 1;
    tally.hold += usize::from(verdict);
    tally.dipped_and_held += usize::from(verdict && whole.went_below_recover_level);
    match stopped.stop {
        StopReason::CertainFailure { criterion, at_s } => {
            assert!(
                !verdict,
                "stopped at {at_s} s ({criterion}) but the full run holds"
            );
            if criterion == "rocof" {
                tally.stopped_rocof += 1;
            } else {
                tally.stopped_recover += 1;
            }
        }
        // A probe that is not stopped early is the full run, bit for bit.
        StopReason::EndTime => assert_eq!(stopped, whole),
        _ => {}
    }
}

#[test]
fn a_probe_stopped_at_a_certain_failure_is_judged_as_the_full_run() {
    let sets = [
        (
            "examples/biorefinery/plant.yaml",
            "schemes/biorefinery.yaml",
            "examples/biorefinery/cases.yaml",
        ),
        (
            "examples/biorefinery/plant.yaml",
            "schemes/biorefinery-proposed.yaml",
            "examples/biorefinery/cases.yaml",
        ),
        (
            "examples/canemill/plant.yaml",
            "schemes/canemill.yaml",
            "examples/canemill/cases.yaml",
        ),
    ];
    let mut tally = Tally::default();
    for (p, s, c) in sets {
        let plant = parse_plant(&read(p), p).expect("plant");
        let scheme = parse_scheme(&read(s), s, &plant).expect("scheme");
        let cases = parse_cases(&read(c), c, &plant).expect("cases");
        for (ci, op) in pairs(&cases) {
            let case = &cases.cases[ci];
            // 1.0 … 2.0 in steps of 1/16, the searched range of the disturbance factor.
            if has_scalable_event(case) {
                for j in 0..=16 {
                    let grown = grow_disturbance(&plant, case, op, 1.0 + j as f64 / 16.0);
                    check(&plant, &grown, op, &scheme, &mut tally);
                }
            }
            // 0 … 50 % in steps of 50/16 %, the searched range of the model error.
            for j in 1..=16 {
                let weaker = weaken_model(&plant, 50.0 * j as f64 / 16.0);
                check(&weaker, case, op, &scheme, &mut tally);
            }
            // The most marginal probes: the margin found (the last point that holds) and the
            // point one bisection step above it (1/128 of the range).
            let cfg = sim_config_for(&plant, &SimConfig::default());
            let m = search(&plant, case, op, &scheme, &cfg);
            if let Margin::Found(k) = m.disturbance_factor {
                for k in [k, k + 1.0 / 128.0] {
                    let grown = grow_disturbance(&plant, case, op, k);
                    check(&plant, &grown, op, &scheme, &mut tally);
                    tally.marginal += 1;
                }
            }
            if let Margin::Found(pct) = m.model_error_pct {
                for pct in [pct, pct + 50.0 / 64.0] {
                    check(&weaken_model(&plant, pct), case, op, &scheme, &mut tally);
                    tally.marginal += 1;
                }
            }
        }
    }
    eprintln!("{tally:?}");
    // The law is only tested where probes both hold and stop early on each criterion.
    assert!(tally.hold > 100, "{tally:?}");
    assert!(tally.dipped_and_held > 50, "{tally:?}");
    assert!(tally.marginal > 20, "{tally:?}");
    assert!(tally.stopped_rocof > 50, "{tally:?}");
    assert!(tally.stopped_recover > 10, "{tally:?}");
}
