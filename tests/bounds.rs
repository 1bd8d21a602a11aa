//! Bounded resources and no figure from a broken run (docs/guarantees.md, "Bounded time and
//! memory" and "No number from a broken run"): the design grid limit, lags below the
//! integrator's reach, the "did you mean" cap, bounded weights and load steps, the over-speed
//! stop, a stopped run's status in every verb and format, and screening's wording for a surplus.
//!
//! Behaviour tests: each asserts the message or the absence of a figure; no outside reference
//! is needed except where a number is checked, and its source is named there.

mod binary;

use nadir::input::{parse_cases, parse_plant, parse_scheme};
use nadir::model::{CaseSet, Plant, PrimeMover, Scheme};
use nadir::sim::{simulate, SimConfig, StopReason};
use nadir::verify::matrix::{verify, VerifyConfig};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

fn demo(name: &str) -> String {
    std::fs::read_to_string(binary::root().join(name)).expect("demo file is readable")
}

fn demo_plant_text() -> String {
    demo("examples/biorefinery/plant.yaml")
}

fn demo_all() -> (Plant, CaseSet, Scheme) {
    let plant = parse_plant(&demo_plant_text(), "plant.yaml").expect("demo plant");
    let cases = parse_cases(
        &demo("examples/biorefinery/cases.yaml"),
        "cases.yaml",
        &plant,
    )
    .expect("demo cases");
    let scheme =
        parse_scheme(&demo("schemes/biorefinery.yaml"), "scheme.yaml", &plant).expect("scheme");
    (plant, cases, scheme)
}

/// A folder of its own for one test's files.
fn scratch(what: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("nadir-bounds-{what}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

fn write(dir: &Path, name: &str, text: &str) -> String {
    let p = dir.join(name);
    std::fs::write(&p, text).expect("scratch file");
    p.to_string_lossy().into_owned()
}

/// The binary with extra environment variables.
fn nadir_env(args: &[&str], env: &[(&str, &str)]) -> binary::Run {
    let out = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args(args)
        .envs(env.iter().copied())
        .current_dir(binary::root())
        .output()
        .expect("the nadir binary runs");
    binary::Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

// ------------------------------------------------------------------ the design grid limit

fn plant_with_pickup_step(step: &str) -> String {
    let text = demo_plant_text();
    let old = "pickup_hz: { highest: 49.0, lowest: 48.0, step: 0.1 }";
    assert!(text.contains(old), "the demo's design block changed");
    text.replace(
        old,
        &format!("pickup_hz: {{ highest: 49.0, lowest: 48.0, step: {step} }}"),
    )
}

#[test]
fn absurd_grid_steps_are_refused_by_every_verb_naming_the_limit() {
    let dir = scratch("grid");
    let cases = binary::root().join("examples/biorefinery/cases.yaml");
    let cases = cases.to_str().unwrap();
    let scheme = binary::root().join("schemes/biorefinery.yaml");
    let scheme = scheme.to_str().unwrap();
    for (step, count) in [
        ("1e-300", "1.0e300 pickups"),
        ("1e-12", "1000000000001 pickups"),
    ] {
        let plant = write(
            &dir,
            &format!("plant-{step}.yaml"),
            &plant_with_pickup_step(step),
        );
        let out = dir.join(format!("proposed-{step}.yaml"));
        let out = out.to_str().unwrap();
        for args in [
            vec!["check", plant.as_str()],
            vec!["design", plant.as_str(), "--cases", cases, "-o", out],
            vec!["verify", plant.as_str(), scheme, "--cases", cases],
        ] {
            let r = binary::nadir(&args);
            assert_eq!(r.code, 2, "{args:?}: {}", r.stderr);
            assert!(
                r.stderr.contains(&format!(
                    "design.pickup_hz.step: the design grid has {count} × 10 delays"
                )),
                "{args:?}: {}",
                r.stderr
            );
            assert!(
                r.stderr
                    .contains("above the limit max_design_grid_points = 10000"),
                "{}",
                r.stderr
            );
            assert!(
                r.stderr.contains(
                    "the environment variable NADIR_MAX_DESIGN_GRID_POINTS raises the limit, \
                     but no value allows more than 10000000 grid points"
                ),
                "{}",
                r.stderr
            );
            assert!(!r.stderr.contains("panicked"), "{}", r.stderr);
            assert!(!Path::new(out).exists(), "design wrote {out}");
        }
    }
    // 1001 pickups × 10 delays: refused by default, with the exact value to set, and accepted
    // once the limit is raised to it.
    let plant = write(&dir, "plant-fine.yaml", &plant_with_pickup_step("0.001"));
    let r = binary::nadir(&["check", plant.as_str()]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr
            .contains("1001 pickups × 10 delays = 10010 grid points (pickups × delays)"),
        "{}",
        r.stderr
    );
    assert!(
        r.stderr
            .contains("NADIR_MAX_DESIGN_GRID_POINTS=10010 (or higher)"),
        "{}",
        r.stderr
    );
    let r = nadir_env(
        &["check", plant.as_str()],
        &[("NADIR_MAX_DESIGN_GRID_POINTS", "10010")],
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    std::fs::remove_dir_all(&dir).ok();
}

// ------------------------------------------------------------------ lags below the integrator

/// Every steam governor and turbine lag of the demo set to `tau`.
fn with_steam_lags(plant: &Plant, tau: f64) -> Plant {
    let mut p = plant.clone();
    for g in &mut p.generators {
        if let PrimeMover::Steam {
            governor_s,
            turbine_s,
        } = &mut g.governor.prime_mover
        {
            *governor_s = tau;
            *turbine_s = tau;
        }
    }
    p
}

#[test]
fn lags_shorter_than_the_instant_lag_are_instantaneous_whatever_their_size() {
    // Before: 1e-6 s lags took over a gigabyte and stopped on the integrator's step limit.
    // Now every lag below model::INSTANT_LAG_S is the same instantaneous response, so the runs
    // (and the work that made them) are identical whatever τ, and none stops early.
    let (plant, cases, scheme) = demo_all();
    let case = cases.cases.iter().find(|c| c.id == "utility-loss").unwrap();
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let runs: Vec<_> = [1e-3, 1e-6, 1e-9, 1e-12]
        .iter()
        .map(|&tau| simulate(&with_steam_lags(&plant, tau), case, 0, &scheme, &cfg))
        .collect();
    for r in &runs {
        assert_eq!(r.stop, StopReason::EndTime);
        assert_eq!(r, &runs[0], "a lag below the instant lag changed the run");
    }
    assert!(nadir::model::INSTANT_LAG_S > 1e-3);
    // Just above the threshold the lag is integrated and the run still completes.
    let slow = simulate(
        &with_steam_lags(&plant, 1.5 * nadir::model::INSTANT_LAG_S),
        case,
        0,
        &scheme,
        &cfg,
    );
    assert_eq!(slow.stop, StopReason::EndTime);
    assert!((slow.nadir_hz - runs[0].nadir_hz).abs() < 0.05);
}

// ------------------------------------------------------------------ did you mean

#[test]
fn a_megabyte_misspelt_id_is_answered_without_suggestions_and_shortened() {
    let dir = scratch("longid");
    let long_id = "x".repeat(1 << 20);
    let cases = write(
        &dir,
        "cases.yaml",
        &format!("cases:\n  - id: c\n    events:\n      - {{ at_s: 0, open: {long_id} }}\n"),
    );
    let plant = binary::root().join("examples/biorefinery/plant.yaml");
    let start = Instant::now();
    let r = binary::nadir(&[
        "check",
        plant.to_str().unwrap(),
        "--cases",
        &cases,
        "--wide",
    ]);
    // Generous: the answer takes milliseconds; before the cap it took many minutes.
    assert!(start.elapsed() < Duration::from_secs(60));
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr.contains("(1048576 characters)"),
        "{}",
        &r.stderr[..500.min(r.stderr.len())]
    );
    assert!(
        !r.stderr.contains("did you mean"),
        "no suggestion for a huge id"
    );
    assert!(r.stderr.len() < 4000, "the message quotes a shortened id");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_near_miss_still_gets_its_suggestion() {
    let plant = parse_plant(&demo_plant_text(), "plant.yaml").unwrap();
    let d = parse_cases(
        "cases:\n  - id: c\n    events:\n      - { at_s: 0, trip: stg-l }\n",
        "cases.yaml",
        &plant,
    )
    .unwrap_err();
    assert!(
        d.iter().any(|d| d
            .help
            .as_deref()
            .is_some_and(|h| h.contains("did you mean `stg-1`"))),
        "{d:?}"
    );
}

// ------------------------------------------------------------------ weights and load steps

#[test]
fn huge_weights_and_load_steps_are_refused_with_their_range() {
    let plant = parse_plant(&demo_plant_text(), "plant.yaml").unwrap();
    let d = parse_cases(
        "cases:\n  - id: c\n    weight: 1e308\n    events:\n      - { at_s: 0, open: utility }\n",
        "cases.yaml",
        &plant,
    )
    .unwrap_err();
    assert_eq!(d.len(), 1, "{d:?}");
    assert_eq!(d[0].path, "cases[0].weight");
    assert!(d[0].message.contains("is implausibly high"), "{}", d[0]);
    assert_eq!(d[0].help.as_deref(), Some("allowed: 0 ≤ weight ≤ 1000"));

    let d = parse_cases(
        "cases:\n  - id: c\n    events:\n      - { at_s: 0, load_step: { section: mv-a, mw: -1e308 } }\n",
        "cases.yaml",
        &plant,
    )
    .unwrap_err();
    assert_eq!(d.len(), 1, "{d:?}");
    assert_eq!(d[0].path, "cases[0].events[0].load_step.mw");
    assert_eq!(
        d[0].help.as_deref(),
        Some("allowed: -10000 ≤ mw ≤ 10000 MW")
    );

    let text = demo_plant_text().replace("design:\n", "design:\n  rank_weights: { 1: 1e308 }\n");
    let d = parse_plant(&text, "plant.yaml").unwrap_err();
    assert_eq!(d.len(), 1, "{d:?}");
    assert_eq!(d[0].path, "design.rank_weights.1");
    assert!(
        d[0].message
            .contains("expected a number greater than 0 and at most 1000000"),
        "{}",
        d[0]
    );
}

// ------------------------------------------------------------------ over speed and broken runs

const REJECTION: &str = "cases:
  - id: rejection
    start: islanded
    only_at: [turndown]
    events:
      - { at_s: 1.0, load_step: { section: mv-a, mw: -1000 } }
";

#[test]
fn a_large_load_rejection_stops_as_over_speed_symmetric_to_the_collapse_floor() {
    // Before: a −1000 MW step reported 154 Hz. The over-speed level mirrors the collapse floor:
    // 1 + (1 − 0.85) = 1.15 of nominal, 57.5 Hz on 50 Hz.
    let (plant, _, scheme) = demo_all();
    let cases = parse_cases(REJECTION, "c.yaml", &plant).unwrap();
    let op = cases.cases[0].applies_to[0];
    let run = simulate(&plant, &cases.cases[0], op, &scheme, &SimConfig::default());
    let StopReason::Overspeed { at_s, .. } = run.stop else {
        panic!("expected over speed, got {:?}", run.stop);
    };
    assert!(at_s > 1.0 && at_s < 2.0, "{at_s}");
    assert!(
        run.islands
            .iter()
            .all(|i| i.peak_hz.unwrap_or(0.0) <= 57.5 + 1e-3),
        "{:?}",
        run.islands
    );
    assert!(run
        .stop
        .status()
        .unwrap()
        .starts_with("island 1 over speed at"));
}

#[test]
fn a_stopped_run_shows_its_status_instead_of_figures_in_every_verb_and_format() {
    let dir = scratch("broken");
    let plant = binary::root().join("examples/biorefinery/plant.yaml");
    let plant = plant.to_str().unwrap();
    let scheme = binary::root().join("schemes/biorefinery.yaml");
    let scheme = scheme.to_str().unwrap();
    let cases = write(&dir, "cases.yaml", REJECTION);
    let status = "island 1 over speed at";

    let r = binary::nadir(&[
        "replay",
        plant,
        scheme,
        "--cases",
        &cases,
        "--case",
        "rejection",
    ]);
    assert_eq!(r.code, 1, "{}", r.stderr);
    assert!(
        r.stdout.contains(&format!("stopped early    {status}")),
        "{}",
        r.stdout
    );
    for figure in ["nadir  ", "peak after nadir", "final  ", "max ROCOF"] {
        assert!(
            !r.stdout.contains(figure),
            "replay printed `{figure}`:\n{}",
            r.stdout
        );
    }
    let result = r
        .stdout
        .split("Result: FAIL")
        .nth(1)
        .expect("a FAIL result");
    assert!(
        !result.contains("Hz at"),
        "a failure quotes a figure: {result}"
    );

    let verify = |format: &str| {
        let r = binary::nadir(&[
            "verify",
            plant,
            scheme,
            "--cases",
            &cases,
            "--no-margins",
            "--format",
            format,
        ]);
        assert_eq!(r.code, 1, "{}", r.stderr);
        r.stdout
    };
    let table = verify("table");
    let row = table.lines().find(|l| l.contains("turndown")).unwrap();
    assert!(row.contains("stopped"), "{row}");
    assert!(table.contains(status), "{table}");
    assert!(
        !table.contains("57.5") && !table.contains("Hz at"),
        "{table}"
    );

    let csv = verify("csv");
    let row = csv.lines().find(|l| l.starts_with("rejection")).unwrap();
    assert!(row.starts_with("rejection,turndown,false,,,,,"), "{row}");
    assert!(!row.contains("57.5"), "{row}");
    assert!(row.contains(status), "{row}");

    let json: serde_json::Value = serde_json::from_str(&verify("json")).unwrap();
    let row = &json["runs"][0];
    for figure in [
        "nadir_hz",
        "nadir_at_s",
        "peak_hz",
        "max_rocof_hz_per_s",
        "recovered_at_s",
        "final_hz",
    ] {
        assert!(row[figure].is_null(), "{figure}: {row}");
    }
    assert!(row["status"].as_str().unwrap().starts_with(status), "{row}");
    assert_eq!(row["failures"].as_array().unwrap().len(), 1, "{row}");

    let html = dir.join("report.html");
    let r = binary::nadir(&[
        "report",
        plant,
        scheme,
        "--cases",
        &cases,
        "-o",
        html.to_str().unwrap(),
    ]);
    assert!(r.code == 0 || r.code == 1, "{}", r.stderr);
    let text = std::fs::read_to_string(&html).unwrap();
    assert!(text.contains(status), "the report gives the status");
    assert!(!text.contains("nadir 57.5") && !text.contains("nadir 50.00 Hz"));
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn a_numerical_stop_leaves_the_matrix_row_without_figures() {
    let (plant, cases, scheme) = demo_all();
    let config = VerifyConfig {
        sim: SimConfig {
            max_events: 0,
            ..SimConfig::default()
        },
        margins: false,
    };
    let m = verify(&plant, &cases, &scheme, &config, &|| {});
    let stopped: Vec<_> = m.rows.iter().filter(|r| r.status.is_some()).collect();
    assert!(!stopped.is_empty());
    for r in stopped {
        assert!(!r.pass);
        assert!(r.off_nominal.is_empty());
        assert_eq!(r.failures.len(), 1);
        assert!(
            r.failures[0].message.contains("event storm"),
            "{}",
            r.failures[0].message
        );
    }
}

// ------------------------------------------------------------------ screening of a surplus

#[test]
fn screening_says_a_surplus_rises_rather_than_falls() {
    let dir = scratch("surplus");
    let cases = write(&dir, "cases.yaml", REJECTION);
    let plant = binary::root().join("examples/biorefinery/plant.yaml");
    let r = binary::nadir(&[
        "check",
        plant.to_str().unwrap(),
        "--cases",
        &cases,
        "--wide",
    ]);
    let row = r
        .stdout
        .lines()
        .find(|l| l.contains("rejection"))
        .unwrap_or_else(|| panic!("{}", r.stdout));
    assert!(row.contains("rises to above 57.5 Hz"), "{row}");
    assert!(!row.contains("42.5"), "{row}");
    std::fs::remove_dir_all(&dir).ok();
}

// ------------------------------------------------------------------ the report's size

#[test]
fn report_reads_and_writes_within_max_file_bytes() {
    let dir = scratch("report");
    let plant = binary::root().join("examples/biorefinery/plant.yaml");
    let plant = plant.to_str().unwrap();
    let scheme = binary::root().join("schemes/biorefinery.yaml");
    let scheme = scheme.to_str().unwrap();
    let cases = write(
        &dir,
        "cases.yaml",
        "cases:\n  - id: c\n    only_at: [turndown]\n    events:\n      - { at_s: 0, open: utility }\n",
    );
    let out = dir.join("report.html");
    let out = out.to_str().unwrap();
    let args = ["report", plant, scheme, "--cases", &cases, "-o", out];
    // The inputs are read under the limit in force, as every other verb reads them (the demo
    // plant is several kilobytes).
    let r = nadir_env(&args, &[("NADIR_MAX_FILE_BYTES", "1000")]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr
            .contains("larger than the input size limit max_file_bytes = 1000 bytes"),
        "{}",
        r.stderr
    );
    assert!(!Path::new(out).exists());
    // The report itself is bounded by the same limit: a limit above every input but below the
    // report refuses the report and writes nothing.
    let r = nadir_env(&args, &[("NADIR_MAX_FILE_BYTES", "20000")]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr.contains("the report would have")
            && r.stderr
                .contains("bytes, above the limit max_file_bytes = 20000; nothing was written"),
        "{}",
        r.stderr
    );
    assert!(r.stderr.contains("NADIR_MAX_FILE_BYTES="), "{}", r.stderr);
    assert!(!Path::new(out).exists());
    let r = binary::nadir(&args);
    assert!(r.code == 0 || r.code == 1, "{}", r.stderr);
    let size = std::fs::metadata(out).unwrap().len();
    assert!(size > 20_000 && size <= 4 * 1024 * 1024, "{size}");
    std::fs::remove_dir_all(&dir).ok();
}

// ------------------------------------------------------------------ a run's memory ceiling

#[test]
fn a_run_past_its_memory_ceiling_stops_with_its_status() {
    let (plant, cases, scheme) = demo_all();
    let case = cases.cases.iter().find(|c| c.id == "utility-loss").unwrap();
    let full = simulate(&plant, case, 0, &scheme, &SimConfig::default());
    assert_eq!(full.stop, StopReason::EndTime);
    let tight = SimConfig {
        max_kept_values: 200,
        ..SimConfig::default()
    };
    let run = simulate(&plant, case, 0, &scheme, &tight);
    let StopReason::NumericalFault { detail, .. } = &run.stop else {
        panic!("expected a stop at the ceiling, got {:?}", run.stop);
    };
    assert!(
        detail.starts_with("the run needs more than 200 kept state values")
            && detail.contains("its memory ceiling"),
        "{detail}"
    );
}
