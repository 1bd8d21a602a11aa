//! `nadir design` with every kind of initiator: a plant whose only holding tables need a stage
//! armed by a generator breaker (a turbine trip), designed with the default `armed_by` (every
//! breaker a case opens); the same plant with arming forbidden, which no table holds; and the
//! same plant with only a case that needs no shedding, which gets the backstop alone.
//!
//! The plant (tests/design_plants/sugar-mill.yaml) is invented for the test; it describes no real
//! site. Its numbers were chosen so that a 5 MW trip in a 15 MW island with H ≈ 2.2 s falls at
//! about 4 Hz/s (ΔP·f0 / (2·E_k), the swing equation: Kundur, Power System Stability and
//! Control, 1994, §3.9, from memory), too fast for any under-frequency stage on the 58.8–57.6 Hz
//! grid to act before the 2 Hz/s ROCOF limit or the 57 Hz minimum is crossed.

use nadir::design::backstop::Backstop;
use nadir::design::{self, DesignError, Source};
use nadir::model::{BreakerRef, CaseSet, Plant, StageTrigger};
use nadir::verify::audit::{audit_cases, AuditRules};
use nadir::verify::matrix::{verify, VerifyConfig};
use std::path::Path;

fn mill(extra: &str) -> (Plant, CaseSet) {
    let text = std::fs::read_to_string("tests/design_plants/sugar-mill.yaml").unwrap() + extra;
    let plant = nadir::input::parse_plant(&text, "sugar-mill.yaml").unwrap();
    let cases = nadir::input::load_cases(
        Path::new("tests/design_plants/sugar-mill-cases.yaml"),
        &plant,
    )
    .unwrap();
    (plant, cases)
}

#[test]
fn a_turbine_trip_gets_a_stage_armed_by_the_turbine_breaker() {
    let (plant, cases) = mill("");
    let tg2 = plant.generator_index("tg-2").unwrap();
    assert!(
        plant.design.armed_by.contains(&BreakerRef::Generator(tg2)),
        "by default every generator breaker may arm a stage: {:?}",
        plant.design.armed_by
    );
    let p = design::design(&plant, &cases, None, &|_| {}).expect("a table holds");
    assert!(
        p.scheme
            .stages
            .iter()
            .any(|s| s.trigger == StageTrigger::Breaker(BreakerRef::Generator(tg2))),
        "the proposal has no stage armed by tg-2: {:#?}",
        p.scheme
    );
    let m = verify(&plant, &cases, &p.scheme, &VerifyConfig::default(), &|| {});
    let failing: Vec<_> = m.rows.iter().filter(|r| !r.pass).collect();
    assert!(failing.is_empty(), "proposal fails: {failing:#?}");
    let a = audit_cases(
        &plant,
        &p.scheme,
        Some(&cases),
        &AuditRules::for_plant(&plant),
    );
    assert!(a.violations.is_empty(), "{:#?}", a.violations);
    // The realisable bound (relief no sooner than the armed stage's delay and breaker time, in
    // whole loads in rank order) lies between the ideal bound and what the table sheds.
    for r in &p.rows {
        assert!(r.realisable_mw >= r.bound_mw - 1e-9, "{r:?}");
        assert!(r.shed_mw + 0.05 >= r.realisable_mw, "{r:?}");
    }
}

#[test]
fn with_arming_forbidden_no_table_holds_the_turbine_trip() {
    let (plant, cases) = mill("design:\n  armed_by: []\n");
    match design::design(&plant, &cases, None, &|_| {}) {
        Err(DesignError::NoLayout(why)) => assert!(why.contains("tg-2-trip"), "{why}"),
        other => panic!("expected no layout, got {other:?}"),
    }
}

/// Only the small load step, which holds with no table: the proposal is the backstop alone (one
/// stage at the lowest pickup with every sheddable load, which no case operates), never a token
/// stage; with the backstop turned off there is nothing to propose.
#[test]
fn when_nothing_needs_shedding_the_backstop_alone_is_proposed() {
    let (plant, mut cases) = mill("");
    cases.cases.retain(|c| c.id == "small-step");
    let p = design::design(&plant, &cases, None, &|_| {}).expect("a table");
    assert_eq!(p.source, Source::BackstopOnly);
    assert_eq!(p.objective, 0.0);
    assert_eq!(p.scheme.stages.len(), 1, "{:#?}", p.scheme);
    let stage = &p.scheme.stages[0];
    let StageTrigger::Frequency {
        pickup_hz,
        min_rocof_hz_per_s: None,
    } = stage.trigger
    else {
        panic!(
            "the backstop is a plain frequency stage: {:?}",
            stage.trigger
        );
    };
    assert!(
        (pickup_hz - plant.design.lowest_pickup_hz).abs() < 1e-6,
        "{pickup_hz}"
    );
    let sheddable = plant.loads.iter().filter(|l| !l.never_shed).count();
    assert_eq!(stage.sheds.len(), sheddable);
    assert!(p.rows.iter().all(|r| r.shed_mw == 0.0));

    let (plant, _) = mill("design:\n  backstop: false\n");
    assert_eq!(
        design::design(&plant, &cases, None, &|_| {}).err(),
        Some(DesignError::NothingNeeded)
    );
}

/// The turbine-trip design leaves no sheddable load in no stage: the loads no case needs go to
/// the backstop.
#[test]
fn the_turbine_trip_design_assigns_every_sheddable_load() {
    let (plant, cases) = mill("");
    let p = design::design(&plant, &cases, None, &|_| {}).unwrap();
    assert!(p.unassigned.is_empty(), "{:?}", p.unassigned);
    assert!(
        matches!(p.backstop, Backstop::NewStage | Backstop::LastStage),
        "{:?}",
        p.backstop
    );
}
