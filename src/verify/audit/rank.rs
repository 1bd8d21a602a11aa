//! Rank order, judged per event and per island: the rule that `nadir audit`, the report and
//! `nadir design` share (docs/files.md, "How the audit judges rank order").
//!
//! For each case, each operating point it applies to, each event of the case (each instant at
//! which it acts) and each island that exists after that event, the stages that can operate in
//! that event are walked in the order they would operate: the stages armed by a breaker that this
//! event opens, by delay; then the frequency stages that measure in a section of the island, by
//! pickup from highest to lowest, equal pickups by delay. Stages with the same settings act
//! together. Whenever a stage opens a load of the island, no sheddable load of the same island
//! (not never-shed, switched on at that point, not yet opened) that ranks lower (rank 1 is shed
//! first) may still be connected. Loads in other islands are not counted. Stages armed by
//! breakers that no single event opens are never compared with each other.
//!
//! What "can operate" means here, without simulating:
//! - an armed stage operates when its breaker opens in this event and was closed before it (a
//!   breaker already open, or a generator not running, arms nothing, as in the simulator);
//! - a frequency stage can operate in an island without the utility; in an island held by the
//!   utility only when the case's utility frequency falls below its pickup (a grid-wide event);
//! - loads opened by armed stages at an earlier event of the same case are already open;
//! - breakers opened by protection during a run (interface or generator trips) are not events of
//!   the audit: `nadir verify` shows what they do.
//!
//! When no cases are given, each breaker (the utility, each tie closed at the point, each running
//! generator) is taken as opening alone, from the plant connected to the utility.

use super::Finding;
use crate::model::{Action, BreakerRef, Case, CaseSet, Plant, Scheme, StageTrigger, Start};
use crate::topology::{islands, BreakerState, Island};
use std::collections::{BTreeMap, BTreeSet};

/// How many places a finding names before it says "and N more".
const PLACES_SHOWN: usize = 3;

/// One event at one operating point: the islands after it and the stages it arms.
struct Event {
    /// "case utility-loss, utility opens at 0.00 s" or "utility opens alone".
    label: String,
    op: usize,
    islands: Vec<Island>,
    /// Stages armed by a breaker this event opens.
    armed: Vec<usize>,
    /// Loads opened by armed stages at an earlier event of the same case.
    already_open: Vec<bool>,
    /// The case's lowest utility frequency, when it falls below nominal.
    grid_low_hz: Option<f64>,
}

/// Calls `visit` with each event judged: from the cases, or each breaker opening alone. Returns
/// which, in words. Events are made one at a time, so memory does not grow with their number.
fn for_each_event(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
    visit: &mut dyn FnMut(&Event),
) -> String {
    match cases {
        Some(set) => {
            for case in &set.cases {
                for &op in &case.applies_to {
                    case_events(plant, scheme, case, op, visit);
                }
            }
            format!(
                "each event of the {} case(s) at each operating point it applies to",
                set.cases.len()
            )
        }
        None => {
            alone_events(plant, scheme, visit);
            "each breaker opening alone (no cases given; give the cases file to judge the studied events)"
                .to_string()
        }
    }
}

fn armed_by(scheme: &Scheme, breaker: BreakerRef) -> impl Iterator<Item = usize> + '_ {
    scheme
        .stages
        .iter()
        .enumerate()
        .filter(move |(_, s)| s.trigger == StageTrigger::Breaker(breaker))
        .map(|(i, _)| i)
}

fn case_events(
    plant: &Plant,
    scheme: &Scheme,
    case: &Case,
    op: usize,
    out: &mut dyn FnMut(&Event),
) {
    let f0 = plant.nominal_hz;
    let grid_low_hz = case
        .utility_profile
        .iter()
        .map(|p| p.1)
        .min_by(f64::total_cmp)
        .filter(|&hz| hz < f0);
    let mut state = BreakerState::initial(plant, op, case.start == Start::Connected);
    let mut running = plant.operating_points[op].online.clone();
    let mut already_open = vec![false; plant.loads.len()];
    let mut k = 0;
    while k < case.events.len() {
        let at_s = case.events[k].at_s;
        let mut what = Vec::new();
        let mut armed = Vec::new();
        while k < case.events.len() && case.events[k].at_s == at_s {
            let action = &case.events[k].action;
            k += 1;
            match *action {
                Action::Open(b) => {
                    let was_closed = match b {
                        BreakerRef::Utility => std::mem::replace(&mut state.utility_closed, false),
                        BreakerRef::Tie(t) => state
                            .tie_closed
                            .get_mut(t)
                            .is_some_and(|c| std::mem::replace(c, false)),
                        BreakerRef::Generator(g) => running
                            .get_mut(g)
                            .is_some_and(|r| std::mem::replace(r, false)),
                    };
                    let name = super::breaker_name(plant, b);
                    what.push(match b {
                        BreakerRef::Generator(_) => format!("{name} trips"),
                        _ => format!("{name} opens"),
                    });
                    if was_closed {
                        armed.extend(armed_by(scheme, b));
                    }
                }
                Action::LoadStep { section, .. } => {
                    what.push(format!("load step on {}", plant.sections[section].id))
                }
                Action::VoltageDip { section, .. } => {
                    what.push(format!("voltage dip on {}", plant.sections[section].id))
                }
            }
        }
        armed.sort_unstable();
        armed.dedup();
        out(&Event {
            label: format!("case {}, {} at {at_s:.2} s", case.id, what.join(" and ")),
            op,
            islands: islands(plant, &state),
            armed: armed.clone(),
            already_open: already_open.clone(),
            grid_low_hz,
        });
        for &s in &armed {
            for &l in &scheme.stages[s].sheds {
                already_open[l] = true;
            }
        }
    }
    // A grid-wide event: no action, the utility frequency itself falls.
    if case.events.is_empty() {
        if let Some(low) = grid_low_hz {
            out(&Event {
                label: format!("case {}, utility frequency falls to {low:.2} Hz", case.id),
                op,
                islands: islands(plant, &state),
                armed: vec![],
                already_open,
                grid_low_hz,
            });
        }
    }
}

fn alone_events(plant: &Plant, scheme: &Scheme, out: &mut dyn FnMut(&Event)) {
    for op in 0..plant.operating_points.len() {
        let start = BreakerState::initial(plant, op, true);
        let mut breakers = Vec::new();
        if start.utility_closed {
            breakers.push(BreakerRef::Utility);
        }
        for (t, &closed) in start.tie_closed.iter().enumerate() {
            if closed {
                breakers.push(BreakerRef::Tie(t));
            }
        }
        for (g, &on) in plant.operating_points[op].online.iter().enumerate() {
            if on {
                breakers.push(BreakerRef::Generator(g));
            }
        }
        if breakers.is_empty() {
            // Nothing to open (an islanded plant without ties or machines to trip): frequency can
            // still fall, on a load step say.
            out(&Event {
                label: "any disturbance".to_string(),
                op,
                islands: islands(plant, &start),
                armed: vec![],
                already_open: vec![false; plant.loads.len()],
                grid_low_hz: None,
            });
        }
        for b in breakers {
            let mut state = start.clone();
            match b {
                BreakerRef::Utility => state.utility_closed = false,
                BreakerRef::Tie(t) => state.tie_closed[t] = false,
                BreakerRef::Generator(_) => {}
            }
            let name = super::breaker_name(plant, b);
            out(&Event {
                label: match b {
                    BreakerRef::Generator(_) => format!("{name} trips alone"),
                    _ => format!("{name} opens alone"),
                },
                op,
                islands: islands(plant, &state),
                armed: armed_by(scheme, b).collect(),
                already_open: vec![false; plant.loads.len()],
                grid_low_hz: None,
            });
        }
    }
}

/// The stages that can operate in an island at an event, grouped by when they act: each group
/// holds stages with the same settings, which operate together.
fn walk_order(plant: &Plant, scheme: &Scheme, event: &Event, island: &Island) -> Vec<Vec<usize>> {
    let can_operate = |i: usize| {
        let stage = &scheme.stages[i];
        match stage.trigger {
            StageTrigger::Breaker(_) => event.armed.contains(&i),
            StageTrigger::Frequency { pickup_hz, .. } => {
                stage
                    .measuring_section(plant)
                    .is_some_and(|s| island.contains(s))
                    && (!island.on_utility || event.grid_low_hz.is_some_and(|low| low < pickup_hz))
            }
        }
    };
    let same_time = |a: usize, b: usize| {
        let (x, y) = (&scheme.stages[a], &scheme.stages[b]);
        x.delay_s == y.delay_s
            && match (x.trigger, y.trigger) {
                (StageTrigger::Breaker(_), StageTrigger::Breaker(_)) => true,
                (tx, ty) => tx == ty,
            }
    };
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for i in scheme
        .operating_order()
        .into_iter()
        .filter(|&i| can_operate(i))
    {
        match groups.last_mut() {
            Some(g) if same_time(g[0], i) => g.push(i),
            _ => groups.push(vec![i]),
        }
    }
    groups
}

/// One stage's broken rule, gathered over every place it happens.
#[derive(Default)]
struct Gathered {
    /// Loads the stage opens too early, by (rank, load index).
    opened: BTreeSet<(u32, usize)>,
    /// Lower-ranked loads left connected meanwhile, by (rank, load index); at most
    /// [`LOADS_SHOWN`] + 1 are kept, enough to say that there are more.
    left_on: BTreeSet<(u32, usize)>,
    /// The first [`PLACES_SHOWN`] event labels with their operating point indices.
    places: Vec<(String, Vec<usize>)>,
    /// Further (event, operating point) pairs where it also happens.
    more: usize,
}

impl Gathered {
    fn place(&mut self, label: &str, op: usize) {
        if let Some((_, ops)) = self.places.iter_mut().find(|(l, _)| l == label) {
            if !ops.contains(&op) {
                ops.push(op);
            }
        } else if self.places.len() < PLACES_SHOWN {
            self.places.push((label.to_string(), vec![op]));
        } else {
            self.more += 1;
        }
    }
}

/// How many left-connected loads a finding names before it says "and more".
const LOADS_SHOWN: usize = 12;

/// Every rank-order finding, one per stage and rule, naming the loads and where it happens; and
/// which events were judged, in words.
///
/// Cost: for each event, O(loads + loads listed in stages) and a sort of the island's loads by
/// rank; memory does not grow with the number of events.
pub fn rank_order(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
) -> (Vec<Finding>, String) {
    let n_loads = plant.loads.len();
    let in_a_stage: Vec<bool> = (0..n_loads)
        .map(|l| scheme.stages.iter().any(|s| s.sheds.contains(&l)))
        .collect();
    let order = scheme.operating_order();
    let mut position = vec![0; scheme.stages.len()];
    for (k, &i) in order.iter().enumerate() {
        position[i] = k;
    }
    // Every load, by rank then index: filtered per island, the walk's "lowest still connected".
    let mut by_rank: Vec<usize> = (0..n_loads).collect();
    by_rank.sort_by_key(|&l| (plant.loads[l].rank, l));
    // Keyed by (stage position in operating order, rule) for a stable order.
    let mut found: BTreeMap<(usize, &'static str), Gathered> = BTreeMap::new();
    let mut on = vec![false; n_loads];
    let basis = for_each_event(plant, scheme, cases, &mut |event: &Event| {
        let load_mw = &plant.operating_points[event.op].load_mw;
        // Findings this event adds to: its place is recorded once for each.
        let mut touched: BTreeSet<(usize, &'static str)> = BTreeSet::new();
        for island in &event.islands {
            // Sheddable loads of this island still connected, lowest rank first.
            let island_loads: Vec<usize> = by_rank
                .iter()
                .copied()
                .filter(|&l| {
                    island.contains(plant.loads[l].section)
                        && !plant.loads[l].never_shed
                        && load_mw[l] > 0.0
                        && !event.already_open[l]
                })
                .collect();
            for &l in &island_loads {
                on[l] = true;
            }
            let mut lowest = 0; // index into island_loads of the lowest-ranked load still on
            for group in walk_order(plant, scheme, event, island) {
                let opened: Vec<(usize, usize)> = group
                    .iter()
                    .flat_map(|&s| scheme.stages[s].sheds.iter().map(move |&l| (s, l)))
                    .filter(|&(_, l)| on[l])
                    .collect();
                for &(_, l) in &opened {
                    on[l] = false;
                }
                while lowest < island_loads.len() && !on[island_loads[lowest]] {
                    lowest += 1;
                }
                for &(s, l) in &opened {
                    let rank = plant.loads[l].rank;
                    let mut left = island_loads[lowest..]
                        .iter()
                        .copied()
                        .take_while(|&m| plant.loads[m].rank < rank)
                        .filter(|&m| on[m])
                        .peekable();
                    if left.peek().is_none() {
                        continue;
                    }
                    for m in left {
                        let rule = if in_a_stage[m] {
                            "rank-order"
                        } else {
                            "unassigned-lower-rank"
                        };
                        let g = found.entry((position[s], rule)).or_default();
                        g.opened.insert((rank, l));
                        if g.left_on.len() <= LOADS_SHOWN {
                            g.left_on.insert((plant.loads[m].rank, m));
                        }
                        touched.insert((position[s], rule));
                    }
                }
            }
            for &l in &island_loads {
                on[l] = false;
            }
        }
        for key in touched {
            if let Some(g) = found.get_mut(&key) {
                g.place(&event.label, event.op);
            }
        }
    });
    let names = |set: &BTreeSet<(u32, usize)>, cap: usize| -> String {
        let mut out: Vec<String> = set
            .iter()
            .take(cap)
            .map(|&(r, m)| format!("{} (rank {r})", plant.loads[m].id))
            .collect();
        if set.len() > cap {
            out.push("more".to_string());
        }
        out.join(", ")
    };
    let findings = found
        .into_iter()
        .map(|((pos, rule), g)| {
            let verb = if g.left_on.len() == 1 { "is" } else { "are" };
            let what = if rule == "rank-order" {
                format!("{verb} still connected")
            } else {
                format!("{verb} connected and in no stage")
            };
            let mut places: Vec<String> = g
                .places
                .iter()
                .map(|(label, ops)| {
                    let ops: Vec<&str> = ops
                        .iter()
                        .map(|&o| plant.operating_points[o].id.as_str())
                        .collect();
                    format!("{label}, at {}", ops.join(", "))
                })
                .collect();
            if g.more > 0 {
                places.push(format!(
                    "and {} more (event, operating point) pair(s)",
                    g.more
                ));
            }
            Finding {
                rule,
                message: format!(
                    "stage {} opens {} while lower-ranked {} of the same island {what} ({})",
                    scheme.stages[order[pos]].id,
                    names(&g.opened, usize::MAX),
                    names(&g.left_on, LOADS_SHOWN),
                    places.join("; ")
                ),
            }
        })
        .collect();
    (findings, basis)
}
