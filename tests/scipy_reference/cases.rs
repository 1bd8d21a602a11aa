//! The cross-check case set shared by tests/scipy_crosscheck.rs and examples/bench_vs_scipy.rs:
//! fictional plants built with the tests/common builders, their conversion to the JSON that
//! tests/scipy_reference/reference.py reads (format documented at the top of that script), the
//! figures compared, and the runner that calls the script. It must not hold expected values:
//! both sides are computed.
#![allow(dead_code)]

use crate::common::*;
use nadir::model::*;
use nadir::sim::{simulate, EventKind, Run, SimConfig, StopReason};
use serde_json::{json, Value};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

/// One plant × case × scheme at operating point 0.
#[derive(Debug, Clone)]
pub struct CrossCase {
    pub id: String,
    /// What the case exercises (for the failure messages).
    pub covers: &'static str,
    pub plant: Plant,
    pub case: Case,
    pub scheme: Scheme,
}

/// The figures both sides report.
#[derive(Debug, Clone, PartialEq)]
pub struct Figures {
    pub nadir_hz: f64,
    pub nadir_at_s: f64,
    pub section_min_hz: Vec<f64>,
    pub final_hz: Option<f64>,
    pub stage_open_s: BTreeMap<String, f64>,
    pub generator_trip_s: BTreeMap<String, f64>,
    pub collapse_s: Option<f64>,
    pub blackout_s: Option<f64>,
}

fn steam() -> PrimeMover {
    PrimeMover::Steam {
        governor_s: 0.2,
        turbine_s: 0.5,
    }
}

fn engine(ramp: f64) -> PrimeMover {
    PrimeMover::Engine {
        governor_s: 0.15,
        ramp_mw_per_s: ramp,
    }
}

fn uf(id: &str, pickup_hz: f64, delay_s: f64, sheds: Vec<usize>) -> Stage {
    Stage {
        sizing: nadir::model::Sizing::All,
        in_service: true,
        groups: Vec::new(),
        id: id.into(),
        trigger: StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s: None,
        },
        delay_s,
        breaker_s: 0.06,
        sheds,
    }
}

/// Plant A, one bus: a 30 MVA steam set, an 8 MVA gas engine, a fixed 4 MVA set, base load and
/// three sheddable feeders; the utility import balances the rest. `deficit_mw` is the import.
fn plant_a(f0: f64, deficit_mw: f64, main: PrimeMover) -> Plant {
    let mut st = gen("st1", 30.0, 5.0, 22.0, 4.0, main);
    st.max_mw = 27.0;
    let mut en = gen("eng1", 8.0, 1.2, 5.0, 4.0, engine(0.8));
    en.max_mw = 7.2;
    let fx = gen("bp1", 4.0, 3.0, 3.0, 0.0, PrimeMover::Fixed);
    let mut base = load("base", 0.0, 1.5);
    let mut motors = load("motors", 6.0, 2.0);
    motors.inertia_s = 0.5;
    let l1 = load("feeder1", 3.0, 1.0);
    let l2 = load("feeder2", 3.0, 1.0);
    let l3 = load("feeder3", 2.0, 1.0);
    base.p_mw = 30.0 + deficit_mw - 14.0;
    plant(
        f0,
        vec![st, en, fx],
        vec![base, motors, l1, l2, l3],
        deficit_mw,
    )
}

fn scheme_a(f0: f64) -> Scheme {
    let k = f0 / 50.0;
    scheme(
        vec![
            uf("uf1", 49.0 * k, 0.1, vec![2]),
            uf("uf2", 48.7 * k, 0.2, vec![3]),
            uf("uf3", 48.4 * k, 0.3, vec![4]),
        ],
        0.04,
    )
}

fn open_utility_at(t: f64, duration_s: f64) -> Case {
    case(
        Start::Connected,
        duration_s,
        vec![(t, Action::Open(BreakerRef::Utility))],
    )
}

/// Plant B, two buses joined by a tie: bus 0 has the utility, a reheat set and loads; bus 1 a
/// steam set, an engine and loads; each bus has a feeder in a stage.
fn plant_b(import_mw: f64, tie_flow_mw: f64) -> Plant {
    let reheat = PrimeMover::SteamReheat {
        governor_s: 0.25,
        reheat_s: 6.0,
        hp_fraction: 0.3,
    };
    let g0 = gen("rh1", 25.0, 4.5, 18.0, 5.0, reheat);
    let mut g1 = gen("st2", 15.0, 4.0, 10.0, 4.0, steam());
    g1.section = 1;
    g1.max_mw = 13.5;
    let mut g2 = gen("eng2", 5.0, 1.0, 3.0, 3.0, engine(0.5));
    g2.section = 1;
    g2.max_mw = 4.5;
    let mut a = load("procA", 0.0, 1.2);
    let fa = load("feedA", 2.5, 1.0);
    let mut b = load("procB", 0.0, 1.8);
    b.section = 1;
    b.inertia_s = 0.3;
    let mut fb = load("feedB", 2.0, 1.0);
    fb.section = 1;
    // Bus 1 exports `tie_flow_mw` to bus 0 (negative: imports it).
    b.p_mw = 13.0 - tie_flow_mw - 2.0;
    a.p_mw = 18.0 + import_mw + tie_flow_mw - 2.5;
    let mut p = plant(50.0, vec![g0, g1, g2], vec![a, fa, b, fb], import_mw);
    p.sections.push(Section { id: "bus2".into() });
    p.ties.push(Tie {
        id: "tie12".into(),
        between: [0, 1],
        normally_open: false,
    });
    p.operating_points[0].ties_open = vec![false];
    p
}

fn scheme_b() -> Scheme {
    scheme(
        vec![
            uf("ufA", 49.1, 0.15, vec![1]),
            uf("ufB", 48.9, 0.15, vec![3]),
        ],
        0.05,
    )
}

/// The cross-check set: at least twenty cases covering shedding, limits, prime movers, a split,
/// the utility opening and generator trips.
pub fn cases() -> Vec<CrossCase> {
    let mut out = Vec::new();
    let mut push = |id: &str, covers: &'static str, plant: Plant, case: Case, scheme: Scheme| {
        out.push(CrossCase {
            id: id.into(),
            covers,
            plant,
            case,
            scheme,
        })
    };
    // Utility opening with increasing import: 0, 1, 2 and 3 stages.
    for (i, d) in [2.0, 4.0, 6.5, 9.0, 11.0].iter().enumerate() {
        push(
            &format!("a-island-{i}"),
            "utility opening, steam + engine ramp + fixed, UF stages",
            plant_a(50.0, *d, steam()),
            open_utility_at(0.5, 15.0),
            scheme_a(50.0),
        );
    }
    push(
        "a-60hz",
        "60 Hz variant, stages scaled",
        plant_a(60.0, 8.0, steam()),
        open_utility_at(0.2, 12.0),
        scheme_a(60.0),
    );
    for (i, tg) in [0.0, 0.3].iter().enumerate() {
        push(
            &format!("a-reheat-{i}"),
            "steam-reheat (T_g = 0 algebraic valve / lagged valve), max limit",
            plant_a(
                50.0,
                7.0,
                PrimeMover::SteamReheat {
                    governor_s: *tg,
                    reheat_s: 7.0,
                    hp_fraction: 0.3,
                },
            ),
            open_utility_at(0.0, 20.0),
            scheme_a(50.0),
        );
    }
    push(
        "a-gas-turbine",
        "gas turbine with load limit below max",
        plant_a(
            50.0,
            6.0,
            PrimeMover::GasTurbine {
                governor_s: 0.1,
                turbine_s: 0.4,
                load_limit_mw: 24.0,
            },
        ),
        open_utility_at(0.0, 15.0),
        scheme_a(50.0),
    );
    {
        // Tight max on the steam set: the limiter holds it at its maximum for seconds.
        let mut p = plant_a(50.0, 5.0, steam());
        p.generators[0].max_mw = 23.0;
        push(
            "a-max-limit",
            "governor max_mw hit (non-windup) and left",
            p,
            open_utility_at(0.0, 20.0),
            scheme_a(50.0),
        );
    }
    {
        let mut p = plant_a(50.0, 4.5, steam());
        p.generators[0].governor.deadband_hz = 0.05;
        p.generators[1].governor.deadband_hz = 0.1;
        push(
            "a-deadband",
            "governor dead band",
            p,
            open_utility_at(0.0, 15.0),
            scheme_a(50.0),
        );
    }
    {
        // Stage that picks up and resets: long delay, frequency dips below and recovers.
        let mut s = scheme_a(50.0);
        s.stages[0] = uf("uf1", 49.3, 2.5, vec![2]);
        push(
            "a-reset",
            "stage pickup then reset before its delay",
            plant_a(50.0, 3.5, steam()),
            open_utility_at(0.0, 15.0),
            s,
        );
    }
    {
        let mut s = scheme_a(50.0);
        s.stages[0].trigger = StageTrigger::Frequency {
            pickup_hz: 49.5,
            min_rocof_hz_per_s: Some(0.8),
        };
        push(
            "a-rocof-supervised",
            "df/dt-supervised stage",
            plant_a(50.0, 6.0, steam()),
            open_utility_at(0.0, 15.0),
            s,
        );
    }
    {
        let mut s = scheme_a(50.0);
        s.stages.push(Stage {
            sizing: nadir::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: "armed".into(),
            trigger: StageTrigger::Breaker(BreakerRef::Utility),
            delay_s: 0.2,
            breaker_s: 0.05,
            sheds: vec![4],
        });
        push(
            "a-armed",
            "breaker-armed stage on the utility breaker",
            plant_a(50.0, 8.0, steam()),
            open_utility_at(0.3, 15.0),
            s,
        );
    }
    {
        let mut p = plant_a(50.0, 2.0, steam());
        p.generators[1].trips = vec![FrequencyTrip::Under {
            hz: 48.8,
            after_s: 0.3,
        }];
        let c = case(
            Start::Connected,
            20.0,
            vec![
                (0.0, Action::Open(BreakerRef::Utility)),
                (4.0, Action::Open(BreakerRef::Generator(2))),
            ],
        );
        push(
            "a-gen-trip",
            "islanding then a generator trip by case, under-frequency cascade",
            p,
            c,
            scheme_a(50.0),
        );
    }
    {
        let mut p = plant_a(50.0, 10.0, steam());
        p.generators[1].trips = vec![FrequencyTrip::Rocof {
            hz_per_s: 1.5,
            after_s: 0.2,
        }];
        push(
            "a-rocof-trip",
            "generator ROCOF protection",
            p,
            open_utility_at(0.0, 15.0),
            scheme_a(50.0),
        );
    }
    {
        let c = case(
            Start::Connected,
            20.0,
            vec![
                (0.0, Action::Open(BreakerRef::Utility)),
                (
                    6.0,
                    Action::LoadStep {
                        section: 0,
                        mw: 3.0,
                    },
                ),
            ],
        );
        push(
            "a-load-step",
            "load step after islanding",
            plant_a(50.0, 1.0, steam()),
            c,
            scheme_a(50.0),
        );
    }
    {
        let mut p = plant_a(50.0, 16.0, steam());
        p.generators[0].trips = vec![FrequencyTrip::Over {
            hz: 50.6,
            after_s: 0.5,
        }];
        push(
            "a-overshoot",
            "all stages, over-frequency element watching the recovery",
            p,
            open_utility_at(0.0, 20.0),
            scheme_a(50.0),
        );
    }
    push(
        "a-collapse",
        "collapse: deficit far beyond the scheme",
        plant_a(50.0, 24.0, steam()),
        open_utility_at(0.0, 10.0),
        scheme(vec![uf("uf1", 49.0, 0.1, vec![2])], 0.04),
    );
    push(
        "a-no-lag",
        "relay without measurement lag",
        plant_a(50.0, 6.0, steam()),
        open_utility_at(0.0, 15.0),
        {
            let mut s = scheme_a(50.0);
            s.measurement.frequency_lag_s = 0.0;
            s
        },
    );
    // Two buses.
    for (i, (imp, flow)) in [(3.0, 2.0), (6.0, -1.5), (4.0, 3.5)].iter().enumerate() {
        push(
            &format!("b-island-{i}"),
            "two buses islanded together, reheat + steam + engine",
            plant_b(*imp, *flow),
            open_utility_at(0.0, 15.0),
            scheme_b(),
        );
    }
    {
        let c = case(
            Start::Connected,
            15.0,
            vec![(0.0, Action::Open(BreakerRef::Tie(0)))],
        );
        push(
            "b-tie-opens",
            "tie opens: bus 2 islands, bus 1 stays on the utility",
            plant_b(3.0, -3.0),
            c,
            scheme_b(),
        );
    }
    {
        let c = case(
            Start::Connected,
            15.0,
            vec![
                (0.0, Action::Open(BreakerRef::Utility)),
                (1.5, Action::Open(BreakerRef::Tie(0))),
            ],
        );
        push(
            "b-split",
            "islanded plant splits into two islands",
            plant_b(5.0, 2.5),
            c,
            scheme_b(),
        );
    }
    {
        let mut s = scheme_b();
        s.stages.push(Stage {
            sizing: nadir::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: "tie-armed".into(),
            trigger: StageTrigger::Breaker(BreakerRef::Tie(0)),
            delay_s: 0.1,
            breaker_s: 0.05,
            sheds: vec![1],
        });
        let c = case(
            Start::Connected,
            15.0,
            vec![
                (0.0, Action::Open(BreakerRef::Utility)),
                (0.8, Action::Open(BreakerRef::Tie(0))),
            ],
        );
        push(
            "b-split-armed",
            "split with a tie-armed stage",
            plant_b(2.0, -3.0),
            c,
            s,
        );
    }
    {
        let mut p = plant_b(1.0, 0.0);
        p.generators[2].trips = vec![FrequencyTrip::Under {
            hz: 49.2,
            after_s: 0.2,
        }];
        let c = case(
            Start::Connected,
            15.0,
            vec![
                (0.0, Action::Open(BreakerRef::Utility)),
                (2.0, Action::Open(BreakerRef::Generator(0))),
            ],
        );
        push(
            "b-gen-loss",
            "islanded, largest set lost, cascade trip of the engine",
            p,
            c,
            scheme_b(),
        );
    }
    out
}

/// `n` runs built from the cross-check set by scaling every load and the import (0.8–1.2).
pub fn perturbed(n: usize) -> Vec<CrossCase> {
    let base = cases();
    (0..n)
        .map(|k| {
            let mut c = base[k % base.len()].clone();
            let scale = 0.8 + 0.4 * ((k / base.len()) as f64 * 0.618_034).fract();
            let op = &mut c.plant.operating_points[0];
            for (l, p) in op.load_mw.iter_mut().enumerate() {
                *p *= scale;
                c.plant.loads[l].p_mw = *p;
            }
            // Keep the balance: the utility carries the change.
            let load: f64 = op.load_mw.iter().sum();
            let gen: f64 = op.output_mw.iter().sum();
            op.import_mw = load - gen;
            if let Some(u) = c.plant.utility.as_mut() {
                u.import_mw = load - gen;
            }
            c.id = format!("{}-x{k}", c.id);
            c
        })
        .collect()
}

fn breaker_name(b: BreakerRef) -> String {
    match b {
        BreakerRef::Utility => "utility".into(),
        BreakerRef::Tie(i) => format!("tie:{i}"),
        BreakerRef::Generator(i) => format!("generator:{i}"),
    }
}

/// The case in the JSON form reference.py reads (operating point 0).
pub fn to_json(x: &CrossCase) -> Value {
    let p = &x.plant;
    let op = &p.operating_points[0];
    let gens: Vec<Value> = p
        .generators
        .iter()
        .enumerate()
        .map(|(g, gen)| {
            let model = match gen.governor.prime_mover {
                PrimeMover::Steam {
                    governor_s,
                    turbine_s,
                } => json!({"kind": "steam", "governor_s": governor_s, "turbine_s": turbine_s}),
                PrimeMover::SteamReheat {
                    governor_s,
                    reheat_s,
                    hp_fraction,
                } => json!({"kind": "steam_reheat", "governor_s": governor_s,
                            "reheat_s": reheat_s, "hp_fraction": hp_fraction}),
                PrimeMover::GasTurbine {
                    governor_s,
                    turbine_s,
                    load_limit_mw,
                } => json!({"kind": "gas_turbine", "governor_s": governor_s,
                            "turbine_s": turbine_s, "load_limit_mw": load_limit_mw}),
                PrimeMover::Engine {
                    governor_s,
                    ramp_mw_per_s,
                } => json!({"kind": "engine", "governor_s": governor_s,
                            "ramp_mw_per_s": ramp_mw_per_s}),
                PrimeMover::Fixed => json!({"kind": "fixed"}),
                PrimeMover::Hydro { .. } => panic!("hydro is outside the scipy reference"),
            };
            assert!(
                !gen.governor.isochronous,
                "isochronous is outside the reference"
            );
            // Process-steam pressure control is outside it too (docs/models.md §4); its closed
            // forms are checked in tests/steam_pressure.rs.
            assert!(
                gen.governor.pressure_control.is_none(),
                "pressure control is outside the reference"
            );
            let trips: Vec<Value> = gen
                .trips
                .iter()
                .map(|t| match *t {
                    FrequencyTrip::Under { hz, after_s } => {
                        json!({"kind": "under", "level": hz, "after_s": after_s})
                    }
                    FrequencyTrip::Over { hz, after_s } => {
                        json!({"kind": "over", "level": hz, "after_s": after_s})
                    }
                    FrequencyTrip::Rocof { hz_per_s, after_s } => {
                        json!({"kind": "rocof", "level": hz_per_s, "after_s": after_s})
                    }
                })
                .collect();
            json!({
                "id": gen.id, "section": gen.section, "rating_mva": gen.rating_mva,
                "inertia_s": gen.inertia_s, "p_ref_mw": op.output_mw[g], "min_mw": gen.min_mw,
                "max_mw": gen.max_mw, "droop_pct": gen.governor.droop_pct,
                "deadband_hz": gen.governor.deadband_hz, "online": op.online[g],
                "model": model, "trips": trips,
            })
        })
        .collect();
    let loads: Vec<Value> = p
        .loads
        .iter()
        .enumerate()
        .map(|(l, ld)| {
            json!({"id": ld.id, "section": ld.section, "p_mw": op.load_mw[l],
                   "freq_exp": ld.freq_exp, "inertia_s": ld.inertia_s})
        })
        .collect();
    let stages: Vec<Value> = x
        .scheme
        .stages
        .iter()
        .map(|s| {
            let trigger = match s.trigger {
                StageTrigger::Frequency {
                    pickup_hz,
                    min_rocof_hz_per_s,
                } => json!({"kind": "frequency", "pickup_hz": pickup_hz,
                            "min_rocof_hz_per_s": min_rocof_hz_per_s}),
                StageTrigger::Breaker(b) => json!({"kind": "breaker", "breaker": breaker_name(b)}),
            };
            json!({"id": s.id, "delay_s": s.delay_s, "breaker_s": s.breaker_s,
                   "sheds": s.sheds, "trigger": trigger})
        })
        .collect();
    let events: Vec<Value> = x
        .case
        .events
        .iter()
        .map(|e| match e.action {
            Action::Open(b) => json!({"at_s": e.at_s, "open": breaker_name(b)}),
            Action::LoadStep { section, mw } => {
                json!({"at_s": e.at_s, "section": section, "load_step_mw": mw})
            }
            Action::VoltageDip { .. } => panic!("voltage dips are outside the scipy reference"),
        })
        .collect();
    assert!(x.case.utility_profile.is_empty());
    // Over-frequency stages are outside the reference; tests/over_frequency.rs checks their
    // instants against closed forms.
    assert!(
        x.scheme.over_frequency.is_empty(),
        "over-frequency stages are outside the scipy reference"
    );
    json!({
        "id": x.id,
        "f0": p.nominal_hz,
        "duration_s": x.case.duration_s,
        "collapse_fraction": SimConfig::default().collapse_fraction,
        "n_sections": p.sections.len(),
        "ties": p.ties.iter().enumerate().map(|(i, t)| json!({
            "id": t.id, "between": t.between, "closed": !op.ties_open[i]})).collect::<Vec<_>>(),
        "utility": p.utility.as_ref().map(|u| json!({"id": u.breaker_id, "section": u.section,
            "closed": x.case.start == Start::Connected})),
        "generators": gens,
        "loads": loads,
        "measurement": {"frequency_lag_s": x.scheme.measurement.frequency_lag_s,
                        "rocof_window_s": x.scheme.measurement.rocof_window_s},
        "stages": stages,
        "events": events,
    })
}

/// Run nadir on one case.
pub fn run_nadir(x: &CrossCase) -> Run {
    simulate(&x.plant, &x.case, 0, &x.scheme, &SimConfig::default())
}

/// The compared figures of a nadir run.
pub fn nadir_figures(x: &CrossCase, run: &Run) -> Figures {
    let f0 = x.plant.nominal_hz;
    let section_min_hz = x
        .plant
        .sections
        .iter()
        .map(|s| {
            run.islands
                .iter()
                .filter(|i| i.sections.contains(&s.id))
                .map(|i| i.nadir_hz)
                .fold(f0, f64::min)
        })
        .collect();
    let mut stage_open_s = BTreeMap::new();
    let mut generator_trip_s = BTreeMap::new();
    let mut collapse_s = None;
    let mut blackout_s = None;
    for e in &run.events {
        match &e.what {
            EventKind::LoadsOpened { stage, .. } => {
                stage_open_s.entry(stage.clone()).or_insert(e.at_s);
            }
            EventKind::GeneratorTripped { generator, .. } => {
                generator_trip_s.entry(generator.clone()).or_insert(e.at_s);
            }
            EventKind::Collapse { .. } if collapse_s.is_none() => collapse_s = Some(e.at_s),
            EventKind::Blackout { .. } if blackout_s.is_none() => blackout_s = Some(e.at_s),
            _ => {}
        }
    }
    let alive = run
        .islands
        .iter()
        .any(|i| i.end == nadir::sim::IslandEnd::Running);
    Figures {
        nadir_hz: run.nadir_hz,
        nadir_at_s: run.nadir_at_s,
        section_min_hz,
        final_hz: alive.then_some(run.final_hz),
        stage_open_s,
        generator_trip_s,
        collapse_s,
        blackout_s,
    }
}

fn num(v: &Value) -> Option<f64> {
    v.as_f64()
}

fn times(v: &Value) -> BTreeMap<String, f64> {
    v.as_object()
        .map(|m| {
            m.iter()
                .filter_map(|(k, t)| t.as_f64().map(|t| (k.clone(), t)))
                .collect()
        })
        .unwrap_or_default()
}

/// The figures of one reference result.
pub fn reference_figures(v: &Value) -> Figures {
    Figures {
        nadir_hz: num(&v["nadir_hz"]).unwrap_or(f64::NAN),
        nadir_at_s: num(&v["nadir_at_s"]).unwrap_or(f64::NAN),
        section_min_hz: v["section_min_hz"]
            .as_array()
            .map(|a| a.iter().filter_map(num).collect())
            .unwrap_or_default(),
        final_hz: num(&v["final_hz"]),
        stage_open_s: times(&v["stage_open_s"]),
        generator_trip_s: times(&v["generator_trip_s"]),
        collapse_s: num(&v["collapse_s"]),
        blackout_s: num(&v["blackout_s"]),
    }
}

/// Outcome of calling the reference script.
pub struct ReferenceOutput {
    pub results: Vec<Value>,
    /// The script's own wall time over the batch (excludes Python start-up and imports).
    pub wall_s: f64,
}

/// Why the reference could not run.
#[derive(Debug)]
pub enum ReferenceError {
    /// python3 or scipy is not installed.
    Missing(String),
    Failed(String),
}

pub fn script_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/scipy_reference")
}

/// The Python that runs the reference: `NADIR_PYTHON` when set (scripts/test.sh points it at the
/// virtual environment it prepares), otherwise `python3` from the PATH.
pub fn python() -> String {
    std::env::var("NADIR_PYTHON").unwrap_or_else(|_| "python3".to_string())
}

/// Write the cases, run `python3 reference.py in out`, read the results.
pub fn run_reference(xs: &[CrossCase], tag: &str) -> Result<ReferenceOutput, ReferenceError> {
    run_reference_with(xs, tag, &[])
}

/// [`run_reference`] with the script's solver settings replaced: `[METHOD, RTOL, ATOL,
/// MAX_STEP_S]` (empty: the reference's own).
pub fn run_reference_with(
    xs: &[CrossCase],
    tag: &str,
    solver: &[&str],
) -> Result<ReferenceOutput, ReferenceError> {
    let probe = Command::new(python())
        .args([
            "-c",
            "import scipy, numpy; print(scipy.__version__, numpy.__version__)",
        ])
        .output();
    match probe {
        Err(e) => {
            return Err(ReferenceError::Missing(format!(
                "python3 not runnable: {e}"
            )))
        }
        Ok(o) if !o.status.success() => {
            return Err(ReferenceError::Missing(format!(
                "python3 cannot import scipy/numpy: {}",
                String::from_utf8_lossy(&o.stderr).trim()
            )))
        }
        Ok(_) => {}
    }
    let dir = std::env::temp_dir().join(format!("nadir-scipy-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| ReferenceError::Failed(e.to_string()))?;
    let input = dir.join("cases.json");
    let output = dir.join("results.json");
    let doc = json!({"cases": xs.iter().map(to_json).collect::<Vec<_>>()});
    std::fs::write(&input, doc.to_string()).map_err(|e| ReferenceError::Failed(e.to_string()))?;
    let o = Command::new(python())
        .arg(script_dir().join("reference.py"))
        .arg(&input)
        .arg(&output)
        .args(solver)
        .output()
        .map_err(|e| ReferenceError::Failed(e.to_string()))?;
    if !o.status.success() {
        return Err(ReferenceError::Failed(format!(
            "reference.py failed: {}",
            String::from_utf8_lossy(&o.stderr)
        )));
    }
    let text =
        std::fs::read_to_string(&output).map_err(|e| ReferenceError::Failed(e.to_string()))?;
    let v: Value =
        serde_json::from_str(&text).map_err(|e| ReferenceError::Failed(e.to_string()))?;
    if std::env::var("NADIR_SCIPY_KEEP").as_deref() == Ok("1") {
        eprintln!("scipy reference files kept in {}", dir.display());
    } else {
        let _ = std::fs::remove_dir_all(&dir);
    }
    Ok(ReferenceOutput {
        results: v["results"].as_array().cloned().unwrap_or_default(),
        wall_s: v["wall_s"].as_f64().unwrap_or(f64::NAN),
    })
}

/// Largest differences between two sets of figures: (frequency Hz, event time s), plus the
/// differences in which stages and generators operated (empty when the sets agree).
pub fn differences(a: &Figures, b: &Figures) -> (f64, f64, Vec<String>) {
    let mut hz: f64 = (a.nadir_hz - b.nadir_hz).abs();
    for (x, y) in a.section_min_hz.iter().zip(&b.section_min_hz) {
        hz = hz.max((x - y).abs());
    }
    let mut problems = Vec::new();
    if a.section_min_hz.len() != b.section_min_hz.len() {
        problems.push("section count".into());
    }
    match (a.final_hz, b.final_hz) {
        (Some(x), Some(y)) => hz = hz.max((x - y).abs()),
        (None, None) => {}
        _ => problems.push(format!(
            "alive at end: {:?} vs {:?}",
            a.final_hz, b.final_hz
        )),
    }
    let mut dt: f64 = 0.0;
    for (name, ma, mb) in [
        ("stages", &a.stage_open_s, &b.stage_open_s),
        ("generators", &a.generator_trip_s, &b.generator_trip_s),
    ] {
        let ka: Vec<_> = ma.keys().collect();
        let kb: Vec<_> = mb.keys().collect();
        if ka != kb {
            problems.push(format!("{name} operated: {ka:?} vs {kb:?}"));
        }
        for (k, ta) in ma {
            if let Some(tb) = mb.get(k) {
                dt = dt.max((ta - tb).abs());
            }
        }
    }
    for (name, x, y) in [
        ("collapse", a.collapse_s, b.collapse_s),
        ("blackout", a.blackout_s, b.blackout_s),
    ] {
        match (x, y) {
            (Some(x), Some(y)) => dt = dt.max((x - y).abs()),
            (None, None) => {}
            _ => problems.push(format!("{name}: {x:?} vs {y:?}")),
        }
    }
    (hz, dt, problems)
}

/// Whether a nadir run ended normally (a collapse or blackout is a result too).
pub fn run_ok(run: &Run) -> bool {
    !matches!(run.stop, StopReason::NumericalFault { .. })
}
