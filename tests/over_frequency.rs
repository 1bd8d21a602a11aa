//! Separating while exporting: over-frequency stages that trip or run back a named generator, a
//! generator's own over-frequency trip judged as a cascade, and the checks of the scheme file.
//!
//! The instants come from a closed-form ramp: with fixed mechanical power and frequency-
//! independent load, the island's frequency after separation rises at
//! `df/dt = f0·ΔP/(2·Σ H·S)` (swing equation at t = 0+, Kundur, *Power System Stability and
//! Control*, 1994, §3.9; ../shared/REFERENCES.md §3, "df/dt = ΔP·f0/(2H)"), constant until
//! something changes the power balance. A stage with pickup `p` then picks up at
//! `t_p = (p − f0)/(df/dt)` when its measurement has no lag, and acts at
//! `t_p + delay + breaker time` (definite-time relaying, as in docs/models.md §6).

mod common;

use common::*;
use nadir::input::{parse_scheme, scheme_yaml};
use nadir::model::*;
use nadir::sim::{simulate, Cause, EventKind, Run, SimConfig};
use nadir::verify::audit::{audit_cases, AuditRules};
use nadir::verify::matrix::{verify, VerifyConfig};

const F0: f64 = 50.0;
/// Two 10 MVA machines, H = 4 s, 5 MW each; 8 MW of load at k = 0; 2 MW exported.
const E_MWS: f64 = 2.0 * 4.0 * 10.0;
const SURPLUS: f64 = 2.0;

/// Rise of frequency after separation, Hz/s: f0·ΔP/(2·E) = 50·2/160 = 0.625.
fn ramp() -> f64 {
    F0 * SURPLUS / (2.0 * E_MWS)
}

/// `g1` fixed output; `g2` steam with lags below the integrator's reach and pressure control
/// whose transfer (60 s) never comes in these runs, so its output is its reference.
fn exporting_plant(g2_trips: Vec<FrequencyTrip>) -> Plant {
    let g1 = gen("g1", 10.0, 4.0, 5.0, 0.0, PrimeMover::Fixed);
    let mut g2 = gen(
        "g2",
        10.0,
        4.0,
        5.0,
        5.0,
        PrimeMover::Steam {
            governor_s: 0.0,
            turbine_s: 0.0,
        },
    );
    g2.governor.pressure_control = Some(PressureControl {
        transfer_s: 60.0,
        extra_mw: 0.0,
        extra_mw_per_s: 0.0,
    });
    g2.trips = g2_trips;
    plant(F0, vec![g1, g2], vec![load("process", 8.0, 0.0)], -SURPLUS)
}

fn separation() -> Case {
    case(
        Start::Connected,
        4.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    )
}

fn with_over(lag_s: f64, over: Vec<OverStage>) -> Scheme {
    let mut s = scheme(vec![], lag_s);
    s.over_frequency = over;
    s
}

fn run(plant: &Plant, scheme: &Scheme) -> Run {
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    simulate(plant, &separation(), 0, scheme, &cfg)
}

fn of(id: &str, pickup_hz: f64, action: OverAction) -> OverStage {
    OverStage {
        id: id.into(),
        pickup_hz,
        delay_s: 0.3,
        breaker_s: 0.08,
        action,
    }
}

#[test]
fn over_frequency_stage_trips_its_generator_at_the_computed_instant() {
    let plant = exporting_plant(vec![]);
    let scheme = with_over(
        0.0,
        vec![of("of-1", 50.5, OverAction::Trip { generator: 1 })],
    );
    let r = run(&plant, &scheme);
    // t_p = 0.5/0.625 = 0.8 s; + 0.3 s delay + 0.08 s breaker = 1.18 s.
    let expect = 0.5 / ramp() + 0.3 + 0.08;
    let trip = r
        .events
        .iter()
        .find(|e| matches!(&e.what, EventKind::GeneratorTripped { generator, .. } if generator == "g2"))
        .expect("g2 tripped");
    assert!(
        (trip.at_s - expect).abs() < 1e-5,
        "{} vs {expect}",
        trip.at_s
    );
    assert!(matches!(
        &trip.what,
        EventKind::GeneratorTripped { element, cascade: false, .. } if element == "over-frequency stage of-1"
    ));
    assert!(r.events.iter().any(|e| matches!(&e.what,
        EventKind::BreakerOpened { breaker, cause: Cause::Stage { stage } } if breaker == "g2" && stage == "of-1")));
}

#[test]
fn with_a_measurement_lag_the_pickup_follows_the_lagged_ramp() {
    // A first-order lag τ on a ramp a·t from t = 0 gives m(t) = a·(t − τ·(1 − e^(−t/τ)))
    // (standard first-order step-ramp response); the pickup is where m reaches 0.5 Hz.
    let tau = 0.05;
    let a = ramp();
    let m = |t: f64| a * (t - tau * (1.0 - (-t / tau).exp()));
    let (mut lo, mut hi) = (0.0, 5.0);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if m(mid) < 0.5 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let plant = exporting_plant(vec![]);
    let scheme = with_over(
        tau,
        vec![of("of-1", 50.5, OverAction::Trip { generator: 1 })],
    );
    let r = run(&plant, &scheme);
    let trip = r
        .events
        .iter()
        .find(|e| matches!(&e.what, EventKind::GeneratorTripped { .. }))
        .expect("tripped");
    let expect = lo + 0.3 + 0.08;
    assert!(
        (trip.at_s - expect).abs() < 1e-4,
        "{} vs {expect}",
        trip.at_s
    );
}

#[test]
fn run_back_lowers_the_output_by_its_mw_at_the_computed_instant() {
    // g2 runs back by the whole 2 MW surplus at 1.18 s: from then the island is balanced and
    // frequency stays at f0 + 0.625·1.18 Hz.
    let plant = exporting_plant(vec![]);
    let scheme = with_over(
        0.0,
        vec![of(
            "of-1",
            50.5,
            OverAction::RunBack {
                generator: 1,
                mw: SURPLUS,
            },
        )],
    );
    let r = run(&plant, &scheme);
    let t_act = 0.5 / ramp() + 0.38;
    let rb = r
        .events
        .iter()
        .find(|e| matches!(e.what, EventKind::RunBack { .. }))
        .expect("run back logged");
    assert!((rb.at_s - t_act).abs() < 1e-5);
    let tr = r.trace.as_ref().unwrap();
    let held = F0 + ramp() * t_act;
    for (t, f) in tr.t_s.iter().zip(&tr.section_hz[0]) {
        if *t > t_act + 0.02 {
            assert!((f - held).abs() < 1e-4, "t={t}: {f} vs {held}");
        }
    }
    assert!((r.peak_hz.unwrap() - held).abs() < 1e-4);
}

#[test]
fn a_generators_own_over_frequency_trip_is_a_cascade_the_verdict_names() {
    // No stage; g2's own element above 50.5 Hz for 0.3 s trips it at 0.8 + 0.3 = 1.1 s, and the
    // run goes on without it (the island then falls: 8 MW of load on 5 MW).
    let plant = exporting_plant(vec![FrequencyTrip::Over {
        hz: 50.5,
        after_s: 0.3,
    }]);
    let cases = CaseSet {
        cases: vec![separation()],
    };
    let cfg = VerifyConfig {
        margins: false,
        ..VerifyConfig::default()
    };
    let m = verify(&plant, &cases, &with_over(0.0, vec![]), &cfg, &|| {});
    let row = &m.rows[0];
    assert_eq!(row.cascades, vec!["g2".to_string()]);
    let expect = 0.5 / ramp() + 0.3;
    assert_eq!(
        row.cascade_causes,
        vec![format!(
            "g2 by over-frequency 50.5 Hz / 0.3 s at {expect:.2} s"
        )]
    );
}

#[test]
fn over_frequency_stages_are_written_back_and_read_equal() {
    let plant = exporting_plant(vec![]);
    let mut scheme = with_over(
        0.05,
        vec![
            of(
                "of-1",
                50.4,
                OverAction::RunBack {
                    generator: 1,
                    mw: 1.25,
                },
            ),
            of("of-2", 50.9, OverAction::Trip { generator: 0 }),
        ],
    );
    scheme.stages = vec![Stage {
        id: "uf-1".into(),
        trigger: StageTrigger::Frequency {
            pickup_hz: 49.0,
            min_rocof_hz_per_s: None,
        },
        delay_s: 0.2,
        breaker_s: 0.08,
        sheds: vec![0],
        sizing: Sizing::All,
        in_service: true,
        groups: Vec::new(),
    }];
    let text = scheme_yaml(&plant, &scheme, &[]);
    let back = parse_scheme(&text, "s.yaml", &plant).expect(&text);
    assert_eq!(back, scheme, "{text}");
}

#[test]
fn audit_names_a_stage_above_the_maximum_and_one_after_the_machines_protection() {
    let plant = exporting_plant(vec![FrequencyTrip::Over {
        hz: 51.0,
        after_s: 1.0,
    }]);
    // Criteria max 1.03·50 = 51.5 Hz.
    let scheme = with_over(
        0.0,
        vec![
            of("of-low", 50.5, OverAction::Trip { generator: 1 }),
            of("of-high", 51.6, OverAction::Trip { generator: 0 }),
        ],
    );
    let a = audit_cases(&plant, &scheme, None, &AuditRules::for_plant(&plant));
    let rules: Vec<(&str, &str)> = a
        .violations
        .iter()
        .map(|v| (v.rule, v.message.as_str()))
        .collect();
    assert!(rules.contains(&(
        "over-frequency-above-max",
        "stage of-high picks up at 51.60 Hz, at or above the 51.50 Hz maximum-frequency criterion it should keep frequency below"
    )), "{rules:#?}");
    assert!(rules.contains(&(
        "over-frequency-after-protection",
        "generator g2's own over-frequency trip (above 51.00 Hz after 1.00 s) picks up at or below stage of-high's 51.60 Hz; the machine's protection, not the stage, would act first"
    )), "{rules:#?}");
    assert_eq!(rules.len(), 2, "{rules:#?}");
    assert_eq!(
        a.notes
            .iter()
            .filter(|n| n.rule == "over-frequency")
            .count(),
        2
    );
}

/// The demo scheme with its `over_frequency` list replaced by `with`.
fn demo_scheme_with(with: &str) -> Vec<nadir::input::Diagnostic> {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = nadir::input::load_plant(&root.join("examples/canemill/plant.yaml")).unwrap();
    let text = std::fs::read_to_string(root.join("schemes/canemill.yaml")).unwrap();
    let at = text.find("over_frequency:").unwrap();
    let text = format!("{}over_frequency:\n  - {with}\n", &text[..at]);
    parse_scheme(&text, "s.yaml", &plant).expect_err(with)
}

#[test]
fn bad_over_frequency_stages_are_refused_with_field_and_fix() {
    let cases = [
        (
            "{ id: of-x, above_hz: 59.5, delay_s: 0.1, trips: tg-3 }",
            "over_frequency[0].above_hz",
            "above_hz 59.5 Hz of over-frequency stage `of-x` is not above nominal 60 Hz; it would operate in normal running",
        ),
        (
            "{ id: of-x, above_hz: 69, delay_s: 0.1, trips: tg-3 }",
            "over_frequency[0].above_hz",
            "above_hz 69 Hz of over-frequency stage `of-x` is at or above 69 Hz, the over-speed level at which a run stops; it could never operate",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1, trips: tg-9 }",
            "over_frequency[0].trips",
            "unknown generator `tg-9`",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1 }",
            "over_frequency[0]",
            "over-frequency stage `of-x` needs exactly one of trips or runs_back; it has neither",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1, trips: tg-3, runs_back: { generator: tg-1, mw: 1 } }",
            "over_frequency[0]",
            "over-frequency stage `of-x` needs exactly one of trips or runs_back; it has both",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1, runs_back: { generator: tg-1, mw: 50 } }",
            "over_frequency[0].runs_back.mw",
            "runs_back.mw 50 MW is more than generator `tg-1`'s max_mw 10.2 MW",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1, runs_back: { generator: tg-1, mw: 0 } }",
            "over_frequency[0].runs_back.mw",
            "mw must be greater than 0",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: -0.1, trips: tg-3 }",
            "over_frequency[0].delay_s",
            "delay_s must not be negative",
        ),
        (
            "{ id: uf-1, above_hz: 61, delay_s: 0.1, trips: tg-3 }",
            "over_frequency[0].id",
            "duplicate stage id `uf-1`",
        ),
        (
            "{ id: of-x, above_hz: 61, delay_s: 0.1, trips: offices }",
            "over_frequency[0].trips",
            "unknown generator `offices`",
        ),
    ];
    for (with, path, expect) in cases {
        let diags = demo_scheme_with(with);
        assert!(
            diags
                .iter()
                .any(|d| d.path == path && d.message.contains(expect) && d.line.is_some()),
            "{with}: {diags:#?}"
        );
    }
}

#[test]
fn design_from_a_table_with_over_frequency_stages_is_refused() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let out = std::env::temp_dir().join(format!("nadir-of-design-{}.yaml", std::process::id()));
    let r = std::process::Command::new(env!("CARGO_BIN_EXE_nadir"))
        .current_dir(root)
        .args([
            "design",
            "examples/canemill/plant.yaml",
            "--cases",
            "examples/canemill/cases.yaml",
            "--from",
            "schemes/canemill.yaml",
            "-o",
        ])
        .arg(&out)
        .output()
        .unwrap();
    assert_eq!(r.status.code(), Some(2));
    let err = String::from_utf8_lossy(&r.stderr);
    assert!(
        err.contains("design --from does not start from a table with")
            && err.contains("over-frequency stages (of-1, of-2)"),
        "{err}"
    );
    assert!(!out.exists());
}

#[test]
fn the_demo_exporting_separation_sheds_nothing_and_its_cascade_is_named_without_the_stages() {
    // Behaviour on the demo: with its over-frequency stages the exporting grid loss runs tg-1
    // back and sheds no load; without them, tg-3's own relay trips it and verify says so.
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = nadir::input::load_plant(&root.join("examples/canemill/plant.yaml")).unwrap();
    let cases =
        nadir::input::load_cases(&root.join("examples/canemill/cases.yaml"), &plant).unwrap();
    let scheme = nadir::input::load_scheme(&root.join("schemes/canemill.yaml"), &plant).unwrap();
    let cfg = VerifyConfig {
        margins: false,
        ..VerifyConfig::default()
    };
    let m = verify(&plant, &cases, &scheme, &cfg, &|| {});
    let row = m
        .rows
        .iter()
        .find(|r| r.case == "grid-loss" && r.operating_point == "crushing")
        .unwrap();
    assert_eq!(row.shed_mw, 0.0);
    assert_eq!(row.stages_operated, vec!["of-1".to_string()]);
    assert!(row.cascades.is_empty());
    let mut bare = scheme.clone();
    bare.over_frequency.clear();
    let m = verify(&plant, &cases, &bare, &cfg, &|| {});
    let row = m
        .rows
        .iter()
        .find(|r| r.case == "grid-loss" && r.operating_point == "crushing")
        .unwrap();
    assert_eq!(row.cascades, vec!["tg-3".to_string()]);
    assert!(row.cascade_causes[0].starts_with("tg-3 by over-frequency 61.25 Hz / 0.3 s at "));
}

#[test]
fn compare_names_over_frequency_stages_added_changed_and_removed() {
    let plant = exporting_plant(vec![]);
    let old = with_over(
        0.0,
        vec![of("of-1", 50.5, OverAction::Trip { generator: 1 })],
    );
    let new = with_over(
        0.0,
        vec![
            of("of-1", 50.6, OverAction::Trip { generator: 1 }),
            of(
                "of-2",
                50.8,
                OverAction::RunBack {
                    generator: 0,
                    mw: 1.0,
                },
            ),
        ],
    );
    let d = nadir::verify::diff::diff(&plant, &old, &new);
    let got: Vec<(&str, &str, &str, &str)> = d
        .iter()
        .map(|c| (c.stage.as_str(), c.what, c.old.as_str(), c.new.as_str()))
        .collect();
    assert_eq!(
        got,
        vec![
            (
                "of-1",
                "over-frequency",
                "above 50.50 Hz, 0.300 s, breaker 0.080 s, trips g2",
                "above 50.60 Hz, 0.300 s, breaker 0.080 s, trips g2"
            ),
            (
                "of-2",
                "added",
                "",
                "above 50.80 Hz, 0.300 s, breaker 0.080 s, runs g1 back 1.00 MW"
            ),
        ]
    );
    let back = nadir::verify::diff::diff(&plant, &new, &old);
    assert!(back
        .iter()
        .any(|c| c.stage == "of-2" && c.what == "removed"));
}

#[test]
fn check_states_each_over_frequency_stage_below_its_table() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = nadir::input::load_plant(&root.join("examples/canemill/plant.yaml")).unwrap();
    let scheme = nadir::input::load_scheme(&root.join("schemes/canemill.yaml"), &plant).unwrap();
    let figs = nadir::screening::screen_scheme(&plant, &scheme);
    assert!(figs.notes.contains(
        &"of-1 (over-frequency, not in the table) runs generator tg-1 back by 2.5 MW when above 60.8 Hz for 0.1 s, breaker 0.1 s".to_string()
    ), "{:#?}", figs.notes);
}
