//! Cross-check of the simulator against an independent scipy implementation of docs/models.md
//! (tests/scipy_reference/reference.py: scipy.integrate.solve_ivp, DOP853, rtol 1e-10, every
//! threshold a located terminal event, restart after each discrete change).
//!
//! Tolerances (issue item e): nadir and every section's lowest frequency within 0.002 Hz, final
//! frequency within 0.002 Hz, shed, trip and collapse times within 2 ms, and the same stages and
//! generators operated. Needs python3 with the pinned packages of
//! tests/scipy_reference/requirements.txt; without them the test fails unless NADIR_SKIP_SCIPY=1.

#[path = "scipy_reference/cases.rs"]
mod cases;
mod common;

use cases::*;

const TOL_HZ: f64 = 0.002;
const TOL_S: f64 = 0.002;

fn armed(x: &CrossCase) -> bool {
    x.scheme
        .stages
        .iter()
        .any(|s| matches!(s.trigger, nadir::model::StageTrigger::Breaker(_)))
}

#[test]
fn nadir_agrees_with_scipy_reference() {
    let xs: Vec<CrossCase> = cases().into_iter().filter(|x| !armed(x)).collect();
    assert!(xs.len() >= 20, "the issue asks for at least 20 cases");
    check(&xs, "freq");
}

/// Breaker-armed stages (docs/models.md §6: the breaker opening starts `delay_s`, then the trip
/// command and `breaker_s`). This fails while the engine re-evaluates armed stages as frequency
/// stages: `StageRelay::update` (src/relay/stage.rs, the `PickedUp if !cond` arm) resets any
/// picked-up stage whose frequency condition is false, and an armed stage's condition is always
/// false, so `evaluate_relays` (src/sim/engine/relays.rs) resets it at the instant it is armed and its
/// loads never open.
#[test]
fn armed_stages_agree_with_scipy_reference() {
    let xs: Vec<CrossCase> = cases().into_iter().filter(armed).collect();
    assert!(!xs.is_empty());
    check(&xs, "armed");
}

fn check(xs: &[CrossCase], tag: &str) {
    let out = match run_reference(xs, tag) {
        Ok(o) => o,
        Err(ReferenceError::Missing(why)) => {
            if std::env::var("NADIR_SKIP_SCIPY").as_deref() == Ok("1") {
                eprintln!("scipy cross-check SKIPPED (NADIR_SKIP_SCIPY=1): {why}");
                return;
            }
            panic!(
                "scipy cross-check cannot run: {why}. Run the tests with `scripts/test.sh`, which \
                 prepares the pinned packages in .venv-reference/, or set NADIR_PYTHON to a python \
                 with them, or set NADIR_SKIP_SCIPY=1 to skip this test explicitly"
            );
        }
        Err(ReferenceError::Failed(why)) => panic!("{why}"),
    };
    assert_eq!(out.results.len(), xs.len());
    eprintln!("scipy reference: {} cases in {:.2} s", xs.len(), out.wall_s);
    let mut failures = Vec::new();
    let (mut worst_hz, mut worst_s): (f64, f64) = (0.0, 0.0);
    for (x, r) in xs.iter().zip(&out.results) {
        let run = run_nadir(x);
        assert!(run_ok(&run), "{}: {:?}", x.id, run.stop);
        let a = nadir_figures(x, &run);
        let b = reference_figures(r);
        let (hz, dt, problems) = differences(&a, &b);
        worst_hz = worst_hz.max(hz);
        worst_s = worst_s.max(dt);
        eprintln!(
            "{:<20} nadir {:.5} / {:.5} Hz at {:.3} / {:.3} s, stages {:?}, |Δf| {hz:.1e} Hz, |Δt| {:.3} ms",
            x.id,
            a.nadir_hz,
            b.nadir_hz,
            a.nadir_at_s,
            b.nadir_at_s,
            a.stage_open_s.keys().collect::<Vec<_>>(),
            dt * 1e3
        );
        if hz > TOL_HZ || dt > TOL_S || !problems.is_empty() {
            failures.push(format!(
                "{} ({}): |Δf| {hz:.5} Hz, |Δt| {:.3} ms, {problems:?}\n  nadir {a:?}\n  scipy {b:?}",
                x.id,
                x.covers,
                dt * 1e3
            ));
        }
    }
    eprintln!(
        "scipy cross-check: {} cases, largest |Δf| {worst_hz:.2e} Hz, largest |Δt| {:.4} ms",
        xs.len(),
        worst_s * 1e3
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
