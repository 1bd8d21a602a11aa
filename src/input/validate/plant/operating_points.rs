//! Operating points of the plant file (load factors, dispatch, offline machines, import, tie
//! states) and the islands each point starts with.

use super::*;

pub(super) struct PlantCtx<'a> {
    pub(super) loads: &'a [Option<Load>],
    pub(super) generators: &'a [Option<Generator>],
    pub(super) ties: &'a [Option<Tie>],
    pub(super) load_ids: &'a Ids,
    pub(super) gen_ids: &'a Ids,
    pub(super) tie_ids: &'a Ids,
    pub(super) utility: Option<&'a Utility>,
    /// The utility is written but broken: do not also say "there is no utility".
    pub(super) utility_unknown: bool,
}

pub(super) fn operating_point(
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

/// Islands before any event at each operating point: one with load but neither the utility nor an
/// online generator cannot exist; two isochronous machines in one island would fight.
pub(super) fn check_islands(r: &mut Reader, plant: &Plant, explicit_ops: bool) {
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
