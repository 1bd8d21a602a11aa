//! The scheme writer (`nadir::input::scheme_yaml`) against nadir's own reader.
//!
//! These are internal-consistency tests: a written scheme must read back, through
//! `parse_scheme` with the same plant, to a scheme equal to the one written. They check no
//! protection setting against an outside source; the settings are the demo tables' invented ones
//! or random ones. Failures found by proptest are kept in proptest-regressions/ and replayed first.

mod common;

use nadir::input::{parse_plant, parse_scheme, scheme_yaml};
use nadir::model::*;
use proptest::prelude::*;
use std::collections::HashSet;
use std::path::PathBuf;

fn read(rel: &str) -> String {
    std::fs::read_to_string(PathBuf::from(env!("CARGO_MANIFEST_DIR")).join(rel)).unwrap()
}

fn demo_plant() -> Plant {
    parse_plant(&read("examples/biorefinery/plant.yaml"), "plant.yaml").unwrap()
}

/// Reads `text` back, or fails with the text and every diagnostic.
fn read_back(text: &str, plant: &Plant) -> Scheme {
    match parse_scheme(text, "written.yaml", plant) {
        Ok(s) => s,
        Err(d) => {
            let list: Vec<String> = d.iter().map(|x| x.to_string()).collect();
            panic!("written scheme refused:\n{text}\n{}", list.join("\n"))
        }
    }
}

/// Trailing `# …` comments of the stage lines (those that end a flow mapping), spaces trimmed.
fn stage_comments(text: &str) -> Vec<String> {
    text.lines()
        .filter_map(|l| l.split_once("] }").map(|(_, c)| c.trim().to_string()))
        .collect()
}

fn check_demo(scheme_file: &str) {
    let plant = demo_plant();
    let text = read(scheme_file);
    let scheme = parse_scheme(&text, scheme_file, &plant).unwrap();
    let header = vec![
        "Written by nadir (test)".to_string(),
        "Simulation results only; a qualified protection engineer must review it.".to_string(),
    ];
    let written = scheme_yaml(&plant, &scheme, &header);
    assert_eq!(read_back(&written, &plant), scheme, "{written}");
    assert!(written.starts_with("# Written by nadir (test)\n# Simulation results only;"));
    // The hand-written tables carry the same comments (ranks and MW at the first operating
    // point, full-rate): the writer's figures agree with the ones their author wrote.
    assert_eq!(stage_comments(&written), stage_comments(&text), "{written}");
}

#[test]
fn demo_table_round_trips() {
    check_demo("schemes/biorefinery.yaml");
}

#[test]
fn demo_proposal_round_trips() {
    check_demo("schemes/biorefinery-proposed.yaml");
}

#[test]
fn demo_table_is_written_in_the_demo_layout() {
    let plant = demo_plant();
    let scheme = parse_scheme(&read("schemes/biorefinery.yaml"), "s.yaml", &plant).unwrap();
    let header = ["one\r\ntwo\u{2028}three".to_string(), String::new()];
    let written = scheme_yaml(&plant, &scheme, &header);
    assert!(
        written.starts_with("# one\n# two\n# three\n#\n\nname: "),
        "{written}"
    );
    let first_stage = "  - { id: armed-utility, armed_by: utility, delay_s: 0.1, breaker_s: 0.08,\n      sheds: [office-hvac, office-lighting, dryer-1-fans] }";
    assert!(written.contains(first_stage), "{written}");
    assert!(written.contains("pickup_hz: 49.2, min_rocof_hz_per_s: 1.0, delay_s: 0.1,"));
    assert!(written.contains("\nname: Marsh Hollow first table (fictional)\n"));
}

#[test]
fn a_long_shed_list_is_wrapped_and_still_reads_back() {
    let loads: Vec<Load> = (0..40)
        .map(|i| {
            let mut l = common::load(&format!("conveyor-drive-{i:02}"), 0.25, 1.0);
            l.rank = i + 1;
            l
        })
        .collect();
    let plant = common::plant(50.0, vec![], loads, 10.0);
    let scheme = Scheme {
        groups: Vec::new(),
        name: "long".into(),
        measurement: Measurement::default(),
        stages: vec![Stage {
            sizing: nadir::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: "uf-1".into(),
            trigger: StageTrigger::Frequency {
                pickup_hz: 49.0,
                min_rocof_hz_per_s: None,
            },
            delay_s: 0.2,
            breaker_s: 0.08,
            sheds: (0..40).collect(),
        }],
        over_frequency: Vec::new(),
    };
    let written = scheme_yaml(&plant, &scheme, &[]);
    assert!(
        written.lines().all(|l| l.chars().count() <= 130),
        "{written}"
    );
    assert!(written.contains("# ranks 1–40, 10.00 MW"), "{written}");
    assert_eq!(read_back(&written, &plant), scheme);
}

#[test]
fn a_reference_outside_the_plant_is_refused_on_reading_not_a_panic() {
    let plant = common::plant(50.0, vec![], vec![common::load("a", 1.0, 0.0)], 1.0);
    let scheme = Scheme {
        groups: Vec::new(),
        name: "broken".into(),
        measurement: Measurement::default(),
        stages: vec![Stage {
            sizing: nadir::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: "s".into(),
            trigger: StageTrigger::Breaker(BreakerRef::Generator(3)),
            delay_s: 0.1,
            breaker_s: 0.08,
            sheds: vec![0, 7],
        }],
        over_frequency: Vec::new(),
    };
    let written = scheme_yaml(&plant, &scheme, &[]);
    let d = parse_scheme(&written, "w.yaml", &plant).unwrap_err();
    assert!(d.iter().any(|x| x.path.ends_with("armed_by")), "{d:?}");
    assert!(d.iter().any(|x| x.path.ends_with("sheds[1]")), "{d:?}");
}

// ---------------------------------------------------------------- random schemes

/// Ids and names that YAML could misread: indicators, quotes, reserved words, numbers, spaces at
/// the ends, line breaks, control characters, byte-order marks, non-ASCII text.
fn awkward() -> impl Strategy<Value = String> {
    prop_oneof![
        "[a-z][a-z0-9-]{0,6}",
        "[ -~]{0,8}",
        "\\PC{0,6}",
        "[a\\x00-\\x1f\\x7f\\x{85}\\x{a0}\\x{2028}\\x{2029}\\x{feff}\\x{fffe}]{1,4}",
        prop::sample::select(vec![
            "", "-", "- x", "-1", "1", "49.0", "1e3", "0x1F", "0o7", ".inf", "-.inf", ".nan",
            "true", "False", "yes", "NO", "on", "off", "y", "n", "null", "Null", "~", "a: b",
            "a:b", "#", "a #b", "a#b", "'", "''", "\"", "\\", "\\n", "[a]", "{a: b}", "a, b",
            "? a", "&a", "*a", "!a", "!!str", "|", ">", "%YAML", "@x", "`x", " a", "a ", "a\tb",
            "\ta", "a\nb", "a\r\nb", "---", "...", "<<", "=", "é", "–", "😀", "\u{200b}",
        ])
        .prop_map(String::from),
    ]
}

/// A stage id as awkward as the reader accepts: not empty, no spaces at its ends, no control or
/// invisible characters (those are refused, docs/files.md), but every YAML indicator, quote and
/// reserved word.
fn stage_id() -> impl Strategy<Value = String> {
    awkward().prop_map(|s| {
        let kept: String = s
            .chars()
            .filter(|&c| c == ' ' || c.is_ascii_graphic() || "é–😀".contains(c))
            .collect();
        let kept = kept.trim();
        if kept.is_empty() {
            "s".to_string()
        } else {
            kept.to_string()
        }
    })
}

/// Makes the ids distinct while keeping them awkward.
fn distinct(ids: Vec<String>, taken: &mut HashSet<String>) -> Vec<String> {
    ids.into_iter()
        .enumerate()
        .map(|(i, id)| {
            let mut id = id;
            while taken.contains(&id) {
                id = format!("{id}#{i}");
            }
            taken.insert(id.clone());
            id
        })
        .collect()
}

/// A plant with two sections, one tie, the utility, two generators and `loads.len()` loads; only
/// the parts the scheme reader consults are filled with care.
fn small_plant(
    breaker_ids: Vec<String>,
    loads: Vec<(String, u32, f64)>,
    point: String,
    name: String,
) -> Plant {
    let mut taken = HashSet::new();
    let breakers = distinct(breaker_ids, &mut taken);
    let load_ids = distinct(loads.iter().map(|l| l.0.clone()).collect(), &mut taken);
    let mut tg = common::gen(
        &breakers[2],
        10.0,
        4.0,
        6.0,
        5.0,
        PrimeMover::Steam {
            governor_s: 0.2,
            turbine_s: 0.3,
        },
    );
    // Below every pickup drawn: the reader refuses a stage at or below a machine's own trip.
    tg.trips = vec![FrequencyTrip::Under {
        hz: 47.5,
        after_s: 1.0,
    }];
    let eng = common::gen(
        &breakers[3],
        3.0,
        1.0,
        2.0,
        4.0,
        PrimeMover::Engine {
            governor_s: 0.1,
            ramp_mw_per_s: 0.5,
        },
    );
    let model_loads: Vec<Load> = loads
        .iter()
        .zip(load_ids)
        .map(|((_, rank, mw), id)| {
            let mut l = common::load(&id, *mw, 1.0);
            l.rank = *rank;
            l
        })
        .collect();
    let mut plant = common::plant(50.0, vec![tg, eng], model_loads, 2.0);
    plant.name = name;
    plant.sections.push(Section { id: "south".into() });
    plant.ties.push(Tie {
        id: breakers[1].clone(),
        between: [0, 1],
        normally_open: false,
    });
    if let Some(u) = plant.utility.as_mut() {
        u.breaker_id = breakers[0].clone();
    }
    plant.operating_points[0].id = point;
    plant.operating_points[0].ties_open = vec![false];
    plant
}

fn number(lo: f64, hi: f64, round: &'static [f64]) -> impl Strategy<Value = f64> {
    prop_oneof![
        (lo..hi).boxed(),
        prop::sample::select(round.to_vec()).boxed(),
    ]
}

fn trigger(n_gen: usize) -> impl Strategy<Value = StageTrigger> {
    let rocof = prop::option::of(number(1e-9, 20.0, &[0.5, 1.0, 2.0, 20.0, 1e-7]));
    prop_oneof![
        (number(47.6, 50.0, &[49.0, 48.8, 49.99, 47.6]), rocof).prop_map(|(pickup_hz, r)| {
            StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: r,
            }
        }),
        prop_oneof![
            Just(BreakerRef::Utility),
            Just(BreakerRef::Tie(0)),
            (0..n_gen).prop_map(BreakerRef::Generator),
        ]
        .prop_map(StageTrigger::Breaker),
    ]
}

/// A plant and a valid scheme over it: every stage sheds at least one load, no load twice.
fn plant_and_scheme() -> impl Strategy<Value = (Plant, Scheme, Vec<String>)> {
    let loads = prop::collection::vec((awkward(), 1u32..30, number(0.0, 5.0, &[0.0, 1.0])), 1..10);
    (
        prop::collection::vec(awkward(), 4),
        loads,
        awkward(),
        awkward(),
        awkward(),
        prop::collection::vec(awkward(), 0..3),
    )
        .prop_flat_map(|(breakers, loads, point, plant_name, name, header)| {
            let n = loads.len();
            let plant = small_plant(breakers, loads, point, plant_name);
            let order = Just((0..n).collect::<Vec<usize>>()).prop_shuffle();
            let stages = prop::collection::vec(
                (
                    stage_id(),
                    trigger(2),
                    number(0.0, 60.0, &[0.0, -0.0, 0.1, 60.0, 5e-324, 1e-300]),
                    number(1e-9, 1.0, &[0.08, 1.0, 1e-7]),
                    1..=n,
                ),
                1..=n,
            );
            let measurement = (
                number(0.0, 1.0, &[0.0, 0.04, 1.0]),
                number(1e-9, 5.0, &[0.1, 5.0]),
            );
            (
                Just(plant),
                Just(name),
                measurement,
                stages,
                order,
                Just(header),
            )
        })
        .prop_map(|(plant, name, (lag, window), stages, order, header)| {
            // Deal the shuffled loads out: stage k takes its drawn count, at least one, while
            // loads last; stages left without a load are dropped.
            let mut taken = HashSet::new();
            let ids = distinct(stages.iter().map(|s| s.0.clone()).collect(), &mut taken);
            let mut next = order.into_iter();
            let stages = stages
                .into_iter()
                .zip(ids)
                .filter_map(|((_, trigger, delay_s, breaker_s, count), id)| {
                    let sheds: Vec<usize> = next.by_ref().take(count).collect();
                    (!sheds.is_empty()).then_some(Stage {
                        sizing: nadir::model::Sizing::All,
                        in_service: true,
                        groups: Vec::new(),
                        id,
                        trigger,
                        delay_s,
                        breaker_s,
                        sheds,
                    })
                })
                .collect();
            let scheme = Scheme {
                groups: Vec::new(),
                name,
                measurement: Measurement {
                    frequency_lag_s: lag,
                    rocof_window_s: window,
                },
                stages,
                over_frequency: Vec::new(),
            };
            (plant, scheme, header)
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 2048, ..ProptestConfig::default() })]

    /// Internal consistency: whatever the ids, names and numbers, the reader gives back the
    /// scheme that was written, bit for bit in every number.
    #[test]
    fn random_schemes_round_trip((plant, scheme, header) in plant_and_scheme()) {
        let text = scheme_yaml(&plant, &scheme, &header);
        let back = parse_scheme(&text, "written.yaml", &plant);
        prop_assert!(back.is_ok(), "refused:\n{text}\n{:?}", back.err());
        let back = back.unwrap();
        prop_assert_eq!(&back, &scheme, "{}", text);
        let bits = |s: &Scheme| -> Vec<u64> {
            let mut v = vec![s.measurement.frequency_lag_s.to_bits(), s.measurement.rocof_window_s.to_bits()];
            for st in &s.stages {
                v.extend([st.delay_s.to_bits(), st.breaker_s.to_bits()]);
                if let StageTrigger::Frequency { pickup_hz, min_rocof_hz_per_s } = st.trigger {
                    v.push(pickup_hz.to_bits());
                    v.extend(min_rocof_hz_per_s.map(f64::to_bits));
                }
            }
            v
        };
        // `==` takes -0.0 for 0.0; the bits tell them apart.
        prop_assert_eq!(bits(&back), bits(&scheme));
    }
}
