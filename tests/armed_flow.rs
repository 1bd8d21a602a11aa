//! Breaker-armed stages sized from the pre-event flow (issue 15, item 2) and setting groups by
//! operating point (item 3): what the simulator opens, what the audit and the setting sheet say,
//! and the messages for bad input. The plant is a small FICTIONAL one written here (invented
//! values, no real site).

use nadir::input::{parse_cases, parse_plant, parse_scheme};
use nadir::model::{CaseSet, Plant, Scheme};
use nadir::report::sheet;
use nadir::sim::{simulate, EventKind, Run, SimConfig};
use nadir::verify::audit::{audit_cases, AuditRules};

/// One bus with the utility, a steam turbine and five loads (ranks 1–4 sheddable, 16 MW in all).
/// At `importing` the turbine makes 10 MW and the plant imports 6 MW; at `exporting` it makes
/// 18 MW and the plant exports 2 MW; at `light` the 4 MW load is off and the plant imports 2 MW.
const PLANT: &str = r#"
plant: { name: Flow test plant (fictional), nominal_hz: 50 }
sections: [bus]
utility: { breaker: grid, section: bus, import_mw: balance }
generators:
  - id: tg
    section: bus
    rating_mva: 25
    inertia_s: 5.0
    output_mw: 10
    min_mw: 2
    max_mw: 20
    governor: { model: steam, droop_pct: 5 }
loads:
  - { id: l1, section: bus, p_mw: 1.0, rank: 1, freq_exp: 0 }
  - { id: l2, section: bus, p_mw: 2.0, rank: 2, freq_exp: 0 }
  - { id: l3, section: bus, p_mw: 3.0, rank: 3, freq_exp: 0 }
  - { id: l4, section: bus, p_mw: 4.0, rank: 4, freq_exp: 0 }
  - { id: core, section: bus, p_mw: 6.0, rank: 9, never_shed: true, freq_exp: 0 }
operating_points:
  - id: importing
  - id: exporting
    dispatch: { tg: 18 }
  - id: light
    loads_off: [l4]
"#;

const CASES: &str = r#"
cases:
  - id: islanding
    duration_s: 26
    events: [ { at_s: 1.0, open: grid } ]
"#;

fn plant() -> Plant {
    parse_plant(PLANT, "plant.yaml").expect("plant")
}

fn cases(plant: &Plant) -> CaseSet {
    parse_cases(CASES, "cases.yaml", plant).expect("cases")
}

fn scheme(plant: &Plant, text: &str) -> Scheme {
    parse_scheme(text, "scheme.yaml", plant).expect("scheme")
}

fn run_at(plant: &Plant, cases: &CaseSet, scheme: &Scheme, point: &str) -> Run {
    let op = plant.operating_point_index(point).expect("point");
    simulate(plant, &cases.cases[0], op, scheme, &SimConfig::default())
}

/// The loads the stages opened in a run, in order, and when.
fn opened(run: &Run) -> Vec<(f64, Vec<String>)> {
    run.events
        .iter()
        .filter_map(|e| match &e.what {
            EventKind::LoadsOpened { loads, .. } => Some((e.at_s, loads.clone())),
            _ => None,
        })
        .collect()
}

const SIZED: &str = r#"
stages:
  - { id: armed, armed_by: grid, delay_s: 0.05, breaker_s: 0.05, sizing: flow, allowance_mw: ALLOW,
      sheds: [l4, l3, l2, l1] }
"#;

fn sized(allowance: &str) -> String {
    SIZED.replace("ALLOW", allowance)
}

#[test]
fn an_import_sized_stage_opens_the_rank_order_run_that_covers_the_import() {
    // Import 6 MW at `importing` (16 MW of load less 10 MW generated). Rank order l1, l2, l3, l4
    // (1, 2, 3, 4 MW; the stage lists them backwards, and rank decides): with no allowance the
    // fewest that cover 6 MW are l1+l2+l3 = 6 MW; with 1.5 MW allowance 4.5 MW is needed, also
    // l1+l2+l3 (l1+l2 = 3 MW falls short); with 3 MW allowance l1+l2 = 3 MW covers it.
    let p = plant();
    let c = cases(&p);
    for (allow, expect) in [
        ("0", vec!["l1", "l2", "l3"]),
        ("1.5", vec!["l1", "l2", "l3"]),
        ("3", vec!["l1", "l2"]),
        ("5.5", vec!["l1"]),
    ] {
        let s = scheme(&p, &sized(allow));
        let run = run_at(&p, &c, &s, "importing");
        let got = opened(&run);
        assert_eq!(got.len(), 1, "allowance {allow}: {got:?}");
        assert_eq!(got[0].1, expect, "allowance {allow}");
        // Opened at the breaker opening + delay + breaker time (1.0 + 0.05 + 0.05 s).
        assert!((got[0].0 - 1.1).abs() < 1e-9, "{}", got[0].0);
        let sized_event = run
            .events
            .iter()
            .find_map(|e| match &e.what {
                EventKind::StageSized { flow_mw, .. } => Some(*flow_mw),
                _ => None,
            })
            .expect("sized event");
        // The pre-event import: frequency-independent loads at nominal, turbine at its dispatch.
        assert!((sized_event - 6.0).abs() < 1e-6, "{sized_event}");
    }
}

#[test]
fn an_allowance_at_or_above_the_import_opens_nothing() {
    let p = plant();
    let c = cases(&p);
    for allow in ["6", "40"] {
        let s = scheme(&p, &sized(allow));
        let run = run_at(&p, &c, &s, "importing");
        // Nothing to cover: no trip command at all.
        assert!(opened(&run).is_empty(), "{:?}", opened(&run));
        assert!(!run
            .events
            .iter()
            .any(|e| matches!(e.what, EventKind::StageTripCommand { .. })));
        assert_eq!(run.shed_mw, 0.0);
    }
}

#[test]
fn an_import_sized_stage_sheds_nothing_when_the_plant_exports() {
    // At `exporting` the turbine makes 18 MW for 16 MW of load: the plant exports 2 MW, so
    // islanding is a surplus. A fixed armed stage would shed into over-frequency; the sized one
    // opens nothing (the issue's bug).
    let p = plant();
    let c = cases(&p);
    let s = scheme(&p, &sized("0"));
    let run = run_at(&p, &c, &s, "exporting");
    assert_eq!(run.shed_mw, 0.0);
    let flow = run
        .events
        .iter()
        .find_map(|e| match &e.what {
            EventKind::StageSized { flow_mw, loads, .. } => Some((*flow_mw, loads.clone())),
            _ => None,
        })
        .expect("sized event");
    assert!((flow.0 + 2.0).abs() < 1e-6, "exported 2 MW: {}", flow.0);
    assert!(flow.1.is_empty());
    assert!(opened(&run).is_empty(), "no trip: {:?}", opened(&run));
    // The same table with every load fixed sheds 10 MW into a surplus.
    let fixed = scheme(
        &p,
        "stages:\n  - { id: armed, armed_by: grid, delay_s: 0.05, sheds: [l4, l3, l2, l1] }\n",
    );
    let run = run_at(&p, &c, &fixed, "exporting");
    assert!((run.shed_mw - 10.0).abs() < 1e-9);
}

#[test]
fn switched_off_loads_are_passed_over() {
    // At `light` l4 is off: import 12 − 10 = 2 MW, covered by l1 + l2 (3 MW); l1 alone falls short.
    let p = plant();
    let c = cases(&p);
    let s = scheme(&p, &sized("0"));
    let got = opened(&run_at(&p, &c, &s, "light"));
    assert_eq!(got[0].1, vec!["l1", "l2"]);
}

#[test]
fn a_percentage_of_spinning_reserve_is_the_allowance() {
    // Spinning reserve at `importing`: 20 − 10 = 10 MW; 30 % of it is 3 MW, so 3 MW is needed:
    // l1 + l2.
    let p = plant();
    let c = cases(&p);
    let text = SIZED.replace("allowance_mw: ALLOW", "allowance_reserve_pct: 30");
    let s = scheme(&p, &text);
    let got = opened(&run_at(&p, &c, &s, "importing"));
    assert_eq!(got[0].1, vec!["l1", "l2"]);
}

#[test]
fn the_audit_judges_what_a_sized_stage_opens_and_says_so() {
    // With 3 MW allowance the stage opens l1 + l2 at `importing` (6 MW import), nothing at
    // `exporting` or at `light` (2 MW import). Frequency stages in rank order behind it keep the
    // rank rule at every point.
    let p = plant();
    let c = cases(&p);
    let backup = "  - { id: uf-1, pickup_hz: 49.0, delay_s: 0.2, sheds: [l1, l2] }\n  - { id: uf-2, pickup_hz: 48.8, delay_s: 0.2, sheds: [l3, l4] }\n";
    let s = scheme(&p, &(sized("3") + backup));
    let a = audit_cases(&p, &s, Some(&c), &AuditRules::for_plant(&p));
    assert!(a.violations.is_empty(), "{:?}", a.violations);
    let note = a
        .notes
        .iter()
        .find(|n| n.rule == "flow-sized")
        .expect("flow-sized note");
    for part in [
        "stage armed is sized from the flow through grid just before it opens: ",
        "at importing: 6.00 MW flowed in, less 3.00 MW allowance; opens l1, l2 (3.00 MW)",
        "at exporting: no flow in (it went the other way), less 3.00 MW allowance; opens nothing",
        "at light: 2.00 MW flowed in, less 3.00 MW allowance; opens nothing",
    ] {
        assert!(note.message.contains(part), "{part}\n{}", note.message);
    }
    // A sized stage that skips the rank-1 load breaks rank order whenever it opens anything: at
    // `importing` (l2 + l3 = 5 MW for the 6 − 1 = 5 MW needed), not at `exporting`.
    let skips = SIZED
        .replace("ALLOW", "1")
        .replace("sheds: [l4, l3, l2, l1]", "sheds: [l2, l3, l4]");
    let s = scheme(&p, &(skips + backup));
    let a = audit_cases(&p, &s, Some(&c), &AuditRules::for_plant(&p));
    let msgs: Vec<&str> = a.violations.iter().map(|v| v.message.as_str()).collect();
    assert_eq!(
        msgs,
        vec!["stage armed opens l2 (rank 2), l3 (rank 3) while lower-ranked l1 (rank 1) of the same island is still connected (case islanding, grid opens at 1.00 s, at importing, light)"]
    );
}

#[test]
fn the_sheet_shows_the_allowance_and_the_loads_in_the_order_taken() {
    let p = plant();
    let s = scheme(&p, &sized("1.5"));
    let sh = sheet::sheet(&p, &s);
    let header = sheet::header(&sh);
    assert_eq!(header[4], "allowance");
    let cells = sheet::cells(&sh, &sh.rows[0]);
    assert_eq!(cells[4], "1.5 MW");
    assert_eq!(cells[9], "l1; l2; l3; l4");
    assert!(cells[13].contains("the fewest loads whose MW covers the import through grid"));
}

// ---------------------------------------------------------------- setting groups

/// Two operating points, a frequency stage whose pickup differs by group, one stage out of
/// service in one group. The utility's frequency falls at 1 Hz/s from t = 0 (a grid-wide event),
/// so the plant, joined to the utility, follows it and the trip time is closed-form.
const GROUPS: &str = r#"
measurement: { frequency_lag_s: 0 }
setting_groups:
  - { id: export-mode, operating_points: [exporting] }
stages:
  - { id: uf-1, pickup_hz: 49.0, delay_s: 0.1, breaker_s: 0.05, sheds: [l1],
      groups: [ { group: export-mode, pickup_hz: 49.5, delay_s: 0.2 } ] }
  - { id: uf-2, pickup_hz: 48.5, delay_s: 0.1, breaker_s: 0.05, sheds: [l2],
      groups: [ { group: export-mode, in_service: false } ] }
"#;

const RAMP: &str = r#"
cases:
  - id: grid-fall
    duration_s: 26
    events: []
    utility_hz: [ { at_s: 0, hz: 50 }, { at_s: 3, hz: 47 } ]
"#;

#[test]
fn a_run_at_a_point_uses_the_pickup_of_the_group_in_force_there() {
    // f(t) = 50 − t Hz (the utility ramp, which the connected plant follows; measurement lag 0).
    // A stage picking up at p Hz picks up at t = 50 − p, trips after its delay and its loads open
    // a breaker time later (definite-time logic, docs/files.md `stages`):
    //   importing (own settings): uf-1 at 1.0 + 0.1 + 0.05 = 1.15 s; uf-2 at 1.5 + 0.15 = 1.65 s;
    //   exporting (export-mode): uf-1 at 0.5 + 0.2 + 0.05 = 0.75 s; uf-2 out of service.
    let p = plant();
    let c = parse_cases(RAMP, "cases.yaml", &p).expect("cases");
    let s = scheme(&p, GROUPS);
    let at = |point: &str| opened(&run_at(&p, &c, &s, point));
    let importing = at("importing");
    assert_eq!(importing.len(), 2, "{importing:?}");
    assert_eq!(importing[0].1, vec!["l1"]);
    assert!((importing[0].0 - 1.15).abs() < 1e-3, "{}", importing[0].0);
    assert_eq!(importing[1].1, vec!["l2"]);
    assert!((importing[1].0 - 1.65).abs() < 1e-3, "{}", importing[1].0);
    let exporting = at("exporting");
    assert_eq!(exporting.len(), 1, "uf-2 is out of service: {exporting:?}");
    assert_eq!(exporting[0].1, vec!["l1"]);
    assert!((exporting[0].0 - 0.75).abs() < 1e-3, "{}", exporting[0].0);
}

#[test]
fn the_audit_judges_each_group_and_the_sheet_shows_every_group() {
    let p = plant();
    let c = parse_cases(RAMP, "cases.yaml", &p).expect("cases");
    let s = scheme(&p, GROUPS);
    // In export-mode uf-1 picks up at 49.5 Hz, inside the normal band (above 49.5 is the rule:
    // 0.99·50 = 49.5 Hz is allowed), so no violation there; the note on uf-2 names only the
    // points where it serves.
    let a = audit_cases(&p, &s, Some(&c), &AuditRules::for_plant(&p));
    assert!(a.order[0]
        .trigger
        .contains("in group export-mode (exporting): 49.50 Hz, 0.20 s"));
    assert!(a.order[1]
        .trigger
        .contains("in group export-mode (exporting): out of service"));
    // uf-2 opens nothing at `exporting`: 0 MW there.
    let exporting = p.operating_point_index("exporting").unwrap();
    assert_eq!(a.order[1].mw[exporting], 0.0);
    let sh = sheet::sheet(&p, &s);
    let rows: Vec<(String, String, String)> = sh
        .rows
        .iter()
        .map(|r| {
            let c = sheet::cells(&sh, r);
            (c[0].clone(), c[1].clone(), c[3].clone())
        })
        .collect();
    assert_eq!(
        rows,
        vec![
            (
                "uf-1".into(),
                "export-mode (exporting)".into(),
                "49.5".into()
            ),
            (
                "uf-1".into(),
                "no group (importing, light)".into(),
                "49.0".into()
            ),
            ("uf-2".into(), "export-mode (exporting)".into(), "".into()),
            (
                "uf-2".into(),
                "no group (importing, light)".into(),
                "48.5".into()
            ),
        ]
    );
    assert_eq!(sh.rows[2].logic, "out of service in this setting group");
}

#[test]
fn a_group_above_the_normal_band_is_caught_in_that_group_only() {
    let p = plant();
    let text = GROUPS.replace(
        "pickup_hz: 49.5, delay_s: 0.2",
        "pickup_hz: 49.7, delay_s: 0.2",
    );
    let s = scheme(&p, &text);
    let a = audit_cases(&p, &s, None, &AuditRules::for_plant(&p));
    let band: Vec<&str> = a
        .violations
        .iter()
        .filter(|v| v.rule == "above-normal-band")
        .map(|v| v.message.as_str())
        .collect();
    assert_eq!(
        band,
        vec!["in setting group export-mode (exporting): stage uf-1 picks up at 49.70 Hz, inside the normal operating band (above 49.50 Hz)"]
    );
}

#[test]
fn a_scheme_with_groups_and_sizing_writes_back_equal() {
    let p = plant();
    let text = GROUPS.replace(
        "stages:\n",
        "stages:\n  - { id: armed, armed_by: grid, delay_s: 0.05, sizing: flow, allowance_reserve_pct: 25, sheds: [l3, l4],\n      groups: [ { group: export-mode, allowance_mw: 1 } ] }\n",
    );
    let s = scheme(&p, &text);
    let written = nadir::input::scheme_yaml(&p, &s, &[]);
    let back = scheme(&p, &written);
    assert_eq!(back, s, "{written}");
}

// ---------------------------------------------------------------- bad input

fn errors(text: &str) -> Vec<String> {
    let p = plant();
    match parse_scheme(text, "scheme.yaml", &p) {
        Ok(_) => vec![],
        Err(d) => d
            .iter()
            .map(|d| {
                format!(
                    "{}: {} | {}",
                    d.path,
                    d.message,
                    d.help.clone().unwrap_or_default()
                )
            })
            .collect(),
    }
}

#[test]
fn bad_flow_and_group_settings_are_refused_with_the_fix() {
    let one = |text: &str| {
        let e = errors(text);
        assert_eq!(e.len(), 1, "{e:?}");
        e[0].clone()
    };
    let e = one(&sized("-1"));
    assert!(
        e.starts_with("stages[0].allowance_mw: allowance_mw must not be negative, got -1 MW"),
        "{e}"
    );
    let e = one(&sized("1e9"));
    assert!(
        e.contains("allowance_mw 1000000000 MW is implausibly high"),
        "{e}"
    );
    let e = one(&SIZED.replace(
        "allowance_mw: ALLOW",
        "allowance_mw: 1, allowance_reserve_pct: 20",
    ));
    assert!(
        e.contains(
            "stage `armed` states its allowance twice (allowance_mw and allowance_reserve_pct)"
        ),
        "{e}"
    );
    let e = one(&SIZED.replace("allowance_mw: ALLOW", "allowance_reserve_pct: 150"));
    assert!(
        e.contains("allowance_reserve_pct 150 % is implausibly high"),
        "{e}"
    );
    let e =
        one("stages:\n  - { id: uf, pickup_hz: 49, delay_s: 0.1, sizing: flow, sheds: [l1] }\n");
    assert!(e.contains("sizing: flow applies to breaker-armed stages only; stage `uf` is an under-frequency stage"), "{e}");
    let e =
        one("stages:\n  - { id: a, armed_by: grid, delay_s: 0.1, allowance_mw: 2, sheds: [l1] }\n");
    assert!(
        e.contains("allowance_mw applies to a stage sized from the pre-event flow"),
        "{e}"
    );
    let e = one(&GROUPS.replace(
        "operating_points: [exporting]",
        "operating_points: [exportng]",
    ));
    assert!(
        e.starts_with("setting_groups[0].operating_points[0]: unknown operating point `exportng`"),
        "{e}"
    );
    assert!(e.contains("did you mean `exporting`?"), "{e}");
    let e = one(&GROUPS.replace(
        "group: export-mode, pickup_hz",
        "group: export-mod, pickup_hz",
    ));
    assert!(e.contains("unknown setting group `export-mod`"), "{e}");
    assert!(e.contains("did you mean `export-mode`?"), "{e}");
    let e = one(&GROUPS.replace(
        "  - { id: export-mode, operating_points: [exporting] }",
        "  - { id: export-mode, operating_points: [exporting] }\n  - { id: other, operating_points: [exporting] }",
    ));
    assert!(
        e.contains("operating point `exporting` is in setting groups `export-mode`"),
        "{e}"
    );
    let e = one("stages:\n  - { id: a, armed_by: grid, delay_s: 0.1, sheds: [l1], groups: [ { group: x, delay_s: 1 } ] }\n");
    assert!(
        e.contains("but the scheme defines no setting groups"),
        "{e}"
    );
    let e = one(&GROUPS.replace(
        "{ group: export-mode, in_service: false }",
        "{ group: export-mode, in_service: false }, { group: export-mode, delay_s: 1 }",
    ));
    assert!(
        e.contains("stage `uf-2` has two entries for setting group `export-mode`"),
        "{e}"
    );
    let e = one(
        "stages:\n  - { id: a, pickup_hz: 49, delay_s: 0.1, in_service: false, sheds: [l1] }\n",
    );
    assert!(
        e.starts_with("stages[0].in_service: stage `a` is out of service at every operating point"),
        "{e}"
    );
    let e = one(&GROUPS.replace(
        "pickup_hz: 49.5, delay_s: 0.2",
        "pickup_hz: 50.5, delay_s: 0.2",
    ));
    assert!(
        e.starts_with("stages[0].groups[0].pickup_hz: pickup_hz 50.5 Hz is not below nominal"),
        "{e}"
    );
    let e = one(&sized("1")
        .replace(
            "sheds: [l4",
            "groups: [ { group: g, pickup_hz: 49 } ], sheds: [l4",
        )
        .replace(
            "stages:",
            "setting_groups: [ { id: g, operating_points: [light] } ]\nstages:",
        ));
    assert!(
        e.contains(
            "pickup_hz applies to under-frequency stages only; stage `armed` is breaker-armed"
        ),
        "{e}"
    );
}

// ---------------------------------------------------------------- through the binary

/// A fresh directory for one test's files.
fn scratch(name: &str) -> std::path::PathBuf {
    let dir = std::path::Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join("armed-flow")
        .join(name);
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

fn nadir(args: &[&std::ffi::OsStr]) -> std::process::Output {
    std::process::Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args(args)
        .output()
        .expect("run nadir")
}

#[test]
fn design_from_a_table_with_groups_or_sizing_is_refused_with_exit_2() {
    let dir = scratch("design-from");
    let plant = dir.join("plant.yaml");
    let cases = dir.join("cases.yaml");
    let scheme = dir.join("scheme.yaml");
    let out = dir.join("out.yaml");
    std::fs::write(&plant, PLANT).unwrap();
    std::fs::write(&cases, CASES).unwrap();
    std::fs::write(&scheme, sized("1")).unwrap();
    let o = nadir(&[
        "design".as_ref(),
        plant.as_os_str(),
        "--cases".as_ref(),
        cases.as_os_str(),
        "--from".as_ref(),
        scheme.as_os_str(),
        "-o".as_ref(),
        out.as_os_str(),
    ]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("design --from does not start from a table with stages sized from the pre-event flow (armed)"),
        "{err}"
    );
    assert!(!out.exists(), "nothing written");
    // A bad group reference: exit 2, file:line:column, field and the fix.
    std::fs::write(
        &scheme,
        GROUPS.replace(
            "group: export-mode, pickup_hz",
            "group: export-mod, pickup_hz",
        ),
    )
    .unwrap();
    let o = nadir(&["audit".as_ref(), plant.as_os_str(), scheme.as_os_str()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains(
            "scheme.yaml:7:26: stages[0].groups[0].group: unknown setting group `export-mod`"
        ),
        "{err}"
    );
    assert!(err.contains("help: did you mean `export-mode`?"), "{err}");
    let _ = std::fs::remove_dir_all(&dir);
}
