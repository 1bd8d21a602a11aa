//! The cases file: disturbance cases checked against their plant (operating points, breakers,
//! sections, event times, utility frequency profiles, islanded starts).
//!
//! Owns the cases' validation messages. It must not change the plant; it only reads it.

use super::*;

/// The top-level fields of a cases file.
pub(super) const CASES_KEYS: &[&str] = &["cases"];

/// Validates a cases file against its plant; `None` when any diagnostic was recorded.
/// Largest case weight: weights are relative (the default is 1), and a bound keeps the design
/// objective, a sum of weight × MW over every row, finite (weights of 1e308 made it infinite).
pub const MAX_CASE_WEIGHT: f64 = 1000.0;

/// Largest load step either way, MW: far above any industrial plant's single load (a step of
/// 10 GW is several power stations), and small enough that every screening figure stays finite.
pub const MAX_LOAD_STEP_MW: f64 = 10_000.0;

pub fn cases(r: &mut Reader, map: &Mapping, plant: &Plant) -> Option<CaseSet> {
    r.check_top_keys(map, CASES_KEYS);
    let list: Vec<Slot<RawCase>> = r.list(map, "cases", true, limits::CASES)?;
    if list.is_empty() {
        r.error(
            &FieldPath::root().key("cases"),
            "the cases list is empty".to_string(),
            "add at least one case, e.g. `- { id: utility-loss, events: [ { at_s: 0, open: utility } ] }`".to_string(),
        );
    }
    let mut ids = Ids::new("case");
    let mut out = Vec::new();
    for (i, slot) in list.iter().enumerate() {
        let p = FieldPath::root().key("cases").index(i);
        match slot {
            Slot::Ok(c) => {
                ids.add(r, &c.id, i, &p.key("id"), "case");
                out.push(case(r, &p, c, plant));
            }
            Slot::Broken(Some(id)) => ids.add(r, id, i, &p.key("id"), "case"),
            Slot::Broken(None) => {}
        }
    }
    r.diagnostics.is_empty().then_some(CaseSet { cases: out })
}

fn case(r: &mut Reader, p: &FieldPath, c: &RawCase, plant: &Plant) -> Case {
    let said = r.diagnostics.len() + r.suppressed;
    let PlantIds {
        sections,
        generators: gens,
        ties,
        operating_points: ops,
        ..
    } = plant_ids(plant);
    let start = match c.start {
        RawStart::Connected => Start::Connected,
        RawStart::Islanded => Start::Islanded,
    };
    let mut applies_to: Vec<usize> = Vec::new();
    let only_at = c.only_at.as_deref().unwrap_or_default();
    for (k, id) in only_at.iter().enumerate() {
        match plant.operating_point_index(id) {
            Some(i) => {
                if !applies_to.contains(&i) {
                    applies_to.push(i);
                }
            }
            None => unknown_id(r, &p.key("only_at").index(k), "operating point", id, &ops),
        }
    }
    match &c.only_at {
        None => applies_to = (0..plant.operating_points.len()).collect(),
        Some(list) if list.is_empty() => r.error(
            &p.key("only_at"),
            format!(
                "case `{}` lists no operating point in only_at, so it would run nowhere",
                c.id
            ),
            format!(
                "name the points it applies to, e.g. `only_at: [{}]`, or remove only_at to run it at every point",
                ops.first().copied().unwrap_or("normal")
            ),
        ),
        Some(_) => {}
    }
    let duration_s = c.duration_s.unwrap_or(d::CASE_DURATION_S);
    let mut duration_ok = c.duration_s.is_none()
        || num(
            r,
            &p.key("duration_s"),
            duration_s,
            Lo::Above(0.0),
            Hi::Any,
            " s",
        );
    let max_duration_s = r.limits.get(limits::CASE_DURATION_S);
    if duration_ok && duration_s > max_duration_s as f64 {
        let limit = limits::CASE_DURATION_S;
        r.error(
            &p.key("duration_s"),
            format!(
                "duration_s {duration_s} s is above the limit {} = {max_duration_s} s of simulated time",
                limit.name
            ),
            limits::over_limit_help(limit, duration_s.ceil() as u64),
        );
        duration_ok = false;
    }
    let weight = c.weight.unwrap_or(d::CASE_WEIGHT);
    if c.weight.is_some() {
        num(
            r,
            &p.key("weight"),
            weight,
            Lo::AtLeast(0.0),
            Hi::AtMost(MAX_CASE_WEIGHT),
            "",
        );
    }
    if c.events.is_empty() && c.utility_hz.is_empty() {
        r.error(
            &p.key("events"),
            format!("case `{}` has no events and no utility_hz profile", c.id),
            "add the disturbance, e.g. `events: [ { at_s: 0, open: utility } ]`".to_string(),
        );
    }

    let raw_events = within_limit(
        r,
        &p.key("events"),
        &c.events,
        limits::EVENTS_PER_CASE,
        &c.id,
    );
    let raw_profile = within_limit(
        r,
        &p.key("utility_hz"),
        &c.utility_hz,
        limits::PROFILE_POINTS,
        &c.id,
    );

    let mut events: Vec<CaseEvent> = Vec::new();
    for (k, e) in raw_events.iter().enumerate() {
        let ep = p.key("events").index(k);
        if num(r, &ep.key("at_s"), e.at_s, Lo::AtLeast(0.0), Hi::Any, " s")
            && duration_ok
            && e.at_s >= duration_s
        {
            r.error(
                &ep.key("at_s"),
                format!(
                    "event at {} s is not within the case's duration of {duration_s} s",
                    e.at_s
                ),
                "move the event earlier or lengthen duration_s".to_string(),
            );
        }
        let (n_given, has) = written(&[
            ("open", e.open.is_some()),
            ("trip", e.trip.is_some()),
            ("load_step", e.load_step.is_some()),
            ("voltage_dip", e.voltage_dip.is_some()),
        ]);
        if n_given != 1 {
            r.error(
                &ep,
                format!(
                    "an event takes exactly one of open, trip, load_step, voltage_dip; this one has {has}"
                ),
                "write one event per action; several may share the same at_s".to_string(),
            );
            continue;
        }
        let action = if let Some(id) = &e.open {
            let fp = ep.key("open");
            match what_is(plant, id) {
                Named::Breaker(BreakerRef::Utility) => {
                    if start == Start::Islanded {
                        r.error(
                            &fp,
                            format!(
                                "case `{}` starts islanded, so the utility breaker `{id}` is already open",
                                c.id
                            ),
                            "remove this event, or start the case connected".to_string(),
                        );
                    }
                    Some(Action::Open(BreakerRef::Utility))
                }
                Named::Breaker(BreakerRef::Tie(i)) => Some(Action::Open(BreakerRef::Tie(i))),
                Named::Breaker(BreakerRef::Generator(_)) => {
                    r.error(
                        &fp,
                        format!("`{id}` is a generator; open takes the utility breaker or a tie"),
                        format!("write `trip: {id}` to trip a generator"),
                    );
                    None
                }
                other => {
                    let mut known: Vec<&str> = plant
                        .utility
                        .iter()
                        .map(|u| u.breaker_id.as_str())
                        .collect();
                    known.extend(ties.iter().copied());
                    not_a_breaker(
                        r,
                        &fp,
                        id,
                        other,
                        &known,
                        "open takes the utility breaker or a tie",
                    );
                    None
                }
            }
        } else if let Some(id) = &e.trip {
            match plant.generator_index(id) {
                Some(g) => Some(Action::Open(BreakerRef::Generator(g))),
                None => {
                    let fp = ep.key("trip");
                    if let Named::Breaker(_) = what_is(plant, id) {
                        r.error(
                            &fp,
                            format!("`{id}` is not a generator; trip takes a generator id"),
                            format!("write `open: {id}` to open the utility breaker or a tie"),
                        );
                    } else {
                        unknown_id(r, &fp, "generator", id, &gens);
                    }
                    None
                }
            }
        } else if let Some(ls) = &e.load_step {
            let lp = ep.key("load_step");
            let section = plant.section_index(&ls.section);
            if section.is_none() {
                unknown_id(r, &lp.key("section"), "section", &ls.section, &sections);
            }
            num(
                r,
                &lp.key("mw"),
                ls.mw,
                Lo::AtLeast(-MAX_LOAD_STEP_MW),
                Hi::AtMost(MAX_LOAD_STEP_MW),
                " MW",
            );
            section.map(|section| Action::LoadStep { section, mw: ls.mw })
        } else if let Some(vd) = &e.voltage_dip {
            let vp = ep.key("voltage_dip");
            let section = plant.section_index(&vd.section);
            if section.is_none() {
                unknown_id(r, &vp.key("section"), "section", &vd.section, &sections);
            }
            num(
                r,
                &vp.key("remaining_pu"),
                vd.remaining_pu,
                Lo::AtLeast(0.0),
                Hi::AtMost(1.0),
                " pu",
            );
            time_constant(r, &vp.key("duration_s"), vd.duration_s);
            section.map(|section| Action::VoltageDip {
                section,
                remaining_pu: vd.remaining_pu,
                duration_s: vd.duration_s,
            })
        } else {
            None
        };
        if let Some(action) = action {
            events.push(CaseEvent {
                at_s: e.at_s,
                action,
            });
        }
    }
    // Stable: events at the same time keep their file order.
    events.sort_by(|a, b| a.at_s.total_cmp(&b.at_s));

    let mut utility_profile = Vec::new();
    if !c.utility_hz.is_empty() && plant.utility.is_none() {
        r.error(
            &p.key("utility_hz"),
            format!(
                "case `{}` gives a utility_hz profile but the plant has no utility",
                c.id
            ),
            "remove utility_hz".to_string(),
        );
    }
    let f0 = plant.nominal_hz;
    let mut last_t: Option<f64> = None;
    for (k, pt) in raw_profile.iter().enumerate() {
        let pp = p.key("utility_hz").index(k);
        if num(r, &pp.key("at_s"), pt.at_s, Lo::AtLeast(0.0), Hi::Any, " s") {
            if let Some(t) = last_t {
                if pt.at_s <= t {
                    r.error(
                        &pp.key("at_s"),
                        format!(
                            "utility_hz point at {} s does not come after the previous point at {t} s",
                            pt.at_s
                        ),
                        "list the profile points in increasing time".to_string(),
                    );
                }
            }
            last_t = Some(pt.at_s);
        }
        num(
            r,
            &pp.key("hz"),
            pt.hz,
            Lo::AtLeast(0.8 * f0),
            Hi::AtMost(1.2 * f0),
            " Hz",
        );
        utility_profile.push((pt.at_s, pt.hz));
    }
    // One warning per profile: its first point nearer the other nominal frequency.
    let other = if f0 == 60.0 { 50.0 } else { 60.0 };
    if let Some(k) = raw_profile
        .iter()
        .position(|pt| (pt.hz - other).abs() < (pt.hz - f0).abs())
    {
        other_nominal(
            r,
            &p.key("utility_hz").index(k).key("hz"),
            raw_profile[k].hz,
            f0,
        );
    }

    // Judged only on a case that is otherwise sound, so one mistake gives one message.
    if duration_ok && r.diagnostics.len() + r.suppressed == said {
        judgeable(
            r,
            p,
            c,
            &events,
            &utility_profile,
            duration_s,
            &plant.criteria,
        );
    }

    if start == Start::Islanded {
        for &k in &applies_to {
            for island in &topology::islands(plant, &BreakerState::initial(plant, k, false)) {
                if let Some((load, _)) = dead_island(plant, k, island) {
                    r.error(
                        &p.key("start"),
                        format!(
                            "case `{}` starts islanded, but at operating point `{}` section(s) {} carry {} MW of load with no generator online",
                            c.id,
                            plant.operating_points[k].id,
                            section_list(plant, island),
                            mw(load)
                        ),
                        "limit the case with only_at to operating points that can run islanded".to_string(),
                    );
                } else if let Some(short) = islanded_shortfall(plant, k, island) {
                    r.error(
                        &p.key("start"),
                        short.message(&c.id, plant, k, island),
                        short.help(),
                    );
                }
            }
        }
    }

    Case {
        id: c.id.clone(),
        description: c.description.clone().unwrap_or_default(),
        start,
        applies_to,
        duration_s,
        weight,
        shedding_intended: c.shedding == RawShedding::Intended,
        events,
        utility_profile,
    }
}

/// A criterion that the run cannot judge is an input error, not a pass on the last sample: the
/// settling band must be watched for at least [`MIN_JUDGED_S`] before the run ends, and so must
/// the recovery level after its deadline.
fn judgeable(
    r: &mut Reader,
    p: &FieldPath,
    c: &RawCase,
    events: &[CaseEvent],
    profile: &[(f64, f64)],
    duration_s: f64,
    criteria: &Criteria,
) {
    let (first, last) = disturbance_span(events, profile);
    let settle_from = first + criteria.settle_within_s;
    let deadline = last + criteria.recover_within_s;
    let needed = (settle_from.max(deadline) + MIN_JUDGED_S).ceil();
    if needed <= duration_s + 1e-9 {
        return;
    }
    let path = if c.duration_s.is_some() {
        p.key("duration_s")
    } else {
        p.key("id")
    };
    let duration = if c.duration_s.is_some() {
        format!("duration_s of {} s", num_text(duration_s))
    } else {
        format!("default duration_s of {} s", num_text(duration_s))
    };
    let mut why = Vec::new();
    if settle_from + MIN_JUDGED_S > duration_s + 1e-9 {
        why.push(format!(
            "the settling band is judged from {} s ({} s after the disturbance starts at {} s, criteria.settle.within_s)",
            num_text(settle_from),
            num_text(criteria.settle_within_s),
            num_text(first)
        ));
    }
    if deadline + MIN_JUDGED_S > duration_s + 1e-9 {
        why.push(format!(
            "the recovery deadline is {} s ({} s after the last event at {} s, criteria.recover.within_s)",
            num_text(deadline),
            num_text(criteria.recover_within_s),
            num_text(last)
        ));
    }
    r.error(
        &path,
        format!(
            "case `{}` cannot be judged within its {duration}: {}, and a criterion needs at least {} s of the run after that",
            c.id,
            why.join(" and "),
            num_text(MIN_JUDGED_S)
        ),
        format!(
            "write `duration_s: {}` (or more) in the case, or shorten the criterion in the plant file",
            num_text(needed)
        ),
    );
}

/// A number as the user would write it: no trailing zeros.
fn num_text(v: f64) -> String {
    let s = format!("{v:.3}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// The items of a list inside a case, or none when there are more than `limit` allows (reported
/// once, on the list).
fn within_limit<'a, T>(
    r: &mut Reader,
    path: &FieldPath,
    items: &'a [T],
    limit: limits::Limit,
    case_id: &str,
) -> &'a [T] {
    let n = items.len() as u64;
    if !r.limits.exceeded(limit, n) {
        return items;
    }
    let subject = format!("case `{case_id}` has");
    let message = limits::over_limit_message(&r.limits, limit, &subject, n);
    r.error(path, message, limits::over_limit_help(limit, n));
    &[]
}

/// What the machines of an island cannot take up when a case starts islanded.
struct Shortfall {
    /// Load − generation of the island (the import it loses; negative: an export).
    need_mw: f64,
    /// What its governed machines can raise (or lower, for an export) within their limits.
    room_mw: f64,
}

impl Shortfall {
    fn message(&self, case: &str, plant: &Plant, op: usize, island: &Island) -> String {
        let (flow, can, short) = if self.need_mw > 0.0 {
            ("import", "raise their output by", "short")
        } else {
            ("export", "lower their output by", "in excess")
        };
        format!(
            "case `{case}` starts islanded, but at operating point `{}` the {} MW {flow} must be taken up by the machines online in section(s) {}, which can {can} only {} MW (governed machines within max_mw and min_mw): {} MW {short}",
            plant.operating_points[op].id,
            mw(self.need_mw.abs()),
            section_list(plant, island),
            mw(self.room_mw),
            mw(self.need_mw.abs() - self.room_mw),
        )
    }

    fn help(&self) -> String {
        "start the case connected and open the utility breaker as its first event, limit it with only_at to operating points that can island, or change the dispatch or loads of this point".to_string()
    }
}

/// Starting islanded, the island's governed machines must take up its load − generation within
/// their limits (the rule of [`crate::screening`] and the simulator's start); `None` when they
/// can, to within 1 kW.
fn islanded_shortfall(plant: &Plant, op: usize, island: &Island) -> Option<Shortfall> {
    let o = &plant.operating_points[op];
    let load: f64 = plant
        .loads
        .iter()
        .enumerate()
        .filter(|(_, l)| island.contains(l.section))
        .map(|(i, _)| o.load_mw[i])
        .sum();
    let mut gen = 0.0;
    let mut raise = 0.0;
    let mut lower = 0.0;
    for (g, m) in plant.generators.iter().enumerate() {
        if !o.online[g] || !island.contains(m.section) {
            continue;
        }
        gen += o.output_mw[g];
        let governed = m.governor.prime_mover != PrimeMover::Fixed
            && (m.governor.isochronous || m.governor.droop_pct > 0.0);
        if governed {
            raise += (m.max_mw - o.output_mw[g]).max(0.0);
            lower += (o.output_mw[g] - m.min_mw).max(0.0);
        }
    }
    let need_mw = load - gen;
    let room_mw = if need_mw > 0.0 { raise } else { lower };
    (need_mw.abs() > room_mw + 1e-3).then_some(Shortfall { need_mw, room_mw })
}
