//! The scheme file: measurement settings and shedding stages checked against their plant (loads,
//! generator trips, breakers that arm a stage). A never-shed load in a stage and a load in several
//! stages read (the audit judges them); a load listed twice in one stage does not.
//!
//! Owns the scheme's validation messages. It must not change the plant; it only reads it.

use super::*;

/// The top-level fields of a scheme file.
pub(super) const SCHEME_KEYS: &[&str] = &["name", "measurement", "stages", "over_frequency"];

pub fn scheme(r: &mut Reader, map: &Mapping, plant: &Plant, default_name: &str) -> Option<Scheme> {
    r.check_top_keys(map, SCHEME_KEYS);
    let name: Option<String> = r.optional(map, "name");
    let raw_m: Option<RawMeasurement> = r.optional(map, "measurement");
    let list: Option<Vec<Slot<RawStage>>> = r.list(map, "stages", true, limits::STAGES);
    let over_list: Option<Vec<Slot<RawOverStage>>> =
        r.list(map, "over_frequency", false, limits::STAGES);
    let mut measurement = Measurement::default();
    if let Some(m) = raw_m {
        let p = FieldPath::root().key("measurement");
        if let Some(v) = m.frequency_lag_s {
            num(
                r,
                &p.key("frequency_lag_s"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(1.0),
                " s",
            );
            if v > 0.0 && v < SHORT_LAG_S {
                short_lag(r, &p.key("frequency_lag_s"), v, false);
            }
            measurement.frequency_lag_s = v;
        }
        if let Some(v) = m.rocof_window_s {
            num(
                r,
                &p.key("rocof_window_s"),
                v,
                Lo::Above(0.0),
                Hi::AtMost(5.0),
                " s",
            );
            measurement.rocof_window_s = v;
        }
    }
    let list = list?;
    if list.is_empty() {
        r.error(
            &FieldPath::root().key("stages"),
            "the stages list is empty".to_string(),
            "add at least one stage, e.g. `- { id: uf-1, pickup_hz: 49.0, delay_s: 0.1, sheds: [some-load] }`".to_string(),
        );
    }
    let PlantIds {
        loads: load_list, ..
    } = plant_ids(plant);
    let breakers = breaker_list(plant);
    let f0 = plant.nominal_hz;
    let mut ids = Ids::new("stage");
    // Where each load was last listed: (stage id, path).
    let mut shed_by: HashMap<usize, (String, FieldPath)> = HashMap::new();
    let mut stages = Vec::new();
    for (i, slot) in list.iter().enumerate() {
        let p = FieldPath::root().key("stages").index(i);
        let s = match slot {
            Slot::Ok(s) => s,
            Slot::Broken(id) => {
                if let Some(id) = id {
                    ids.add(r, id, i, &p.key("id"), "stage");
                }
                continue;
            }
        };
        ids.add(r, &s.id, i, &p.key("id"), "stage");
        let trigger = match (s.pickup_hz, &s.armed_by) {
            (Some(_), Some(_)) | (None, None) => {
                r.error(
                    &p,
                    format!(
                        "stage `{}` needs exactly one of pickup_hz or armed_by; it has {}",
                        s.id,
                        if s.pickup_hz.is_some() { "both" } else { "neither" }
                    ),
                    "use pickup_hz for an under-frequency stage, armed_by for a stage started by a breaker opening".to_string(),
                );
                None
            }
            (Some(hz), None) => {
                let pp = p.key("pickup_hz");
                if !hz.is_finite() {
                    num(r, &pp, hz, Lo::Any, Hi::Any, " Hz");
                } else if hz >= f0 {
                    let other = if f0 == 60.0 { 50.0 } else { 60.0 };
                    let habit = if (hz - other).abs() < (hz - f0).abs() {
                        format!(
                            "; {hz} Hz looks like a setting for a {other} Hz plant (the same fraction of nominal is {} Hz here)",
                            mw(hz * f0 / other)
                        )
                    } else {
                        String::new()
                    };
                    r.error(
                        &pp,
                        format!("pickup_hz {hz} Hz is not below nominal {f0} Hz; an under-frequency stage must pick up below nominal"),
                        format!("allowed: {} ≤ pickup_hz < {f0} Hz{habit}", 0.8 * f0),
                    );
                } else if hz < 0.8 * f0 {
                    num(r, &pp, hz, Lo::AtLeast(0.8 * f0), Hi::Below(f0), " Hz");
                } else {
                    other_nominal(r, &pp, hz, f0);
                    for (g, gen) in plant.generators.iter().enumerate() {
                        // The highest under-frequency setting at or above the pickup operates first.
                        let worst = gen
                            .trips
                            .iter()
                            .enumerate()
                            .filter_map(|(t, trip)| match trip {
                                FrequencyTrip::Under { hz: th, after_s } if *th >= hz => {
                                    Some((t, *th, *after_s))
                                }
                                _ => None,
                            })
                            .max_by(|a, b| a.1.total_cmp(&b.1));
                        if let Some((t, th, after)) = worst {
                            r.error(
                                &pp,
                                format!(
                                    "pickup_hz {hz} Hz of stage `{}` is at or below generator `{}`'s own under-frequency trip (generators[{g}].trips[{t}]: below {th} Hz after {after} s); the machine would trip before the stage sheds",
                                    s.id, gen.id
                                ),
                                format!("set the pickup above {th} Hz, or check the machine's protection setting"),
                            );
                        }
                    }
                }
                if let Some(v) = s.min_rocof_hz_per_s {
                    num(
                        r,
                        &p.key("min_rocof_hz_per_s"),
                        v,
                        Lo::Above(0.0),
                        Hi::AtMost(20.0),
                        " Hz/s",
                    );
                }
                Some(StageTrigger::Frequency {
                    pickup_hz: hz,
                    min_rocof_hz_per_s: s.min_rocof_hz_per_s,
                })
            }
            (None, Some(id)) => {
                if s.min_rocof_hz_per_s.is_some() {
                    r.error_at_key(
                        &p.key("min_rocof_hz_per_s"),
                        format!("min_rocof_hz_per_s applies to under-frequency stages only; stage `{}` is armed by `{id}`", s.id),
                        "remove min_rocof_hz_per_s, or make it a pickup_hz stage".to_string(),
                    );
                }
                match what_is(plant, id) {
                    Named::Breaker(b) => Some(StageTrigger::Breaker(b)),
                    other => {
                        not_a_breaker(
                            r,
                            &p.key("armed_by"),
                            id,
                            other,
                            &breakers,
                            "armed_by takes the utility breaker, a tie or a generator",
                        );
                        None
                    }
                }
            }
        };
        delay(r, &p.key("delay_s"), s.delay_s);
        let breaker_s = s.breaker_s.unwrap_or(d::BREAKER_S);
        if s.breaker_s.is_some() {
            num(
                r,
                &p.key("breaker_s"),
                breaker_s,
                Lo::Above(0.0),
                Hi::AtMost(1.0),
                " s",
            );
        }
        if s.sheds.is_empty() {
            r.error(
                &p.key("sheds"),
                format!("stage `{}` sheds no load", s.id),
                "list the load ids this stage opens, or remove the stage".to_string(),
            );
        }
        let mut sheds = Vec::new();
        for (k, id) in s.sheds.iter().enumerate() {
            let lp = p.key("sheds").index(k);
            let Some(l) = plant.load_index(id) else {
                unknown_id(r, &lp, "load", id, &load_list);
                continue;
            };
            // A never-shed load in a stage, or a load in several stages (an armed stage and its
            // under-frequency backup), is how as-found tables are written: it reads, and the
            // audit judges it. Only a load listed twice in one stage is a slip.
            if let Some((first_stage, first_path)) = shed_by.get(&l) {
                if *first_stage == s.id {
                    let line = r
                        .line_of(first_path)
                        .map(|n| format!(", line {n}"))
                        .unwrap_or_default();
                    r.error(
                        &lp,
                        format!(
                            "load `{id}` is listed twice in stage `{}` (first at {first_path}{line})",
                            s.id
                        ),
                        "list each load once in a stage".to_string(),
                    );
                    continue;
                }
            }
            shed_by.insert(l, (s.id.clone(), lp));
            sheds.push(l);
        }
        if let Some(trigger) = trigger {
            stages.push(Stage {
                id: s.id.clone(),
                trigger,
                delay_s: s.delay_s,
                breaker_s,
                sheds,
            });
        }
    }
    let mut over_frequency = Vec::new();
    for (i, slot) in over_list.unwrap_or_default().iter().enumerate() {
        let p = FieldPath::root().key("over_frequency").index(i);
        match slot {
            Slot::Ok(s) => {
                ids.add(r, &s.id, stages.len() + i, &p.key("id"), "stage");
                if let Some(o) = over_stage(r, &p, s, plant) {
                    over_frequency.push(o);
                }
            }
            Slot::Broken(Some(id)) => ids.add(r, id, stages.len() + i, &p.key("id"), "stage"),
            Slot::Broken(None) => {}
        }
    }
    r.diagnostics.is_empty().then(|| Scheme {
        name: name.unwrap_or_else(|| default_name.to_string()),
        measurement,
        stages,
        over_frequency,
    })
}

/// One over-frequency stage: a pickup above nominal and below the over-speed level at which a
/// run stops (1.15·f0), a delay, a breaker time, and exactly one of `trips` or `runs_back` naming
/// a generator of the plant.
fn over_stage(r: &mut Reader, p: &FieldPath, s: &RawOverStage, plant: &Plant) -> Option<OverStage> {
    let f0 = plant.nominal_hz;
    let pp = p.key("above_hz");
    let hz = s.above_hz;
    let ceiling = 1.15 * f0;
    let hz_ok = if !hz.is_finite() {
        num(r, &pp, hz, Lo::Any, Hi::Any, " Hz")
    } else if hz <= f0 {
        r.error(
            &pp,
            format!(
                "above_hz {} Hz of over-frequency stage `{}` is not above nominal {f0} Hz; it would operate in normal running",
                mw(hz),
                s.id
            ),
            format!(
                "allowed: {f0} < above_hz < {} Hz (an under-frequency stage goes under `stages` with pickup_hz)",
                mw(ceiling)
            ),
        );
        false
    } else if hz >= ceiling {
        r.error(
            &pp,
            format!(
                "above_hz {} Hz of over-frequency stage `{}` is at or above {} Hz, the over-speed level at which a run stops; it could never operate",
                mw(hz),
                s.id,
                mw(ceiling)
            ),
            format!("allowed: {f0} < above_hz < {} Hz", mw(ceiling)),
        );
        false
    } else {
        other_nominal(r, &pp, hz, f0);
        true
    };
    let delay_ok = delay(r, &p.key("delay_s"), s.delay_s);
    let breaker_s = s.breaker_s.unwrap_or(d::BREAKER_S);
    let breaker_ok = s.breaker_s.is_none()
        || num(
            r,
            &p.key("breaker_s"),
            breaker_s,
            Lo::Above(0.0),
            Hi::AtMost(1.0),
            " s",
        );
    let generators = plant_ids(plant).generators;
    let resolve = |r: &mut Reader, path: &FieldPath, id: &str| {
        let g = plant.generator_index(id);
        if g.is_none() {
            unknown_id(r, path, "generator", id, &generators);
        }
        g
    };
    let action = match (&s.trips, &s.runs_back) {
        (Some(_), Some(_)) | (None, None) => {
            r.error(
                p,
                format!(
                    "over-frequency stage `{}` needs exactly one of trips or runs_back; it has {}",
                    s.id,
                    if s.trips.is_some() { "both" } else { "neither" }
                ),
                "write `trips: GENERATOR` to open a generator's breaker, or `runs_back: { generator: GENERATOR, mw: MW }` to lower its output".to_string(),
            );
            None
        }
        (Some(id), None) => {
            resolve(r, &p.key("trips"), id).map(|generator| OverAction::Trip { generator })
        }
        (None, Some(rb)) => {
            let g = resolve(r, &p.key("runs_back").key("generator"), &rb.generator);
            let mp = p.key("runs_back").key("mw");
            let mw_ok = num(r, &mp, rb.mw, Lo::Above(0.0), Hi::Any, " MW");
            match g {
                Some(g) if mw_ok && rb.mw > plant.generators[g].max_mw => {
                    r.error(
                        &mp,
                        format!(
                            "runs_back.mw {} MW is more than generator `{}`'s max_mw {} MW",
                            mw(rb.mw),
                            plant.generators[g].id,
                            mw(plant.generators[g].max_mw)
                        ),
                        "a run-back lowers the output by at most its whole range; to take the machine off, write `trips` instead".to_string(),
                    );
                    None
                }
                Some(generator) if mw_ok => Some(OverAction::RunBack {
                    generator,
                    mw: rb.mw,
                }),
                _ => None,
            }
        }
    };
    let action = action?;
    (hz_ok && delay_ok && breaker_ok).then(|| OverStage {
        id: s.id.clone(),
        pickup_hz: hz,
        delay_s: s.delay_s,
        breaker_s,
        action,
    })
}
