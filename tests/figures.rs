//! One meaning per figure: criteria that a run cannot judge are refused at input, `only_at: []`
//! is refused, margins the plant requires are never skipped, and the figures of verify, replay,
//! compare and report mean the same thing in every format.

mod binary;

use binary::nadir;
use nadir::input::{parse_cases, parse_plant};
use std::path::{Path, PathBuf};

const DEMO_PLANT: &str = "examples/biorefinery/plant.yaml";
const DEMO_SCHEME: &str = "schemes/biorefinery.yaml";
const DEMO_CASES: &str = "examples/biorefinery/cases.yaml";

fn scratch(name: &str, text: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("figures");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

fn demo_plant_text() -> String {
    std::fs::read_to_string(binary::root().join(DEMO_PLANT)).unwrap()
}

/// A small plant with default criteria (recovery within 10 s, settling from 20 s).
const PLANT: &str = r#"
plant: { name: small island, nominal_hz: 50 }
operating_points: [ { id: low }, { id: high } ]
generators:
  - { id: g, section: main, rating_mva: 12, inertia_s: 4.0, output_mw: 8, min_mw: 0, max_mw: 10,
      governor: { model: engine, droop_pct: 4 } }
utility: { section: main, import_mw: 2 }
loads:
  - { id: l, section: main, p_mw: 10, rank: 1 }
"#;

#[test]
fn an_empty_only_at_is_an_error_not_every_point() {
    let plant = parse_plant(PLANT, "p.yaml").unwrap();
    let text = "cases:\n  - id: c\n    only_at: []\n    events: [ { at_s: 0, open: utility } ]\n";
    let d = parse_cases(text, "c.yaml", &plant).unwrap_err();
    assert_eq!(d.len(), 1, "{d:#?}");
    assert_eq!(
        (d[0].path.as_str(), d[0].line),
        ("cases[0].only_at", Some(3))
    );
    assert_eq!(
        d[0].message,
        "case `c` lists no operating point in only_at, so it would run nowhere"
    );
    assert!(d[0]
        .help
        .as_deref()
        .unwrap()
        .contains("`only_at: [low]`, or remove only_at"));
    // Omitted, it means every point.
    let all = "cases:\n  - id: c\n    events: [ { at_s: 0, open: utility } ]\n";
    assert_eq!(
        parse_cases(all, "c.yaml", &plant).unwrap().cases[0].applies_to,
        vec![0, 1]
    );
}

#[test]
fn a_settle_window_at_the_end_of_the_run_is_an_input_error() {
    let plant = parse_plant(PLANT, "p.yaml").unwrap();
    // Disturbance at 8 s + 20 s of settling = 28 s: 2 s left of a 30 s run (5 s needed).
    let text = "cases:\n  - id: late\n    events: [ { at_s: 8, open: utility } ]\n";
    let d = parse_cases(text, "c.yaml", &plant).unwrap_err();
    assert_eq!(d.len(), 1, "{d:#?}");
    assert_eq!((d[0].path.as_str(), d[0].line), ("cases[0].id", Some(2)));
    assert_eq!(
        d[0].message,
        "case `late` cannot be judged within its default duration_s of 30 s: the settling band is \
judged from 28 s (20 s after the disturbance starts at 8 s, criteria.settle.within_s), and a \
criterion needs at least 5 s of the run after that"
    );
    assert_eq!(
        d[0].help.as_deref(),
        Some("write `duration_s: 33` (or more) in the case, or shorten the criterion in the plant file")
    );
    // With the duration it names, the case is accepted.
    let fixed =
        "cases:\n  - id: late\n    duration_s: 33\n    events: [ { at_s: 8, open: utility } ]\n";
    assert!(parse_cases(fixed, "c.yaml", &plant).is_ok());
}

#[test]
fn a_run_too_short_for_the_recovery_deadline_is_an_input_error() {
    let plant = parse_plant(PLANT, "p.yaml").unwrap();
    // Last event at 12 s + 10 s = a 22 s deadline in a 25 s run; settling (from 20 s) is fine.
    let text = "cases:\n  - id: short\n    duration_s: 25\n    events:\n      - { at_s: 0, open: utility }\n      - { at_s: 12, load_step: { section: main, mw: 0.5 } }\n";
    let d = parse_cases(text, "c.yaml", &plant).unwrap_err();
    assert_eq!(d.len(), 1, "{d:#?}");
    assert_eq!(
        (d[0].path.as_str(), d[0].line),
        ("cases[0].duration_s", Some(3))
    );
    assert!(
        d[0].message.contains(
            "the recovery deadline is 22 s (10 s after the last event at 12 s, criteria.recover.within_s)"
        ),
        "{}",
        d[0].message
    );
    assert!(!d[0].message.contains("settling"), "{}", d[0].message);
    assert!(d[0].help.as_deref().unwrap().contains("`duration_s: 27`"));
}

#[test]
fn the_demo_plant_with_the_old_settling_time_is_refused_naming_the_fix() {
    // The demo's cases run 30 s; settling judged from 30 s would be one sample.
    let text = demo_plant_text().replace("settle: { within_s: 20,", "settle: { within_s: 30,");
    assert!(text.contains("within_s: 30"));
    let plant = scratch("demo-settle-30.yaml", &text);
    let r = nadir(&[
        "verify",
        plant.to_str().unwrap(),
        DEMO_SCHEME,
        "--cases",
        DEMO_CASES,
    ]);
    assert_eq!(r.code, 2, "{}\n{}", r.stdout, r.stderr);
    assert!(r.stdout.is_empty());
    assert!(
        r.stderr.contains("cases[0].id: case `utility-loss` cannot be judged within its default duration_s of 30 s: the settling band is judged from 30 s"),
        "{}",
        r.stderr
    );
}

fn plant_requiring_margins() -> PathBuf {
    let text = demo_plant_text().replace(
        "  settle: { within_s: 20, low_hz: 49.5, high_hz: 50.5 }\n",
        "  settle: { within_s: 20, low_hz: 49.5, high_hz: 50.5 }\n  required_margin: { disturbance_factor: 1.05, model_error_pct: 10 }\n",
    );
    assert!(text.contains("required_margin"));
    scratch("demo-margins.yaml", &text)
}

#[test]
fn no_margins_is_refused_when_the_plant_requires_margins() {
    let plant = plant_requiring_margins();
    let p = plant.to_str().unwrap();
    for args in [
        vec![
            "verify",
            p,
            DEMO_SCHEME,
            "--cases",
            DEMO_CASES,
            "--no-margins",
        ],
        vec![
            "compare",
            p,
            DEMO_SCHEME,
            "schemes/biorefinery-proposed.yaml",
            "--cases",
            DEMO_CASES,
            "--no-margins",
        ],
    ] {
        let r = nadir(&args);
        assert_eq!(r.code, 2, "{args:?}\n{}\n{}", r.stdout, r.stderr);
        assert!(r.stdout.is_empty(), "{}", r.stdout);
        assert!(
            r.stderr.contains(&format!(
                "--no-margins: {p} requires margins (criteria.required_margin: disturbance_factor 1.05, model_error_pct 10), so a run without the margin searches could not judge every criterion; leave out --no-margins"
            )),
            "{}",
            r.stderr
        );
    }
    // Without the flag the margins are searched and judged.
    let r = nadir(&["verify", p, DEMO_SCHEME, "--cases", DEMO_CASES]);
    assert!(r.code == 0 || r.code == 1, "{}", r.stderr);
    assert!(r.stdout.contains("1.94×"), "{}", r.stdout);
    // On the demo, which requires none, --no-margins is a quick run.
    let r = nadir(&[
        "verify",
        DEMO_PLANT,
        DEMO_SCHEME,
        "--cases",
        DEMO_CASES,
        "--no-margins",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
}
