//! Event behaviour of the simulator on small built plants: df/dt supervision, stage reset,
//! cascade generator trips, voltage-dip drop-out, the utility profile and collapse. Each case is
//! built so that its expected behaviour follows from a closed form or from the relay semantics
//! of docs/models.md; each test names which. REFERENCES tags: [S] seen, [D] derived.

mod common;

use common::*;
use nadir::model::*;
use nadir::sim::{simulate, EventKind, LoggedEvent, Run, SimConfig, StopReason};

/// Time of the first logged event that matches.
fn first_at(run: &Run, pred: impl Fn(&EventKind) -> bool) -> Option<f64> {
    run.events.iter().find(|e| pred(&e.what)).map(|e| e.at_s)
}

fn count(run: &Run, pred: impl Fn(&EventKind) -> bool) -> usize {
    run.events.iter().filter(|e| pred(&e.what)).count()
}

/// First t in [lo, hi] where `f(t) < level`, for f falling through the level once (bisection to
/// 1e-12 s).
fn falls_below(f: impl Fn(f64) -> f64, level: f64, mut lo: f64, mut hi: f64) -> f64 {
    assert!(
        f(lo) >= level && f(hi) < level,
        "no crossing in [{lo}, {hi}]"
    );
    while hi - lo > 1e-12 {
        let mid = 0.5 * (lo + hi);
        if f(mid) < level {
            hi = mid
        } else {
            lo = mid
        }
    }
    hi
}

/// REFERENCES §4.2 [D] (swing equation without governor, Kundur 1994 ch. 11):
/// Δω(t) = −A(1 − e^{−t/T}), A = ΔP/D, T = 2E/D.
fn decay(a: f64, t_c: f64, t: f64) -> f64 {
    -a * (1.0 - (-t / t_c).exp())
}

/// The same decay seen through the relay's first-order lag T_f (docs/models.md §5), the
/// convolution of the two lags as in tests/reference.rs:
/// m(t) = −A[1 − (T e^{−t/T} − T_f e^{−t/T_f})/(T − T_f)].
fn decay_measured(a: f64, t_c: f64, tf: f64, t: f64) -> f64 {
    -a * (1.0 - (t_c * (-t / t_c).exp() - tf * (-t / tf).exp()) / (t_c - tf))
}

/// One fixed-output machine (governor blocked, Kundur §11.1) and linear loads, so the island
/// follows REFERENCES §4.2 exactly: E = H·S, D = Σ P0 (freq_exp 1).
fn fixed_plant(
    h_s: f64,
    rating_mva: f64,
    output_mw: f64,
    loads: Vec<Load>,
    import_mw: f64,
) -> Plant {
    let mut g = gen("g", rating_mva, h_s, output_mw, 0.0, PrimeMover::Fixed);
    g.governor.droop_pct = 0.0;
    let mut p = plant(50.0, vec![g], loads, import_mw);
    if import_mw == 0.0 {
        p.utility = None;
    }
    p
}

fn uf_stage(
    id: &str,
    pickup_hz: f64,
    min_rocof: Option<f64>,
    delay_s: f64,
    sheds: Vec<usize>,
) -> Stage {
    Stage {
        sizing: nadir::model::Sizing::All,
        in_service: true,
        groups: Vec::new(),
        id: id.into(),
        trigger: StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s: min_rocof,
        },
        delay_s,
        breaker_s: 0.05,
        sheds,
    }
}

fn all_finite(run: &Run) -> bool {
    let mut xs = vec![
        run.nadir_hz,
        run.nadir_at_s,
        run.peak_hz.unwrap_or(0.0),
        run.peak_at_s.unwrap_or(0.0),
        run.max_rocof_hz_per_s,
        run.final_hz,
        run.shed_mw,
    ];
    for i in &run.islands {
        xs.extend([
            i.from_s,
            i.to_s,
            i.nadir_hz,
            i.nadir_at_s,
            i.peak_hz.unwrap_or(0.0),
            i.peak_at_s.unwrap_or(0.0),
            i.final_hz,
        ]);
        xs.push(i.max_rocof_hz_per_s);
    }
    xs.extend(run.events.iter().map(|e: &LoggedEvent| e.at_s));
    xs.iter().all(|x| x.is_finite())
}

#[test]
fn rocof_supervised_stage_blocks_a_slow_decline_and_operates_on_a_fast_one() {
    // docs/models.md §6: a df/dt-supervised stage's condition is f_meas < pickup AND
    // −rocof_meas ≥ min_rocof. Same plant and stage, only the lost import differs.
    // Plant: 100 MVA, H = 10 s (E = 1000 MW·s), 100 MW linear load (D = 100 MW/pu).
    // REFERENCES §4.2 [D]: Δω(t) = −(ΔP/D)(1 − e^{−t/T}), T = 2E/D = 20 s, so
    // dΔω/dt = −(ΔP/2E)e^{−t/T}: at most 50·5/2000 = 0.125 Hz/s for a 5 MW loss (below the
    // 0.5 Hz/s supervision everywhere), 50·50/2000 = 1.25 Hz/s for a 50 MW loss.
    // Both steady states (47.5 Hz, 25 Hz) are below the 49.5 Hz pickup.
    let stage = uf_stage("df", 49.5, Some(0.5), 0.1, vec![1]);
    let tf = 0.04;
    let sch = scheme(vec![stage], tf);
    let (e, d) = (1000.0, 100.0);
    for (loss_mw, operates) in [(5.0, false), (50.0, true)] {
        let p = fixed_plant(
            10.0,
            100.0,
            100.0 - loss_mw,
            vec![load("base", 90.0, 1.0), load("shed", 10.0, 1.0)],
            loss_mw,
        );
        let a = loss_mw / d;
        let t_c = 2.0 * e / d;
        let t_cross = falls_below(
            |t| 50.0 * (1.0 + decay_measured(a, t_c, tf, t)),
            49.5,
            0.0,
            30.0,
        );
        let c = case(
            Start::Connected,
            t_cross + 2.0,
            vec![(0.0, Action::Open(BreakerRef::Utility))],
        );
        let run = simulate(&p, &c, 0, &sch, &SimConfig::default());
        let pickup = first_at(&run, |k| matches!(k, EventKind::StagePickup { .. }));
        let opened = first_at(&run, |k| matches!(k, EventKind::LoadsOpened { .. }));
        eprintln!("loss {loss_mw} MW: measured crossing {t_cross:.5} s, pickup {pickup:?}, opened {opened:?}, nadir {:.4}", run.nadir_hz);
        if operates {
            // At the crossing (≈0.41 s) measured df/dt ≈ −1.2 Hz/s, well past supervision: the
            // stage picks up at the frequency crossing and opens delay + breaker later.
            let pickup = pickup.expect("fast decline picks up");
            assert!(
                (pickup - t_cross).abs() < 1e-3,
                "pickup {pickup} vs {t_cross}"
            );
            let opened = opened.expect("fast decline opens");
            assert!((opened - (t_cross + 0.15)).abs() < 1e-3, "opened {opened}");
            assert!((run.shed_mw - 10.0).abs() < 1e-12);
        } else {
            // The frequency did cross the pickup well before the end...
            assert!(run.nadir_hz < 49.5 - 0.05, "nadir {}", run.nadir_hz);
            // ...but the stage never picked up.
            assert_eq!(pickup, None, "{:?}", run.events);
            assert_eq!(opened, None);
            assert_eq!(run.shed_mw, 0.0);
        }
        assert_eq!(run.stop, StopReason::EndTime);
    }
}

#[test]
fn stage_resets_when_frequency_recovers_before_its_delay() {
    // docs/models.md §6: a stage that picks up resets if its condition clears before delay_s,
    // and then never opens. Lag 0 (T_f < 1e-6 ⇒ m = Δω, §5) so the times are closed forms.
    // Islanded: 100 MVA, H = 5 s (E = 500 MW·s), 100 MW linear load (D = 100 MW/pu), T = 10 s.
    // +5 MW at 0: Δω(t) = −0.05(1 − e^{−t/10}) (REFERENCES §4.2 [D]) crosses 49.5 Hz
    // (Δω = −0.01) at t = −10 ln 0.8. −5 MW at 3 s restores the balance: from then on
    // Δω(t) = Δω(3)e^{−(t−3)/10}, back above −0.01 at 3 + 10 ln(Δω(3)/−0.01).
    let p = fixed_plant(5.0, 100.0, 100.0, vec![load("l", 100.0, 1.0)], 0.0);
    let c = case(
        Start::Islanded,
        8.0,
        vec![
            (
                0.0,
                Action::LoadStep {
                    section: 0,
                    mw: 5.0,
                },
            ),
            (
                3.0,
                Action::LoadStep {
                    section: 0,
                    mw: -5.0,
                },
            ),
        ],
    );
    let t_pick = -10.0 * 0.8f64.ln();
    let dw3 = decay(0.05, 10.0, 3.0);
    let t_reset = 3.0 + 10.0 * (dw3 / -0.01).ln();
    assert!(
        t_reset - t_pick < 5.0,
        "the delay must outlast the excursion"
    );
    let sch = scheme(vec![uf_stage("uf", 49.5, None, 5.0, vec![0])], 0.0);
    let run = simulate(&p, &c, 0, &sch, &SimConfig::default());
    eprintln!(
        "reset: pickup {t_pick:.6} reset {t_reset:.6}; {:?}",
        run.events
    );
    let pick = first_at(&run, |k| matches!(k, EventKind::StagePickup { .. })).expect("pickup");
    let reset = first_at(&run, |k| matches!(k, EventKind::StageReset { .. })).expect("reset");
    assert!((pick - t_pick).abs() < 1e-3, "pickup {pick} vs {t_pick}");
    assert!((reset - t_reset).abs() < 1e-3, "reset {reset} vs {t_reset}");
    assert_eq!(
        count(&run, |k| matches!(k, EventKind::StagePickup { .. })),
        1
    );
    assert_eq!(
        count(&run, |k| matches!(k, EventKind::StageTripCommand { .. })),
        0
    );
    assert_eq!(
        count(&run, |k| matches!(k, EventKind::LoadsOpened { .. })),
        0
    );
    assert_eq!(run.shed_mw, 0.0);
    assert_eq!(run.stop, StopReason::EndTime);
}

#[test]
fn generator_under_frequency_trip_is_a_cascade_after_its_time() {
    // docs/models.md §6: a generator element starts timing when f_meas < hz and opens the
    // machine after_s later (the whole time to breaker opening); a protection trip is a cascade.
    // Two fixed machines (E = 4·100 + 4·20 = 480 MW·s), 100 MW linear load (D = 100 MW/pu),
    // 10 MW import lost at 0, no shedding: REFERENCES §4.2 [D] with A = 0.1, T = 9.6 s, seen
    // through the 0.04 s measurement lag (closed form as in tests/reference.rs).
    let mut small = gen("small", 20.0, 4.0, 10.0, 0.0, PrimeMover::Fixed);
    small.trips = vec![FrequencyTrip::Under {
        hz: 49.0,
        after_s: 0.3,
    }];
    let big = gen("big", 100.0, 4.0, 80.0, 0.0, PrimeMover::Fixed);
    let p = plant(50.0, vec![big, small], vec![load("l", 100.0, 1.0)], 10.0);
    let tf = 0.04;
    let t_cross = falls_below(
        |t| 50.0 * (1.0 + decay_measured(0.1, 9.6, tf, t)),
        49.0,
        0.0,
        20.0,
    );
    let c = case(
        Start::Connected,
        t_cross + 0.8,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![], tf), &SimConfig::default());
    eprintln!("cascade: crossing {t_cross:.6}; {:?}", run.events);
    let trips: Vec<_> = run
        .events
        .iter()
        .filter_map(|e| match &e.what {
            EventKind::GeneratorTripped {
                generator, cascade, ..
            } => Some((generator.clone(), *cascade, e.at_s)),
            _ => None,
        })
        .collect();
    assert_eq!(trips.len(), 1, "{trips:?}");
    let (g, cascade, at) = &trips[0];
    assert_eq!(g, "small");
    assert!(*cascade);
    assert!(
        (at - (t_cross + 0.3)).abs() < 1e-3,
        "trip {at} vs {}",
        t_cross + 0.3
    );
    let pick = first_at(&run, |k| matches!(k, EventKind::ProtectionPickup { .. }))
        .expect("protection pickup");
    assert!((pick - t_cross).abs() < 1e-3, "pickup {pick} vs {t_cross}");
    // The breaker opening is logged with protection as its cause.
    assert!(run.events.iter().any(|e| matches!(
        &e.what,
        EventKind::BreakerOpened {
            cause: nadir::sim::Cause::Protection { .. },
            ..
        }
    )));
    // After the trip the deficit is 20 MW on E = 400 MW·s: the slope steepens (sign check).
    assert!(run.final_hz < 49.0);
}

#[test]
fn voltage_dip_drops_only_loads_set_above_the_remaining_voltage_and_faster_than_the_dip() {
    // docs/models.md §3 (voltage dip): a load with undervoltage {below_pu, after_s} drops out
    // after_s after the dip starts if below_pu > remaining_pu and duration_s > after_s, and stays
    // off; during the dip the section's loads draw v²·P. Islanded fixed machine at balance:
    // both effects remove load, so frequency can only rise (swing equation sign, Kundur §3.9).
    let uv = |below_pu, after_s| Some(UndervoltageTrip { below_pu, after_s });
    let mut loads = vec![
        load("base", 70.0, 1.0),
        load("drops", 10.0, 1.0),
        load("set-low", 10.0, 1.0),
        load("slow", 10.0, 1.0),
    ];
    loads[1].undervoltage = uv(0.8, 0.1); // 0.8 > 0.6 and 0.1 < 0.3: drops at 1.1 s
    loads[2].undervoltage = uv(0.5, 0.1); // 0.5 < 0.6: stays
    loads[3].undervoltage = uv(0.8, 0.5); // 0.5 > 0.3 s dip: stays
    let p = fixed_plant(5.0, 100.0, 100.0, loads, 0.0);
    let c = case(
        Start::Islanded,
        3.0,
        vec![(
            1.0,
            Action::VoltageDip {
                section: 0,
                remaining_pu: 0.6,
                duration_s: 0.3,
            },
        )],
    );
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg);
    eprintln!("dip: {:?}", run.events);
    let drops: Vec<_> = run
        .events
        .iter()
        .filter_map(|e| match &e.what {
            EventKind::LoadDroppedOut { load, mw } => Some((load.clone(), *mw, e.at_s)),
            _ => None,
        })
        .collect();
    assert_eq!(drops.len(), 1, "{drops:?}");
    assert_eq!(drops[0].0, "drops");
    assert_eq!(drops[0].1, 10.0);
    assert!(
        (drops[0].2 - 1.1).abs() < 1e-3,
        "drop-out at {}",
        drops[0].2
    );
    assert!(first_at(&run, |k| matches!(k, EventKind::VoltageRestored { .. })).is_some());
    // Before the dip nothing moves; from the dip on frequency rises and stays above nominal.
    let tr = run.trace.as_ref().expect("trace");
    for (t, f) in tr.t_s.iter().zip(&tr.section_hz[0]) {
        if *t < 1.0 {
            assert!((f - 50.0).abs() < 1e-9, "{t}: {f}");
        } else if *t > 1.01 {
            assert!(*f > 50.0, "{t}: {f}");
        }
    }
    // After the dip 90 MW remain on 100 MW of generation: the closed form of REFERENCES §4.2
    // [D] with a surplus heads to Δω = +10/90; here only the sign and monotone rise are checked.
    assert!(run.final_hz > run.nadir_hz && run.final_hz > 50.0);
    assert!((run.nadir_hz - 50.0).abs() < 1e-9);
}

#[test]
fn connected_plant_follows_the_utility_profile_and_a_stage_operates_on_it() {
    // docs/models.md §1: on the utility the island's frequency is case.utility_profile joined
    // by straight lines, held at its end values. Profile 50 Hz to 2 s, down to 49 Hz at 4 s.
    // The measured value is the ramp through the first-order lag T_f (§5):
    // f_m(t) = 50 − 0.5[(t−2) − T_f(1 − e^{−(t−2)/T_f})] for 2 ≤ t ≤ 4 (lag of a ramp).
    let p = fixed_plant(
        4.0,
        100.0,
        80.0,
        vec![load("base", 90.0, 1.0), load("shed", 10.0, 1.0)],
        20.0,
    );
    let mut c = case(Start::Connected, 6.0, vec![]);
    c.utility_profile = vec![(0.0, 50.0), (2.0, 50.0), (4.0, 49.0)];
    let profile = |t: f64| {
        if t <= 2.0 {
            50.0
        } else if t <= 4.0 {
            50.0 - 0.5 * (t - 2.0)
        } else {
            49.0
        }
    };
    let tf = 0.04;
    let sch = scheme(vec![uf_stage("uf", 49.6, None, 0.1, vec![1])], tf);
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let run = simulate(&p, &c, 0, &sch, &cfg);
    let tr = run.trace.as_ref().expect("trace");
    let mut worst: f64 = 0.0;
    for (t, f) in tr.t_s.iter().zip(&tr.section_hz[0]) {
        worst = worst.max((f - profile(*t)).abs());
    }
    assert!(
        worst < 1e-6,
        "largest departure from the profile {worst} Hz"
    );
    let t_profile = 2.8; // the profile itself crosses 49.6 Hz
    let f_m = |t: f64| 50.0 - 0.5 * ((t - 2.0) - tf * (1.0 - (-(t - 2.0) / tf).exp()));
    let t_pick = falls_below(f_m, 49.6, 2.0, 4.0);
    let pick = first_at(&run, |k| matches!(k, EventKind::StagePickup { .. })).expect("pickup");
    let open = first_at(&run, |k| matches!(k, EventKind::LoadsOpened { .. })).expect("opened");
    eprintln!("profile: worst {worst:.2e}, pickup {pick:.6} vs {t_pick:.6}, open {open:.6}");
    assert!(pick > t_profile && open > t_profile);
    assert!(open < t_profile + 0.1 + 0.05 + 5.0 * tf);
    assert!((pick - t_pick).abs() < 1e-3, "pickup {pick} vs {t_pick}");
    assert!((open - (t_pick + 0.15)).abs() < 1e-3, "open {open}");
    // Shedding on the utility does not move its frequency; the import changes instead.
    assert!((run.final_hz - 49.0).abs() < 1e-9, "final {}", run.final_hz);
    assert!((run.shed_mw - 10.0).abs() < 1e-12);
}

#[test]
fn huge_deficit_without_shedding_collapses_at_the_floor() {
    // docs/models.md §1: a separated island whose Δω falls below collapse_fraction − 1 (0.85·f0)
    // has collapsed. Without load damping (freq_exp 0) the swing equation (Kundur §3.9) gives a
    // straight line Δω(t) = −ΔP·t/(2E) (REFERENCES §4.2 with d → 0): 60 MW lost of 100 MW,
    // E = 4·60 = 240 MW·s, so Δω = −0.15 at t = 0.15·480/60 = 1.2 s. With a linear load
    // (D = 100 MW/pu) the §4.2 closed form gives t = −T ln(1 − 0.15/A), A = 0.6, T = 4.8 s.
    for (freq_exp, t_expect) in [(0.0, 1.2), (1.0, -4.8 * (1.0f64 - 0.15 / 0.6).ln())] {
        let p = fixed_plant(4.0, 60.0, 40.0, vec![load("l", 100.0, freq_exp)], 60.0);
        let c = case(
            Start::Connected,
            10.0,
            vec![(0.0, Action::Open(BreakerRef::Utility))],
        );
        let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &SimConfig::default());
        eprintln!(
            "collapse k={freq_exp}: {:?} vs {t_expect:.6}, nadir {}",
            run.stop, run.nadir_hz
        );
        let StopReason::Collapse { at_s, .. } = run.stop else {
            panic!("expected collapse, got {:?}", run.stop);
        };
        assert!(
            (at_s - t_expect).abs() < 1e-3,
            "collapse at {at_s} vs {t_expect}"
        );
        assert!((run.nadir_hz - 42.5).abs() < 1e-3, "nadir {}", run.nadir_hz);
        assert!(first_at(&run, |k| matches!(k, EventKind::Collapse { .. })).is_some());
        assert!(all_finite(&run), "{run:?}");
    }
}

#[test]
fn event_storm_guard_stops_a_run_past_its_event_budget() {
    // docs/models.md §7: more than max_events (+ case events) discrete events ⇒
    // NumericalFault "event storm". No physical case here makes relays chatter (stages latch at
    // delay_s, ties never reclose), so the guard is reached through a small budget on a run with
    // a known count: the reset case above handles two case actions plus at least a pickup and a
    // reset crossing.
    let p = fixed_plant(5.0, 100.0, 100.0, vec![load("l", 100.0, 1.0)], 0.0);
    let c = case(
        Start::Islanded,
        8.0,
        vec![
            (
                0.0,
                Action::LoadStep {
                    section: 0,
                    mw: 5.0,
                },
            ),
            (
                3.0,
                Action::LoadStep {
                    section: 0,
                    mw: -5.0,
                },
            ),
        ],
    );
    let sch = scheme(vec![uf_stage("uf", 49.5, None, 5.0, vec![0])], 0.0);
    let ok = simulate(&p, &c, 0, &sch, &SimConfig::default());
    assert_eq!(ok.stop, StopReason::EndTime);
    let tight = SimConfig {
        max_events: 0,
        ..SimConfig::default()
    };
    let run = simulate(&p, &c, 0, &sch, &tight);
    let StopReason::NumericalFault { at_s, detail } = &run.stop else {
        panic!("expected an event storm, got {:?}", run.stop);
    };
    assert_eq!(detail, "event storm");
    assert!(at_s.is_finite() && *at_s < 8.0);
}

#[test]
fn voltage_dip_trajectory_follows_the_constant_impedance_closed_form() {
    // docs/models.md §3: during a dip the section's loads draw v²·P (constant impedance). With a
    // fixed machine (P_m = 100 MW) and linear loads the swing equation (Kundur §3.9) stays
    // linear on each piece: 2E·dΔω/dt = P_m − c·(1 + Δω), c = v²·(connected P0), so
    // Δω(t) = Δω* + (Δω(t0) − Δω*)e^{−(t−t0)/T}, Δω* = (P_m − c)/c, T = 2E/c [D].
    // Pieces: 1.0–1.1 s c = 0.36·100; 1.1–1.3 s c = 0.36·90 (one load dropped); after c = 90.
    let mut loads = vec![load("base", 90.0, 1.0), load("drops", 10.0, 1.0)];
    loads[1].undervoltage = Some(UndervoltageTrip {
        below_pu: 0.8,
        after_s: 0.1,
    });
    let p = fixed_plant(5.0, 100.0, 100.0, loads, 0.0);
    let c = case(
        Start::Islanded,
        3.0,
        vec![(
            1.0,
            Action::VoltageDip {
                section: 0,
                remaining_pu: 0.6,
                duration_s: 0.3,
            },
        )],
    );
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg);
    let e2 = 2.0 * 500.0;
    let pieces = [(1.0, 36.0), (1.1, 32.4), (1.3, 90.0)];
    let closed = |t: f64| {
        let mut dw = 0.0;
        let mut t0 = 1.0;
        if t <= t0 {
            return 0.0;
        }
        for (i, &(start, c)) in pieces.iter().enumerate() {
            let end = pieces.get(i + 1).map_or(f64::INFINITY, |p| p.0);
            let star = (100.0 - c) / c;
            let upto = t.min(end);
            dw = star + (dw - star) * (-(upto - start) / (e2 / c)).exp();
            t0 = upto;
            if t <= end {
                break;
            }
        }
        assert!(t0 == t);
        dw
    };
    let tr = run.trace.as_ref().expect("trace");
    let mut worst: f64 = 0.0;
    for (t, f) in tr.t_s.iter().zip(&tr.section_hz[0]) {
        worst = worst.max((f - 50.0 * (1.0 + closed(*t))).abs());
    }
    eprintln!(
        "dip trajectory: largest error {worst:.2e} Hz, final {:.6}",
        run.final_hz
    );
    assert!(worst < 1e-5, "largest error {worst} Hz");
}

#[test]
fn stage_is_latched_after_its_trip_command() {
    // docs/models.md §6: at delay_s the stage issues its trip command (latched: no reset after
    // this) and opens its loads breaker_s later even if frequency has recovered meanwhile.
    // Lag 0 so m = Δω (§5). Same island as the reset test: +5 MW at 0 crosses 49.5 Hz at
    // t_p = −10 ln 0.8 (REFERENCES §4.2 [D]); delay 0.5 s, breaker 1.0 s. At 2.8 s a −15 MW step
    // leaves a 10 MW surplus: Δω(t) = 0.1 + (Δω(2.8) − 0.1)e^{−(t−2.8)/10} is back above −0.01
    // before t_p + 1.5 s, after the trip command.
    let p = fixed_plant(
        5.0,
        100.0,
        100.0,
        vec![load("l", 95.0, 1.0), load("shed", 5.0, 1.0)],
        0.0,
    );
    let c = case(
        Start::Islanded,
        6.0,
        vec![
            (
                0.0,
                Action::LoadStep {
                    section: 0,
                    mw: 5.0,
                },
            ),
            (
                2.8,
                Action::LoadStep {
                    section: 0,
                    mw: -15.0,
                },
            ),
        ],
    );
    let t_p = -10.0 * 0.8f64.ln();
    let dw = decay(0.05, 10.0, 2.8);
    let t_back = 2.8 + 10.0 * ((dw - 0.1) / (-0.01 - 0.1)).ln();
    assert!(t_back > t_p + 0.5 && t_back < t_p + 1.5, "{t_back}");
    let mut stage = uf_stage("uf", 49.5, None, 0.5, vec![1]);
    stage.breaker_s = 1.0;
    let run = simulate(&p, &c, 0, &scheme(vec![stage], 0.0), &SimConfig::default());
    eprintln!(
        "latch: pickup {t_p:.6}, back above {t_back:.6}; {:?}",
        run.events
    );
    let cmd = first_at(&run, |k| matches!(k, EventKind::StageTripCommand { .. })).expect("command");
    let open = first_at(&run, |k| matches!(k, EventKind::LoadsOpened { .. })).expect("opened");
    assert!((cmd - (t_p + 0.5)).abs() < 1e-3, "command {cmd}");
    assert!((open - (t_p + 1.5)).abs() < 1e-3, "opened {open}");
    assert_eq!(
        count(&run, |k| matches!(k, EventKind::StageReset { .. })),
        0
    );
    assert!((run.shed_mw - 5.0).abs() < 1e-12);
}

#[test]
fn rocof_supervised_stage_resets_when_the_decline_stops_below_pickup() {
    // docs/models.md §6: the supervised condition needs −rocof_meas ≥ min_rocof as well; when the
    // decline stops (balance restored) while frequency is still below pickup, the condition
    // clears and the stage resets before its delay. Rocof measurement: first-order lag T_w of
    // dm/dt (§5), so the reset follows the balance step within a few T_w.
    // Islanded 100 MVA, H = 10 s (E = 1000 MW·s), 100 MW linear load: +50 MW at 0 falls at
    // ≈1.25 Hz/s (REFERENCES §4.2 [D]); −50 MW at 0.6 s, after the 49.5 Hz crossing (≈0.44 s);
    // from then Δω decays back towards 0 at ≈ +0.1 Hz/s, still below 49.5 Hz for seconds.
    let p = fixed_plant(10.0, 100.0, 100.0, vec![load("l", 100.0, 1.0)], 0.0);
    let c = case(
        Start::Islanded,
        2.0,
        vec![
            (
                0.0,
                Action::LoadStep {
                    section: 0,
                    mw: 50.0,
                },
            ),
            (
                0.6,
                Action::LoadStep {
                    section: 0,
                    mw: -50.0,
                },
            ),
        ],
    );
    let tw = 0.1;
    let sch = scheme(vec![uf_stage("df", 49.5, Some(0.5), 0.5, vec![0])], 0.04);
    assert_eq!(sch.measurement.rocof_window_s, tw);
    let run = simulate(&p, &c, 0, &sch, &SimConfig::default());
    eprintln!("df/dt reset: {:?}, final {}", run.events, run.final_hz);
    let pick = first_at(&run, |k| matches!(k, EventKind::StagePickup { .. })).expect("pickup");
    let reset = first_at(&run, |k| matches!(k, EventKind::StageReset { .. })).expect("reset");
    assert!(
        pick < 0.6 && reset > 0.6 && reset < 0.6 + 5.0 * tw,
        "{pick} {reset}"
    );
    // Reference: the documented equations integrated by `chain_rk4` at 1e-5 s; the
    // pickup is the first instant with f_m < 49.5 Hz and −f0·r ≥ 0.5 Hz/s, the reset the first
    // instant after 0.6 s where that fails.
    let (mut ref_pick, mut ref_reset) = (None, f64::NAN);
    let dw_dt = |t: f64, dw: f64| (-(if t < 0.6 { 50.0 } else { 0.0 }) - 100.0 * dw) / 2000.0;
    chain_rk4(dw_dt, 0.04, tw, 1e-5, |t, y| {
        let cond = 50.0 * (1.0 + y[1]) < 49.5 && -50.0 * y[2] >= 0.5;
        if cond && ref_pick.is_none() {
            ref_pick = Some(t);
        }
        if !cond && t > 0.6 {
            ref_reset = t;
            return true;
        }
        false
    });
    let ref_pick = ref_pick.expect("reference picks up");
    eprintln!("df/dt reset reference: pickup {ref_pick:.5}, reset {ref_reset:.5}");
    assert!(
        (pick - ref_pick).abs() < 1e-3,
        "pickup {pick} vs {ref_pick}"
    );
    assert!(
        (reset - ref_reset).abs() < 1e-3,
        "reset {reset} vs {ref_reset}"
    );
    assert!(
        run.final_hz < 49.5,
        "still below pickup at the end: {}",
        run.final_hz
    );
    assert_eq!(
        count(&run, |k| matches!(k, EventKind::LoadsOpened { .. })),
        0
    );
    assert_eq!(run.shed_mw, 0.0);
}

#[test]
fn interface_under_frequency_trip_islands_the_plant_on_the_utility_profile() {
    // docs/models.md §6: an interface element times while f_meas < hz and opens the utility
    // breaker after_s later (no extra breaker time); the plant then islands (§1). The measured
    // frequency is the profile ramp through the lag T_f, as in the profile test above.
    // Profile 50 Hz to 2 s, 49 Hz at 4 s; element 49.5 Hz / 0.2 s. After the opening the
    // island (fixed machine 80 MW, 100 MW load, 20 MW import lost) falls on its own.
    let mut p = fixed_plant(4.0, 100.0, 80.0, vec![load("l", 100.0, 1.0)], 20.0);
    p.utility.as_mut().expect("utility").interface_trips = vec![FrequencyTrip::Under {
        hz: 49.5,
        after_s: 0.2,
    }];
    let mut c = case(Start::Connected, 5.0, vec![]);
    c.utility_profile = vec![(0.0, 50.0), (2.0, 50.0), (4.0, 49.0)];
    let tf = 0.04;
    let run = simulate(&p, &c, 0, &scheme(vec![], tf), &SimConfig::default());
    eprintln!("interface: {:?}", run.events);
    let f_m = |t: f64| 50.0 - 0.5 * ((t - 2.0) - tf * (1.0 - (-(t - 2.0) / tf).exp()));
    let t_cross = falls_below(f_m, 49.5, 2.0, 4.0);
    let opened = first_at(&run, |k| {
        matches!(k, EventKind::BreakerOpened { breaker, cause: nadir::sim::Cause::Protection { .. } }
            if breaker == "utility")
    })
    .expect("utility opened by protection");
    assert!(
        (opened - (t_cross + 0.2)).abs() < 1e-3,
        "opened {opened} vs {}",
        t_cross + 0.2
    );
    let separated = run.events.iter().any(|e| {
        matches!(
            &e.what,
            EventKind::IslandFormed {
                on_utility: false,
                ..
            }
        ) && e.at_s == opened
    });
    assert!(separated, "{:?}", run.events);
    // Separated below the profile's last value with a 20 MW deficit: it ends below 49 Hz.
    assert!(run.final_hz < 49.0, "final {}", run.final_hz);
    assert_eq!(run.stop, StopReason::EndTime);
}

/// Integrate the documented single-island equations with classical RK4 at step `h`: the swing
/// equation with the caller's dΔω/dt (docs/models.md §3) and the relay measurement chain
/// T_f·m' = Δω − m, T_w·r' = m' − r (§5). `visit(t, [Δω, m, r])` after each step returns true
/// to stop. Independent of the simulator's solver and event code.
fn chain_rk4(
    dw_dt: impl Fn(f64, f64) -> f64,
    tf: f64,
    tw: f64,
    h: f64,
    mut visit: impl FnMut(f64, [f64; 3]) -> bool,
) {
    let deriv = |t: f64, y: [f64; 3]| {
        let dw = dw_dt(t, y[0]);
        let dm = (y[0] - y[1]) / tf;
        [dw, dm, (dm - y[2]) / tw]
    };
    let (mut t, mut y) = (0.0, [0.0f64; 3]);
    loop {
        let k1 = deriv(t, y);
        let at = |k: [f64; 3], c: f64| [y[0] + c * k[0], y[1] + c * k[1], y[2] + c * k[2]];
        let k2 = deriv(t + h / 2.0, at(k1, h / 2.0));
        let k3 = deriv(t + h / 2.0, at(k2, h / 2.0));
        let k4 = deriv(t + h, at(k3, h));
        for i in 0..3 {
            y[i] += h / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
        }
        t += h;
        if visit(t, y) || t > 100.0 {
            return;
        }
    }
}

#[test]
fn generator_rocof_trip_operates_after_its_time_on_the_measured_df_dt() {
    // docs/models.md §6: a Rocof element times while |rocof_meas| > hz_per_s and operates
    // after_s later; rocof_meas = f0·r with r the T_w lag of dm/dt (§5). Islanded: fixed
    // machines 80 + 20 MVA, H = 10 s (E = 1000 MW·s), 100 MW linear load, +50 MW at 0: the
    // true df/dt starts at −1.25 Hz/s and decays with T = 20 s (REFERENCES §4.2 [D]), so the
    // 1.0 Hz/s level is crossed once the lags have filled. Crossing from `chain_rk4`.
    let (tf, tw) = (0.04, 0.1);
    let mut small = gen("small", 20.0, 10.0, 20.0, 0.0, PrimeMover::Fixed);
    small.trips = vec![FrequencyTrip::Rocof {
        hz_per_s: 1.0,
        after_s: 0.1,
    }];
    let big = gen("big", 80.0, 10.0, 80.0, 0.0, PrimeMover::Fixed);
    let mut p = plant(50.0, vec![big, small], vec![load("l", 100.0, 1.0)], 0.0);
    p.utility = None;
    let c = case(
        Start::Islanded,
        1.0,
        vec![(
            0.0,
            Action::LoadStep {
                section: 0,
                mw: 50.0,
            },
        )],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![], tf), &SimConfig::default());
    eprintln!("rocof trip: {:?}", run.events);
    let mut t_cross = f64::NAN;
    chain_rk4(
        |_, dw| (-50.0 - 100.0 * dw) / 2000.0,
        tf,
        tw,
        1e-5,
        |t, y| {
            if (50.0 * y[2]).abs() > 1.0 {
                t_cross = t;
                true
            } else {
                false
            }
        },
    );
    assert!(
        t_cross > 0.05 && t_cross < 0.5,
        "reference crossing {t_cross}"
    );
    let pick = first_at(&run, |k| matches!(k, EventKind::ProtectionPickup { .. })).expect("pickup");
    let trip = first_at(&run, |k| {
        matches!(k, EventKind::GeneratorTripped { generator, cascade: true, .. } if generator == "small")
    })
    .expect("cascade trip");
    eprintln!("rocof trip: reference crossing {t_cross:.5}, pickup {pick:.5}, trip {trip:.5}");
    assert!((pick - t_cross).abs() < 1e-3, "pickup {pick} vs {t_cross}");
    assert!((trip - (t_cross + 0.1)).abs() < 1e-3, "trip {trip}");
}

#[test]
fn ride_through_violation_trips_the_only_machine_and_blacks_out_the_island() {
    // docs/models.md §3: a generator with any violated ride-through limit (below_pu >
    // remaining_pu and duration_s > after_s) trips at the earliest such after_s, a cascade trip;
    // §1: an island with no running machine is a blackout. Limits {0.7 pu, 0.15 s} and
    // {0.3 pu, 0.05 s}: a dip to 0.5 pu violates only the first (trip at dip + 0.15 s), a dip to
    // 0.2 pu violates both (trip at the earlier, dip + 0.05 s), a 0.1 s dip to 0.5 pu none.
    for (remaining_pu, duration_s, expect) in [
        (0.5, 0.3, Some(0.15)),
        (0.2, 0.3, Some(0.05)),
        (0.5, 0.1, None),
    ] {
        let mut p = fixed_plant(5.0, 100.0, 100.0, vec![load("l", 100.0, 1.0)], 0.0);
        p.generators[0].undervoltage_trips = vec![
            UndervoltageTrip {
                below_pu: 0.7,
                after_s: 0.15,
            },
            UndervoltageTrip {
                below_pu: 0.3,
                after_s: 0.05,
            },
        ];
        let c = case(
            Start::Islanded,
            2.0,
            vec![(
                1.0,
                Action::VoltageDip {
                    section: 0,
                    remaining_pu,
                    duration_s,
                },
            )],
        );
        let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &SimConfig::default());
        eprintln!(
            "ride-through {remaining_pu} pu / {duration_s} s: {:?}",
            run.stop
        );
        let trip = first_at(&run, |k| {
            matches!(k, EventKind::GeneratorTripped { cascade: true, .. })
        });
        match expect {
            Some(after) => {
                let trip = trip.expect("ride-through trip");
                assert!((trip - (1.0 + after)).abs() < 1e-9, "trip {trip}");
                let StopReason::Blackout { at_s, .. } = run.stop else {
                    panic!("expected a blackout, got {:?}", run.stop);
                };
                assert!((at_s - trip).abs() < 1e-9, "blackout {at_s} vs trip {trip}");
            }
            None => {
                assert_eq!(trip, None, "{:?}", run.events);
                assert_eq!(run.stop, StopReason::EndTime);
            }
        }
        assert!(all_finite(&run), "{run:?}");
    }
}

#[test]
fn voltage_dip_on_a_connected_plant_leaves_the_utility_frequency() {
    // docs/models.md §1 and §3: on the utility the island's frequency is the utility's; a dip
    // changes only the import. The drop-out timing rule is the same as when islanded.
    let mut loads = vec![load("base", 90.0, 1.0), load("drops", 10.0, 1.0)];
    loads[1].undervoltage = Some(UndervoltageTrip {
        below_pu: 0.8,
        after_s: 0.1,
    });
    let p = fixed_plant(5.0, 100.0, 80.0, loads, 20.0);
    let c = case(
        Start::Connected,
        2.0,
        vec![(
            0.5,
            Action::VoltageDip {
                section: 0,
                remaining_pu: 0.6,
                duration_s: 0.3,
            },
        )],
    );
    let cfg = SimConfig {
        record_trace: true,
        ..SimConfig::default()
    };
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg);
    let drop = first_at(&run, |k| matches!(k, EventKind::LoadDroppedOut { .. })).expect("drop-out");
    assert!((drop - 0.6).abs() < 1e-9, "drop-out {drop}");
    let tr = run.trace.as_ref().expect("trace");
    assert!(
        tr.section_hz[0].iter().all(|f| *f == 50.0),
        "frequency moved"
    );
    assert_eq!(run.stop, StopReason::EndTime);
}
