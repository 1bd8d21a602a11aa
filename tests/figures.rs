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

fn demo(verb: &str, extra: &[&str]) -> binary::Run {
    let mut args = vec![verb, DEMO_PLANT, DEMO_SCHEME, "--cases", DEMO_CASES];
    args.extend(extra);
    nadir(&args)
}

fn width(text: &str) -> usize {
    text.lines().map(|l| l.chars().count()).max().unwrap_or(0)
}

fn verify_json() -> serde_json::Value {
    let r = demo("verify", &["--format", "json"]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    serde_json::from_str(&r.stdout).expect("valid JSON")
}

fn run_of<'a>(doc: &'a serde_json::Value, case: &str, point: &str) -> &'a serde_json::Value {
    doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["case"] == case && r["operating_point"] == point)
        .unwrap_or_else(|| panic!("no run {case} at {point}"))
}

/// One machine with fixed output (no governor) and a 100 MW load with frequency exponent 1: load
/// damping D = 100 MW per pu, so a constant-power step ΔP settles at Δf = −ΔP/D monotonically
/// with time constant 2·H·S/D = 12 s (Kundur, Power System Stability and Control, 1994, §11.1,
/// with 1/R = 0). Loss of 2 MW of load: +0.02 pu = +1.0 Hz, reached from below.
const FIXED: &str = r#"
plant: { name: fixed machine island, nominal_hz: 50 }
generators:
  - { id: g, section: main, rating_mva: 120, inertia_s: 5.0, output_mw: 100, min_mw: 0, max_mw: 120,
      governor: { model: fixed } }
loads:
  - { id: l, section: main, p_mw: 100, rank: 1, freq_exp: 1.0 }
criteria:
  min_hz: 47.5
  recover: { above_hz: 47.501, within_s: 100 }
  settle: { within_s: 100, low_hz: 47.0, high_hz: 51.4 }
"#;

#[test]
fn peak_is_after_the_disturbance_and_never_the_pre_event_value() {
    let plant = scratch("fixed.yaml", FIXED);
    let scheme = scratch(
        "fixed-scheme.yaml",
        "stages:\n  - { id: uf-1, pickup_hz: 47.0, delay_s: 0.1, sheds: [l] }\n",
    );
    let cases = scratch(
        "fixed-cases.yaml",
        "cases:\n  - { id: fall, duration_s: 150, events: [ { at_s: 1.0, load_step: { section: main, mw: 3.0 } } ] }\n  - { id: rise, duration_s: 150, events: [ { at_s: 1.0, load_step: { section: main, mw: -2.0 } } ] }\n",
    );
    let r = nadir(&[
        "verify",
        plant.to_str().unwrap(),
        scheme.to_str().unwrap(),
        "--cases",
        cases.to_str().unwrap(),
        "--no-margins",
        "--format",
        "json",
    ]);
    assert_eq!(r.code, 0, "{}\n{}", r.stdout, r.stderr);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    // A monotone fall never rises: no peak (the 50 Hz held before and at the event is not one),
    // and frequency never went below the 47.501 Hz recovery level: no recovery time.
    let fall = run_of(&doc, "fall", "normal");
    assert!(fall["peak_hz"].is_null(), "{fall}");
    assert!(fall["peak_at_s"].is_null());
    assert_eq!(fall["went_below_recover_level"], false);
    assert!(fall["recovered_at_s"].is_null() && fall["recovery_s"].is_null());
    // Δf = −ΔP/D = 3/100 pu = 1.5 Hz below nominal after 149 s ≫ 12 s.
    assert!(
        (fall["nadir_hz"].as_f64().unwrap() - 48.5).abs() < 1e-3,
        "{fall}"
    );
    // A monotone rise to 51.0 Hz: the peak is its end value, at the end of the run.
    let rise = run_of(&doc, "rise", "normal");
    let peak = rise["peak_hz"].as_f64().unwrap();
    assert!((peak - 51.0).abs() < 1e-3, "{rise}");
    assert!((rise["peak_at_s"].as_f64().unwrap() - 150.0).abs() < 1e-6);
    assert!((peak - rise["final_hz"].as_f64().unwrap()).abs() < 1e-9);
}

#[test]
fn recovery_is_measured_from_the_event_and_is_a_dash_when_never_below() {
    let doc = verify_json();
    // Utility loss then engine trip at 8 s: recovery counted from the trip.
    let two = run_of(&doc, "utility-loss-then-engine-trip", "full-rate");
    let at = two["recovered_at_s"].as_f64().unwrap();
    assert!(at > 8.0, "{two}");
    assert!((two["recovery_s"].as_f64().unwrap() - (at - 8.0)).abs() < 1e-9);
    // Turndown: nadir 49.70 Hz never goes below the 49.5 Hz level.
    let never = run_of(&doc, "utility-loss", "turndown");
    assert!(never["nadir_hz"].as_f64().unwrap() > 49.5);
    assert_eq!(never["went_below_recover_level"], false);
    assert!(never["recovery_s"].is_null());
    // The table shows the same: a dash, not 0.00.
    let r = demo("verify", &["--wide"]);
    let line = r
        .stdout
        .lines()
        .find(|l| l.contains("│ utility-loss ") && l.contains("turndown"))
        .unwrap();
    let cells: Vec<&str> = line.split('│').map(str::trim).collect();
    assert_eq!(cells[9], "—", "{line}");
    // A utility profile counts from when it leaves nominal (1 s in the demo).
    let grid = run_of(&doc, "grid-underfrequency", "full-rate");
    let at = grid["recovered_at_s"].as_f64().unwrap();
    assert!((grid["recovery_s"].as_f64().unwrap() - (at - 1.0)).abs() < 1e-9);
}

#[test]
fn undervoltage_drop_outs_are_counted_beside_the_shed() {
    // The demo's dip drops both hammer mills (1.00 MW each at full rate, plant file) on their
    // own undervoltage releases; no stage operates.
    let doc = verify_json();
    let dip = run_of(&doc, "voltage-dip-mv-b", "full-rate");
    assert!(
        (dip["uv_dropped_mw"].as_f64().unwrap() - 2.0).abs() < 1e-9,
        "{dip}"
    );
    assert_eq!(dip["shed_mw"].as_f64().unwrap(), 0.0);
    let r = demo("verify", &["--wide"]);
    assert!(r.stdout.contains("UV MW"), "{}", r.stdout);
    let r = nadir(&[
        "replay",
        DEMO_PLANT,
        DEMO_SCHEME,
        "--cases",
        DEMO_CASES,
        "--case",
        "voltage-dip-mv-b",
    ]);
    assert!(
        r.stdout.contains("dropped on UV    2.00 MW"),
        "{}",
        r.stdout
    );
}

#[test]
fn replay_summarises_every_island() {
    let r = nadir(&[
        "replay",
        DEMO_PLANT,
        DEMO_SCHEME,
        "--cases",
        DEMO_CASES,
        "--case",
        "bus-split-islanded",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let row = |n: &str| {
        r.stdout
            .lines()
            .find(|l| l.starts_with(&format!("│ {n} ")))
            .unwrap_or_else(|| panic!("no island {n} in\n{}", r.stdout))
            .split('│')
            .map(|c| c.trim().to_string())
            .collect::<Vec<_>>()
    };
    // After the split, mv-a has more generation than load and rises to 50.39 Hz while mv-b falls
    // to 49.21 Hz; both are listed with their own figures.
    let a = row("2");
    assert_eq!((a[2].as_str(), a[6].as_str()), ("mv-a", "50.391"));
    let b = row("3");
    assert_eq!((b[2].as_str(), b[4].as_str()), ("mv-b", "49.213"));
    assert!(
        r.stdout.contains("peak             50.391 Hz"),
        "{}",
        r.stdout
    );
    assert!(width(&r.stdout) <= 120, "{}", r.stdout);
}

#[test]
fn the_verify_table_fits_120_columns_and_names_the_rocof_window() {
    let r = demo("verify", &[]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(width(&r.stdout) <= 120, "{} columns", width(&r.stdout));
    assert!(r.stdout.contains("│ over  │") && r.stdout.contains("│ 0.5 s │"));
    for words in [
        "  - recovers above 49.5 Hz within 10 s after the last event and stays above it to the end of the run",
        "  - stays within 49.5–50.5 Hz from 20 s after the disturbance starts to the end of the run",
        "  - ROCOF, averaged over 0.5 s, stays at or below 2 Hz/s",
    ] {
        assert!(r.stdout.contains(words), "missing {words:?}");
    }
    let wide = demo("verify", &["--wide"]);
    assert!(width(&wide.stdout) > 120);
    assert!(wide.stdout.contains("ROCOF Hz/s over 0.5 s"));
    let compare = nadir(&[
        "compare",
        DEMO_PLANT,
        DEMO_SCHEME,
        "schemes/biorefinery-proposed.yaml",
        "--cases",
        DEMO_CASES,
    ]);
    assert_eq!(compare.code, 1);
    assert!(width(&compare.stdout) <= 120, "{}", compare.stdout);
    assert!(compare
        .stdout
        .contains("utility-loss-then-engine-trip at full-rate: holds only up to 1.08× its disturbance; 1.20× is required"));
    // The deadline is said the way the criterion reads: counted from the last event (8 s). The
    // proposal without its 49.0 Hz step leaves the engine trip to nothing above 48.8 Hz, and
    // frequency hangs below the recovery level.
    let proposed =
        std::fs::read_to_string(binary::root().join("schemes/biorefinery-proposed.yaml")).unwrap();
    let step = "  - { id: uf-1, pickup_hz: 49.0, delay_s: 0.15, breaker_s: 0.08,\n      sheds: [hammer-mill-1, hammer-mill-2] }                                     # ranks 6–7, 2.00 MW\n";
    assert!(proposed.contains(step));
    let without = scratch("proposed-without-49.yaml", &proposed.replace(step, ""));
    let r = nadir(&[
        "verify",
        DEMO_PLANT,
        without.to_str().unwrap(),
        "--cases",
        DEMO_CASES,
        "--no-margins",
        "--format",
        "json",
    ]);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let failed = run_of(&doc, "utility-loss-then-engine-trip", "full-rate");
    let messages: Vec<&str> = failed["failures"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["message"].as_str().unwrap())
        .collect();
    assert!(messages.contains(
        &"did not recover above 49.5 Hz and stay there (limit 18.00 s, 10 s after the last event at 8.00 s)"
    ), "{messages:?}");
    assert!(
        messages
            .iter()
            .any(|m| m.contains("from 20.00 s on, below the 49.5–50.5 Hz settling band")),
        "{messages:?}"
    );
}

#[test]
fn verify_json_is_versioned_and_carries_verdict_criteria_and_margin_kinds() {
    let doc = verify_json();
    assert_eq!(doc["document"], "nadir-verify");
    assert_eq!(doc["format_version"], 1);
    assert_eq!(doc["tool_version"], env!("CARGO_PKG_VERSION"));
    assert_eq!(doc["verdict"]["holds"], true);
    assert_eq!(doc["verdict"]["runs"], 12);
    assert_eq!(doc["criteria"]["rocof_window_s"], 0.5);
    assert_eq!(doc["criteria"]["settle_within_s"], 20.0);
    assert!(doc["criteria"]["words"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["key"] == "recover"
            && w["words"]
                == "recovers above 49.5 Hz within 10 s after the last event and stays above it to the end of the run"));
    let turndown = run_of(&doc, "utility-loss", "turndown");
    assert_eq!(
        turndown["margins"]["disturbance_factor"],
        serde_json::json!({ "kind": "at_least", "value": 2.0 })
    );
    let split = run_of(&doc, "bus-split-islanded", "turndown");
    assert_eq!(
        split["margins"]["disturbance_factor"],
        serde_json::json!({ "kind": "not_applicable", "value": null })
    );
    // Every key written is declared in the published schema.
    let schema = nadir(&["schema"]);
    let schemas: serde_json::Value = serde_json::from_str(&schema.stdout).unwrap();
    let s = &schemas["verify-output.schema.json"];
    for key in doc.as_object().unwrap().keys() {
        assert!(s["properties"][key].is_object(), "{key} not in the schema");
    }
    let run_props = &s["$defs"]["RunOut"]["properties"];
    for key in turndown.as_object().unwrap().keys() {
        assert!(
            run_props[key].is_object(),
            "run field {key} not in the schema"
        );
    }
    // Without margins: null, and said so.
    let r = demo("verify", &["--format", "json", "--no-margins"]);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(doc["margins_searched"], false);
    assert!(doc["runs"][0]["margins"].is_null());
}

#[test]
fn compare_json_gives_settings_as_numbers() {
    let r = nadir(&[
        "compare",
        DEMO_PLANT,
        DEMO_SCHEME,
        "schemes/biorefinery-proposed.yaml",
        "--cases",
        DEMO_CASES,
        "--format",
        "json",
    ]);
    assert_eq!(r.code, 1, "{}", r.stderr);
    let doc: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    assert_eq!(doc["document"], "nadir-compare");
    assert_eq!(doc["holds"], false);
    assert_eq!(doc["regressions"], 1);
    let old = doc["old_scheme"]["stages"].as_array().unwrap();
    let armed = old.iter().find(|s| s["id"] == "armed-utility").unwrap();
    assert_eq!(armed["armed_by"], "utility");
    assert!(armed["pickup_hz"].is_null());
    assert_eq!(armed["delay_s"], 0.1);
    let uf1 = old.iter().find(|s| s["id"] == "uf-1").unwrap();
    assert_eq!(uf1["pickup_hz"], 49.0);
    let regressed = doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["change"] == "now_fails")
        .unwrap();
    assert_eq!(regressed["new"]["case"], "utility-loss-then-engine-trip");
}

#[test]
fn csv_keeps_figures_apart_and_neutralises_formulas() {
    let cases = std::fs::read_to_string(binary::root().join(DEMO_CASES))
        .unwrap()
        .replace(
            "  - id: utility-loss\n",
            "  - id: \"=HYPERLINK(\\\"http://example.invalid\\\")\"\n",
        );
    assert!(cases.contains("HYPERLINK"));
    let cases = scratch("formula-cases.yaml", &cases);
    let r = nadir(&[
        "verify",
        DEMO_PLANT,
        DEMO_SCHEME,
        "--cases",
        cases.to_str().unwrap(),
        "--format",
        "csv",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let mut reader = csv::Reader::from_reader(r.stdout.as_bytes());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
    let first = &rows[0];
    assert_eq!(
        &first[col("case")],
        "'=HYPERLINK(\"http://example.invalid\")"
    );
    // turndown: never below the recovery level, so no recovery time; margin kinds apart.
    let turndown = &rows[1];
    assert_eq!(&turndown[col("went_below_recover_level")], "false");
    assert_eq!(&turndown[col("recovery_s")], "");
    assert_eq!(&turndown[col("disturbance_factor")], "2.000");
    assert_eq!(&turndown[col("disturbance_factor_kind")], "at_least");
    assert_eq!(&first[col("rocof_window_s")], "0.5");
    assert_eq!(&first[col("uv_dropped_mw")], "0.0000");
}

#[test]
fn check_tables_fit_120_columns_and_wide_gives_every_column() {
    let r = demo("check", &[]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(width(&r.stdout) <= 120, "{} columns", width(&r.stdout));
    // The screening ROCOF is the initial one, at the instant of the event: said so.
    assert!(r.stdout.contains("│ initial │"), "{}", r.stdout);
    assert!(r.stdout.contains("--wide shows every column on one line."));
    let wide = demo("check", &["--wide"]);
    assert_eq!(wide.code, 0);
    assert!(width(&wide.stdout) > 120);
    for heading in [
        "initial ROCOF Hz/s",
        "balance MW",
        "online MVA",
        "full-rate cum. MW",
    ] {
        assert!(wide.stdout.contains(heading), "missing {heading:?}");
    }
}
