//! `nadir design` with every kind of initiator: a plant whose only holding tables need a stage
//! armed by a generator breaker (a turbine trip), designed with the default `armed_by` (every
//! breaker a case opens); and the same plant with arming forbidden, which no table holds.
//!
//! The plant (tests/design_plants/sugar-mill.yaml) is invented for the test; it describes no real
//! site. Its numbers were chosen so that a 5 MW trip in a 15 MW island with H ≈ 2.2 s falls at
//! about 4 Hz/s (ΔP·f0 / (2·E_k), the swing equation: Kundur, Power System Stability and
//! Control, 1994, §3.9, from memory), too fast for any under-frequency stage on the 58.8–57.6 Hz
//! grid to act before the 2 Hz/s ROCOF limit or the 57 Hz minimum is crossed.

use nadir::design::{self, DesignError};
use nadir::model::{BreakerRef, CaseSet, Plant, StageTrigger};
use nadir::verify::audit::{audit, AuditRules};
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
    let a = audit(&plant, &p.scheme, &AuditRules::for_plant(&plant));
    assert!(a.violations.is_empty(), "{:#?}", a.violations);
}

#[test]
fn with_arming_forbidden_no_table_holds_the_turbine_trip() {
    let (plant, cases) = mill("design:\n  armed_by: []\n");
    match design::design(&plant, &cases, None, &|_| {}) {
        Err(DesignError::NoLayout(why)) => assert!(why.contains("tg-2-trip"), "{why}"),
        other => panic!("expected no layout, got {other:?}"),
    }
}
