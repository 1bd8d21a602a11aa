//! The audit's rank-order rule per event and per island, never-shed loads and loads in several
//! stages in as-found tables, notes that are not violations, and the report agreeing with
//! `nadir audit` finding for finding. Behaviour tests on the fictional plant in tests/audit/ and
//! on the demo; the rule itself is stated in docs/files.md ("How the audit judges rank order").

mod binary;

use binary::{nadir, Run};
use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::sim::{simulate, SimConfig};
use nadir::verify::audit::{audit_cases, AuditRules};
use std::path::{Path, PathBuf};

const PLANT: &str = "tests/audit/plant.yaml";
const CASES: &str = "tests/audit/cases.yaml";
const DEMO_PLANT: &str = "examples/biorefinery/plant.yaml";
const DEMO_CASES: &str = "examples/biorefinery/cases.yaml";
const DEMO_SCHEME: &str = "schemes/biorefinery.yaml";

fn scheme(name: &str) -> String {
    format!("tests/audit/{name}.yaml")
}

fn audit(plant: &str, scheme: &str, cases: Option<&str>) -> Run {
    let mut args = vec!["audit", plant, scheme];
    if let Some(c) = cases {
        args.extend(["--cases", c]);
    }
    nadir(&args)
}

fn scratch(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("audit")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

#[test]
fn stages_armed_by_breakers_that_no_case_opens_together_are_not_compared() {
    // armed-tie acts before armed-grid (0.05 s against 0.1 s) and opens e-pumps (rank 4) while
    // armed-grid holds w-lights (rank 1): an audit that put every armed stage in one sequence
    // called that a rank-order violation, though the two breakers never open in one event.
    for cases in [Some(CASES), None] {
        let r = audit(PLANT, &scheme("two-breakers"), cases);
        assert_eq!(r.code, 0, "{}{}", r.stdout, r.stderr);
        assert!(r.stdout.contains("No violation."), "{}", r.stdout);
        assert!(!r.stdout.contains("[rank-order]"), "{}", r.stdout);
    }
}

#[test]
fn a_utility_armed_stage_opening_rank_2_while_a_tie_armed_stage_holds_rank_1_is_a_violation() {
    let r = audit(PLANT, &scheme("tie-holds-rank-1"), Some(CASES));
    assert_eq!(r.code, 1, "{}{}", r.stdout, r.stderr);
    assert!(
        r.stdout.contains(
            "[rank-order] stage armed-grid opens e-hvac (rank 2) while lower-ranked w-lights \
(rank 1) of the same island is still connected (case grid-loss, grid opens at 0.00 s, at full)"
        ),
        "{}",
        r.stdout
    );
    assert!(r.stdout.contains("2 violation(s):"), "{}", r.stdout);
    // Without the cases, the grid breaker is taken as opening alone: the same finding.
    let alone = audit(PLANT, &scheme("tie-holds-rank-1"), None);
    assert_eq!(alone.code, 1);
    assert!(alone
        .stdout
        .contains("of the same island is still connected (grid opens alone, at full)"));
}

#[test]
fn a_stage_whose_loads_are_all_switched_off_at_a_point_is_a_note_and_the_audit_passes() {
    let r = audit(PLANT, &scheme("lights-stage"), Some(CASES));
    assert_eq!(r.code, 0, "{}", r.stdout);
    assert!(r.stdout.contains("No violation."), "{}", r.stdout);
    assert!(
        r.stdout.contains(
            "1 note(s), not violations:\n  [empty-at-point] stage uf-0 opens nothing at night: \
all its loads are switched off there\n"
        ),
        "{}",
        r.stdout
    );
}

#[test]
fn a_never_shed_load_in_the_scheme_reads_verifies_and_reports_and_the_audit_names_it() {
    let s = scheme("never-shed");
    let a = audit(PLANT, &s, Some(CASES));
    assert_eq!(a.code, 1, "{}{}", a.stdout, a.stderr);
    assert!(a.stdout.contains(
        "1 violation(s):\n  [never-shed] w-core is marked never_shed but stage uf-2 sheds it\n"
    ));
    let v = nadir(&["verify", PLANT, &s, "--cases", CASES, "--no-margins"]);
    assert_ne!(v.code, 2, "verify must run: {}", v.stderr);
    assert!(
        v.stdout.contains("Verification of as found"),
        "{}",
        v.stdout
    );
    let c = nadir(&["check", PLANT, &s]);
    assert_eq!(c.code, 0, "{}", c.stderr);
    let dir = scratch("never-shed");
    let out = dir.join("r.html");
    let rep = nadir(&[
        "report",
        PLANT,
        &s,
        "--cases",
        CASES,
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(rep.code, 1, "{}", rep.stderr);
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(html.contains("w-core is marked never_shed but stage uf-2 sheds it"));
}

#[test]
fn a_load_in_two_stages_is_shed_once_and_counted_once() {
    let plant = load_plant(Path::new(PLANT)).unwrap();
    let cases = load_cases(Path::new(CASES), &plant).unwrap();
    let backup = load_scheme(Path::new(&scheme("backup")), &plant).unwrap();
    // w-lights and e-hvac (0.5 MW each) are in armed-grid and in uf-1; on losing the grid at
    // "full" both stages operate: 0.5 + 0.5 by the armed stage, then only w-fans and e-pumps
    // (1.0 MW each) by uf-1. 3.0 MW in all, not the 4.0 MW the two stage lists add up to.
    let run = simulate(&plant, &cases.cases[0], 0, &backup, &SimConfig::default());
    assert!((run.shed_mw - 3.0).abs() < 1e-9, "shed {}", run.shed_mw);
    let r = nadir(&[
        "replay",
        PLANT,
        &scheme("backup"),
        "--cases",
        CASES,
        "--case",
        "grid-loss",
        "--at",
        "full",
    ]);
    assert!(
        r.stdout
            .contains("stage armed-grid opens w-lights, e-hvac (1.00 MW)"),
        "{}",
        r.stdout
    );
    assert!(
        r.stdout
            .contains("stage uf-1 opens w-fans, e-pumps (2.00 MW)"),
        "{}",
        r.stdout
    );
    assert!(
        r.stdout.contains("shed by stages   3.00 MW"),
        "{}",
        r.stdout
    );
    // verify's shed MW is the run's.
    let v = nadir(&[
        "verify",
        PLANT,
        &scheme("backup"),
        "--cases",
        CASES,
        "--no-margins",
        "--format",
        "json",
    ]);
    let json: serde_json::Value = serde_json::from_str(&v.stdout).expect(&v.stdout);
    let rows = json["runs"].as_array().expect("runs");
    let row = rows
        .iter()
        .find(|r| r["case"] == "grid-loss" && r["operating_point"] == "full")
        .expect("grid-loss at full");
    assert!(
        (row["shed_mw"].as_f64().unwrap() - 3.0).abs() < 1e-9,
        "{row}"
    );
    // Screening and the audit count each load once in the cumulative MW: 6.0 MW of sheddable
    // load at "full", though the stages list 7.0 MW.
    let figures = nadir::screening::screen_scheme(&plant, &backup);
    assert_eq!(figures.stages.last().unwrap().cumulative_mw, vec![6.0, 5.0]);
    let a = audit_cases(
        &plant,
        &backup,
        Some(&cases),
        &AuditRules::for_plant(&plant),
    );
    assert_eq!(a.order[1].mw, vec![3.0, 2.0], "uf-1 lists 3.0 MW at full");
    assert_eq!(a.order[1].cumulative_mw, vec![3.0, 2.0]);
    assert_eq!(a.order.last().unwrap().cumulative_mw, vec![6.0, 5.0]);
    assert!(a.violations.is_empty(), "{:?}", a.violations);
}

/// The findings `nadir audit --cases` prints, and the report's count and text for the same inputs.
fn audit_and_report_agree(plant: &str, scheme: &str, cases: &str, name: &str) -> usize {
    let a = audit(plant, scheme, Some(cases));
    assert_ne!(a.code, 2, "{}", a.stderr);
    let findings: Vec<&str> = a
        .stdout
        .lines()
        .filter(|l| l.starts_with("  ["))
        .map(str::trim)
        .collect();
    // The violations are the findings listed under "N violation(s):", before the notes.
    let mut listing = false;
    let mut violations = 0;
    for line in a.stdout.lines() {
        if line.ends_with(" violation(s):") {
            listing = true;
        } else if line.ends_with("not violations:") {
            listing = false;
        } else if listing && line.starts_with("  [") {
            violations += 1;
        }
    }
    let dir = scratch(name);
    let out = dir.join("r.html");
    let r = nadir(&[
        "report",
        plant,
        scheme,
        "--cases",
        cases,
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_ne!(r.code, 2, "{}", r.stderr);
    assert!(
        r.stdout
            .contains(&format!("; {violations} audit violation(s))")),
        "audit found {violations}: {}\n{}",
        a.stdout,
        r.stdout
    );
    let html = std::fs::read_to_string(&out).unwrap();
    for f in &findings {
        let (rule, message) = f[1..].split_once("] ").unwrap();
        assert!(html.contains(&format!(">{rule}<")) || html.contains(&format!("[{rule}]")));
        assert!(html.contains(message), "the report lacks: {message}");
    }
    assert_eq!(a.code == 0, violations == 0);
    violations
}

#[test]
fn the_report_and_the_audit_agree_on_a_plant_with_violations() {
    let n = audit_and_report_agree(PLANT, &scheme("tie-holds-rank-1"), CASES, "violations");
    assert_eq!(n, 2);
}

#[test]
fn the_demo_audits_clean_and_its_report_verdict_matches_verify_and_audit() {
    assert_eq!(
        audit_and_report_agree(DEMO_PLANT, DEMO_SCHEME, DEMO_CASES, "demo"),
        0
    );
    let alone = audit(DEMO_PLANT, DEMO_SCHEME, None);
    assert_eq!(alone.code, 0, "{}", alone.stdout);
    let v = nadir(&["verify", DEMO_PLANT, DEMO_SCHEME, "--cases", DEMO_CASES]);
    assert_eq!(v.code, 0, "{}", v.stdout);
    let dir = scratch("demo-verdict");
    let out = dir.join("r.html");
    let r = nadir(&[
        "report",
        DEMO_PLANT,
        DEMO_SCHEME,
        "--cases",
        DEMO_CASES,
        "-o",
        out.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 0, "{}", r.stdout);
    assert!(
        r.stdout.contains("pass, 0 fail; 0 audit violation(s))"),
        "{}",
        r.stdout
    );
}

#[test]
fn a_frequency_stage_opening_loads_in_another_island_is_noted_and_passes() {
    // uf-1 measures at west (its first load) and also lists two east loads: once the tie opens
    // with the plant islanded they are opened on west's frequency. A note, not a violation.
    let r = audit(
        PLANT,
        &scheme("backup"),
        Some("tests/audit/cases-islanded.yaml"),
    );
    assert_eq!(r.code, 0, "{}", r.stdout);
    assert!(
        r.stdout.contains(
            "[measured-elsewhere] stage uf-1 measures at west; once its loads are in different \
islands (case tie-open-islanded, tie-we opens at 0.00 s, at full) it also opens e-hvac (rank 2), \
e-pumps (rank 4) on west's frequency, and the rank rule does not count them there"
        ),
        "{}",
        r.stdout
    );
}

#[test]
fn a_df_dt_supervised_stage_that_a_slow_fall_skips_is_noted_and_passes() {
    // On losing the grid, uf-fast (df/dt ≥ 1 Hz/s) would open w-fans (rank 3) and e-pumps
    // (rank 4) before uf-1 opens ranks 5–6; on a slower fall it does not operate. The rank rule
    // takes it to operate at its pickup; the note says what a slow fall does.
    let r = audit(PLANT, &scheme("supervised"), Some(CASES));
    assert_eq!(r.code, 0, "{}", r.stdout);
    assert!(
        r.stdout.contains(
            "[df/dt-supervised] stage uf-1 opens w-mill (rank 5), e-press (rank 6) while \
lower-ranked w-fans (rank 3) of the same island is still connected when the df/dt-supervised \
stage before it does not operate (a fall slower than its df/dt setting) (case grid-loss, grid \
opens at 0.00 s, at full, night)"
        ),
        "{}",
        r.stdout
    );
}

/// A long-delay stage overtaken by a faster lower stage. A definite-time under-frequency element
/// trips when frequency stays below its pickup for its whole delay and resets when frequency
/// returns above it (IEEE Std C37.117-2007, guide for abnormal-frequency load shedding, the
/// definite-time element; from memory), so on a fall fast enough the 0.2 s stage at 49.0 Hz times
/// out before the 5 s stage at 49.4 Hz. The simulator shows it on the test plant: uf-1 opens
/// ranks 3–4, frequency recovers above 49.4 Hz and uf-long resets, leaving ranks 1–2 connected,
/// with every criterion held, so verify passes. The audit, which walked the stages by pickup
/// only, passed it too; it must flag it, naming both stages and the loads.
#[test]
fn a_long_delay_stage_overtaken_by_a_faster_lower_stage_breaks_rank_order() {
    let replay = nadir(&[
        "replay",
        PLANT,
        &scheme("long-delay-overtaken"),
        "--cases",
        CASES,
        "--case",
        "grid-loss",
        "--at",
        "full",
    ]);
    assert_eq!(replay.code, 0, "{}{}", replay.stdout, replay.stderr);
    for line in [
        "stage uf-1 opens w-fans, e-pumps (2.00 MW)",
        "stage uf-long resets",
        "Result: every criterion holds.",
    ] {
        assert!(replay.stdout.contains(line), "{line}: {}", replay.stdout);
    }
    assert!(!replay.stdout.contains("stage uf-long opens"));

    for cases in [Some(CASES), None] {
        let r = audit(PLANT, &scheme("long-delay-overtaken"), cases);
        assert_eq!(r.code, 1, "{}{}", r.stdout, r.stderr);
        assert!(
            r.stdout.contains(
                "[rank-order] stage uf-1 opens w-fans (rank 3), e-pumps (rank 4) while lower-ranked \
w-lights (rank 1), e-hvac (rank 2) of the same island are still connected on a fall fast enough \
for it to act before the slower uf-long (49.40 Hz, delay 5.00 s, breaker 0.08 s), uf-1 having \
0.20 s and 0.08 s; list them in uf-1 too, or make the slower stage's delay and breaker time no \
longer than uf-1's"
            ),
            "{}",
            r.stdout
        );
        // uf-1's delay is no longer than uf-2's, so uf-1 always opens first; uf-long may not.
        assert!(
            r.stdout
                .contains("[rank-order] stage uf-2 opens w-mill (rank 5), e-press (rank 6)"),
            "{}",
            r.stdout
        );
        assert!(r.stdout.contains("2 violation(s):"), "{}", r.stdout);
    }
    let with_cases = audit(PLANT, &scheme("long-delay-overtaken"), Some(CASES));
    assert!(with_cases
        .stdout
        .contains("(case grid-loss, grid opens at 0.00 s, at full)"));

    // The fix design applies: the faster stage lists the long-delay stage's loads as well.
    for cases in [Some(CASES), None] {
        let r = audit(PLANT, &scheme("long-delay-listed"), cases);
        assert_eq!(r.code, 0, "{}{}", r.stdout, r.stderr);
        assert!(r.stdout.contains("No violation."), "{}", r.stdout);
    }
}
