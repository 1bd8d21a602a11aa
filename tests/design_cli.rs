//! `nadir design` run as a user runs it: the written scheme reads back and verifies with exit 0,
//! an existing output file is refused (exit 2, left byte for byte) unless `--force`, bad input is
//! exit 2 with file and line, and a case no table can hold is exit 1 with its shortfall and no file.

mod binary;

use binary::{nadir, root};
use std::path::{Path, PathBuf};

fn scratch_dir() -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("design_cli");
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

const PLANT: &str = "examples/biorefinery/plant.yaml";
const CASES: &str = "examples/biorefinery/cases.yaml";

#[test]
fn the_written_scheme_verifies_and_an_existing_file_is_kept() {
    let out = scratch_dir().join("proposed.yaml");
    let _ = std::fs::remove_file(&out);
    let o = out.to_str().unwrap();
    let first = nadir(&["design", PLANT, "--cases", CASES, "-o", o]);
    assert_eq!(first.code, 0, "{}{}", first.stdout, first.stderr);
    for words in [
        "Wrote",
        "Proposed table",
        "bound MW",
        "Plain baseline",
        "All 12 case",
    ] {
        assert!(
            first.stdout.contains(words),
            "missing {words:?}:\n{}",
            first.stdout
        );
    }
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("qualified protection engineer"), "{text}");
    let verified = nadir(&["verify", PLANT, o, "--cases", CASES, "--no-margins"]);
    assert_eq!(verified.code, 0, "{}", verified.stdout);
    let audited = nadir(&["audit", PLANT, o]);
    assert_eq!(audited.code, 0, "{}", audited.stdout);

    // A second run must not replace the file without --force.
    std::fs::write(&out, "keep me\n").unwrap();
    let again = nadir(&["design", PLANT, "--cases", CASES, "-o", o]);
    assert_eq!(again.code, 2);
    assert!(again.stderr.contains("--force"), "{}", again.stderr);
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "keep me\n");
    let forced = nadir(&["design", PLANT, "--cases", CASES, "-o", o, "--force"]);
    assert_eq!(forced.code, 0);
    assert_eq!(
        std::fs::read_to_string(&out).unwrap(),
        text,
        "same inputs, same file"
    );
}

#[test]
fn bad_input_is_exit_2_with_file_and_line() {
    let dir = scratch_dir();
    let plant = dir.join("bad-plant.yaml");
    let good = std::fs::read_to_string(root().join(PLANT)).unwrap();
    std::fs::write(&plant, good.replace("highest: 49.0", "highest: 47.0")).unwrap();
    let out = dir.join("never.yaml");
    let r = nadir(&[
        "design",
        plant.to_str().unwrap(),
        "--cases",
        CASES,
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 2, "{}{}", r.stdout, r.stderr);
    assert!(
        r.stderr.contains("bad-plant.yaml:") && r.stderr.contains("design.pickup_hz"),
        "{}",
        r.stderr
    );
    assert!(!out.exists());
}

#[test]
fn a_case_no_table_can_hold_is_exit_1_and_writes_nothing() {
    let dir = scratch_dir();
    // The demo islanded at full rate losing both steam sets as well: 1.8 MW of engine is left
    // for 6.0 MW of never-shed load, so no amount of shedding holds it.
    let cases = dir.join("hopeless.yaml");
    std::fs::write(
        &cases,
        "cases:\n  - id: utility-and-steam-sets\n    only_at: [full-rate]\n    events:\n      - { at_s: 0.0, open: utility }\n      - { at_s: 0.0, trip: stg-1 }\n      - { at_s: 0.0, trip: stg-2 }\n",
    )
    .unwrap();
    let out = dir.join("none.yaml");
    let _ = std::fs::remove_file(&out);
    let r = nadir(&[
        "design",
        PLANT,
        "--cases",
        cases.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 1, "{}{}", r.stdout, r.stderr);
    assert!(
        r.stdout
            .contains("case utility-and-steam-sets at full-rate"),
        "{}",
        r.stdout
    );
    assert!(r.stdout.contains("Nothing was written"), "{}", r.stdout);
    assert!(
        r.stdout.contains("no amount of load shedding holds it")
            || r.stdout.contains("falls short by"),
        "{}",
        r.stdout
    );
    assert!(!out.exists());
}

/// `--from` tells the truth: an existing table that holds is kept, under its own name, and the
/// output says how it compares with a fresh design; `--name` renames the table.
#[test]
fn from_an_existing_table_prints_what_a_fresh_design_would_save() {
    let out = scratch_dir().join("mill-kept.yaml");
    let o = out.to_str().unwrap();
    let plant = "tests/design_plants/sugar-mill.yaml";
    let cases = "tests/design_plants/sugar-mill-cases.yaml";
    let hand = "tests/design_plants/sugar-mill-hand.yaml";
    let r = nadir(&[
        "design", plant, "--cases", cases, "-o", o, "--force", "--from", hand,
    ]);
    assert_eq!(r.code, 0, "{}{}", r.stdout, r.stderr);
    // With the default margins (1.2×, 10 %) a fresh design sheds exactly what the hand table
    // sheds: the output says so, and does not send the user to a fresh design that saves nothing
    // (it says by how much a fresh design is cheaper, and how to get it, when one is).
    for words in [
        "The existing table still holds every case; it is kept unchanged.",
        "Keeping the existing settings costs the same as a fresh design",
    ] {
        assert!(r.stdout.contains(words), "missing {words:?}:\n{}", r.stdout);
    }
    assert!(
        !r.stdout.contains("Run `nadir design` without --from"),
        "{}",
        r.stdout
    );
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(
        text.contains("name: Cane Ridge hand table (fictional)"),
        "{text}"
    );

    let renamed = nadir(&[
        "design",
        plant,
        "--cases",
        cases,
        "-o",
        o,
        "--force",
        "--from",
        hand,
        "--name",
        "mill table rev B",
    ]);
    assert_eq!(renamed.code, 0, "{}", renamed.stdout);
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.contains("name: mill table rev B"), "{text}");
}
