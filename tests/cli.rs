//! The `nadir` binary run for real, through one helper: exit codes, tables, errors with file and
//! line, schema output, every shipped example, and docs/files.md against the schema.

mod binary;

use binary::{nadir, root};
use std::path::{Path, PathBuf};

fn scratch(name: &str, text: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("cli");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

const DEMO: [&str; 5] = [
    "check",
    "examples/biorefinery/plant.yaml",
    "schemes/biorefinery.yaml",
    "--cases",
    "examples/biorefinery/cases.yaml",
];

#[test]
fn check_on_the_demo_prints_every_table() {
    let r = nadir(&DEMO);
    assert_eq!(r.code, 0, "stderr: {}", r.stderr);
    for needle in [
        "Operating points",
        "Cases",
        "Scheme",
        "full-rate",
        "utility-loss",
        "uf-6",
        "ROCOF",
        "qualified protection engineer",
    ] {
        assert!(
            r.stdout.contains(needle),
            "missing {needle:?} in\n{}",
            r.stdout
        );
    }
    // The initial ROCOF of the full-rate utility loss, −1.2678 Hz/s (tests/screening.rs), shown
    // to two decimals.
    assert!(r.stdout.contains("-1.27"));
}

#[test]
fn check_json_is_valid_and_complete() {
    let mut args = DEMO.to_vec();
    args.extend(["--format", "json"]);
    let r = nadir(&args);
    assert_eq!(r.code, 0, "stderr: {}", r.stderr);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).expect("valid JSON");
    assert_eq!(v["operating_points"].as_array().unwrap().len(), 3);
    assert!(v["cases"].as_array().unwrap().len() >= 7);
    // The demo table's stages as written in schemes/biorefinery.yaml.
    assert_eq!(v["scheme"]["stages"].as_array().unwrap().len(), 14);
}

#[test]
fn bad_plant_file_exits_2_with_file_and_line() {
    let path = scratch(
        "bad-plant.yaml",
        "plant:\n  name: x\n  nominal_hz: fifty\ngenerators: []\nloads: []\n",
    );
    let r = nadir(&["check", path.to_str().unwrap()]);
    assert_eq!(r.code, 2, "stdout: {}\nstderr: {}", r.stdout, r.stderr);
    assert!(r.stderr.starts_with("nadir: "), "{}", r.stderr);
    assert!(r.stderr.contains("bad-plant.yaml:3"), "{}", r.stderr);
}

#[test]
fn missing_file_exits_2() {
    let r = nadir(&["check", "no/such/plant.yaml"]);
    assert_eq!(r.code, 2);
    assert!(r.stderr.contains("no/such/plant.yaml"), "{}", r.stderr);
}

#[test]
fn usage_errors_exit_2() {
    assert_eq!(nadir(&["check", "--no-such-flag"]).code, 2);
    assert_eq!(nadir(&[]).code, 2);
    assert_eq!(nadir(&["no-such-verb"]).code, 2);
    let mut args = DEMO.to_vec();
    args.extend(["--format", "xml"]);
    assert_eq!(nadir(&args).code, 2);
}

#[test]
fn help_exits_0() {
    let r = nadir(&["--help"]);
    assert_eq!(r.code, 0);
    assert!(r.stdout.contains("check"));
}

#[test]
fn schema_prints_valid_json_and_writes_three_files() {
    let r = nadir(&["schema"]);
    assert_eq!(r.code, 0, "stderr: {}", r.stderr);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).expect("valid JSON");
    for name in [
        "plant.schema.json",
        "cases.schema.json",
        "scheme.schema.json",
    ] {
        assert!(v[name].is_object(), "{name} missing");
    }
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("schemas");
    let _ = std::fs::remove_dir_all(&dir);
    let r = nadir(&["schema", "--out", dir.to_str().unwrap()]);
    assert_eq!(r.code, 0, "stderr: {}", r.stderr);
    for name in [
        "plant.schema.json",
        "cases.schema.json",
        "scheme.schema.json",
    ] {
        let text = std::fs::read_to_string(dir.join(name)).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).expect("valid JSON");
        assert!(v["properties"].is_object(), "{name} has no properties");
    }
}

/// Every plant under examples/ with its cases, and every scheme under schemes/ with the plant of
/// the same name, passes `check`.
#[test]
fn every_example_and_scheme_parses_and_validates() {
    let mut checked = 0;
    for entry in std::fs::read_dir(root().join("examples")).unwrap() {
        let dir = entry.unwrap().path();
        let plant = dir.join("plant.yaml");
        if !plant.exists() {
            continue;
        }
        let name = dir.file_name().unwrap().to_str().unwrap().to_string();
        let plant = plant.to_str().unwrap().to_string();
        let mut args = vec!["check".to_string(), plant.clone()];
        let scheme = root().join("schemes").join(format!("{name}.yaml"));
        if scheme.exists() {
            args.push(scheme.to_str().unwrap().to_string());
        }
        let cases = dir.join("cases.yaml");
        if cases.exists() {
            args.push("--cases".into());
            args.push(cases.to_str().unwrap().to_string());
        }
        let refs: Vec<&str> = args.iter().map(String::as_str).collect();
        let r = nadir(&refs);
        assert_eq!(r.code, 0, "{args:?}: {}", r.stderr);
        checked += 1;
    }
    assert!(checked >= 1);
    for entry in std::fs::read_dir(root().join("schemes")).unwrap() {
        let scheme = entry.unwrap().path();
        // A scheme is named after its plant's folder, optionally with a suffix: `biorefinery-proposed`.
        let stem = scheme.file_stem().unwrap().to_str().unwrap();
        let stem = stem.split('-').next().unwrap();
        let plant = root().join("examples").join(stem).join("plant.yaml");
        assert!(
            plant.exists(),
            "scheme {stem} has no examples/{stem}/plant.yaml"
        );
    }
}

/// docs/files.md names every field the schema has (the schema comes from the raw serde types,
/// whose doc comments are the field reference).
#[test]
fn files_md_documents_every_schema_field() {
    let docs = std::fs::read_to_string(root().join("docs/files.md")).unwrap();
    let r = nadir(&["schema"]);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let mut missing = Vec::new();
    for (file, schema) in v.as_object().unwrap() {
        let mut objects = vec![schema.clone()];
        if let Some(defs) = schema["$defs"].as_object() {
            objects.extend(defs.values().cloned());
        }
        for o in objects {
            if let Some(props) = o["properties"].as_object() {
                for key in props.keys() {
                    if !docs.contains(&format!("`{key}`")) {
                        missing.push(format!("{file}: {key}"));
                    }
                }
            }
        }
    }
    assert!(missing.is_empty(), "not in docs/files.md: {missing:?}");
}

/// The tour in README.md pastes the main job's output; it must be the output of today's code.
#[test]
fn readme_shows_the_real_demo_output() {
    let readme = std::fs::read_to_string(root().join("README.md")).unwrap();
    assert!(readme.contains(
        "cargo run --release -- verify examples/biorefinery/plant.yaml schemes/biorefinery.yaml --cases examples/biorefinery/cases.yaml"
    ));
    let r = nadir(&[
        "verify",
        "examples/biorefinery/plant.yaml",
        "schemes/biorefinery.yaml",
        "--cases",
        "examples/biorefinery/cases.yaml",
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        readme.contains(r.stdout.trim_end()),
        "README.md's pasted output differs from `nadir verify` on the demo; paste it again"
    );
}

/// A file with ten mistakes (tests/bad_input/plant_ten_mistakes.yaml, checked line by line in
/// tests/bad_input.rs) shows all ten on stderr, each with its file and line, and exits 2.
#[test]
fn every_diagnostic_reaches_stderr() {
    let r = nadir(&["check", "tests/bad_input/plant_ten_mistakes.yaml"]);
    assert_eq!(r.code, 2);
    let located = r
        .stderr
        .lines()
        .filter(|l| l.starts_with("tests/bad_input/plant_ten_mistakes.yaml:"))
        .count();
    assert_eq!(located, 10, "{}", r.stderr);
}

#[test]
fn swapped_files_are_named_for_what_they_are() {
    // The cases file in the scheme's place and the scheme file after --cases.
    let r = nadir(&[
        "verify",
        "examples/biorefinery/plant.yaml",
        "examples/biorefinery/cases.yaml",
        "--cases",
        "schemes/biorefinery.yaml",
        "--no-margins",
    ]);
    assert_eq!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stderr.contains("this looks like a scheme file (top-level `name`, `measurement`, `stages`), not a cases file"),
        "{}",
        r.stderr
    );
    assert!(r.stderr.contains("the files may be in the wrong order"));
    assert_eq!(
        r.stderr.matches("this looks like").count(),
        1,
        "{}",
        r.stderr
    );
    // The plant file after --cases, the cases file first.
    let r = nadir(&[
        "replay",
        "examples/biorefinery/cases.yaml",
        "schemes/biorefinery.yaml",
        "--cases",
        "examples/biorefinery/plant.yaml",
        "--case",
        "utility-loss",
    ]);
    assert_eq!(r.code, 2);
    assert!(
        r.stderr
            .contains("examples/biorefinery/cases.yaml:4:1: this looks like a cases file (top-level `cases`), not a plant file"),
        "{}",
        r.stderr
    );
}
