//! The plant file's `design` block read into `model::DesignLimits`: the demo plant's block, a
//! fuller block on the same plant, partial blocks that take defaults, and plants without a block.
//!
//! These are reading tests (internal consistency): the expected values are the ones written in
//! the YAML, or the defaults docs/files.md states for an omitted value; no outside reference.
//! Mistakes in the block are in tests/bad_input/plant_design_*.yaml.

use nadir::input::parse_plant;
use nadir::model::{BreakerRef, DesignLimits, Plant};
use std::path::Path;

fn demo_text() -> String {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/biorefinery/plant.yaml");
    std::fs::read_to_string(path).expect("demo plant is readable")
}

/// The demo plant with its own `design` block (the last top-level field) cut off.
fn demo_without_design() -> String {
    let text = demo_text();
    let at = text
        .find("\ndesign:")
        .expect("the demo plant has a design block");
    text[..at + 1].to_string()
}

fn parse(text: &str) -> Plant {
    match parse_plant(text, "plant.yaml") {
        Ok(p) => p,
        Err(d) => panic!("expected a valid plant: {d:#?}"),
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-9
}

#[test]
fn demo_plant_block_reads_as_written() {
    let plant = parse(&demo_text());
    assert_eq!(
        plant.design,
        DesignLimits {
            min_stages: 1,
            max_stages: 6,
            highest_pickup_hz: 49.0,
            lowest_pickup_hz: 48.0,
            pickup_step_hz: 0.1,
            min_delay_s: 0.1,
            max_delay_s: 1.0,
            delay_step_s: 0.1,
            breaker_s: 0.08,
            armed_by: vec![BreakerRef::Utility],
            rocof_supervision_hz_per_s: Some(0.5),
            rank_weights: Vec::new(),
            backstop: true,
            long_delay: None,
        }
    );
}

#[test]
fn full_block_on_the_demo_plant_resolves_breakers_and_weights() {
    let text = demo_without_design()
        + "design:\n\
           \x20 stages: { min: 2, max: 5 }\n\
           \x20 pickup_hz: { highest: 49.2, lowest: 48.2, step: 0.05 }\n\
           \x20 delay_s: { min: 0.0, max: 0.6, step: 0.1 }\n\
           \x20 breaker_s: 0.06\n\
           \x20 armed_by: [utility, bus-tie, bge-1]\n\
           \x20 rocof_supervision_hz_per_s: 1.0\n\
           \x20 rank_weights: { 10: 25.0, 1: 1.5, 2: 2.0 }\n\
           \x20 backstop: false\n";
    let plant = parse(&text);
    let tie = plant.ties.iter().position(|t| t.id == "bus-tie").unwrap();
    let engine = plant.generator_index("bge-1").unwrap();
    let d = &plant.design;
    assert_eq!(
        *d,
        DesignLimits {
            min_stages: 2,
            max_stages: 5,
            highest_pickup_hz: 49.2,
            lowest_pickup_hz: 48.2,
            pickup_step_hz: 0.05,
            min_delay_s: 0.0,
            max_delay_s: 0.6,
            delay_step_s: 0.1,
            breaker_s: 0.06,
            armed_by: vec![
                BreakerRef::Utility,
                BreakerRef::Tie(tie),
                BreakerRef::Generator(engine)
            ],
            rocof_supervision_hz_per_s: Some(1.0),
            // In rank order, whatever the order written.
            rank_weights: vec![(1, 1.5), (2, 2.0), (10, 25.0)],
            backstop: false,
            long_delay: None,
        }
    );
    assert_eq!(d.rank_weight(10), 25.0);
    assert_eq!(d.rank_weight(1), 1.5);
    // A rank not listed weighs its own number.
    assert_eq!(d.rank_weight(7), 7.0);
}

#[test]
fn partial_block_takes_the_documented_defaults() {
    let text = demo_without_design()
        + "design:\n  stages: { max: 4 }\n  delay_s: { max: 0.3 }\n  armed_by: []\n";
    let d = parse(&text).design;
    assert_eq!((d.min_stages, d.max_stages), (1, 4));
    // docs/files.md: 0.98·f0, 0.96·f0 and 0.002·f0, i.e. 49.0, 48.0 and 0.1 Hz at 50 Hz.
    assert!(close(d.highest_pickup_hz, 49.0), "{}", d.highest_pickup_hz);
    assert!(close(d.lowest_pickup_hz, 48.0), "{}", d.lowest_pickup_hz);
    assert!(close(d.pickup_step_hz, 0.1), "{}", d.pickup_step_hz);
    assert_eq!(
        (d.min_delay_s, d.max_delay_s, d.delay_step_s),
        (0.1, 0.3, 0.05)
    );
    assert_eq!(d.breaker_s, 0.08);
    assert!(d.armed_by.is_empty(), "`armed_by: []` arms nothing");
    assert_eq!(d.rocof_supervision_hz_per_s, None);
    assert!(d.rank_weights.is_empty());
}

#[test]
fn plant_without_block_gets_the_defaults() {
    let plant = parse(&demo_without_design());
    // Every breaker a case can open may arm a stage: the utility, the tie, each generator.
    let every = vec![
        BreakerRef::Utility,
        BreakerRef::Tie(0),
        BreakerRef::Generator(0),
        BreakerRef::Generator(1),
        BreakerRef::Generator(2),
    ];
    assert_eq!(
        plant.design,
        DesignLimits {
            armed_by: every.clone(),
            ..DesignLimits::defaults(50.0, true)
        }
    );
    assert_eq!(plant.design.armed_by, every);
    assert_eq!((plant.design.min_stages, plant.design.max_stages), (1, 6));
}

/// Without a utility or ties only the generator breakers may arm by default, and a 60 Hz
/// plant's pickup band scales with nominal frequency (docs/files.md: 0.98·f0 to 0.96·f0 in
/// 0.002·f0 steps).
#[test]
fn islanded_60_hz_plant_defaults_scale_and_arm_its_generator() {
    let text = "plant: { name: t, nominal_hz: 60 }\n\
                generators:\n  - { id: g1, section: main, rating_mva: 10, inertia_s: 4, output_mw: 5, governor: { model: steam, droop_pct: 5 } }\n\
                loads:\n  - { id: l1, section: main, p_mw: 5, rank: 1 }\n";
    let d = parse(text).design;
    assert_eq!(d.armed_by, vec![BreakerRef::Generator(0)]);
    assert!(close(d.highest_pickup_hz, 58.8), "{}", d.highest_pickup_hz);
    assert!(close(d.lowest_pickup_hz, 57.6), "{}", d.lowest_pickup_hz);
    assert!(close(d.pickup_step_hz, 0.12), "{}", d.pickup_step_hz);
}

/// An absent block is not checked against the plant: criteria that the default band breaks
/// (a normal band down to 48.5 Hz, below the default highest pickup 49 Hz) pass, as specified;
/// the same defaults in a written block are reported.
#[test]
fn absent_block_is_not_checked_but_a_written_one_is() {
    let criteria = "criteria:\n  coordination: { normal_low_hz: 48.5 }\n";
    let without = demo_without_design().replace("criteria:\n", criteria);
    assert!(parse_plant(&without, "plant.yaml").is_ok());
    let with = without + "design:\n  breaker_s: 0.08\n";
    let d = parse_plant(&with, "plant.yaml").expect_err("default band above normal_low_hz");
    assert_eq!(d.len(), 1, "{d:#?}");
    assert_eq!(d[0].path, "criteria.coordination.normal_low_hz");
    assert!(
        d[0].message.contains(
            "pickup_hz.highest 49 Hz is above criteria.coordination.normal_low_hz 48.5 Hz"
        ),
        "{}",
        d[0].message
    );
}
