//! Pressure-controlled steam turbines (docs/models.md, "Pressure-controlled steam turbines"):
//! constant output while on the utility and until the transfer, speed control after it, and the
//! steam headers' MW and MW/s limits. The closed forms are the aggregated swing equation
//! `df/dt = f0·(P_m − P_e)/(2·H·S)` (Kundur, *Power System Stability and Control*, 1994, §3.9;
//! ../shared/REFERENCES.md, ROCOF `f0·ΔP/(2H)` on the machine base) integrated by hand for a
//! mechanical power that is constant or a straight ramp and a frequency-independent load.

mod common;

use common::*;
use nadir::model::*;
use nadir::screening::{screen_cases, SteadyState};
use nadir::sim::{simulate, EventKind, Run, SimConfig, StopReason};

const F0: f64 = 50.0;
/// Machine: 10 MVA, H = 5 s, 5 MW dispatch; load 8 MW at k = 0; import 3 MW.
const S: f64 = 10.0;
const H: f64 = 5.0;
const P0: f64 = 5.0;
const LOAD: f64 = 8.0;
const DEFICIT: f64 = LOAD - P0;

/// One steam machine with lags below the integrator's reach (treated as instantaneous, so its
/// output is its limited command) and the given pressure control.
fn steam_plant(pc: Option<PressureControl>, isochronous: bool) -> Plant {
    let mut g = gen(
        "stg",
        S,
        H,
        P0,
        5.0,
        PrimeMover::Steam {
            governor_s: 0.0,
            turbine_s: 0.0,
        },
    );
    g.max_mw = S;
    g.governor.pressure_control = pc;
    g.governor.isochronous = isochronous;
    plant(F0, vec![g], vec![load("process", LOAD, 0.0)], DEFICIT)
}

fn utility_loss(plant: &Plant, duration_s: f64) -> Run {
    let c = case(
        Start::Connected,
        duration_s,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let cfg = SimConfig {
        record_trace: true,
        sample_interval_s: 0.01,
        ..SimConfig::default()
    };
    simulate(plant, &c, 0, &scheme(vec![], 0.04), &cfg)
}

/// Frequency of the trace at `t` (a sample instant).
fn hz_at(run: &Run, t: f64) -> f64 {
    let tr = run.trace.as_ref().expect("trace");
    let k = tr
        .t_s
        .iter()
        .position(|s| (s - t).abs() < 1e-9)
        .unwrap_or_else(|| panic!("no sample at {t}"));
    tr.section_hz[0][k]
}

/// Hz per second per MW of imbalance: f0/(2·H·S).
fn rate_per_mw() -> f64 {
    F0 / (2.0 * H * S)
}

#[test]
fn output_is_constant_until_the_transfer_and_the_transfer_falls_at_the_stated_time() {
    let pc = PressureControl {
        transfer_s: 2.0,
        extra_mw: 4.0,
        extra_mw_per_s: 1.0,
    };
    let run = utility_loss(&steam_plant(Some(pc), false), 6.0);
    // Before the transfer the machine holds 5 MW: f falls on a straight line at
    // f0·ΔP/(2HS) = 50·3/100 = 1.5 Hz/s.
    for t in [0.5, 1.0, 1.5, 2.0] {
        let expect = F0 - rate_per_mw() * DEFICIT * t;
        let got = hz_at(&run, t);
        assert!((got - expect).abs() < 1e-6, "t={t}: {got} vs {expect}");
    }
    let transfer = run
        .events
        .iter()
        .find(|e| matches!(e.what, EventKind::SpeedControl { .. }))
        .expect("transfer logged");
    assert_eq!(transfer.at_s, 2.0);
    // After it the headers give extra output: the fall is slower than the straight line.
    assert!(hz_at(&run, 3.0) > F0 - rate_per_mw() * DEFICIT * 3.0 + 0.1);
    // A machine without pressure control answers at once: higher frequency at 1 s.
    let droop = utility_loss(&steam_plant(None, false), 2.0);
    assert!(hz_at(&droop, 1.0) > hz_at(&run, 1.0) + 0.5);
}

#[test]
fn header_ramp_limits_the_extra_output_after_the_transfer() {
    // The droop command (5 − S/R·Δω) is far above the header limit throughout, so the output is
    // P0 + r·τ after the transfer (τ from the transfer): the deficit is 3 − r·τ and
    // f(τ) = f(transfer) − f0/(2HS)·(3τ − r·τ²/2).
    let r = 1.0;
    let pc = PressureControl {
        transfer_s: 1.0,
        extra_mw: 4.0,
        extra_mw_per_s: r,
    };
    let run = utility_loss(&steam_plant(Some(pc), false), 6.0);
    let f_tr = F0 - rate_per_mw() * DEFICIT * 1.0;
    for tau in [0.5, 1.0, 2.0, 3.0] {
        let expect = f_tr - rate_per_mw() * (DEFICIT * tau - r * tau * tau / 2.0);
        let got = hz_at(&run, 1.0 + tau);
        assert!((got - expect).abs() < 1e-5, "tau={tau}: {got} vs {expect}");
    }
}

#[test]
fn header_mw_limit_caps_the_extra_output() {
    // extra_mw 2 MW: the output stops at 7 MW (2 s after the transfer at 1 MW/s), leaving 1 MW
    // short: from then f falls at f0·1/(2HS) = 0.5 Hz/s.
    let pc = PressureControl {
        transfer_s: 0.0,
        extra_mw: 2.0,
        extra_mw_per_s: 1.0,
    };
    let run = utility_loss(&steam_plant(Some(pc), false), 8.0);
    let slope = (hz_at(&run, 6.0) - hz_at(&run, 4.0)) / 2.0;
    assert!((slope + rate_per_mw() * 1.0).abs() < 1e-6, "slope {slope}");
}

#[test]
fn screening_counts_only_the_headers_extra_as_headroom() {
    // The same rule in `check`: the steady state after the utility loss is reached with at most
    // P0 + extra_mw, so a 3 MW deficit with 2 MW of header extra is not held, with 4 MW it is.
    let c = case(
        Start::Connected,
        30.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let cases = CaseSet { cases: vec![c] };
    for (extra, held) in [(2.0, false), (4.0, true)] {
        let pc = PressureControl {
            transfer_s: 1.0,
            extra_mw: extra,
            extra_mw_per_s: 1.0,
        };
        let plant = steam_plant(Some(pc), true);
        let figs = screen_cases(&plant, &cases, None);
        let after = figs[0].after_first.as_ref().expect("figures");
        let island = after
            .islands
            .iter()
            .find(|i| !i.on_utility)
            .expect("island");
        let got_held = matches!(island.steady_state, SteadyState::Held { .. });
        assert_eq!(got_held, held, "extra {extra}: {:?}", island.steady_state);
        let run = utility_loss(&plant, 30.0);
        assert_eq!(
            run.stop == StopReason::EndTime,
            held,
            "extra {extra}: {:?}",
            run.stop
        );
    }
}

/// The demo plant's text with tg-1's pressure control replaced by `with`.
fn demo_with(with: &str) -> Result<Plant, Vec<nadir::input::Diagnostic>> {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(root.join("examples/canemill/plant.yaml")).unwrap();
    let old = "pressure_control: { transfer_s: 1.5, extra_mw: 1.5, extra_mw_per_s: 0.3 }";
    assert!(text.contains(old));
    nadir::input::parse_plant(&text.replace(old, with), "plant.yaml")
}

#[test]
fn bad_pressure_control_is_refused_with_its_line_field_and_fix() {
    let line = {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(root.join("examples/canemill/plant.yaml")).unwrap();
        1 + text
            .lines()
            .position(|l| l.contains("pressure_control: { transfer_s: 1.5"))
            .unwrap()
    };
    let cases = [
        (
            "pressure_control: { transfer_s: -1, extra_mw: 1.5, extra_mw_per_s: 0.3 }",
            "transfer_s must not be negative",
        ),
        (
            "pressure_control: { transfer_s: 1e9, extra_mw: 1.5, extra_mw_per_s: 0.3 }",
            "transfer_s 1000000000 s is implausibly high",
        ),
        (
            "pressure_control: { transfer_s: 1, extra_mw: 1.5, extra_mw_per_s: 0 }",
            "extra_mw_per_s is 0, so the headers' extra_mw 1.5 MW would never come",
        ),
        (
            "pressure_control: { transfer_s: 1, extra_mw: -2, extra_mw_per_s: 0.3 }",
            "extra_mw must not be negative",
        ),
        (
            "pressure_control: { transfer_s: 1, extra_mw: 1, extra_mw_per_s: .nan }",
            "extra_mw_per_s is NaN, expected a finite number",
        ),
        (
            "pressure_control: { transfer_s: 1, extra_mw: 1 }",
            "missing field `extra_mw_per_s`",
        ),
        (
            "pressure_control: { transfer_s: 1, extra_mw: 1, extra_mw_per_s: 1, bias: 2 }",
            "unknown field `bias`",
        ),
    ];
    for (with, expect) in cases {
        let diags = demo_with(with).expect_err(with);
        assert!(
            diags
                .iter()
                .any(|d| d.message.contains(expect) && d.line == Some(line)),
            "{with}: {diags:#?}"
        );
    }
    // Zero extra with zero rise is a machine that can only reduce: accepted.
    let plant = demo_with("pressure_control: { transfer_s: 0, extra_mw: 0, extra_mw_per_s: 0 }")
        .expect("accepted");
    assert_eq!(plant.generators[0].upper_mw(9.0), 9.0);
}

#[test]
fn pressure_control_on_a_machine_that_is_not_steam_is_refused() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(root.join("examples/biorefinery/plant.yaml")).unwrap();
    let old = "governor: { model: engine, droop_pct: 4, governor_s: 0.1, ramp_mw_per_s: 0.25 }";
    assert!(text.contains(old));
    let new = "governor: { model: engine, droop_pct: 4, governor_s: 0.1, ramp_mw_per_s: 0.25, \
               pressure_control: { transfer_s: 1, extra_mw: 1, extra_mw_per_s: 1 } }";
    let diags = nadir::input::parse_plant(&text.replace(old, new), "plant.yaml").unwrap_err();
    let d = diags
        .iter()
        .find(|d| d.path == "generators[2].governor.pressure_control")
        .unwrap_or_else(|| panic!("{diags:#?}"));
    assert_eq!(
        d.message,
        "pressure_control is for steam machines; generator `bge-1` has model engine"
    );
    assert_eq!(
        d.help.as_deref(),
        Some("remove pressure_control, or give the machine model steam or steam-reheat")
    );
}
