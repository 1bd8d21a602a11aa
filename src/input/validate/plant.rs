//! The plant file: sections, ties, utility, generators and their governors and trips, loads,
//! operating points, criteria, the design block (its checks in [`super::design`]), and the islands
//! at each operating point.
//!
//! Owns the plant's validation messages and defaults use. It must not know the cases or scheme
//! formats; the helpers it shares with them live in [`super`].

use super::*;

fn model_name(m: RawPrimeMover) -> &'static str {
    match m {
        RawPrimeMover::Steam => "steam",
        RawPrimeMover::SteamReheat => "steam-reheat",
        RawPrimeMover::Hydro => "hydro",
        RawPrimeMover::GasTurbine => "gas-turbine",
        RawPrimeMover::Engine => "engine",
        RawPrimeMover::Fixed => "fixed",
    }
}

// ---------------------------------------------------------------- protection elements

fn frequency_trip(
    r: &mut Reader,
    path: &FieldPath,
    t: &RawFrequencyTrip,
    nominal: Option<f64>,
) -> Option<FrequencyTrip> {
    let (n_given, has) = written(&[
        ("below_hz", t.below_hz.is_some()),
        ("above_hz", t.above_hz.is_some()),
        ("rocof_hz_per_s", t.rocof_hz_per_s.is_some()),
    ]);
    if n_given != 1 {
        r.error(
            path,
            format!(
                "a frequency trip takes exactly one of below_hz, above_hz, rocof_hz_per_s; this one has {has}"
            ),
            if n_given == 0 {
                "add the setting, e.g. `below_hz: 47.5`".to_string()
            } else {
                "write one trip per setting, each with its own after_s".to_string()
            },
        );
        delay(r, &path.key("after_s"), t.after_s);
        return None;
    }
    let mut ok = delay(r, &path.key("after_s"), t.after_s);
    let trip = if let Some(hz) = t.below_hz {
        let p = path.key("below_hz");
        ok &= match nominal {
            Some(f0) => num(r, &p, hz, Lo::AtLeast(0.8 * f0), Hi::Below(f0), " Hz"),
            None => num(r, &p, hz, Lo::Above(0.0), Hi::Any, " Hz"),
        };
        FrequencyTrip::Under {
            hz,
            after_s: t.after_s,
        }
    } else if let Some(hz) = t.above_hz {
        let p = path.key("above_hz");
        ok &= match nominal {
            Some(f0) => num(r, &p, hz, Lo::Above(f0), Hi::AtMost(1.2 * f0), " Hz"),
            None => num(r, &p, hz, Lo::Above(0.0), Hi::Any, " Hz"),
        };
        FrequencyTrip::Over {
            hz,
            after_s: t.after_s,
        }
    } else {
        let v = t.rocof_hz_per_s.unwrap_or(0.0);
        ok &= num(
            r,
            &path.key("rocof_hz_per_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(20.0),
            " Hz/s",
        );
        FrequencyTrip::Rocof {
            hz_per_s: v,
            after_s: t.after_s,
        }
    };
    ok.then_some(trip)
}

fn undervoltage(r: &mut Reader, path: &FieldPath, u: &RawUndervoltage) -> UndervoltageTrip {
    num(
        r,
        &path.key("below_pu"),
        u.below_pu,
        Lo::Above(0.0),
        Hi::Below(1.0),
        " pu",
    );
    delay(r, &path.key("after_s"), u.after_s);
    UndervoltageTrip {
        below_pu: u.below_pu,
        after_s: u.after_s,
    }
}

// ---------------------------------------------------------------- plant file

const PLANT_KEYS: &[&str] = &[
    "plant",
    "sections",
    "ties",
    "utility",
    "generators",
    "loads",
    "operating_points",
    "criteria",
    "design",
];

/// Validates a plant file; `None` when any diagnostic was recorded.
pub fn plant(r: &mut Reader, map: &Mapping) -> Option<Plant> {
    r.check_top_keys(map, PLANT_KEYS);
    let header: Option<PlantHeader> = r.required(map, "plant");
    let sections_raw: Option<Vec<Slot<String>>> = r.list(map, "sections", false, limits::SECTIONS);
    let ties_raw: Vec<Slot<RawTie>> = r.list(map, "ties", false, limits::TIES).unwrap_or_default();
    let utility_given = !matches!(map.get("utility"), None | Some(serde_yaml::Value::Null));
    let utility_raw: Option<RawUtility> = r.optional(map, "utility");
    let gens_raw: Option<Vec<Slot<RawGenerator>>> =
        r.list(map, "generators", true, limits::GENERATORS);
    let loads_raw: Option<Vec<Slot<RawLoad>>> = r.list(map, "loads", true, limits::LOADS);
    let ops_raw: Option<Vec<Slot<RawOperatingPoint>>> =
        r.list(map, "operating_points", false, limits::OPERATING_POINTS);
    let criteria_raw: Option<RawCriteria> = r.optional(map, "criteria");
    let design_raw: Option<RawDesign> = r.optional(map, "design");
    if r.over_limit {
        return None;
    }
    // Structurally whole: every item deserialized and every section reference resolved.
    let mut whole = r.diagnostics.is_empty();

    let nominal = header.as_ref().and_then(|h| {
        if h.nominal_hz == 50.0 || h.nominal_hz == 60.0 {
            Some(h.nominal_hz)
        } else {
            r.error(
                &FieldPath::root().key("plant").key("nominal_hz"),
                format!(
                    "nominal_hz {} Hz is not a power-system frequency; allowed: 50 or 60",
                    h.nominal_hz
                ),
                "write 50 or 60".to_string(),
            );
            None
        }
    });

    // Sections.
    let mut section_ids = Ids::new("section");
    let mut sections: Vec<Section> = Vec::new();
    match &sections_raw {
        Some(list) if !list.is_empty() => {
            for (i, slot) in list.iter().enumerate() {
                let p = FieldPath::root().key("sections").index(i);
                match slot {
                    Slot::Ok(id) => {
                        section_ids.add(r, id, i, &p, "section");
                        sections.push(Section { id: id.clone() });
                    }
                    Slot::Broken(_) => whole = false,
                }
            }
        }
        _ => {
            section_ids.add(r, d::SECTION_ID, 0, &FieldPath::root(), "section");
            sections.push(Section {
                id: d::SECTION_ID.to_string(),
            });
        }
    }

    let mut breaker_ids = Ids::new("breaker");

    // Ties.
    let mut ties: Vec<Option<Tie>> = Vec::new();
    let mut tie_ids = Ids::new("tie");
    for (i, slot) in ties_raw.iter().enumerate() {
        let p = FieldPath::root().key("ties").index(i);
        let Slot::Ok(t) = slot else {
            if let Slot::Broken(Some(id)) = slot {
                tie_ids.add(r, id, i, &p.key("id"), "tie");
            }
            ties.push(None);
            continue;
        };
        breaker_ids.add(r, &t.id, i, &p.key("id"), "tie");
        tie_ids.add_quiet(&t.id, i, &p.key("id"), "tie");
        let tie = if t.between.len() != 2 {
            r.error(
                &p.key("between"),
                format!(
                    "between lists {} section(s), expected exactly 2",
                    t.between.len()
                ),
                "write the two sections the tie joins, e.g. `between: [north, south]`".to_string(),
            );
            None
        } else {
            let a = resolve(r, &section_ids, &p.key("between").index(0), &t.between[0]);
            let b = resolve(r, &section_ids, &p.key("between").index(1), &t.between[1]);
            match (a, b) {
                (Some(a), Some(b)) if a == b => {
                    r.error(
                        &p.key("between"),
                        format!(
                            "tie `{}` joins section `{}` to itself; between needs two different sections",
                            t.id, t.between[0]
                        ),
                        "name the two sections on either side of the tie".to_string(),
                    );
                    None
                }
                (Some(a), Some(b)) => Some(Tie {
                    id: t.id.clone(),
                    between: [a, b],
                    normally_open: t.normally_open,
                }),
                _ => None,
            }
        };
        if tie.is_none() {
            whole = false;
        }
        ties.push(tie);
    }

    // Utility.
    let utility: Option<Utility> = match &utility_raw {
        None => None,
        Some(u) => {
            let p = FieldPath::root().key("utility");
            let breaker_id = u
                .breaker
                .clone()
                .unwrap_or_else(|| d::UTILITY_BREAKER_ID.to_string());
            breaker_ids.add(r, &breaker_id, 0, &p.key("breaker"), "utility breaker");
            let section = resolve(r, &section_ids, &p.key("section"), &u.section);
            num(r, &p.key("import_mw"), u.import_mw, Lo::Any, Hi::Any, " MW");
            let trips = u
                .interface_trips
                .iter()
                .enumerate()
                .filter_map(|(i, t)| {
                    frequency_trip(r, &p.key("interface_trips").index(i), t, nominal)
                })
                .collect();
            match section {
                Some(section) => Some(Utility {
                    breaker_id,
                    section,
                    import_mw: u.import_mw,
                    interface_trips: trips,
                }),
                None => {
                    whole = false;
                    None
                }
            }
        }
    };
    if utility_given && utility_raw.is_none() {
        whole = false;
    }

    // Empty lists: a plant study needs machines and loads (an empty list is a typo or a stub,
    // never a plant).
    for (key, empty, help) in [
        (
            "generators",
            matches!(&gens_raw, Some(l) if l.is_empty()),
            "add at least one generator; nadir studies plants with their own generation",
        ),
        (
            "loads",
            matches!(&loads_raw, Some(l) if l.is_empty()),
            "add at least one load, e.g. `- { id: pumps, section: main, p_mw: 2, rank: 1 }`",
        ),
    ] {
        if empty {
            r.error(
                &FieldPath::root().key(key),
                format!("the {key} list is empty"),
                help.to_string(),
            );
            whole = false;
        }
    }

    // Generators.
    let gens_raw = gens_raw.unwrap_or_default();
    let mut gen_ids = Ids::new("generator");
    let mut generators: Vec<Option<Generator>> = Vec::new();
    for (i, slot) in gens_raw.iter().enumerate() {
        let p = FieldPath::root().key("generators").index(i);
        match slot {
            Slot::Ok(g) => {
                breaker_ids.add(r, &g.id, i, &p.key("id"), "generator");
                gen_ids.add_quiet(&g.id, i, &p.key("id"), "generator");
                let gen = generator(r, &p, g, &section_ids, nominal);
                if gen.is_none() {
                    whole = false;
                }
                generators.push(gen);
            }
            Slot::Broken(id) => {
                if let Some(id) = id {
                    gen_ids.add(r, id, i, &p.key("id"), "generator");
                }
                generators.push(None);
            }
        }
    }

    // Loads.
    let loads_raw = loads_raw.unwrap_or_default();
    let mut load_ids = Ids::new("load");
    let mut loads: Vec<Option<Load>> = Vec::new();
    for (i, slot) in loads_raw.iter().enumerate() {
        let p = FieldPath::root().key("loads").index(i);
        match slot {
            Slot::Ok(l) => {
                load_ids.add(r, &l.id, i, &p.key("id"), "load");
                let load = load(r, &p, l, &section_ids);
                if load.is_none() {
                    whole = false;
                }
                loads.push(load);
            }
            Slot::Broken(id) => {
                if let Some(id) = id {
                    load_ids.add(r, id, i, &p.key("id"), "load");
                }
                loads.push(None);
            }
        }
    }

    // Operating points.
    let ctx = PlantCtx {
        loads: &loads,
        generators: &generators,
        ties: &ties,
        load_ids: &load_ids,
        gen_ids: &gen_ids,
        tie_ids: &tie_ids,
        utility: utility.as_ref(),
        utility_unknown: utility_given && utility.is_none(),
    };
    let explicit_ops = matches!(&ops_raw, Some(list) if !list.is_empty());
    let mut operating_points: Vec<OperatingPoint> = Vec::new();
    if explicit_ops {
        let mut op_ids = Ids::new("operating point");
        for (i, slot) in ops_raw.iter().flatten().enumerate() {
            let p = FieldPath::root().key("operating_points").index(i);
            match slot {
                Slot::Ok(o) => {
                    op_ids.add(r, &o.id, i, &p.key("id"), "operating point");
                    operating_points.push(operating_point(r, &p, o, &ctx));
                }
                Slot::Broken(_) => whole = false,
            }
        }
    } else {
        let default_op = RawOperatingPoint {
            id: d::OPERATING_POINT_ID.to_string(),
            description: None,
            load_scale: None,
            load_factors: BTreeMap::new(),
            loads_off: Vec::new(),
            dispatch: BTreeMap::new(),
            offline: Vec::new(),
            import_mw: None,
            ties_open: Vec::new(),
            ties_closed: Vec::new(),
        };
        operating_points.push(operating_point(
            r,
            &FieldPath::root().key("operating_points"),
            &default_op,
            &ctx,
        ));
    }

    // Criteria, then the design limits, which are compared with them only when they hold.
    let said = r.diagnostics.len() + r.suppressed;
    let criteria = criteria(r, criteria_raw.as_ref(), nominal);
    let criteria_ok = nominal.is_some() && r.diagnostics.len() + r.suppressed == said;
    let design = design::limits(
        r,
        design_raw.as_ref(),
        nominal,
        criteria_ok.then_some(&criteria),
        &generators,
        utility.is_some(),
    );

    if !whole {
        return None;
    }
    let (Some(header), Some(nominal_hz)) = (header, nominal) else {
        return None;
    };
    let mut plant = Plant {
        name: header.name,
        nominal_hz,
        sections,
        ties: ties.into_iter().collect::<Option<Vec<_>>>()?,
        utility,
        generators: generators.into_iter().collect::<Option<Vec<_>>>()?,
        loads: loads.into_iter().collect::<Option<Vec<_>>>()?,
        operating_points,
        criteria,
        design,
    };
    plant.design.armed_by = design::armed_by(r, design_raw.as_ref(), &plant)
        .unwrap_or_else(|| design::every_breaker(&plant));
    check_islands(r, &plant, explicit_ops);
    r.diagnostics.is_empty().then_some(plant)
}

fn generator(
    r: &mut Reader,
    p: &FieldPath,
    g: &RawGenerator,
    section_ids: &Ids,
    nominal: Option<f64>,
) -> Option<Generator> {
    let section = resolve(r, section_ids, &p.key("section"), &g.section);
    let rating_ok = num(
        r,
        &p.key("rating_mva"),
        g.rating_mva,
        Lo::Above(0.0),
        Hi::Any,
        " MVA",
    );
    num(
        r,
        &p.key("inertia_s"),
        g.inertia_s,
        Lo::Above(0.0),
        Hi::AtMost(20.0),
        " s",
    );
    let min_ok = num(
        r,
        &p.key("min_mw"),
        g.min_mw,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW",
    );
    let max_mw = g.max_mw.unwrap_or(g.rating_mva);
    let mut max_ok = true;
    if let Some(m) = g.max_mw {
        max_ok = num(r, &p.key("max_mw"), m, Lo::Above(0.0), Hi::Any, " MW");
        if max_ok && rating_ok && m > g.rating_mva {
            r.error(
                &p.key("max_mw"),
                format!(
                    "max_mw {m} MW is above rating_mva {} MVA; a machine cannot give more MW than its rating",
                    g.rating_mva
                ),
                "lower max_mw or correct rating_mva".to_string(),
            );
            max_ok = false;
        }
    }
    if min_ok && max_ok && rating_ok && g.min_mw > max_mw {
        r.error(
            &p.key("min_mw"),
            format!("min_mw {} MW is above max_mw {max_mw} MW", g.min_mw),
            "min_mw is the lowest stable output and must not exceed max_mw".to_string(),
        );
    } else if num(
        r,
        &p.key("output_mw"),
        g.output_mw,
        Lo::AtLeast(0.0),
        Hi::Any,
        " MW",
    ) && min_ok
        && max_ok
        && rating_ok
        && (g.output_mw < g.min_mw || g.output_mw > max_mw)
    {
        r.error(
            &p.key("output_mw"),
            format!(
                "output_mw {} MW of generator `{}` is outside its range min_mw {} .. max_mw {max_mw} MW",
                g.output_mw, g.id, g.min_mw
            ),
            "dispatch the machine within its range, or list it under `offline` in the operating points where it does not run".to_string(),
        );
    }
    let governor = governor(r, &p.key("governor"), g, max_mw);
    let trips = g
        .trips
        .iter()
        .enumerate()
        .filter_map(|(i, t)| frequency_trip(r, &p.key("trips").index(i), t, nominal))
        .collect();
    let undervoltage_trips = g
        .undervoltage_trips
        .iter()
        .enumerate()
        .map(|(i, u)| undervoltage(r, &p.key("undervoltage_trips").index(i), u))
        .collect();
    let off_frequency_limits = g
        .off_frequency_limits
        .iter()
        .enumerate()
        .map(|(i, b)| {
            let bp = p.key("off_frequency_limits").index(i);
            num(
                r,
                &bp.key("low_hz"),
                b.low_hz,
                Lo::AtLeast(0.0),
                Hi::Any,
                " Hz",
            );
            num(
                r,
                &bp.key("high_hz"),
                b.high_hz,
                Lo::Above(b.low_hz),
                Hi::Any,
                " Hz",
            );
            num(
                r,
                &bp.key("max_s"),
                b.max_s,
                Lo::AtLeast(0.0),
                Hi::Any,
                " s",
            );
            OffFrequencyLimit {
                low_hz: b.low_hz,
                high_hz: b.high_hz,
                max_s: b.max_s,
            }
        })
        .collect();
    Some(Generator {
        id: g.id.clone(),
        section: section?,
        rating_mva: g.rating_mva,
        inertia_s: g.inertia_s,
        output_mw: g.output_mw,
        min_mw: g.min_mw,
        max_mw,
        governor,
        trips,
        undervoltage_trips,
        off_frequency_limits,
    })
}

fn governor(r: &mut Reader, p: &FieldPath, g: &RawGenerator, max_mw: f64) -> Governor {
    let gov = &g.governor;
    let model = model_name(gov.model);
    let params: [(&str, Option<f64>); 9] = [
        ("governor_s", gov.governor_s),
        ("turbine_s", gov.turbine_s),
        ("reheat_s", gov.reheat_s),
        ("hp_fraction", gov.hp_fraction),
        ("water_start_s", gov.water_start_s),
        ("transient_droop_pct", gov.transient_droop_pct),
        ("reset_s", gov.reset_s),
        ("load_limit_mw", gov.load_limit_mw),
        ("ramp_mw_per_s", gov.ramp_mw_per_s),
    ];
    let own: &[&str] = match gov.model {
        RawPrimeMover::Steam => &["governor_s", "turbine_s"],
        RawPrimeMover::SteamReheat => &["governor_s", "reheat_s", "hp_fraction"],
        RawPrimeMover::Hydro => &[
            "governor_s",
            "water_start_s",
            "transient_droop_pct",
            "reset_s",
        ],
        RawPrimeMover::GasTurbine => &["governor_s", "turbine_s", "load_limit_mw"],
        RawPrimeMover::Engine => &["governor_s", "ramp_mw_per_s"],
        RawPrimeMover::Fixed => &[],
    };
    let fixed = gov.model == RawPrimeMover::Fixed;
    let takes = if fixed {
        "it takes no parameters besides model".to_string()
    } else {
        format!(
            "it takes {}, droop_pct, deadband_hz, isochronous",
            own.join(", ")
        )
    };
    let refuse = |r: &mut Reader, name: &str| {
        r.error_at_key(
            &p.key(name),
            format!("{name} is not a parameter of model {model}; {takes}"),
            format!("remove {name}, or choose the model it belongs to"),
        );
    };
    for (name, value) in params {
        if value.is_some() && !own.contains(&name) {
            refuse(r, name);
        }
    }
    let isochronous = gov.isochronous.unwrap_or(false);
    if fixed {
        if isochronous {
            r.error(
                &p.key("isochronous"),
                "a machine with model fixed has no governor, so it cannot be isochronous"
                    .to_string(),
                "remove isochronous, or give the machine a prime-mover model with a governor"
                    .to_string(),
            );
        }
        if gov.droop_pct.is_some() {
            refuse(r, "droop_pct");
        }
        if gov.deadband_hz.is_some() {
            refuse(r, "deadband_hz");
        }
    }

    let droop_pct = match gov.droop_pct {
        Some(v) => {
            num(
                r,
                &p.key("droop_pct"),
                v,
                Lo::Above(0.0),
                Hi::AtMost(20.0),
                " %",
            );
            v
        }
        None => {
            if !fixed && !isochronous {
                r.error(
                    &p.key("droop_pct"),
                    format!(
                        "missing droop_pct for generator `{}` with model {model}",
                        g.id
                    ),
                    "add the governor's permanent droop in percent on the machine rating \
                     (commonly 4 to 5), or set `isochronous: true`"
                        .to_string(),
                );
            }
            d::ISOCHRONOUS_DROOP_PCT
        }
    };
    let deadband_hz = match gov.deadband_hz {
        Some(v) => {
            num(
                r,
                &p.key("deadband_hz"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(0.5),
                " Hz",
            );
            v
        }
        None => d::DEADBAND_HZ,
    };

    let tc = |r: &mut Reader, name: &str, v: Option<f64>, default: f64| -> f64 {
        match v {
            Some(x) => {
                time_constant(r, &p.key(name), x);
                x
            }
            None => default,
        }
    };
    let prime_mover = match gov.model {
        RawPrimeMover::Steam => PrimeMover::Steam {
            governor_s: tc(r, "governor_s", gov.governor_s, d::STEAM_GOVERNOR_S),
            turbine_s: tc(r, "turbine_s", gov.turbine_s, d::STEAM_TURBINE_S),
        },
        RawPrimeMover::SteamReheat => {
            let hp_fraction = gov.hp_fraction.unwrap_or(d::REHEAT_HP_FRACTION);
            if gov.hp_fraction.is_some() {
                num(
                    r,
                    &p.key("hp_fraction"),
                    hp_fraction,
                    Lo::AtLeast(0.0),
                    Hi::AtMost(1.0),
                    "",
                );
            }
            PrimeMover::SteamReheat {
                governor_s: tc(r, "governor_s", gov.governor_s, d::REHEAT_GOVERNOR_S),
                reheat_s: tc(r, "reheat_s", gov.reheat_s, d::REHEAT_REHEAT_S),
                hp_fraction,
            }
        }
        RawPrimeMover::Hydro => {
            let water_start_s = gov.water_start_s.unwrap_or(d::HYDRO_WATER_START_S);
            if gov.water_start_s.is_some() {
                num(
                    r,
                    &p.key("water_start_s"),
                    water_start_s,
                    Lo::Above(0.0),
                    Hi::AtMost(10.0),
                    " s",
                );
            }
            let transient_droop_pct = gov
                .transient_droop_pct
                .unwrap_or(d::HYDRO_TRANSIENT_DROOP_PCT);
            if gov.transient_droop_pct.is_some() {
                num(
                    r,
                    &p.key("transient_droop_pct"),
                    transient_droop_pct,
                    Lo::Above(0.0),
                    Hi::AtMost(100.0),
                    " %",
                );
            }
            PrimeMover::Hydro {
                governor_s: tc(r, "governor_s", gov.governor_s, d::HYDRO_GOVERNOR_S),
                water_start_s,
                transient_droop_pct,
                reset_s: tc(r, "reset_s", gov.reset_s, d::HYDRO_RESET_S),
            }
        }
        RawPrimeMover::GasTurbine => {
            let load_limit_mw = gov.load_limit_mw.unwrap_or(max_mw);
            if gov.load_limit_mw.is_some() {
                num(
                    r,
                    &p.key("load_limit_mw"),
                    load_limit_mw,
                    Lo::Above(0.0),
                    Hi::Any,
                    " MW",
                );
            }
            PrimeMover::GasTurbine {
                governor_s: tc(r, "governor_s", gov.governor_s, d::GAS_TURBINE_GOVERNOR_S),
                turbine_s: tc(r, "turbine_s", gov.turbine_s, d::GAS_TURBINE_TURBINE_S),
                load_limit_mw,
            }
        }
        RawPrimeMover::Engine => {
            let ramp = gov
                .ramp_mw_per_s
                .unwrap_or(d::ENGINE_RAMP_PU_PER_S * g.rating_mva);
            if gov.ramp_mw_per_s.is_some() {
                num(
                    r,
                    &p.key("ramp_mw_per_s"),
                    ramp,
                    Lo::Above(0.0),
                    Hi::Any,
                    " MW/s",
                );
            }
            PrimeMover::Engine {
                governor_s: tc(r, "governor_s", gov.governor_s, d::ENGINE_GOVERNOR_S),
                ramp_mw_per_s: ramp,
            }
        }
        RawPrimeMover::Fixed => PrimeMover::Fixed,
    };
    Governor {
        droop_pct,
        deadband_hz,
        isochronous,
        prime_mover,
    }
}

fn load(r: &mut Reader, p: &FieldPath, l: &RawLoad, section_ids: &Ids) -> Option<Load> {
    let section = resolve(r, section_ids, &p.key("section"), &l.section);
    num(r, &p.key("p_mw"), l.p_mw, Lo::AtLeast(0.0), Hi::Any, " MW");
    if l.rank == 0 {
        r.error(
            &p.key("rank"),
            format!("rank of load `{}` is 0; ranks start at 1", l.id),
            "use rank 1 for the loads shed first and higher ranks for more important loads"
                .to_string(),
        );
    }
    let freq_exp = l.freq_exp.unwrap_or(d::LOAD_FREQ_EXP);
    if l.freq_exp.is_some() {
        num(
            r,
            &p.key("freq_exp"),
            freq_exp,
            Lo::AtLeast(-2.0),
            Hi::AtMost(8.0),
            "",
        );
    }
    let inertia_s = l.inertia_s.unwrap_or(0.0);
    if l.inertia_s.is_some() {
        num(
            r,
            &p.key("inertia_s"),
            inertia_s,
            Lo::AtLeast(0.0),
            Hi::AtMost(20.0),
            " s",
        );
    }
    let uv = l
        .undervoltage
        .as_ref()
        .map(|u| undervoltage(r, &p.key("undervoltage"), u));
    Some(Load {
        id: l.id.clone(),
        description: l.description.clone().unwrap_or_default(),
        section: section?,
        p_mw: l.p_mw,
        rank: l.rank,
        never_shed: l.never_shed,
        freq_exp,
        inertia_s,
        undervoltage: uv,
    })
}

struct PlantCtx<'a> {
    loads: &'a [Option<Load>],
    generators: &'a [Option<Generator>],
    ties: &'a [Option<Tie>],
    load_ids: &'a Ids,
    gen_ids: &'a Ids,
    tie_ids: &'a Ids,
    utility: Option<&'a Utility>,
    /// The utility is written but broken: do not also say "there is no utility".
    utility_unknown: bool,
}

fn operating_point(
    r: &mut Reader,
    p: &FieldPath,
    o: &RawOperatingPoint,
    c: &PlantCtx,
) -> OperatingPoint {
    let scale = o.load_scale.unwrap_or(d::LOAD_SCALE);
    if o.load_scale.is_some() {
        num(
            r,
            &p.key("load_scale"),
            scale,
            Lo::AtLeast(0.0),
            Hi::Any,
            "",
        );
    }
    let mut factor: Vec<f64> = vec![scale; c.loads.len()];
    for (id, f) in &o.load_factors {
        let fp = p.key("load_factors").key(id);
        if let Some(i) = resolve(r, c.load_ids, &fp, id) {
            num(r, &fp, *f, Lo::AtLeast(0.0), Hi::Any, "");
            factor[i] = *f;
        }
    }
    let mut off = vec![false; c.loads.len()];
    for (k, id) in o.loads_off.iter().enumerate() {
        if let Some(i) = resolve(r, c.load_ids, &p.key("loads_off").index(k), id) {
            off[i] = true;
        }
    }
    let load_mw = c
        .loads
        .iter()
        .enumerate()
        .map(|(i, l)| match l {
            Some(l) if !off[i] => l.p_mw * factor[i],
            _ => 0.0,
        })
        .collect();

    let mut online = vec![true; c.generators.len()];
    for (k, id) in o.offline.iter().enumerate() {
        if let Some(i) = resolve(r, c.gen_ids, &p.key("offline").index(k), id) {
            online[i] = false;
        }
    }
    let mut output_mw: Vec<f64> = c
        .generators
        .iter()
        .map(|g| g.as_ref().map_or(0.0, |g| g.output_mw))
        .collect();
    for (id, mw) in &o.dispatch {
        let dp = p.key("dispatch").key(id);
        let Some(i) = resolve(r, c.gen_ids, &dp, id) else {
            continue;
        };
        if !online[i] {
            r.error(
                &dp,
                format!(
                    "dispatch names generator `{id}`, which this operating point lists as offline"
                ),
                "remove it from dispatch or from offline".to_string(),
            );
            continue;
        }
        if !num(r, &dp, *mw, Lo::AtLeast(0.0), Hi::Any, " MW") {
            continue;
        }
        if let Some(Some(g)) = c.generators.get(i) {
            if *mw < g.min_mw || *mw > g.max_mw {
                r.error(
                    &dp,
                    format!(
                        "dispatch {mw} MW for generator `{id}` at operating point `{}` is outside its range min_mw {} .. max_mw {} MW",
                        o.id, g.min_mw, g.max_mw
                    ),
                    "dispatch the machine within its range, or list it under offline".to_string(),
                );
            }
        }
        output_mw[i] = *mw;
    }
    for (i, on) in online.iter().enumerate() {
        if !on {
            output_mw[i] = 0.0;
        }
    }

    let import_mw = match (o.import_mw, c.utility) {
        (Some(v), Some(_)) => {
            num(r, &p.key("import_mw"), v, Lo::Any, Hi::Any, " MW");
            v
        }
        (Some(_), None) => {
            if !c.utility_unknown {
                r.error(
                    &p.key("import_mw"),
                    format!(
                        "operating point `{}` sets import_mw but the plant has no utility",
                        o.id
                    ),
                    "remove import_mw, or describe the utility connection under `utility`"
                        .to_string(),
                );
            }
            0.0
        }
        (None, Some(u)) => u.import_mw,
        (None, None) => 0.0,
    };

    let mut ties_open: Vec<bool> = c
        .ties
        .iter()
        .map(|t| t.as_ref().is_some_and(|t| t.normally_open))
        .collect();
    let mut opened = vec![false; c.ties.len()];
    for (k, id) in o.ties_open.iter().enumerate() {
        if let Some(i) = resolve(r, c.tie_ids, &p.key("ties_open").index(k), id) {
            opened[i] = true;
        }
    }
    for (k, id) in o.ties_closed.iter().enumerate() {
        let tp = p.key("ties_closed").index(k);
        let Some(i) = resolve(r, c.tie_ids, &tp, id) else {
            continue;
        };
        if opened[i] {
            r.error(
                &tp,
                format!("tie `{id}` is listed in both ties_open and ties_closed"),
                "keep it in one of the two lists".to_string(),
            );
        } else if let Some(Some(t)) = c.ties.get(i) {
            if !t.normally_open {
                r.error(
                    &tp,
                    format!("tie `{id}` is not normally open, so ties_closed cannot close it"),
                    "ties_closed lists normally open ties only; remove it, or set `normally_open: true` on the tie".to_string(),
                );
            }
        }
        ties_open[i] = false;
    }
    for (i, o) in opened.iter().enumerate() {
        if *o {
            ties_open[i] = true;
        }
    }

    OperatingPoint {
        id: o.id.clone(),
        description: o.description.clone().unwrap_or_default(),
        load_mw,
        online,
        output_mw,
        import_mw,
        ties_open,
    }
}

fn criteria(r: &mut Reader, raw: Option<&RawCriteria>, nominal: Option<f64>) -> Criteria {
    let f0 = nominal.unwrap_or(50.0);
    let mut c = Criteria::defaults(f0);
    let Some(raw) = raw else {
        return c;
    };
    let p = FieldPath::root().key("criteria");
    if let Some(v) = raw.min_hz {
        c.min_hz = v;
    }
    if let Some(v) = raw.max_hz {
        c.max_hz = v;
    }
    if let Some(rec) = &raw.recover {
        c.recover_above_hz = rec.above_hz;
        c.recover_within_s = rec.within_s;
        num(
            r,
            &p.key("recover").key("within_s"),
            rec.within_s,
            Lo::Above(0.0),
            Hi::AtMost(3600.0),
            " s",
        );
    }
    if let Some(v) = raw.max_rocof_hz_per_s {
        c.max_rocof_hz_per_s = v;
        num(
            r,
            &p.key("max_rocof_hz_per_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(20.0),
            " Hz/s",
        );
    }
    if let Some(v) = raw.rocof_window_s {
        c.rocof_window_s = v;
        num(
            r,
            &p.key("rocof_window_s"),
            v,
            Lo::Above(0.0),
            Hi::AtMost(5.0),
            " s",
        );
    }
    if let Some(s) = &raw.settle {
        c.settle_within_s = s.within_s;
        c.settle_low_hz = s.low_hz;
        c.settle_high_hz = s.high_hz;
        num(
            r,
            &p.key("settle").key("within_s"),
            s.within_s,
            Lo::AtLeast(0.0),
            Hi::AtMost(3600.0),
            " s",
        );
    }
    if let Some(m) = &raw.required_margin {
        if let Some(v) = m.disturbance_factor {
            c.required_disturbance_factor = v;
            num(
                r,
                &p.key("required_margin").key("disturbance_factor"),
                v,
                Lo::AtLeast(1.0),
                Hi::AtMost(2.0),
                "",
            );
        }
        if let Some(v) = m.model_error_pct {
            c.required_model_error_pct = v;
            num(
                r,
                &p.key("required_margin").key("model_error_pct"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(50.0),
                " %",
            );
        }
    }
    if let Some(k) = &raw.coordination {
        if let Some(v) = k.min_spacing_hz {
            c.min_spacing_hz = v;
            num(
                r,
                &p.key("coordination").key("min_spacing_hz"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(2.0),
                " Hz",
            );
        }
        if let Some(v) = k.min_spacing_s {
            c.min_spacing_s = v;
            num(
                r,
                &p.key("coordination").key("min_spacing_s"),
                v,
                Lo::AtLeast(0.0),
                Hi::AtMost(60.0),
                " s",
            );
        }
        if let Some(v) = k.normal_low_hz {
            c.normal_low_hz = v;
            num(
                r,
                &p.key("coordination").key("normal_low_hz"),
                v,
                Lo::Above(0.8 * f0),
                Hi::Below(f0),
                " Hz",
            );
        }
    }
    if nominal.is_none() {
        return c;
    }
    // Frequencies: each within 0.8–1.2 f0 and in the order a criterion needs.
    let order_help = format!(
        "criteria need min_hz < recover.above_hz < nominal {f0} Hz < max_hz, and settle.low_hz < {f0} Hz < settle.high_hz"
    );
    let order = |r: &mut Reader,
                 path: FieldPath,
                 v: f64,
                 lo: f64,
                 lo_name: &str,
                 hi: f64,
                 hi_name: &str| {
        if !v.is_finite() {
            r.error(
                &path,
                format!("{} is {v}, expected a finite number", field_name(&path)),
                None,
            );
        } else if v < 0.8 * f0 || v > 1.2 * f0 {
            r.error(
                &path,
                format!(
                    "{} {v} Hz is implausible for a {f0} Hz plant",
                    field_name(&path)
                ),
                format!(
                    "allowed: {} ≤ {} ≤ {} Hz",
                    0.8 * f0,
                    field_name(&path),
                    1.2 * f0
                ),
            );
        } else if v <= lo || v >= hi {
            let (bad, other_name, other) = if v <= lo {
                ("at or below", lo_name, lo)
            } else {
                ("at or above", hi_name, hi)
            };
            r.error(
                &path,
                format!(
                    "{} {v} Hz is {bad} {other_name} {other} Hz",
                    field_name(&path)
                ),
                order_help.clone(),
            );
        }
    };
    let given = |o: Option<f64>| o.is_some();
    if given(raw.min_hz) {
        order(
            r,
            p.key("min_hz"),
            c.min_hz,
            0.0,
            "zero",
            // A conflict with a written recover.above_hz is reported once, there.
            if raw.recover.is_some() {
                f0
            } else {
                c.recover_above_hz
            },
            if raw.recover.is_some() {
                "nominal"
            } else {
                "the default recover.above_hz"
            },
        );
    }
    if raw.recover.is_some() {
        order(
            r,
            p.key("recover").key("above_hz"),
            c.recover_above_hz,
            c.min_hz,
            "min_hz",
            f0,
            "nominal",
        );
    }
    if given(raw.max_hz) {
        order(
            r,
            p.key("max_hz"),
            c.max_hz,
            f0,
            "nominal",
            f64::INFINITY,
            "",
        );
    }
    if raw.settle.is_some() {
        order(
            r,
            p.key("settle").key("low_hz"),
            c.settle_low_hz,
            0.0,
            "zero",
            f0,
            "nominal",
        );
        order(
            r,
            p.key("settle").key("high_hz"),
            c.settle_high_hz,
            f0,
            "nominal",
            f64::INFINITY,
            "",
        );
    }
    c
}

/// Islands before any event at each operating point: one with load but neither the utility nor an
/// online generator cannot exist; two isochronous machines in one island would fight.
fn check_islands(r: &mut Reader, plant: &Plant, explicit_ops: bool) {
    for k in 0..plant.operating_points.len() {
        let op_path = if explicit_ops {
            Some(FieldPath::root().key("operating_points").index(k))
        } else {
            None
        };
        for island in &topology::islands(plant, &BreakerState::initial(plant, k, true)) {
            if let Some((load, first_load)) = dead_island(plant, k, island) {
                let path = op_path
                    .clone()
                    .unwrap_or_else(|| FieldPath::root().key("loads").index(first_load));
                r.error(
                    &path,
                    format!(
                        "at operating point `{}`, section(s) {} carry {load} MW of load but have no generator online and no utility connection",
                        plant.operating_points[k].id,
                        section_list(plant, island)
                    ),
                    "put a generator online there, close a tie to a section with supply, or move the loads".to_string(),
                );
            }
            let op = &plant.operating_points[k];
            let iso: Vec<usize> = (0..plant.generators.len())
                .filter(|&g| {
                    op.online[g]
                        && plant.generators[g].governor.isochronous
                        && island.contains(plant.generators[g].section)
                })
                .collect();
            if iso.len() > 1 {
                let names: Vec<&str> = iso
                    .iter()
                    .map(|&g| plant.generators[g].id.as_str())
                    .collect();
                r.error(
                    &FieldPath::root()
                        .key("generators")
                        .index(iso[1])
                        .key("governor")
                        .key("isochronous"),
                    format!(
                        "generators {} are all isochronous in one island at operating point `{}`; at most one machine per island may be",
                        quoted_list(&names),
                        op.id
                    ),
                    "run the other machines in droop (`isochronous: false` with droop_pct)"
                        .to_string(),
                );
            }
        }
    }
}
