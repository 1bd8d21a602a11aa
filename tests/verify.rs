//! The verifier against cases whose answer is known by hand, and the verify, audit, compare and
//! replay verbs run for real on the demo.

mod binary;

use binary::nadir;
use nadir::input::{parse_cases, parse_plant, parse_scheme};
use nadir::sim::SimConfig;
use nadir::verify::margins::{search, Margin};
use nadir::verify::matrix::sim_config_for;
use std::path::PathBuf;

/// One machine with fixed output (no governor) and one 100 MW load with frequency exponent 1, so
/// load damping is D = 100 MW per pu exactly. A constant-power load step ΔP settles the island at
/// Δf = −ΔP/D (Kundur, Power System Stability and Control, 1994, §11.1, with 1/R = 0), reached
/// monotonically with time constant 2·H·S/D = 12 s, so the nadir is the steady state. Recovery
/// and settling are set just inside the minimum so that the minimum is the binding criterion.
const PLANT: &str = r#"
plant: { name: hand-computable island, nominal_hz: 50 }
generators:
  - { id: g, section: main, rating_mva: 120, inertia_s: 5.0, output_mw: 100, min_mw: 0, max_mw: 120,
      governor: { model: fixed } }
loads:
  - { id: l, section: main, p_mw: 100, rank: 1, freq_exp: 1.0 }
criteria:
  min_hz: 47.5
  recover: { above_hz: 47.501, within_s: 100 }
  settle: { within_s: 100, low_hz: 47.0, high_hz: 51.0 }
"#;

const CASES: &str = r#"
cases:
  - { id: step, duration_s: 150, events: [ { at_s: 0.0, load_step: { section: main, mw: 3.0 } } ] }
"#;

const SCHEME: &str = r#"
stages:
  - { id: uf-1, pickup_hz: 47.0, delay_s: 0.1, sheds: [l] }
"#;

#[test]
fn disturbance_margin_matches_the_hand_computed_threshold() {
    let plant = parse_plant(PLANT, "plant.yaml").expect("plant");
    let cases = parse_cases(CASES, "cases.yaml", &plant).expect("cases");
    let scheme = parse_scheme(SCHEME, "scheme.yaml", &plant).expect("scheme");
    let config = sim_config_for(&plant, &SimConfig::default());
    // 3 MW gives −0.03 pu = −1.5 Hz (48.5 Hz). The 47.5 Hz minimum is reached at −2.5 Hz, i.e.
    // a step of 5 MW: factor 5/3 = 1.6667.
    let m = search(&plant, &cases.cases[0], 0, &scheme, &config);
    let Margin::Found(k) = m.disturbance_factor else {
        panic!("{m:?}")
    };
    assert!(
        (k - 5.0 / 3.0).abs() <= 0.011,
        "factor {k}, expected 1.667 within the 0.01 resolution"
    );
    // The model-error margin: lower damping D' = (1 − e)·D gives −ΔP/D' = −2.5 Hz at e = 40 %.
    let Margin::Found(e) = m.model_error_pct else {
        panic!("{m:?}")
    };
    assert!(
        (e - 40.0).abs() <= 1.01,
        "model error {e} %, expected 40 % within 1 %"
    );
}

const PLANT_FILE: &str = "examples/biorefinery/plant.yaml";
const CASES_FILE: &str = "examples/biorefinery/cases.yaml";

#[test]
fn verify_holds_on_the_demo_and_exits_zero() {
    let r = nadir(&[
        "verify",
        PLANT_FILE,
        "schemes/biorefinery.yaml",
        "--cases",
        CASES_FILE,
    ]);
    assert_eq!(r.code, 0, "{}\n{}", r.stdout, r.stderr);
    assert!(
        r.stdout
            .contains("All 12 case × operating-point runs hold every criterion."),
        "{}",
        r.stdout
    );
    assert!(r.stdout.contains("qualified protection engineer"));
}

#[test]
fn a_table_that_fails_a_case_exits_one_and_names_the_criterion() {
    let r = nadir(&[
        "verify",
        PLANT_FILE,
        "schemes/biorefinery-proposed.yaml",
        "--cases",
        CASES_FILE,
    ]);
    assert_eq!(r.code, 1, "{}\n{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("FAIL"));
    assert!(
        r.stdout
            .contains("holds only up to 1.08× its disturbance; 1.20× is required"),
        "{}",
        r.stdout
    );
    let csv = nadir(&[
        "verify",
        PLANT_FILE,
        "schemes/biorefinery-proposed.yaml",
        "--cases",
        CASES_FILE,
        "--format",
        "csv",
    ]);
    assert_eq!(csv.code, 1);
    let failing: Vec<&str> = csv
        .stdout
        .lines()
        .filter(|l| l.split(',').nth(2) == Some("false"))
        .collect();
    assert_eq!(failing.len(), 1, "{}", csv.stdout);
    assert!(failing[0].starts_with("utility-loss-then-engine-trip,full-rate,"));
}

#[test]
fn compare_catches_the_change_that_breaks_one_case() {
    let r = nadir(&[
        "compare",
        PLANT_FILE,
        "schemes/biorefinery.yaml",
        "schemes/biorefinery-proposed.yaml",
        "--cases",
        CASES_FILE,
    ]);
    assert_eq!(r.code, 1, "{}\n{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("uf-1-a │ removed"), "{}", r.stdout);
    assert_eq!(r.stdout.matches("NOW FAILS").count(), 1, "{}", r.stdout);
    // The same table against itself changes nothing.
    let same = nadir(&[
        "compare",
        PLANT_FILE,
        "schemes/biorefinery.yaml",
        "schemes/biorefinery.yaml",
        "--cases",
        CASES_FILE,
        "--no-margins",
    ]);
    assert_eq!(same.code, 0);
    assert!(same.stdout.contains("(no setting differs)"));
}

#[test]
fn audit_passes_the_demo_and_names_each_broken_rule() {
    let ok = nadir(&["audit", PLANT_FILE, "schemes/biorefinery.yaml"]);
    assert_eq!(ok.code, 0, "{}", ok.stdout);
    assert!(ok.stdout.contains("No violation."));
    let bad = nadir(&["audit", PLANT_FILE, "tests/verify/rank_order_scheme.yaml"]);
    assert_eq!(bad.code, 1, "{}\n{}", bad.stdout, bad.stderr);
    assert!(bad.stdout.contains(
        "[rank-order] stage uf-1 opens pelletiser-1 (rank 8) while lower-ranked office-hvac (rank 1), office-lighting (rank 2) of the same island are still connected (utility opens alone, at full-rate, turndown, stg-1-maintenance)"
    ));
    assert!(bad.stdout.contains("[spacing] stages uf-2 and uf-3"));
    assert!(bad.stdout.contains("[unassigned-lower-rank]"));
}

#[test]
fn replay_prints_the_event_log_and_writes_csv_and_plot() {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("replay");
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let svg = dir.join("utility-loss.svg");
    let csv = dir.join("utility-loss.csv");
    let r = nadir(&[
        "replay",
        PLANT_FILE,
        "schemes/biorefinery.yaml",
        "--cases",
        CASES_FILE,
        "--case",
        "utility-loss",
        "--at",
        "full-rate",
        "--plot",
        svg.to_str().unwrap(),
        "--csv",
        csv.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 0, "{}\n{}", r.stdout, r.stderr);
    assert!(r.stdout.contains("breaker utility opens (case)"));
    assert!(r.stdout.contains(
        "stage armed-utility opens office-hvac, office-lighting, dryer-1-fans (1.65 MW)"
    ));
    // Armed stage: 0.10 s delay + 0.08 s breaker after the utility opens at 0 s.
    assert!(
        r.stdout.contains("0.1800 s  stage armed-utility opens"),
        "{}",
        r.stdout
    );
    let plot = std::fs::read_to_string(&svg).unwrap();
    assert!(
        plot.starts_with("<svg")
            && plot.contains("uf-1, uf-1-a 49 Hz")
            && plot.contains("minimum 47.5 Hz")
    );
    let samples = std::fs::read_to_string(&csv).unwrap();
    assert!(samples.starts_with("t_s,mv-a_hz,mv-b_hz,shed_mw"));
    assert!(samples.lines().count() > 1000);
    let unknown = nadir(&[
        "replay",
        PLANT_FILE,
        "schemes/biorefinery.yaml",
        "--cases",
        CASES_FILE,
        "--case",
        "nope",
    ]);
    assert_eq!(unknown.code, 2);
    assert!(
        unknown.stderr.contains("--case nope: no such case"),
        "{}",
        unknown.stderr
    );
}
