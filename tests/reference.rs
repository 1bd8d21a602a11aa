//! Reference tests of the simulator against published closed forms and worked examples.
//! Each check names its source; REFERENCES tags: [S] seen, [S2] secondary, [M] memory, [D] derived.

mod common;

use common::*;
use nadir::model::*;
use nadir::sim::{simulate, EventKind, SimConfig, StopReason};

fn cfg_trace(dt: f64) -> SimConfig {
    SimConfig {
        record_trace: true,
        sample_interval_s: dt,
        ..SimConfig::default()
    }
}

/// Anderson & Mirheydar, "A low-order system frequency response model", IEEE Trans. PWRS 5(3),
/// 1990: closed-form step response of the SFR model (REFERENCES §1.2, re-derived [D]).
struct Sfr {
    h: f64,
    d: f64,
    r: f64,
    km: f64,
    fh: f64,
    tr: f64,
}

impl Sfr {
    fn parts(&self) -> (f64, f64, f64) {
        let wn2 = (self.d * self.r + self.km) / (2.0 * self.h * self.r * self.tr);
        let wn = wn2.sqrt();
        let zeta = (2.0 * self.h * self.r + (self.d * self.r + self.km * self.fh) * self.tr)
            / (2.0 * (self.d * self.r + self.km))
            * wn;
        (wn, zeta, wn * (1.0 - zeta * zeta).sqrt())
    }
    fn delta_omega(&self, p: f64, t: f64) -> f64 {
        let (wn, z, wr) = self.parts();
        let alpha =
            ((1.0 - 2.0 * self.tr * z * wn + self.tr * self.tr * wn * wn) / (1.0 - z * z)).sqrt();
        let phi1 = (wr * self.tr).atan2(1.0 - z * wn * self.tr);
        let phi2 = (1.0 - z * z).sqrt().atan2(-z);
        let phi = phi1 - phi2;
        self.r * p / (self.d * self.r + self.km)
            * (1.0 + alpha * (-z * wn * t).exp() * (wr * t + phi).sin())
    }
    fn nadir(&self, p: f64) -> (f64, f64) {
        let (wn, z, wr) = self.parts();
        let tz = (wr * self.tr).atan2(z * wn * self.tr - 1.0) / wr;
        (tz, self.delta_omega(p, tz))
    }
}

#[test]
fn anderson_mirheydar_sfr_step() {
    // REFERENCES §1.3 parameter set [S] and §1.4 results [D]: H=4, D=1, R=0.05, Km=0.95,
    // F_H=0.3, T_R=8, P=−0.1 pu, 50 Hz → nadir 49.4584 Hz at 2.369 s, f∞ 49.75 Hz.
    // Build: 100 MW base; governed reheat machine of 95 MVA (Km = 0.95 of the base) and a fixed
    // 5 MVA machine, both H = 4; D = 1 from a 100 MW load with freq_exp = 1; 10 MW import lost.
    let sfr = Sfr {
        h: 4.0,
        d: 1.0,
        r: 0.05,
        km: 0.95,
        fh: 0.3,
        tr: 8.0,
    };
    let reheat = PrimeMover::SteamReheat {
        governor_s: 0.0,
        reheat_s: 8.0,
        hp_fraction: 0.3,
    };
    let p = plant(
        50.0,
        vec![
            gen("gov", 95.0, 4.0, 85.5, 5.0, reheat),
            gen("fix", 5.0, 4.0, 4.5, 5.0, PrimeMover::Fixed),
        ],
        vec![load("l", 100.0, 1.0)],
        10.0,
    );
    let c = case(
        Start::Connected,
        40.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg_trace(0.01));
    assert_eq!(run.stop, StopReason::EndTime);
    let (tz, dwz) = sfr.nadir(-0.1);
    let f_nadir = 50.0 * (1.0 + dwz);
    assert!(
        (f_nadir - 49.4584).abs() < 1e-4,
        "closed form itself: {f_nadir}"
    );
    // Within 0.1 % of the deviation and of the time.
    assert!(
        (run.nadir_hz - f_nadir).abs() < 1e-3 * (50.0 - f_nadir),
        "nadir {} vs {f_nadir}",
        run.nadir_hz
    );
    assert!(
        (run.nadir_at_s - tz).abs() < 1e-3 * tz,
        "t {} vs {tz}",
        run.nadir_at_s
    );
    let f_ss = 50.0 * (1.0 - 0.1 / (1.0 + 0.95 / 0.05));
    assert!(
        (run.final_hz - f_ss).abs() < 1e-3 * 0.25,
        "final {} vs {f_ss}",
        run.final_hz
    );
    // The whole trajectory, sample by sample.
    let tr = run.trace.as_ref().expect("trace");
    let mut worst: f64 = 0.0;
    for (t, f) in tr.t_s.iter().zip(&tr.section_hz[0]) {
        let expect = 50.0 * (1.0 + sfr.delta_omega(-0.1, *t));
        worst = worst.max((f - expect).abs());
    }
    eprintln!("SFR: nadir {:.6} vs {f_nadir:.6} Hz, t {:.5} vs {tz:.5} s, final {:.6} vs {f_ss}, trajectory max error {worst:.2e} Hz", run.nadir_hz, run.nadir_at_s, run.final_hz);
    assert!(worst < 2e-4, "largest trajectory error {worst} Hz");
}

#[test]
fn saadat_12_1_isolated_station() {
    // Saadat, Power System Analysis, 2nd ed., Example 12.1 (inputs [S2]): 250 MW, H=5, D=0.8,
    // R=0.05, τg=0.2, τT=0.5, 60 Hz, ΔP_L=0.2 pu. Steady state −ΔP/(D+1/R) = −0.5769 Hz
    // (Kundur 1994 §11.1; answer [D]); dynamic nadir −0.014885 pu at 1.222 s [D].
    // Initial ROCOF −ΔP·f0/(2H) = −1.2 Hz/s (swing equation, REFERENCES §3).
    // D = 0.8 from a 250 MW load with freq_exp = 0.8 (linear to first order: the quadratic
    // remainder moves the nadir by about 1e-4 relative, inside the tolerance).
    let steam = PrimeMover::Steam {
        governor_s: 0.2,
        turbine_s: 0.5,
    };
    let mut p = plant(
        60.0,
        vec![gen("g", 250.0, 5.0, 250.0, 5.0, steam)],
        vec![load("l", 250.0, 0.8)],
        0.0,
    );
    p.utility = None;
    let c = case(
        Start::Islanded,
        30.0,
        vec![(
            0.0,
            Action::LoadStep {
                section: 0,
                mw: 50.0,
            },
        )],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg_trace(0.001));
    let ss = 60.0 * (1.0 - 0.2 / (0.8 + 20.0));
    assert!(
        (run.final_hz - ss).abs() < 5e-4,
        "final {} vs {ss}",
        run.final_hz
    );
    let nadir = 60.0 * (1.0 - 0.014885);
    assert!(
        (run.nadir_hz - nadir).abs() < 0.005 * (60.0 - nadir),
        "nadir {}",
        run.nadir_hz
    );
    assert!(
        (run.nadir_at_s - 1.222).abs() < 0.02,
        "t {}",
        run.nadir_at_s
    );
    let tr = run.trace.as_ref().expect("trace");
    let rocof0 = (tr.section_hz[0][1] - tr.section_hz[0][0]) / (tr.t_s[1] - tr.t_s[0]);
    eprintln!("Saadat 12.1: final {:.6} vs {ss:.6}, nadir {:.6} vs {nadir:.6} at {:.4} s, rocof0 {rocof0:.5}", run.final_hz, run.nadir_hz, run.nadir_at_s);
    assert!((rocof0 + 1.2).abs() < 1.2e-3, "initial rocof {rocof0}");
}

#[test]
fn saadat_12_2_two_units_share() {
    // Saadat, Example 12.2 (inputs [S2]; answers [D]): 60 Hz, 1000 MVA base; 600 MVA R=6 % and
    // 500 MVA R=4 % at 500/400 MW; +90 MW. D=0 → −0.24 Hz; D=1.5 → −0.225 Hz.
    // D = 1.5 is a 1500 MW load with freq_exp = 1 (exactly linear); a fixed 600 MW machine keeps
    // the dispatch at 500/400 MW.
    let steam = PrimeMover::Steam {
        governor_s: 0.2,
        turbine_s: 0.5,
    };
    for (d, expect_hz) in [(0.0, -0.24), (1.5, -0.225)] {
        let mut gens = vec![
            gen("u1", 600.0, 5.0, 500.0, 6.0, steam),
            gen("u2", 500.0, 5.0, 400.0, 4.0, steam),
        ];
        let loads = if d == 0.0 {
            vec![load("l", 900.0, 0.0)]
        } else {
            gens.push(gen("base", 600.0, 5.0, 600.0, 5.0, PrimeMover::Fixed));
            vec![load("l", 1500.0, 1.0)]
        };
        let mut p = plant(60.0, gens, loads, 0.0);
        p.utility = None;
        let c = case(
            Start::Islanded,
            60.0,
            vec![(
                0.0,
                Action::LoadStep {
                    section: 0,
                    mw: 90.0,
                },
            )],
        );
        let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &SimConfig::default());
        assert!(
            (run.final_hz - 60.0 - expect_hz).abs() < 1e-6 * 60.0,
            "D={d}: {}",
            run.final_hz
        );
        assert!(run
            .events
            .iter()
            .all(|e| !matches!(e.what, EventKind::InitialDeficit { .. })));
    }
}

#[test]
fn eight_times_deficit_rule_of_thumb() {
    // Common practice, no source: at 50 Hz with H ≈ 3 s, initial ROCOF ≈ 8·ΔP Hz/s (ΔP in pu);
    // exactly f0·ΔP/(2H) = 8.33·ΔP.
    let mut p = plant(
        50.0,
        vec![gen("g", 100.0, 3.0, 90.0, 5.0, PrimeMover::Fixed)],
        vec![load("l", 100.0, 0.0)],
        10.0,
    );
    p.generators[0].governor.droop_pct = 0.0;
    let c = case(
        Start::Connected,
        1.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![], 0.04), &cfg_trace(0.001));
    let tr = run.trace.as_ref().expect("trace");
    let rocof0 = (tr.section_hz[0][1] - tr.section_hz[0][0]) / 0.001;
    assert!((rocof0 + 8.0 * 0.1).abs() < 0.05 * 0.8, "rocof {rocof0}");
    assert!(
        (rocof0 + 50.0 * 0.1 / 6.0).abs() < 1e-9,
        "exact swing value {rocof0}"
    );
}

#[test]
fn stage_opens_loads_at_computed_instant() {
    // REFERENCES §4.2 [D]: no governor, LF = 0.2, d = 2, H = 4 on generation base, 60 Hz:
    // Δω(t) = −A(1 − e^{−t/T}), A = LF/(d(1+LF)), T = 2H/(d(1+LF)); 59 Hz at 0.7438 s.
    // Through the relay's first-order lag T_f the measured value is
    // m(t) = −A[1 − (T e^{−t/T} − T_f e^{−t/T_f})/(T − T_f)] (convolution of the two lags).
    // Build: fixed 100 MVA machine H = 4 at 220 MW (the base sets only the stored energy),
    // linear load (freq_exp 1) 240 MW total = (1+LF)·d·100 MW/pu, 20 MW import lost at t = 0.
    let (lf, d, h, tf): (f64, f64, f64, f64) = (0.2, 2.0, 4.0, 0.04);
    let a = lf / (d * (1.0 + lf));
    let t_c = 2.0 * h / (d * (1.0 + lf));
    let t59 = -t_c * (1.0 - (1.0 / 60.0) / a).ln();
    assert!((t59 - 0.7438).abs() < 1e-4, "closed form {t59}");
    let m = |t: f64| -a * (1.0 - (t_c * (-t / t_c).exp() - tf * (-t / tf).exp()) / (t_c - tf));
    let (mut lo, mut hi) = (0.0, 5.0);
    while hi - lo > 1e-12 {
        let mid = 0.5 * (lo + hi);
        if m(mid) < -1.0 / 60.0 {
            hi = mid
        } else {
            lo = mid
        }
    }
    let t_pick = hi;
    let mut p = plant(
        60.0,
        vec![gen("g", 100.0, h, 220.0, 5.0, PrimeMover::Fixed)],
        vec![load("base", 230.0, 1.0), load("shed", 10.0, 1.0)],
        20.0,
    );
    p.generators[0].governor.droop_pct = 0.0;
    let stage = Stage {
        sizing: nadir::model::Sizing::All,
        in_service: true,
        groups: Vec::new(),
        id: "uf1".into(),
        trigger: StageTrigger::Frequency {
            pickup_hz: 59.0,
            min_rocof_hz_per_s: None,
        },
        delay_s: 0.1,
        breaker_s: 0.05,
        sheds: vec![1],
    };
    let c = case(
        Start::Connected,
        3.0,
        vec![(0.0, Action::Open(BreakerRef::Utility))],
    );
    let run = simulate(&p, &c, 0, &scheme(vec![stage], tf), &SimConfig::default());
    let at = |pred: &dyn Fn(&EventKind) -> bool| {
        run.events.iter().find(|e| pred(&e.what)).map(|e| e.at_s)
    };
    let pick = at(&|k| matches!(k, EventKind::StagePickup { .. })).expect("pickup");
    let open = at(&|k| matches!(k, EventKind::LoadsOpened { .. })).expect("opened");
    eprintln!("relay timing: pickup {pick:.7} vs {t_pick:.7}, open {open:.7}");
    assert!((pick - t_pick).abs() < 1e-3, "pickup {pick} vs {t_pick}");
    assert!(
        (open - (t_pick + 0.15)).abs() < 1e-3,
        "open {open} vs {}",
        t_pick + 0.15
    );
    assert!((run.shed_mw - 10.0).abs() < 1e-12);
}

#[test]
fn no_disturbance_is_quiet_and_repeatable() {
    // Definition (no source needed): with no disturbance nothing trips and frequency stays nominal.
    let steam = PrimeMover::Steam {
        governor_s: 0.2,
        turbine_s: 0.5,
    };
    let mut g = gen("g", 20.0, 4.0, 12.0, 5.0, steam);
    g.trips = vec![FrequencyTrip::Under {
        hz: 49.0,
        after_s: 0.5,
    }];
    let p = plant(
        50.0,
        vec![
            g,
            gen(
                "e",
                5.0,
                1.0,
                3.0,
                4.0,
                PrimeMover::Engine {
                    governor_s: 0.1,
                    ramp_mw_per_s: 0.5,
                },
            ),
        ],
        vec![load("l", 18.0, 2.0)],
        3.0,
    );
    let stage = Stage {
        sizing: nadir::model::Sizing::All,
        in_service: true,
        groups: Vec::new(),
        id: "uf1".into(),
        trigger: StageTrigger::Frequency {
            pickup_hz: 49.0,
            min_rocof_hz_per_s: None,
        },
        delay_s: 0.1,
        breaker_s: 0.05,
        sheds: vec![0],
    };
    let sch = scheme(vec![stage], 0.04);
    for start in [Start::Connected, Start::Islanded] {
        let c = case(start, 30.0, vec![]);
        let run = simulate(&p, &c, 0, &sch, &cfg_trace(0.01));
        assert_eq!(run.stop, StopReason::EndTime);
        assert!(
            run.events
                .iter()
                .all(|e| matches!(e.what, EventKind::IslandFormed { .. })),
            "{:?}",
            run.events
        );
        assert!(
            (run.nadir_hz - 50.0).abs() < 1e-9 && (run.final_hz - 50.0).abs() < 1e-9,
            "{} {}",
            run.nadir_hz,
            run.final_hz
        );
        if start == Start::Connected {
            assert_eq!(run.nadir_hz, 50.0);
        }
        assert_eq!(run.shed_mw, 0.0);
        let again = simulate(&p, &c, 0, &sch, &cfg_trace(0.01));
        assert_eq!(run, again);
    }
}
