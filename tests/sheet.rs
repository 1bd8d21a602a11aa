//! `nadir sheet` run for real: the CSV's rows read back to the scheme exactly (stage ids and
//! order, every trigger, pickup, df/dt supervision and window, delay, breaker time, loads, MW at
//! each operating point), the HTML and Markdown forms, the report's copy, and refusals.

mod binary;

use binary::{nadir, root};
use nadir::model::{BreakerRef, Plant, Scheme, StageTrigger};
use std::path::PathBuf;

const PLANT: &str = "examples/biorefinery/plant.yaml";

fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("sheet");
    std::fs::create_dir_all(&dir).unwrap();
    let path = dir.join(name);
    let _ = std::fs::remove_file(&path);
    path
}

/// A scheme with every kind of element: armed by the utility, by the bus tie and by a generator
/// breaker, df/dt-supervised and plain frequency stages.
const EVERY_KIND: &str = "name: every kind of element (fictional)
measurement: { frequency_lag_s: 0.05, rocof_window_s: 0.2 }
stages:
  - { id: by-utility, armed_by: utility, delay_s: 0.05, breaker_s: 0.07, sheds: [office-hvac] }
  - { id: by-tie, armed_by: bus-tie, delay_s: 0.12, breaker_s: 0.06, sheds: [office-lighting, dryer-1-fans] }
  - { id: by-engine, armed_by: bge-1, delay_s: 0.2, sheds: [dryer-1-heaters] }
  - { id: fast, pickup_hz: 49.35, min_rocof_hz_per_s: 0.75, delay_s: 0.1, breaker_s: 0.08, sheds: [chip-conveyors] }
  - { id: slow, pickup_hz: 48.85, delay_s: 0.45, breaker_s: 0.08, sheds: [hammer-mill-1, hammer-mill-2] }
";

/// Rebuild the stages from the sheet's CSV: (id, trigger, delay, breaker, load ids, MW per point).
type Stage = (String, String, f64, f64, Vec<String>, Vec<f64>);

fn read_back(csv_text: &str, points: usize) -> (Vec<Stage>, Vec<String>) {
    let mut r = csv::Reader::from_reader(csv_text.as_bytes());
    let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let mut stages: Vec<Stage> = Vec::new();
    let num = |s: &str| s.parse::<f64>().unwrap();
    for rec in r.records() {
        let rec = rec.unwrap();
        let f = |k: usize| rec.get(k).unwrap().to_string();
        assert!(
            f(header.len() - 2).is_empty() && f(header.len() - 1).is_empty(),
            "as-left and initials blank"
        );
        match f(1).as_str() {
            "under-frequency" => stages.push((
                f(0),
                format!("pickup {}", num(&f(2))),
                num(&f(4)),
                num(&f(7)),
                f(8).split("; ").map(String::from).collect(),
                (0..points).map(|k| num(&f(9 + k))).collect(),
            )),
            "breaker-armed" => stages.push((
                f(0),
                format!("armed {}", f(3)),
                num(&f(4)),
                num(&f(7)),
                f(8).split("; ").map(String::from).collect(),
                (0..points).map(|k| num(&f(9 + k))).collect(),
            )),
            "df/dt supervision" => {
                let last = stages.last_mut().expect("supervision follows its stage");
                assert_eq!(last.0, f(0), "supervision row right after its stage");
                last.1
                    .push_str(&format!(" rocof {} window {}", num(&f(5)), num(&f(6))));
            }
            other => panic!("unknown element {other}"),
        }
    }
    (stages, header)
}

/// The same shape straight from the scheme as the library read it.
fn expected(plant: &Plant, scheme: &Scheme) -> Vec<Stage> {
    scheme
        .stages
        .iter()
        .map(|s| {
            let trigger = match s.trigger {
                StageTrigger::Frequency {
                    pickup_hz,
                    min_rocof_hz_per_s,
                } => match min_rocof_hz_per_s {
                    Some(r) => format!(
                        "pickup {pickup_hz} rocof {r} window {}",
                        scheme.measurement.rocof_window_s
                    ),
                    None => format!("pickup {pickup_hz}"),
                },
                StageTrigger::Breaker(b) => format!(
                    "armed {}",
                    match b {
                        BreakerRef::Utility => plant.utility.as_ref().unwrap().breaker_id.clone(),
                        BreakerRef::Tie(i) => plant.ties[i].id.clone(),
                        BreakerRef::Generator(g) => plant.generators[g].id.clone(),
                    }
                ),
            };
            let mw = plant
                .operating_points
                .iter()
                .map(|op| s.sheds.iter().map(|&l| op.load_mw[l]).sum())
                .collect();
            (
                s.id.clone(),
                trigger,
                s.delay_s,
                s.breaker_s,
                s.sheds.iter().map(|&l| plant.loads[l].id.clone()).collect(),
                mw,
            )
        })
        .collect()
}

fn round_trip(scheme_path: &str) {
    let plant = nadir::input::load_plant(&root().join(PLANT)).unwrap();
    let scheme = nadir::input::load_scheme(&root().join(scheme_path), &plant).unwrap();
    let out = scratch(&format!("{}.csv", scheme.stages.len()));
    let r = nadir(&["sheet", PLANT, scheme_path, "-o", out.to_str().unwrap()]);
    assert_eq!(r.code, 0, "{}\n{}", r.stdout, r.stderr);
    let text = std::fs::read_to_string(&out).unwrap();
    let (got, header) = read_back(&text, plant.operating_points.len());
    let want = expected(&plant, &scheme);
    // Settings and loads exactly; MW as printed, to 0.01 MW.
    let settings = |v: &[Stage]| -> Vec<_> {
        v.iter()
            .map(|s| (s.0.clone(), s.1.clone(), s.2, s.3, s.4.clone()))
            .collect()
    };
    assert_eq!(settings(&got), settings(&want), "{scheme_path}");
    for (g, w) in got.iter().zip(&want) {
        assert_eq!(g.5.len(), w.5.len());
        for (a, b) in g.5.iter().zip(&w.5) {
            assert!((a - b).abs() <= 0.005 + 1e-9, "{}: {a} against {b}", g.0);
        }
    }
    assert_eq!(header[9], "MW at full-rate");
    assert_eq!(&header[header.len() - 2..], ["as-left value", "initials"]);
}

#[test]
fn the_demo_sheet_reads_back_to_the_scheme() {
    round_trip("schemes/biorefinery.yaml");
    round_trip("schemes/biorefinery-proposed.yaml");
}

#[test]
fn every_kind_of_element_reads_back() {
    let path = scratch("every-kind.yaml");
    std::fs::write(&path, EVERY_KIND).unwrap();
    round_trip(path.to_str().unwrap());
    // One row per element: five stages, one of them supervised.
    let out = scratch("every-kind.csv");
    let r = nadir(&[
        "sheet",
        PLANT,
        path.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
        "--force",
    ]);
    assert!(r.stdout.contains("(6 rows for 5 stages)"), "{}", r.stdout);
}

#[test]
fn html_and_markdown_forms_and_the_report_copy() {
    let html = scratch("sheet.html");
    let r = nadir(&[
        "sheet",
        PLANT,
        "schemes/biorefinery.yaml",
        "-o",
        html.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 0, "{}", r.stderr);
    let page = std::fs::read_to_string(&html).unwrap();
    for needle in [
        "<h1>Relay setting sheet</h1>",
        "<td>df/dt supervision</td>",
        "<th>as-left value</th>",
        "Set and checked by (name)",
        "qualified protection engineer",
    ] {
        assert!(page.contains(needle), "{needle}");
    }
    let md = nadir(&["sheet", PLANT, "schemes/biorefinery.yaml"]);
    assert_eq!(md.code, 0);
    assert!(md.stdout.contains(
        "| uf-fast-a | df/dt supervision |  |  |  | 1.0 | 0.1 |  |  |  |  |  | picked up while df/dt ≤ −1.0 Hz/s over 0.1 s"
    ));
    // One row per stage and one more per df/dt-supervised stage, plus the header and rule.
    let plant = nadir::input::load_plant(&root().join(PLANT)).unwrap();
    let scheme =
        nadir::input::load_scheme(&root().join("schemes/biorefinery.yaml"), &plant).unwrap();
    let supervised = scheme
        .stages
        .iter()
        .filter(|s| {
            matches!(
                s.trigger,
                StageTrigger::Frequency {
                    min_rocof_hz_per_s: Some(_),
                    ..
                }
            )
        })
        .count();
    assert_eq!(
        md.stdout.lines().filter(|l| l.starts_with('|')).count(),
        scheme.stages.len() + supervised + 2
    );
}

#[test]
fn refusals() {
    let existing = scratch("exists.csv");
    std::fs::write(&existing, "keep").unwrap();
    let r = nadir(&[
        "sheet",
        PLANT,
        "schemes/biorefinery.yaml",
        "-o",
        existing.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 2);
    assert!(r.stderr.contains("already exists"), "{}", r.stderr);
    assert_eq!(std::fs::read_to_string(&existing).unwrap(), "keep");
    let odd = scratch("sheet.xlsx");
    let r = nadir(&[
        "sheet",
        PLANT,
        "schemes/biorefinery.yaml",
        "-o",
        odd.to_str().unwrap(),
    ]);
    assert_eq!(r.code, 2);
    assert!(
        r.stderr.contains("written as .csv, .html or .md"),
        "{}",
        r.stderr
    );
    assert!(!odd.exists());
    // Plant and scheme swapped: a clear input error, exit 2.
    let r = nadir(&["sheet", "schemes/biorefinery.yaml", PLANT]);
    assert_eq!(r.code, 2);
    assert!(r.stderr.contains("reading plant file"), "{}", r.stderr);
}
