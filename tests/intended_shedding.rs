//! Cases whose shedding is intended (`shedding: intended`): the field parses and a wrong value is
//! refused with file:line, field and the allowed values; design counts none of such a case's shed
//! as cost and reports it apart; verify's table, JSON and legend mark the case. Behaviour tests.

mod common;

use common::{case, gen, load, plant};
use nadir::design;
use nadir::model::{Action, BreakerRef, CaseSet, PrimeMover, Start};
use std::path::{Path, PathBuf};
use std::process::Command;

const PLANT: &str = "examples/biorefinery/plant.yaml";
const SCHEME: &str = "schemes/biorefinery.yaml";
const CASES: &str = "examples/biorefinery/cases.yaml";

fn nadir(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A cases file in a fresh directory of its own.
fn cases_file(name: &str, text: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("nadir-intended-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join("cases.yaml");
    std::fs::write(&path, text).unwrap();
    path
}

#[test]
fn the_field_parses_and_defaults_to_unwanted() {
    let plant = nadir::input::load_plant(Path::new(PLANT)).unwrap();
    let cases = nadir::input::load_cases(Path::new(CASES), &plant).unwrap();
    let intended: Vec<&str> = cases
        .cases
        .iter()
        .filter(|c| c.shedding_intended)
        .map(|c| c.id.as_str())
        .collect();
    assert_eq!(intended, ["grid-underfrequency"]);
    let text = "cases:\n  - id: trip\n    shedding: unwanted\n    events:\n      - { at_s: 0.0, open: utility }\n  - id: plain\n    events:\n      - { at_s: 0.0, open: utility }\n";
    let path = cases_file("parse", text);
    let cases = nadir::input::load_cases(&path, &plant).unwrap();
    assert!(cases.cases.iter().all(|c| !c.shedding_intended));
    assert_eq!(cases.cases[1].cost_weight(), 1.0);
}

#[test]
fn a_wrong_value_names_file_line_field_and_the_allowed_values() {
    let text = "cases:\n  - id: grid\n    shedding: wanted\n    events:\n      - { at_s: 0.0, open: utility }\n";
    let path = cases_file("bad", text);
    let (code, _, err) = nadir(&["verify", "--cases", path.to_str().unwrap(), PLANT, SCHEME]);
    assert_eq!(code, 2, "{err}");
    let at = format!("{}:3:", path.display());
    assert!(err.contains(&at), "{err}");
    assert!(err.contains("cases[0].shedding"), "{err}");
    assert!(err.contains("`unwanted` or `intended`"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
}

/// One loss of import on a one-bus plant with eight small sheddable loads: marked intended, its
/// shed costs nothing (the objective is 0 while the table still sheds), marked unwanted it is
/// the whole objective; the row carries the mark either way.
#[test]
fn design_counts_no_shed_of_an_intended_case() {
    let mut loads: Vec<_> = (1..=8)
        .map(|k| {
            let mut l = load(&format!("s{k}"), 0.5, 0.0);
            l.rank = k;
            l
        })
        .collect();
    let mut process = load("process", 7.0, 0.0);
    process.never_shed = true;
    process.rank = 9;
    loads.push(process);
    let steam = PrimeMover::Steam {
        governor_s: 0.2,
        turbine_s: 0.3,
    };
    let p = plant(50.0, vec![gen("g", 12.0, 6.0, 6.0, 4.0, steam)], loads, 5.0);
    let mut c = case(
        Start::Connected,
        30.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    c.id = "loss-of-import".into();
    let quiet = |_: &str| {};
    let run = |intended: bool| {
        let mut c = c.clone();
        c.shedding_intended = intended;
        let cases = CaseSet { cases: vec![c] };
        design::design(&p, &cases, None, &quiet).unwrap()
    };
    let unwanted = run(false);
    let intended = run(true);
    assert!(unwanted.rows[0].shed_mw > 0.0, "{:?}", unwanted.rows);
    assert!(unwanted.objective > 0.0);
    assert!(!unwanted.rows[0].intended);
    assert!(intended.rows[0].shed_mw > 0.0, "{:?}", intended.rows);
    assert_eq!(intended.objective, 0.0);
    assert!(intended.rows[0].intended);
    assert!(intended.rows[0].why.contains("shedding intended"));
}

#[test]
fn verify_marks_the_intended_case_in_table_legend_and_json() {
    let (code, out, err) = nadir(&["verify", "--cases", CASES, PLANT, SCHEME]);
    assert!(code == 0 || code == 1, "{err}");
    assert!(out.contains("grid-underfrequency *"), "{out}");
    assert!(
        out.contains("* shedding is the intended response of this case"),
        "{out}"
    );
    assert!(!out.contains("utility-loss-then-engine-trip *"), "{out}");
    let (_, json, _) = nadir(&[
        "verify", "--cases", CASES, PLANT, SCHEME, "--format", "json",
    ]);
    let doc: serde_json::Value = serde_json::from_str(&json).unwrap();
    for run in doc["runs"].as_array().unwrap() {
        let marked = run.get("shedding_intended") == Some(&serde_json::Value::Bool(true));
        assert_eq!(marked, run["case"] == "grid-underfrequency", "{run}");
    }
}
