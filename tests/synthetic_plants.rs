//! The synthetic plant generator (examples/support/synthetic.rs) against the reader and the
//! simulator: an internal-consistency test of the generator, not a check against an outside
//! source. Every generated plant and case set must parse with no diagnostic; replayed with every
//! sheddable load in one stage at 49.0 Hz / 0.1 s each row must hold every criterion (the family
//! is holdable, so a design exists), and without any shedding some rows must fail (the family is
//! not trivial).

#[path = "../examples/support/synthetic.rs"]
mod synthetic;

use nadir::model::{Measurement, Plant, Scheme, Stage, StageTrigger};
use nadir::verify::matrix::{verify, Matrix, VerifyConfig};
use std::time::Instant;
use synthetic::{generate, Generated, Spec};

fn no_shedding() -> Scheme {
    Scheme {
        groups: Vec::new(),
        name: "no shedding".into(),
        measurement: Measurement::default(),
        stages: vec![],
        over_frequency: Vec::new(),
    }
}

/// Every sheddable load in one under-frequency stage.
fn shed_everything(plant: &Plant) -> Scheme {
    Scheme {
        groups: Vec::new(),
        name: "shed everything".into(),
        measurement: Measurement::default(),
        stages: vec![Stage {
            sizing: nadir::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: "all".into(),
            trigger: StageTrigger::Frequency {
                pickup_hz: 49.0,
                min_rocof_hz_per_s: None,
            },
            delay_s: 0.1,
            breaker_s: 0.08,
            sheds: (0..plant.loads.len())
                .filter(|&l| !plant.loads[l].never_shed)
                .collect(),
        }],
        over_frequency: Vec::new(),
    }
}

fn run(g: &Generated, scheme: &Scheme) -> Matrix {
    let config = VerifyConfig {
        margins: false,
        ..Default::default()
    };
    verify(&g.plant, &g.cases, scheme, &config, &|| {})
}

fn failures(m: &Matrix) -> Vec<String> {
    m.rows
        .iter()
        .filter(|r| !r.pass)
        .map(|r| {
            let why: Vec<&str> = r.failures.iter().map(|f| f.message.as_str()).collect();
            format!("{} at {}: {}", r.case, r.operating_point, why.join("; "))
        })
        .collect()
}

/// The family: 10, 50 and 200 loads; 5 and 50 cases; 1 and 10 operating points; three seeds for
/// the two smaller sizes and one for the largest, to keep the run short.
fn family() -> Vec<Spec> {
    let mut out = Vec::new();
    for loads in [10, 50, 200] {
        let seeds: &[u64] = if loads == 200 { &[1] } else { &[1, 2, 3] };
        for cases in [5, 50] {
            for operating_points in [1, 10] {
                for &seed in seeds {
                    out.push(Spec {
                        loads,
                        cases,
                        operating_points,
                        max_stages: 3 + (seed as usize % 6),
                        seed,
                    });
                }
            }
        }
    }
    out
}

#[test]
fn every_generated_plant_parses_holds_with_everything_shed_and_fails_without() {
    let mut rows_failing_unshed = 0;
    let mut rows = 0;
    let mut broken = Vec::new();
    for spec in family() {
        let g = generate(&spec);
        assert_eq!(g.cases.cases.len(), spec.cases, "{spec:?}");
        assert_eq!(g.plant.loads.len(), spec.loads, "{spec:?}");
        assert_eq!(
            g.plant.operating_points.len(),
            spec.operating_points,
            "{spec:?}"
        );
        assert_eq!(g.plant.design.max_stages, spec.max_stages);
        let held = run(&g, &shed_everything(&g.plant));
        let bare = run(&g, &no_shedding());
        let unshed_failing = bare.rows.iter().filter(|r| !r.pass).count();
        println!(
            "{spec:?}: {} rows, {unshed_failing} fail without shedding",
            held.rows.len()
        );
        rows += held.rows.len();
        rows_failing_unshed += unshed_failing;
        let f = failures(&held);
        if !f.is_empty() {
            broken.push(format!(
                "{spec:?}: {} of {} rows fail with everything shed:\n  {}",
                f.len(),
                held.rows.len(),
                f.join("\n  ")
            ));
        }
    }
    assert!(broken.is_empty(), "{}", broken.join("\n"));
    println!("{rows} rows; {rows_failing_unshed} fail without shedding");
    assert!(
        rows_failing_unshed > 0,
        "no row fails without shedding: the family is trivial"
    );
}

#[test]
fn the_same_spec_gives_the_same_text_and_seeds_differ() {
    let spec = Spec {
        loads: 50,
        cases: 10,
        operating_points: 4,
        max_stages: 4,
        seed: 7,
    };
    let a = generate(&spec);
    let b = generate(&spec);
    assert_eq!(a.plant_yaml, b.plant_yaml);
    assert_eq!(a.cases_yaml, b.cases_yaml);
    let c = generate(&Spec { seed: 8, ..spec });
    assert_ne!(a.plant_yaml, c.plant_yaml);
}

/// Benchmark figures are comparable only while the generated inputs stay the same: this pins the
/// text of one member (a regression pin of the generator's own output, not a check of physics).
/// A deliberate change to the generator changes the digest; update it in the same commit.
#[test]
fn the_generated_text_is_pinned() {
    use sha2::{Digest, Sha256};
    let g = generate(&Spec {
        loads: 50,
        cases: 10,
        operating_points: 4,
        max_stages: 4,
        seed: 7,
    });
    let digest = format!(
        "{:x}",
        Sha256::digest(format!("{}{}", g.plant_yaml, g.cases_yaml).as_bytes())
    );
    assert_eq!(
        digest, "202a29b96a3b519bf8394f17a5244b66b2ea6e1b99d8909d51300a3592f6aa6a",
        "the synthetic family changed"
    );
}

/// The largest member: generation, parsing (best of five) and one verification without shedding,
/// timed; run with `--nocapture` to see the figures. Nothing is asserted about the times.
#[test]
fn the_largest_member_is_timed() {
    let spec = Spec {
        loads: 200,
        cases: 50,
        operating_points: 10,
        max_stages: 8,
        seed: 1,
    };
    let start = Instant::now();
    let g = generate(&spec);
    let generate_s = start.elapsed().as_secs_f64();
    let mut parse_s = f64::INFINITY;
    for _ in 0..5 {
        let start = Instant::now();
        let plant = nadir::input::parse_plant(&g.plant_yaml, "plant.yaml").expect("plant parses");
        let cases =
            nadir::input::parse_cases(&g.cases_yaml, "cases.yaml", &plant).expect("cases parse");
        parse_s = parse_s.min(start.elapsed().as_secs_f64());
        assert_eq!(cases.cases.len(), spec.cases);
    }
    let start = Instant::now();
    let m = run(&g, &no_shedding());
    let verify_s = start.elapsed().as_secs_f64();
    println!(
        "200 loads × 50 cases × 10 points: generate {:.1} ms; plant {} bytes and cases {} bytes \
         parse in {:.1} ms; {} rows verified without shedding (margins off) in {:.2} s",
        generate_s * 1e3,
        g.plant_yaml.len(),
        g.cases_yaml.len(),
        parse_s * 1e3,
        m.rows.len(),
        verify_s
    );
}
