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
    /// The utility's import as written (a number or `balance`).
    pub(super) utility_import: Option<RawImport>,
    /// The utility is written but broken: do not also say "there is no utility".
    pub(super) utility_unknown: bool,
}

/// An operating point balances when load − generation − import is within this many MW, or
/// within [`BALANCE_TOLERANCE_FRACTION`] of the point's whole load, whichever is larger
/// (docs/files.md, "Power balance").
pub const BALANCE_TOLERANCE_MW: f64 = 0.01;
/// See [`BALANCE_TOLERANCE_MW`]: 0.1 %.
pub const BALANCE_TOLERANCE_FRACTION: f64 = 0.001;

/// How an operating point's import is given, for [`balance`].
pub(super) struct ImportSpec {
    /// `balance`: the import is computed, not checked.
    balance: bool,
    /// Where the figure (or the word) is written: the point's own `import_mw`, else the
    /// utility's; `None` without a utility.
    at: Option<FieldPath>,
    /// The point writes its own `import_mw`.
    own: bool,
}

pub(super) fn operating_point(
    r: &mut Reader,
    p: &FieldPath,
    o: &RawOperatingPoint,
    c: &PlantCtx,
) -> (OperatingPoint, ImportSpec) {
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

    let utility_at = || Some(FieldPath::root().key("utility").key("import_mw"));
    let mut spec = ImportSpec {
        balance: false,
        at: None,
        own: false,
    };
    let import_mw = match (o.import_mw, c.utility) {
        (Some(v), Some(_)) => {
            spec.at = Some(p.key("import_mw"));
            spec.own = true;
            match v {
                RawImport::Mw(v) => {
                    num(r, &p.key("import_mw"), v, Lo::Any, Hi::Any, " MW");
                    v
                }
                RawImport::Balance => {
                    spec.balance = true;
                    0.0
                }
            }
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
        (None, Some(u)) => {
            spec.at = utility_at();
            spec.balance = c.utility_import == Some(RawImport::Balance);
            u.import_mw
        }
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

    (
        OperatingPoint {
            id: o.id.clone(),
            description: o.description.clone().unwrap_or_default(),
            load_mw,
            online,
            output_mw,
            import_mw,
            ties_open,
        },
        spec,
    )
}

/// The power balance of every operating point before any event: in the utility's island
/// load − generation − import, in every other island load − generation, each within
/// [`BALANCE_TOLERANCE_MW`] or [`BALANCE_TOLERANCE_FRACTION`] of the point's whole load,
/// whichever is larger. The model keeps the balancing figure itself as the import, so that
/// screening, `check`, `verify`, `report` and the simulator (which lets the utility carry load −
/// generation of its island) use one and the same number; `balance` is shown as a note.
/// Runs only on a plant without other diagnostics (islands with load but no supply are reported
/// by [`check_islands`]).
pub(super) fn balance(
    r: &mut Reader,
    plant: &mut Plant,
    imports: &[ImportSpec],
    explicit_ops: bool,
) {
    for (k, spec) in imports
        .iter()
        .enumerate()
        .take(plant.operating_points.len())
    {
        let islands = topology::islands(plant, &BreakerState::initial(plant, k, true));
        let op = &plant.operating_points[k];
        // Without operating points the dispatch is each machine's output_mw.
        let op_path = if explicit_ops {
            FieldPath::root().key("operating_points").index(k)
        } else {
            FieldPath::root().key("generators")
        };
        let whole_load: f64 = op.load_mw.iter().sum();
        let tol = BALANCE_TOLERANCE_MW.max(BALANCE_TOLERANCE_FRACTION * whole_load);
        let several = islands.len() > 1;
        let mut import_mw = op.import_mw;
        for island in &islands {
            let load: f64 = plant
                .loads
                .iter()
                .enumerate()
                .filter(|(_, l)| island.contains(l.section))
                .map(|(i, _)| op.load_mw[i])
                .sum();
            let machines: Vec<usize> = (0..plant.generators.len())
                .filter(|&g| op.online[g] && island.contains(plant.generators[g].section))
                .collect();
            let gen: f64 = machines.iter().map(|&g| op.output_mw[g]).sum();
            let where_ = if several {
                format!(
                    " in the island of section(s) {}",
                    section_list(plant, island)
                )
            } else {
                String::new()
            };
            if island.on_utility {
                let need = load - gen;
                if spec.balance {
                    let at = spec.at.clone().unwrap_or_else(|| op_path.clone());
                    r.warn(
                        &at,
                        Code::Computed,
                        "balance".to_string(),
                        format!(
                            "the import that balances operating point `{}`{where_} is {} MW (load {} MW − generation {} MW)",
                            op.id,
                            mw(need),
                            mw(load),
                            mw(gen)
                        ),
                        String::new(),
                    );
                } else if (need - import_mw).abs() > tol {
                    let at = if spec.own || !explicit_ops {
                        spec.at.clone().unwrap_or_else(|| op_path.clone())
                    } else {
                        op_path.clone()
                    };
                    let fix = if spec.own || !explicit_ops {
                        format!("write `import_mw: {}`", mw(need))
                    } else {
                        format!(
                            "add `import_mw: {}` to this operating point, which now inherits the utility's {} MW",
                            mw(need),
                            mw(import_mw)
                        )
                    };
                    r.error(
                        &at,
                        format!(
                            "operating point `{}` does not balance{where_}: load {} MW − generation {} MW − import {} MW = {} MW, beyond the tolerance of {} MW (0.1 % of the load, at least 0.01 MW)",
                            op.id,
                            mw(load),
                            mw(gen),
                            mw(import_mw),
                            mw(need - import_mw),
                            mw(tol)
                        ),
                        format!(
                            "{fix} (or `import_mw: balance` to let nadir compute it), or correct the loads and dispatch"
                        ),
                    );
                }
                import_mw = need;
            } else if !machines.is_empty() && (load - gen).abs() > tol {
                let (what, fix) = if plant.utility.is_none() {
                    (
                        "the plant has no utility, so its machines must carry its load",
                        "dispatch the machines (output_mw, or `dispatch` under the operating point) so that they add up to the load",
                    )
                } else {
                    (
                        "this island is not connected to the utility, so its machines must carry its load",
                        "dispatch the island's machines (`dispatch` under the operating point) so that they add up to its load, or close a tie to the utility's section",
                    )
                };
                r.error(
                    &op_path,
                    format!(
                        "operating point `{}` does not balance{where_}: load {} MW − generation {} MW = {} MW, beyond the tolerance of {} MW (0.1 % of the load, at least 0.01 MW); {what}",
                        op.id,
                        mw(load),
                        mw(gen),
                        mw(load - gen),
                        mw(tol)
                    ),
                    fix.to_string(),
                );
            }
        }
        plant.operating_points[k].import_mw = if plant.utility.is_some() {
            import_mw
        } else {
            0.0
        };
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
                        "at operating point `{}`, section(s) {} carry {} MW of load but have no generator online and no utility connection",
                        plant.operating_points[k].id,
                        section_list(plant, island),
                        mw(load)
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
