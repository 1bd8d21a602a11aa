//! The bad-input corpus through the real binary: `nadir check` on every file of
//! tests/bad_input/ exits with code 2 and shows each diagnostic's file and line on stderr.
//!
//! Plant files are checked on their own; cases and scheme files against
//! tests/bad_input/base_plant.yaml (`check PLANT --cases FILE`, `check PLANT FILE`). The expected
//! places come from the library (tests/bad_input.rs checks those against hand-written values).

use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::Error;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

const VALID: [&str; 4] = [
    "base_plant.yaml",
    "cases_ok.yaml",
    "scheme_as_found.yaml",
    "scheme_ok.yaml",
];

fn dir() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/bad_input")
}

/// The diagnostics the library gives for a corpus file, read the way the binary reads it.
fn library_diagnostics(name: &str, path: &Path) -> Vec<nadir::input::Diagnostic> {
    let plant_path = dir().join("base_plant.yaml");
    let result = if name.starts_with("plant_") {
        load_plant(path).map(|_| ())
    } else {
        let plant = load_plant(&plant_path).unwrap();
        if name.starts_with("cases_") {
            load_cases(path, &plant).map(|_| ())
        } else {
            load_scheme(path, &plant).map(|_| ())
        }
    };
    match result {
        Err(Error::Input(d)) => d,
        other => panic!("{name}: expected input diagnostics, got {other:?}"),
    }
}

#[test]
fn every_bad_file_exits_2_with_file_and_line_on_stderr() {
    let base = dir().join("base_plant.yaml");
    let mut names: Vec<String> = std::fs::read_dir(dir())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".yaml") && !VALID.contains(&n.as_str()))
        .collect();
    names.sort();
    assert!(names.len() >= 40, "{}", names.len());
    for name in &names {
        let path = dir().join(name);
        let mut cmd = Command::new(env!("CARGO_BIN_EXE_nadir"));
        cmd.arg("check");
        if name.starts_with("plant_") {
            cmd.arg(&path);
        } else if name.starts_with("cases_") {
            cmd.arg(&base).arg("--cases").arg(&path);
        } else {
            cmd.arg(&base).arg(&path);
        }
        let start = Instant::now();
        let out = cmd.output().unwrap();
        // Process start included; the same one-second guard as tests/bad_input.rs, doubled.
        assert!(
            start.elapsed() < Duration::from_secs(2),
            "{name}: {:?}",
            start.elapsed()
        );
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{name}: stderr:\n{stderr}");
        assert!(out.stdout.is_empty(), "{name}: printed on stdout");
        for d in library_diagnostics(name, &path) {
            let place = match d.line {
                Some(line) => format!("{}:{line}:", d.file),
                None => format!("{}: ", d.file),
            };
            assert!(
                stderr.contains(&place) && stderr.contains(&d.message),
                "{name}: `{place}` … `{}` not on stderr:\n{stderr}",
                d.message
            );
            if let Some(help) = &d.help {
                assert!(
                    stderr.contains(help.as_str()),
                    "{name}: help missing:\n{stderr}"
                );
            }
        }
    }
}

#[test]
fn limit_raised_through_the_environment_is_obeyed_by_the_binary() {
    let cases = dir().join("cases_duration_limit.yaml");
    let base = dir().join("base_plant.yaml");
    let run = |env: Option<&str>| {
        let mut cmd = Command::new(env!("CARGO_BIN_EXE_nadir"));
        cmd.arg("check").arg(&base).arg("--cases").arg(&cases);
        cmd.env_remove("NADIR_MAX_CASE_DURATION_S");
        if let Some(v) = env {
            cmd.env("NADIR_MAX_CASE_DURATION_S", v);
        }
        cmd.output().unwrap()
    };
    let out = run(None);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("NADIR_MAX_CASE_DURATION_S=7200"));
    let out = run(Some("7200"));
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let out = run(Some("lots"));
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr)
        .contains("environment variable NADIR_MAX_CASE_DURATION_S is `lots`"));
}
