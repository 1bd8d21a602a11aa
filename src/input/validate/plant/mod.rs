//! The plant file: sections, ties, utility, generators and their governors and trips, loads,
//! operating points, criteria, the design block (its checks in [`super::design`]), and the islands
//! at each operating point.
//!
//! Owns the plant's validation messages and defaults use. It must not know the cases or scheme
//! formats; the helpers it shares with them live in [`super`]. This file reads the top level,
//! sections, ties and the utility, and calls one submodule per concept: `machines` (generators and
//! governors), `protection` (frequency and undervoltage trips), `loads`, `operating_points` (each
//! point's dispatch, its power balance and the islands it starts with), `criteria`, and
//! `plausible` (warnings for values that are allowed but look like a slip).

mod criteria;
mod loads;
mod machines;
mod operating_points;
mod plausible;
mod protection;

use super::*;
use criteria::criteria;
use loads::load;
use machines::generator;
use operating_points::{balance, check_islands, operating_point, ImportSpec, PlantCtx};
pub(super) use plausible::{other_nominal, short_lag, SHORT_LAG_S};
use protection::frequency_trip;

// ---------------------------------------------------------------- plant file

pub(super) const PLANT_KEYS: &[&str] = &[
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
            if let RawImport::Mw(v) = u.import_mw {
                num(r, &p.key("import_mw"), v, Lo::Any, Hi::Any, " MW");
            }
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
                    // Each operating point's own figure is settled by `balance` below.
                    import_mw: match u.import_mw {
                        RawImport::Mw(v) => v,
                        RawImport::Balance => 0.0,
                    },
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
        utility_import: utility_raw.as_ref().map(|u| u.import_mw),
        utility_unknown: utility_given && utility.is_none(),
    };
    let explicit_ops = matches!(&ops_raw, Some(list) if !list.is_empty());
    let mut operating_points: Vec<OperatingPoint> = Vec::new();
    let mut imports: Vec<ImportSpec> = Vec::new();
    if explicit_ops {
        let mut op_ids = Ids::new("operating point");
        for (i, slot) in ops_raw.iter().flatten().enumerate() {
            let p = FieldPath::root().key("operating_points").index(i);
            match slot {
                Slot::Ok(o) => {
                    op_ids.add(r, &o.id, i, &p.key("id"), "operating point");
                    let (point, import) = operating_point(r, &p, o, &ctx);
                    operating_points.push(point);
                    imports.push(import);
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
        let (point, import) = operating_point(
            r,
            &FieldPath::root().key("operating_points"),
            &default_op,
            &ctx,
        );
        operating_points.push(point);
        imports.push(import);
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
    if r.diagnostics.is_empty() {
        balance(r, &mut plant, &imports, explicit_ops);
    }
    if r.diagnostics.is_empty() {
        plausible::plant_warnings(r, &plant);
    }
    r.diagnostics.is_empty().then_some(plant)
}
