//! `nadir design` offers a long-delay stage where frequency hangs below the recovery level with
//! the governors at their limits: a plant where it hangs (tests/design_plants/hanging-island.yaml,
//! invented), checked against the closed-form settling value, designed without and with the
//! plant's `long_delay` grid; and the grid's validation messages.
//!
//! Closed form: the set is at its maximum output, so after the import is lost its governor adds
//! nothing and frequency settles where the loads' own frequency response takes up the deficit.
//! With every load P = P0·(f/f0)^k (the exponential load model, Kundur, Power System Stability and
//! Control, 1994, §7.1, from memory), the island settles at f_ss = f0·(P_gen/P0)^(1/k):
//! 50·(9.7/10)^(1/2) = 49.2443 Hz, above the ordinary stages' highest pickup (49.0 Hz) and below
//! the 49.5 Hz recovery level. (With a governor free to move, the same balance gives Kundur's
//! Δf_ss = −ΔP/(D + 1/R), §11.1; saturated, 1/R drops out and only D = k·P0/f0 is left.)

use nadir::design::{self, DesignError};
use nadir::model::{CaseSet, Plant, StageTrigger};
use nadir::verify::audit::{audit_cases, AuditRules};
use nadir::verify::matrix::{verify, VerifyConfig};
use std::path::Path;

const PLANT: &str = "tests/design_plants/hanging-island.yaml";

fn island(extra: &str) -> (Plant, CaseSet) {
    let text = std::fs::read_to_string(PLANT).unwrap() + extra;
    let plant = nadir::input::parse_plant(&text, "hanging-island.yaml").unwrap();
    let cases = nadir::input::load_cases(
        Path::new("tests/design_plants/hanging-island-cases.yaml"),
        &plant,
    )
    .unwrap();
    (plant, cases)
}

fn parse_error(extra: &str) -> String {
    let text = std::fs::read_to_string(PLANT).unwrap() + extra;
    match nadir::input::parse_plant(&text, "hanging-island.yaml") {
        Ok(_) => panic!("accepted: {extra}"),
        Err(e) => e.iter().map(|d| format!("{d}\n")).collect::<String>(),
    }
}

/// With no table the island hangs at the closed-form value, and fails recovery.
#[test]
fn frequency_hangs_at_the_closed_form_value() {
    let (plant, cases) = island("");
    let empty = nadir::model::Scheme {
        groups: Vec::new(),
        name: "none".into(),
        measurement: Default::default(),
        stages: Vec::new(),
        over_frequency: Vec::new(),
    };
    let m = verify(
        &plant,
        &cases,
        &empty,
        &VerifyConfig {
            margins: false,
            ..Default::default()
        },
        &|| {},
    );
    let row = &m.rows[0];
    let expected = 50.0 * (9.7f64 / 10.0).sqrt();
    assert!(
        (row.final_hz - expected).abs() < 0.01,
        "settled at {} Hz, closed form {expected} Hz",
        row.final_hz
    );
    assert!(!row.pass, "a hanging frequency must fail recovery");
}

/// Without the long-delay grid no stage can act (the ordinary band starts at 49.0 Hz, below the
/// hanging frequency, and arming is forbidden); with it, design proposes a long-delay stage
/// that operates, and the table verifies with the default margins and audits clean.
#[test]
fn a_long_delay_stage_holds_a_hanging_island() {
    let (plant, cases) = island("");
    match design::design(&plant, &cases, None, &|_| {}) {
        Err(DesignError::NoLayout(why)) => assert!(why.contains("utility-loss"), "{why}"),
        other => panic!("expected no layout, got {other:?}"),
    }

    let (plant, cases) = island("  long_delay: {}\n");
    let grid = plant.design.long_delay.expect("the default grid");
    let p = design::design(&plant, &cases, None, &|_| {}).expect("a table holds");
    let long: Vec<_> = p
        .scheme
        .stages
        .iter()
        .filter(|s| match s.trigger {
            StageTrigger::Frequency { pickup_hz, .. } => pickup_hz > plant.design.highest_pickup_hz,
            _ => false,
        })
        .collect();
    assert_eq!(long.len(), 1, "{:#?}", p.scheme);
    let st = long[0];
    let StageTrigger::Frequency { pickup_hz, .. } = st.trigger else {
        unreachable!()
    };
    assert_eq!(st.id, "uf-long");
    assert!(
        pickup_hz <= grid.highest_pickup_hz + 1e-9 && pickup_hz >= grid.lowest_pickup_hz - 1e-9,
        "{pickup_hz}"
    );
    assert!(
        st.delay_s >= grid.min_delay_s - 1e-9 && st.delay_s <= grid.max_delay_s + 1e-9,
        "{}",
        st.delay_s
    );
    // It picks up above the hanging frequency (closed form above), so it must be what acts.
    assert!(pickup_hz > 50.0 * (9.7f64 / 10.0).sqrt());
    let m = verify(&plant, &cases, &p.scheme, &VerifyConfig::default(), &|| {});
    let row = &m.rows[0];
    assert!(row.pass, "{row:#?}");
    assert!(
        row.stages_operated.contains(&st.id),
        "{:?}",
        row.stages_operated
    );
    let a = audit_cases(
        &plant,
        &p.scheme,
        Some(&cases),
        &AuditRules::for_plant(&plant),
    );
    assert!(a.violations.is_empty(), "{:#?}", a.violations);
    assert!(p.unassigned.is_empty(), "{:?}", p.unassigned);
}

/// The grid's values are checked against the ordinary grid and the criteria, each mistake
/// named with its field and fix.
#[test]
fn long_delay_grid_mistakes_are_named() {
    let cases = [
        (
            "  long_delay: { pickup_hz: { lowest: 48.9 } }\n",
            "design.long_delay.pickup_hz.lowest",
            "not above pickup_hz.highest 49 Hz",
        ),
        (
            "  long_delay: { pickup_hz: { highest: 49.7 } }\n",
            "design.long_delay.pickup_hz.highest",
            "above criteria.coordination.normal_low_hz 49.5 Hz",
        ),
        (
            "  long_delay: { delay_s: { min: 0.3 } }\n",
            "design.long_delay.delay_s.min",
            "not longer than delay_s.max 0.5 s",
        ),
        (
            "  long_delay: { delay_s: { max: 12 } }\n",
            "design.long_delay.delay_s.max",
            "not shorter than criteria.recover.within_s 10 s",
        ),
        (
            "  long_delay: { delay_s: { min: 6, max: 4 } }\n",
            "design.long_delay.delay_s",
            "above long_delay.delay_s.max 4 s",
        ),
        (
            "  long_delay: { delay_s: { step: 0.001 } }\n",
            "design.long_delay.delay_s.step",
            "above the 100 points",
        ),
        (
            "  long_delay: { pickup_hz: { step: -0.1 } }\n",
            "design.long_delay.pickup_hz.step",
            "",
        ),
        ("  long_delay: { pickup: 49.4 }\n", "long_delay", "pickup"),
    ];
    for (extra, field, words) in cases {
        let e = parse_error(extra);
        assert!(e.contains(field), "{extra}: {e}");
        assert!(e.contains(words), "{extra}: {e}");
        assert!(e.contains("hanging-island.yaml:"), "{extra}: {e}");
    }
}
