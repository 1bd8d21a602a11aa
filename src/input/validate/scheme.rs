//! The scheme file: measurement settings and shedding stages checked against their plant (loads,
//! generator trips, breakers that arm a stage). A never-shed load in a stage and a load in several
//! stages read (the audit judges them); a load listed twice in one stage does not. Also the
//! flow-sized armed stages (`sizing: flow` with its allowance) and the setting groups: group ids,
//! the operating points each is in force at (each point in at most one group), and each stage's
//! settings per group, checked as the stage's own are.
//!
//! Owns the scheme's validation messages. It must not change the plant; it only reads it.

use super::*;

/// The top-level fields of a scheme file.
pub(super) const SCHEME_KEYS: &[&str] = &[
    "name",
    "measurement",
    "stages",
    "setting_groups",
    "over_frequency",
];

/// Highest allowance in MW a flow-sized stage may state: beyond any plant nadir studies (a
/// larger figure is a unit slip, kW for MW say).
const MAX_ALLOWANCE_MW: f64 = 100_000.0;

pub fn scheme(r: &mut Reader, map: &Mapping, plant: &Plant, default_name: &str) -> Option<Scheme> {
    r.check_top_keys(map, SCHEME_KEYS);
    let name: Option<String> = r.optional(map, "name");
    let raw_m: Option<RawMeasurement> = r.optional(map, "measurement");
    let list: Option<Vec<Slot<RawStage>>> = r.list(map, "stages", true, limits::STAGES);
    let over_list: Option<Vec<Slot<RawOverStage>>> =
        r.list(map, "over_frequency", false, limits::STAGES);
    // As many groups as operating points at most (each point is in one group at most).
    let raw_groups: Option<Vec<Slot<RawSettingGroup>>> =
        r.list(map, "setting_groups", false, limits::OPERATING_POINTS);
    let (groups, group_ids) = setting_groups(r, raw_groups.as_deref().unwrap_or(&[]), plant);
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
                pickup(r, &p.key("pickup_hz"), hz, &s.id, plant);
                if let Some(v) = s.min_rocof_hz_per_s {
                    min_rocof(r, &p.key("min_rocof_hz_per_s"), v);
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
        let sizing = sizing(
            r,
            &p,
            &s.id,
            s.armed_by.is_some(),
            s.sizing,
            s.allowance_mw,
            s.allowance_reserve_pct,
        );
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
        let in_service = s.in_service.unwrap_or(true);
        if let (Some(trigger), Some(sizing)) = (trigger, sizing) {
            let own = Stage {
                id: s.id.clone(),
                trigger,
                delay_s: s.delay_s,
                breaker_s,
                sheds,
                sizing,
                in_service,
                groups: Vec::new(),
            };
            let in_groups = stage_groups(r, &p, &own, &s.groups, &group_ids, plant);
            stages.push(Stage {
                groups: in_groups,
                ..own
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
    if r.diagnostics.is_empty() {
        out_of_service_everywhere(r, &stages, &groups, plant);
    }
    r.diagnostics.is_empty().then(|| Scheme {
        name: name.unwrap_or_else(|| default_name.to_string()),
        measurement,
        stages,
        over_frequency,
        groups,
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

/// The checks of an under-frequency pickup: below nominal, not absurdly low, not at or below a
/// generator's own under-frequency trip.
fn pickup(r: &mut Reader, pp: &FieldPath, hz: f64, stage: &str, plant: &Plant) {
    let f0 = plant.nominal_hz;
    if !hz.is_finite() {
        num(r, pp, hz, Lo::Any, Hi::Any, " Hz");
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
            pp,
            format!("pickup_hz {hz} Hz is not below nominal {f0} Hz; an under-frequency stage must pick up below nominal"),
            format!("allowed: {} ≤ pickup_hz < {f0} Hz{habit}", 0.8 * f0),
        );
    } else if hz < 0.8 * f0 {
        num(r, pp, hz, Lo::AtLeast(0.8 * f0), Hi::Below(f0), " Hz");
    } else {
        other_nominal(r, pp, hz, f0);
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
                    pp,
                    format!(
                        "pickup_hz {hz} Hz of stage `{}` is at or below generator `{}`'s own under-frequency trip (generators[{g}].trips[{t}]: below {th} Hz after {after} s); the machine would trip before the stage sheds",
                        stage, gen.id
                    ),
                    format!("set the pickup above {th} Hz, or check the machine's protection setting"),
                );
            }
        }
    }
}

fn min_rocof(r: &mut Reader, path: &FieldPath, v: f64) {
    num(r, path, v, Lo::Above(0.0), Hi::AtMost(20.0), " Hz/s");
}

/// The sizing of a stage and its allowance: `sizing: flow` on armed stages only, at most one
/// allowance and only with it. `None` when something is wrong (reported).
fn sizing(
    r: &mut Reader,
    p: &FieldPath,
    stage: &str,
    armed: bool,
    raw: Option<RawSizing>,
    allowance_mw: Option<f64>,
    allowance_pct: Option<f64>,
) -> Option<Sizing> {
    let flow = raw == Some(RawSizing::Flow);
    if flow && !armed {
        r.error_at_key(
            &p.key("sizing"),
            format!("sizing: flow applies to breaker-armed stages only; stage `{stage}` is an under-frequency stage"),
            "remove sizing, or arm the stage with armed_by (the breaker whose pre-event flow sizes it)".to_string(),
        );
        return None;
    }
    let allowance = allowance(
        r,
        p,
        stage,
        flow,
        allowance_mw,
        allowance_pct,
        "sizing: flow",
    )?;
    Some(if flow {
        Sizing::Flow(allowance.unwrap_or(Allowance::Mw(0.0)))
    } else {
        Sizing::All
    })
}

/// The allowance fields of a stage or of one of its group entries: `Ok(None)` when neither is
/// written, `None` when something is wrong (reported). `flow` says the stage is flow-sized;
/// `needs` is what the message says to add otherwise.
fn allowance(
    r: &mut Reader,
    p: &FieldPath,
    stage: &str,
    flow: bool,
    mw: Option<f64>,
    pct: Option<f64>,
    needs: &str,
) -> Option<Option<Allowance>> {
    let (n, said) = written(&[
        ("allowance_mw", mw.is_some()),
        ("allowance_reserve_pct", pct.is_some()),
    ]);
    if n == 0 {
        return Some(None);
    }
    let key = if mw.is_some() {
        "allowance_mw"
    } else {
        "allowance_reserve_pct"
    };
    if !flow {
        r.error_at_key(
            &p.key(key),
            format!("{key} applies to a stage sized from the pre-event flow; stage `{stage}` opens every load it lists"),
            format!("add {needs} to an armed stage, or remove {key}"),
        );
        return None;
    }
    if n > 1 {
        r.error(
            p,
            format!("stage `{stage}` states its allowance twice ({said})"),
            "keep one: allowance_mw for a fixed MW figure, or allowance_reserve_pct for a share of the spinning reserve".to_string(),
        );
        return None;
    }
    let ok = match (mw, pct) {
        (Some(v), _) => num(
            r,
            &p.key("allowance_mw"),
            v,
            Lo::AtLeast(0.0),
            Hi::AtMost(MAX_ALLOWANCE_MW),
            " MW",
        )
        .then_some(Allowance::Mw(v)),
        (_, Some(v)) => num(
            r,
            &p.key("allowance_reserve_pct"),
            v,
            Lo::AtLeast(0.0),
            Hi::AtMost(100.0),
            " %",
        )
        .then_some(Allowance::ReservePct(v)),
        _ => None,
    };
    ok.map(Some)
}

/// The `setting_groups` list: unique ids, known operating points, each point in one group at
/// most. Returns the groups read and their id registry.
fn setting_groups(
    r: &mut Reader,
    list: &[Slot<RawSettingGroup>],
    plant: &Plant,
) -> (Vec<SettingGroup>, Ids) {
    let ops = plant_ids(plant).operating_points;
    let mut ids = Ids::new("setting group");
    let mut groups = Vec::new();
    // Where each operating point was first given a group: (group id, path).
    let mut taken: HashMap<usize, (String, FieldPath)> = HashMap::new();
    for (i, slot) in list.iter().enumerate() {
        let p = FieldPath::root().key("setting_groups").index(i);
        let g = match slot {
            Slot::Ok(g) => g,
            Slot::Broken(id) => {
                if let Some(id) = id {
                    ids.add(r, id, i, &p.key("id"), "setting group");
                }
                continue;
            }
        };
        ids.add(r, &g.id, i, &p.key("id"), "setting group");
        if g.operating_points.is_empty() {
            r.error(
                &p.key("operating_points"),
                format!("setting group `{}` lists no operating point", g.id),
                format!(
                    "list the operating points at which the relays use this group (the plant has {})",
                    quoted_list(&ops)
                ),
            );
        }
        let mut points = Vec::new();
        for (k, id) in g.operating_points.iter().enumerate() {
            let op_path = p.key("operating_points").index(k);
            let Some(op) = plant.operating_point_index(id) else {
                unknown_id(r, &op_path, "operating point", id, &ops);
                continue;
            };
            if let Some((first, first_path)) = taken.get(&op) {
                let line = r
                    .line_of(first_path)
                    .map(|n| format!(", line {n}"))
                    .unwrap_or_default();
                let msg = if *first == g.id {
                    format!(
                        "operating point `{id}` is listed twice in setting group `{}` (first at {first_path}{line})",
                        g.id
                    )
                } else {
                    format!(
                        "operating point `{id}` is in setting groups `{first}` ({first_path}{line}) and `{}`; the relays use one group at a time",
                        g.id
                    )
                };
                r.error(
                    &op_path,
                    msg,
                    "list each operating point in one setting group at most".to_string(),
                );
                continue;
            }
            taken.insert(op, (g.id.clone(), op_path));
            points.push(op);
        }
        groups.push(SettingGroup {
            id: g.id.clone(),
            operating_points: points,
        });
    }
    (groups, ids)
}

/// A stage's `groups` entries: known group ids, one entry per group, and each setting checked
/// as the stage's own (a pickup only on a frequency stage, an allowance only on a flow-sized
/// one).
fn stage_groups(
    r: &mut Reader,
    p: &FieldPath,
    own: &Stage,
    entries: &[RawGroupSettings],
    group_ids: &Ids,
    plant: &Plant,
) -> Vec<GroupSettings> {
    let mut out: Vec<GroupSettings> = Vec::new();
    let mut seen: HashMap<usize, FieldPath> = HashMap::new();
    for (k, e) in entries.iter().enumerate() {
        let gp = p.key("groups").index(k);
        let Some(group) = (match group_ids.get(&e.group) {
            Some((g, _)) => Some(g),
            None if group_ids.known().is_empty() => {
                r.error(
                    &gp.key("group"),
                    format!(
                        "stage `{}` has settings for setting group `{}`, but the scheme defines no setting groups",
                        own.id,
                        shown_id(&e.group)
                    ),
                    format!(
                        "add a top-level `setting_groups:` list, e.g. `- {{ id: {}, operating_points: [some-point] }}`",
                        shown_id(&e.group)
                    ),
                );
                None
            }
            None => {
                unknown_id(
                    r,
                    &gp.key("group"),
                    "setting group",
                    &e.group,
                    &group_ids.known(),
                );
                None
            }
        }) else {
            continue;
        };
        if let Some(first) = seen.get(&group) {
            let line = r
                .line_of(first)
                .map(|n| format!(", line {n}"))
                .unwrap_or_default();
            r.error(
                &gp.key("group"),
                format!(
                    "stage `{}` has two entries for setting group `{}` (first at {first}{line})",
                    own.id, e.group
                ),
                "give each setting group one entry per stage".to_string(),
            );
            continue;
        }
        seen.insert(group, gp.clone());
        let mut ok = true;
        let trigger = match own.trigger {
            StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s,
            } => {
                let hz = e.pickup_hz.unwrap_or(pickup_hz);
                if let Some(hz) = e.pickup_hz {
                    let before = r.diagnostics.len();
                    pickup(r, &gp.key("pickup_hz"), hz, &own.id, plant);
                    ok &= r.diagnostics.len() == before;
                }
                if let Some(v) = e.min_rocof_hz_per_s {
                    let before = r.diagnostics.len();
                    min_rocof(r, &gp.key("min_rocof_hz_per_s"), v);
                    ok &= r.diagnostics.len() == before;
                }
                StageTrigger::Frequency {
                    pickup_hz: hz,
                    min_rocof_hz_per_s: e.min_rocof_hz_per_s.or(min_rocof_hz_per_s),
                }
            }
            StageTrigger::Breaker(_) => {
                for (key, set) in [
                    ("pickup_hz", e.pickup_hz.is_some()),
                    ("min_rocof_hz_per_s", e.min_rocof_hz_per_s.is_some()),
                ] {
                    if set {
                        r.error_at_key(
                            &gp.key(key),
                            format!(
                                "{key} applies to under-frequency stages only; stage `{}` is breaker-armed",
                                own.id
                            ),
                            format!("remove {key} from this group entry"),
                        );
                        ok = false;
                    }
                }
                own.trigger
            }
        };
        let delay_s = e.delay_s.unwrap_or(own.delay_s);
        if let Some(v) = e.delay_s {
            ok &= delay(r, &gp.key("delay_s"), v);
        }
        let flow = matches!(own.sizing, Sizing::Flow(_));
        let sizing = match allowance(
            r,
            &gp,
            &own.id,
            flow,
            e.allowance_mw,
            e.allowance_reserve_pct,
            "sizing: flow on the stage itself",
        ) {
            Some(Some(a)) => Sizing::Flow(a),
            Some(None) => own.sizing,
            None => {
                ok = false;
                own.sizing
            }
        };
        if ok {
            out.push(GroupSettings {
                group,
                in_service: e.in_service.unwrap_or(own.in_service),
                trigger,
                delay_s,
                sizing,
            });
        }
    }
    out
}

/// A stage out of service at every operating point can never operate: most likely a slip.
fn out_of_service_everywhere(
    r: &mut Reader,
    stages: &[Stage],
    groups: &[SettingGroup],
    plant: &Plant,
) {
    let probe = Scheme {
        name: String::new(),
        measurement: Measurement::default(),
        stages: Vec::new(),
        over_frequency: Vec::new(),
        groups: groups.to_vec(),
    };
    for (i, stage) in stages.iter().enumerate() {
        let somewhere = (0..plant.operating_points.len())
            .any(|op| stage.in_group(probe.group_at(op)).is_some());
        if !somewhere {
            let p = FieldPath::root().key("stages").index(i);
            let path = if r.is_written(&p.key("in_service")) {
                p.key("in_service")
            } else {
                p
            };
            r.error(
                &path,
                format!(
                    "stage `{}` is out of service at every operating point, so it never operates",
                    stage.id
                ),
                "put it in service in the setting group (or at the points in no group) where it works, or remove the stage".to_string(),
            );
        }
    }
}
