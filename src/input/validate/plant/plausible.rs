//! Plausibility warnings of the plant file: values that are allowed but look like a slip of unit
//! or habit (a rating in kVA, a droop written as a fraction, an inertia constant on the wrong
//! base, a 50 Hz setting on a 60 Hz plant, a lag too short to be simulated as a lag).
//!
//! Runs only on a plant that validated without errors. Each warning names the value, why it looks
//! wrong and the likely fix; the channel and the acknowledgement comment are
//! [`crate::input::warn`]'s. The thresholds are constants here, stated in docs/files.md.

use super::*;

/// A machine rated more than this many times the plant's largest load (or generation, for a
/// plant that exports) at any operating point is taken for a rating written in kVA.
pub const RATING_VS_LOAD_FACTOR: f64 = 10.0;

/// A permanent (or transient) droop below this, in percent, is taken for a fraction.
pub const LOW_DROOP_PCT: f64 = 1.0;

/// Shortest lag the simulator integrates as a lag, seconds; shorter governor, turbine and
/// measurement lags are treated as instantaneous (docs/models.md, "Lags shorter than 10 ms").
pub const SHORT_LAG_S: f64 = 0.01;

/// Typical inertia constants H (MW·s/MVA, on the machine's own rating) by prime mover, with where
/// each range comes from.
pub fn inertia_range(pm: &PrimeMover) -> Option<(f64, f64, &'static str)> {
    match pm {
        PrimeMover::Steam { .. } | PrimeMover::SteamReheat { .. } => Some((
            2.5,
            10.0,
            "thermal units, 2-pole 2.5–6 s and 4-pole 4–10 s: Kundur 1994, Table 3.2, from memory",
        )),
        PrimeMover::Hydro { .. } => Some((
            2.0,
            4.0,
            "hydraulic units: Kundur 1994, Table 3.2, from memory",
        )),
        PrimeMover::GasTurbine { .. } => {
            Some((2.0, 7.0, "gas turbine sets: common practice, no source"))
        }
        PrimeMover::Engine { .. } => Some((
            0.5,
            2.0,
            "reciprocating engine sets: common practice, no source",
        )),
        PrimeMover::Fixed => None,
    }
}

/// Every plausibility warning of a valid plant.
pub(super) fn plant_warnings(r: &mut Reader, plant: &Plant) {
    rating_vs_load(r, plant);
    load_vs_supply(r, plant);
    let f0 = plant.nominal_hz;
    for (i, g) in plant.generators.iter().enumerate() {
        let p = FieldPath::root().key("generators").index(i);
        droops(r, &p.key("governor"), g);
        inertia(r, &p, g);
        lags(r, &p.key("governor"), g);
        for (j, t) in g.trips.iter().enumerate() {
            trip_nominal(r, &p.key("trips").index(j), t, f0);
        }
    }
    if let Some(u) = &plant.utility {
        let p = FieldPath::root().key("utility").key("interface_trips");
        for (j, t) in u.interface_trips.iter().enumerate() {
            trip_nominal(r, &p.index(j), t, f0);
        }
    }
    let c = FieldPath::root().key("criteria");
    let k = &plant.criteria;
    for (path, hz) in [
        (c.key("min_hz"), k.min_hz),
        (c.key("max_hz"), k.max_hz),
        (c.key("recover").key("above_hz"), k.recover_above_hz),
        (c.key("settle").key("low_hz"), k.settle_low_hz),
        (c.key("settle").key("high_hz"), k.settle_high_hz),
        (c.key("coordination").key("normal_low_hz"), k.normal_low_hz),
    ] {
        if r.is_written(&path) {
            other_nominal(r, &path, hz, f0);
        }
    }
    let d = FieldPath::root().key("design").key("pickup_hz");
    for (path, hz) in [
        (d.key("highest"), plant.design.highest_pickup_hz),
        (d.key("lowest"), plant.design.lowest_pickup_hz),
    ] {
        if r.is_written(&path) {
            other_nominal(r, &path, hz, f0);
        }
    }
}

/// A frequency setting nearer the other nominal frequency than this plant's: a 50 Hz habit on a
/// 60 Hz plant or the reverse. Used for the scheme's pickups too.
pub(in crate::input::validate) fn other_nominal(
    r: &mut Reader,
    path: &FieldPath,
    hz: f64,
    f0: f64,
) {
    let other = if f0 == 60.0 { 50.0 } else { 60.0 };
    if (hz - other).abs() < (hz - f0).abs() {
        r.warn(
            path,
            Code::OtherNominal,
            format!("{} Hz", mw(hz)),
            if hz == other {
                format!("{other} Hz is the nominal frequency of a {other} Hz plant, not of this {f0} Hz one")
            } else {
                format!(
                    "{} Hz is nearer {other} Hz than this plant's nominal {f0} Hz; it looks like a setting for a {other} Hz plant",
                    mw(hz)
                )
            },
            format!(
                "write the setting for {f0} Hz (the same fraction of nominal is {} Hz), or check plant.nominal_hz",
                mw(hz * f0 / other)
            ),
        );
    }
}

fn trip_nominal(r: &mut Reader, path: &FieldPath, t: &FrequencyTrip, f0: f64) {
    match *t {
        FrequencyTrip::Under { hz, .. } => other_nominal(r, &path.key("below_hz"), hz, f0),
        FrequencyTrip::Over { hz, .. } => other_nominal(r, &path.key("above_hz"), hz, f0),
        FrequencyTrip::Rocof { .. } => {}
    }
}

/// The largest of load and generation at any operating point, with the point's id.
fn plant_scale(plant: &Plant) -> Option<(f64, &str)> {
    plant
        .operating_points
        .iter()
        .map(|op| {
            let load: f64 = op.load_mw.iter().sum();
            let gen: f64 = op.output_mw.iter().sum();
            (load.max(gen), op.id.as_str())
        })
        .max_by(|a, b| a.0.total_cmp(&b.0))
        .filter(|(mw, _)| *mw > 0.0)
}

fn rating_vs_load(r: &mut Reader, plant: &Plant) {
    let Some((scale, at)) = plant_scale(plant) else {
        return;
    };
    for (i, g) in plant.generators.iter().enumerate() {
        if g.rating_mva <= RATING_VS_LOAD_FACTOR * scale {
            continue;
        }
        r.warn(
            &FieldPath::root()
                .key("generators")
                .index(i)
                .key("rating_mva"),
            Code::RatingVsLoad,
            format!("{} MVA", mw(g.rating_mva)),
            format!(
                "generator `{}` is rated {:.0} times the plant's largest load or generation ({} MW at `{at}`); a rating in kVA written as MVA gives the machine that many times its stored energy (H × rating), so frequency hardly moves",
                g.id,
                g.rating_mva / scale,
                mw(scale)
            ),
            format!(
                "if the rating is in kVA, write `rating_mva: {}` (and check max_mw, which defaults to the rating)",
                mw(g.rating_mva / 1000.0)
            ),
        );
    }
}

fn load_vs_supply(r: &mut Reader, plant: &Plant) {
    let generation: f64 = plant.generators.iter().map(|g| g.max_mw).sum();
    let import = plant
        .operating_points
        .iter()
        .map(|op| op.import_mw)
        .fold(0.0f64, f64::max);
    let supply = generation + import;
    for (i, l) in plant.loads.iter().enumerate() {
        if l.p_mw <= supply {
            continue;
        }
        r.warn(
            &FieldPath::root().key("loads").index(i).key("p_mw"),
            Code::LoadVsSupply,
            format!("{} MW", mw(l.p_mw)),
            format!(
                "load `{}` is larger than all generation ({} MW, every machine at max_mw) plus the largest import ({} MW) together, so it could never be supplied",
                l.id,
                mw(generation),
                mw(import)
            ),
            format!(
                "if it is in kW, write `p_mw: {}`",
                mw(l.p_mw / 1000.0)
            ),
        );
    }
}

fn droops(r: &mut Reader, p: &FieldPath, g: &Generator) {
    let gov = &g.governor;
    if gov.prime_mover == PrimeMover::Fixed {
        return;
    }
    let check = |r: &mut Reader, name: &str, v: f64| {
        let path = p.key(name);
        if v >= LOW_DROOP_PCT || !r.is_written(&path) {
            return;
        }
        let fix = if v <= 0.2 {
            format!(
                "if {} is a fraction, write `{name}: {}` ({} %)",
                mw(v),
                mw(v * 100.0),
                mw(v * 100.0)
            )
        } else {
            format!("write the droop in percent of the machine rating, e.g. `{name}: 4`")
        };
        r.warn(
            &path,
            Code::LowDroop,
            format!("{} %", mw(v)),
            format!(
                "a droop of {} % on generator `{}` is below 1 %, under the 2–12 % that network codes ask of governors (EU 2016/631, Art. 15(2)(d), from memory); it looks like a fraction written where a percentage is expected",
                mw(v),
                g.id
            ),
            fix,
        );
    };
    if !gov.isochronous {
        check(r, "droop_pct", gov.droop_pct);
    }
    if let PrimeMover::Hydro {
        transient_droop_pct,
        ..
    } = gov.prime_mover
    {
        check(r, "transient_droop_pct", transient_droop_pct);
    }
}

fn inertia(r: &mut Reader, p: &FieldPath, g: &Generator) {
    let Some((lo, hi, source)) = inertia_range(&g.governor.prime_mover) else {
        return;
    };
    if (lo..=hi).contains(&g.inertia_s) {
        return;
    }
    let model = match g.governor.prime_mover {
        PrimeMover::Steam { .. } => "steam",
        PrimeMover::SteamReheat { .. } => "steam-reheat",
        PrimeMover::Hydro { .. } => "hydro",
        PrimeMover::GasTurbine { .. } => "gas-turbine",
        PrimeMover::Engine { .. } => "engine",
        PrimeMover::Fixed => "fixed",
    };
    r.warn(
        &p.key("inertia_s"),
        Code::InertiaRange,
        format!("{} s", mw(g.inertia_s)),
        format!(
            "inertia_s of generator `{}` is outside the typical {lo}–{hi} s for a {model} machine ({source})",
            g.id
        ),
        "inertia_s is H in MW·s/MVA on the machine's own rating_mva; check that it is not on another base (H_own = H_other × S_other / rating_mva) and use the maker's figure".to_string(),
    );
}

fn lags(r: &mut Reader, p: &FieldPath, g: &Generator) {
    let lags: Vec<(&str, f64)> = match g.governor.prime_mover {
        PrimeMover::Steam {
            governor_s,
            turbine_s,
        } => vec![("governor_s", governor_s), ("turbine_s", turbine_s)],
        PrimeMover::SteamReheat {
            governor_s,
            reheat_s,
            ..
        } => vec![("governor_s", governor_s), ("reheat_s", reheat_s)],
        PrimeMover::Hydro {
            governor_s,
            reset_s,
            ..
        } => vec![("governor_s", governor_s), ("reset_s", reset_s)],
        PrimeMover::GasTurbine {
            governor_s,
            turbine_s,
            ..
        } => vec![("governor_s", governor_s), ("turbine_s", turbine_s)],
        PrimeMover::Engine { governor_s, .. } => vec![("governor_s", governor_s)],
        PrimeMover::Fixed => vec![],
    };
    let engine = matches!(g.governor.prime_mover, PrimeMover::Engine { .. });
    for (name, v) in lags {
        let path = p.key(name);
        if v >= SHORT_LAG_S || !r.is_written(&path) {
            continue;
        }
        short_lag(r, &path, v, engine && name == "governor_s");
    }
}

/// A lag below [`SHORT_LAG_S`]; `held` for the engine's ramp-limited fuel-rack lag, which is held
/// at that value instead of being dropped.
pub(in crate::input::validate) fn short_lag(r: &mut Reader, path: &FieldPath, v: f64, held: bool) {
    let outcome = if held {
        format!("the run uses {} s", mw(SHORT_LAG_S))
    } else {
        "the run is as if the lag were left out".to_string()
    };
    let treated = if held {
        format!(
            "the simulator holds it at {} s (the engine's lag is ramp limited, so it is not dropped)",
            mw(SHORT_LAG_S)
        )
    } else {
        "the simulator treats it as instantaneous (output equal to its input)".to_string()
    };
    r.warn(
        path,
        Code::ShortLag,
        format!("{} s", mw(v)),
        format!(
            "a lag of {} s is shorter than the {} s the simulator integrates; {treated} (docs/models.md, lags shorter than 10 ms)",
            mw(v),
            mw(SHORT_LAG_S)
        ),
        format!("lags are in seconds; if the maker's lag is this short, acknowledge the warning ({outcome})"),
    );
}
