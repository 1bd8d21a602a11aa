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
//! Picking up is not opening: a stage earlier in that walk whose delay (or delay plus breaker
//! time) is longer than a later stage's may open its loads after it, on a fall fast enough, or
//! never, if frequency recovers first. For each stage, the loads that only such slower stages
//! open are therefore still connected when it opens its own ([`super::timing`]); a lower-ranked
//! one among them is a rank-order violation that names the slower stage.
//!
//! What "can operate" means here, without simulating:
//! - an armed stage operates when its breaker opens in this event and was closed before it (a
//!   breaker already open, or a generator not running, arms nothing, as in the simulator);
//! - a stage sized from the pre-event flow opens the loads [`crate::model::Stage::flow_pick`]
//!   chooses for the flow [`crate::topology::flow_before_opening`] finds from the operating
//!   point's dispatch and demand (with the load steps and machine trips of earlier events of the
//!   case, each taken up by the utility or left as a deficit; no governor response): nothing
//!   when the plant exported; the simulator uses the flow of the moment instead;
//! - a frequency stage can operate in an island without the utility; in an island held by the
//!   utility only when the case's utility frequency falls below its pickup (a grid-wide event);
//! - loads opened by armed stages at an earlier event of the same case are already open;
//! - a df/dt-supervised stage is taken to operate at its pickup; a note names the first stage
//!   after it that would open higher-ranked loads while its loads stay on, on a slower fall;
//! - breakers opened by protection during a run (interface or generator trips) are not events of
//!   the audit: `nadir verify` shows what they do.
//!
//! When no cases are given, each breaker (the utility, each tie closed at the point, each running
//! generator) is taken as opening alone, from the plant connected to the utility.

use super::events::{for_each_event, pick_words, Event};
use super::{timing, Finding};
use crate::model::{CaseSet, Plant, Scheme, StageTrigger};
use crate::topology::Island;
use std::cmp::Reverse;
use std::collections::{BTreeSet, BinaryHeap};

/// How many places a finding names before it says "and N more".
const PLACES_SHOWN: usize = 3;

/// The loads a stage opens at an event: for a flow-sized stage its pick, else every load listed.
fn opens<'a>(scheme: &'a Scheme, event: &'a Event, stage: usize) -> &'a [usize] {
    match event.picked.iter().find(|p| p.stage == stage) {
        Some(p) => &p.loads,
        None => &scheme.stages[stage].sheds,
    }
}

/// The stages that can operate in an island at an event, grouped by when they act: each group
/// holds stages with the same settings, which operate together.
/// `order` is the scheme's operating order, `measures` each stage's measuring section.
fn walk_order(
    scheme: &Scheme,
    order: &[usize],
    measures: &[Option<usize>],
    event: &Event,
    island: &Island,
) -> Vec<Vec<usize>> {
    let can_operate = |i: usize| {
        let stage = &scheme.stages[i];
        match stage.trigger {
            StageTrigger::Breaker(_) => event.armed.contains(&i),
            StageTrigger::Frequency { pickup_hz, .. } => {
                measures[i].is_some_and(|s| island.contains(s))
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
    for i in order.iter().copied().filter(|&i| can_operate(i)) {
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
    /// Whether the stage opens each load (by index) too early somewhere.
    opened: Vec<bool>,
    /// Lower-ranked loads left connected meanwhile, by (rank, load index); at most
    /// [`LOADS_SHOWN`] + 1 are kept, enough to say that there are more.
    left_on: BTreeSet<(u32, usize)>,
    /// The first [`PLACES_SHOWN`] event labels with their operating point indices.
    places: Vec<(String, Vec<usize>)>,
    /// Further (event, operating point) pairs where it also happens.
    more: usize,
    /// Rule 3: the slower stages earlier in the walk that list the loads left connected.
    slower: BTreeSet<usize>,
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

/// Findings per stage: rank order (0), a lower-ranked load in no stage (1), the df/dt-supervised
/// note (2), and rank order on a fast fall that lets the stage act before a slower one (3).
const RULES: usize = 4;

/// How many left-connected loads a finding names before it says "and more".
const LOADS_SHOWN: usize = 12;

/// Every rank-order finding, one per stage and rule, naming the loads and where it happens; the
/// notes on frequency stages that open loads outside the island they measure in; and which events
/// were judged, in words.
///
/// Cost: for each event, O(sections + loads + islands × stages + loads listed in stages ×
/// [`LOADS_SHOWN`]); memory does not grow with the number of events.
///
/// Only events at the operating points in `points` are judged (the points of one setting group,
/// whose settings `scheme` holds). The notes include, for each flow-sized stage, what it opens at
/// the first few events and points that arm it, sized from which flow.
pub fn rank_order(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
    points: &[usize],
) -> (Vec<Finding>, Vec<Finding>, String) {
    let n_loads = plant.loads.len();
    // By stage: what a flow-sized stage opens, in words, at the first PLACES_SHOWN events, and
    // how many more.
    let mut sized: Vec<(Vec<String>, usize)> = vec![(Vec::new(), 0); scheme.stages.len()];
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
    // The hot loop reads these compact copies rather than the load records.
    let rank: Vec<u32> = plant.loads.iter().map(|l| l.rank).collect();
    let section: Vec<usize> = plant.loads.iter().map(|l| l.section).collect();
    let sheddable: Vec<bool> = plant.loads.iter().map(|l| !l.never_shed).collect();
    let measures: Vec<Option<usize>> = scheme
        .stages
        .iter()
        .map(|s| s.measuring_section(plant))
        .collect();
    // By stage position in operating order × RULES + rule, so the findings come out in that
    // order. Rule 2 is the note on df/dt-supervised stages that a slow fall skips; rule 3 a stage
    // that a fast fall lets act before a slower stage earlier in the walk ([`timing`]).
    let mut found: Vec<Option<Gathered>> = (0..RULES * order.len()).map(|_| None).collect();
    let mut sup_opened = vec![false; n_loads];
    let mut mark = vec![false; n_loads];
    let mut backed = vec![false; n_loads];
    let mut touched_flag = vec![false; found.len()];
    // By stage: loads it opens in another island than the one it measures in, and where first.
    let mut elsewhere: Vec<Option<(BTreeSet<(u32, usize)>, String)>> =
        vec![None; scheme.stages.len()];
    let mut on = vec![false; n_loads];
    let mut slot = vec![0; n_loads];
    let basis = for_each_event(plant, scheme, cases, points, &mut |event: &Event| {
        let load_mw = &plant.operating_points[event.op].load_mw;
        for pick in &event.picked {
            let (said, more) = &mut sized[pick.stage];
            if said.len() < PLACES_SHOWN {
                said.push(pick_words(plant, event, pick));
            } else {
                *more += 1;
            }
        }
        // Findings this event adds to: its place is recorded once for each.
        let mut touched: Vec<usize> = Vec::new();
        // Sheddable loads still connected, lowest rank first, bucketed by island in one pass.
        let mut island_of_section = vec![usize::MAX; plant.sections.len()];
        for (k, island) in event.islands.iter().enumerate() {
            for &sec in &island.sections {
                island_of_section[sec] = k;
            }
        }
        let mut buckets: Vec<Vec<usize>> = vec![Vec::new(); event.islands.len()];
        for &l in &by_rank {
            let k = island_of_section[section[l]];
            if k != usize::MAX && sheddable[l] && load_mw[l] > 0.0 && !event.already_open[l] {
                buckets[k].push(l);
            }
        }
        // A frequency stage that can operate and opens loads outside its own island.
        for (i, stage) in scheme.stages.iter().enumerate() {
            let (StageTrigger::Frequency { pickup_hz, .. }, Some(m)) = (stage.trigger, measures[i])
            else {
                continue;
            };
            let home = island_of_section[m];
            let island = &event.islands[home];
            if island.on_utility && !event.grid_low_hz.is_some_and(|low| low < pickup_hz) {
                continue;
            }
            for &l in &stage.sheds {
                if island_of_section[section[l]] != home && load_mw[l] > 0.0 {
                    let (loads, _) = elsewhere[i].get_or_insert_with(|| {
                        (
                            BTreeSet::new(),
                            format!(
                                "{}, at {}",
                                event.label, plant.operating_points[event.op].id
                            ),
                        )
                    });
                    loads.insert((rank[l], l));
                }
            }
        }
        for (island, island_loads) in event.islands.iter().zip(&buckets) {
            // Loads some stage lists, still connected, as a list linked in rank order (opening
            // one unlinks it); loads in no stage stay connected throughout.
            let staged: Vec<usize> = island_loads
                .iter()
                .copied()
                .filter(|&l| in_a_stage[l])
                .collect();
            let unstaged: Vec<usize> = island_loads
                .iter()
                .copied()
                .filter(|&l| !in_a_stage[l])
                .collect();
            let end = staged.len();
            let mut next: Vec<usize> = (1..=end).collect();
            let mut prev: Vec<usize> = (0..end).map(|k| k.wrapping_sub(1)).collect();
            let mut head = if end > 0 { 0 } else { end };
            for (k, &l) in staged.iter().enumerate() {
                on[l] = true;
                slot[l] = k;
            }
            // Loads opened so far only by df/dt-supervised stages (lowest rank on top): on a fall
            // slower than their setting those stages do not operate and the loads stay on.
            let mut skippable: BinaryHeap<Reverse<(u32, usize)>> = BinaryHeap::new();
            let mut reset: Vec<usize> = Vec::new();
            let groups = walk_order(scheme, &order, &measures, event, island);
            // Before the walk opens anything: `on` marks exactly the island's staged loads.
            let opens_at = |s: usize| opens(scheme, event, s);
            for o in timing::overtaken(&scheme.stages, &groups, &opens_at, &on, &rank, &mut mark) {
                let key = RULES * position[o.stage] + 3;
                let g = found[key].get_or_insert_with(|| Gathered {
                    opened: vec![false; n_loads],
                    ..Gathered::default()
                });
                for &l in &o.opened {
                    g.opened[l] = true;
                }
                for &m in &o.left_on {
                    if g.left_on.len() <= LOADS_SHOWN {
                        g.left_on.insert((rank[m], m));
                    }
                }
                g.slower.extend(o.slower);
                if !std::mem::replace(&mut touched_flag[key], true) {
                    touched.push(key);
                }
            }
            for group in groups {
                let opened: Vec<(usize, usize)> = group
                    .iter()
                    .flat_map(|&s| opens(scheme, event, s).iter().map(move |&l| (s, l)))
                    .filter(|&(_, l)| on[l])
                    .collect();
                let supervised = matches!(
                    scheme.stages[group[0]].trigger,
                    StageTrigger::Frequency {
                        min_rocof_hz_per_s: Some(_),
                        ..
                    }
                );
                if supervised {
                    for &(_, l) in &opened {
                        sup_opened[l] = true;
                        skippable.push(Reverse((rank[l], l)));
                        reset.push(l);
                    }
                } else if !skippable.is_empty() {
                    for &s in &group {
                        for &l in &scheme.stages[s].sheds {
                            backed[l] = true;
                            reset.push(l);
                        }
                    }
                    while skippable.peek().is_some_and(|Reverse((_, m))| backed[*m]) {
                        skippable.pop();
                    }
                    if let Some(&Reverse((low, m))) = skippable.peek() {
                        // Named once per walk, at the first stage it affects: the later ones
                        // follow from it.
                        skippable.clear();
                        for &s in &group {
                            for &l in &scheme.stages[s].sheds {
                                if (on[l] || sup_opened[l]) && rank[l] > low {
                                    let key = RULES * position[s] + 2;
                                    let g = found[key].get_or_insert_with(|| Gathered {
                                        opened: vec![false; n_loads],
                                        ..Gathered::default()
                                    });
                                    g.opened[l] = true;
                                    if g.left_on.len() <= LOADS_SHOWN {
                                        g.left_on.insert((low, m));
                                    }
                                    if !std::mem::replace(&mut touched_flag[key], true) {
                                        touched.push(key);
                                    }
                                }
                            }
                        }
                    }
                }
                for &(_, l) in &opened {
                    if !std::mem::replace(&mut on[l], false) {
                        continue;
                    }
                    let k = slot[l];
                    if prev[k] == usize::MAX {
                        head = next[k];
                    } else {
                        next[prev[k]] = next[k];
                    }
                    if next[k] < end {
                        prev[next[k]] = prev[k];
                    }
                }
                for &(s, l) in &opened {
                    let rank_l = rank[l];
                    // Rule 0: a lower-ranked load some stage lists is still connected; rule 1: a
                    // lower-ranked load in no stage is connected. No allocation on this path.
                    for rule in [0u8, 1] {
                        let first = match rule {
                            0 => (head < end).then(|| staged[head]),
                            _ => unstaged.first().copied(),
                        };
                        if !first.is_some_and(|m| rank[m] < rank_l) {
                            continue;
                        }
                        let key = RULES * position[s] + usize::from(rule);
                        let g = found[key].get_or_insert_with(|| Gathered {
                            opened: vec![false; n_loads],
                            ..Gathered::default()
                        });
                        g.opened[l] = true;
                        if !std::mem::replace(&mut touched_flag[key], true) {
                            touched.push(key);
                        }
                        if g.left_on.len() > LOADS_SHOWN {
                            continue;
                        }
                        if rule == 0 {
                            let mut k = head;
                            while k < end
                                && rank[staged[k]] < rank_l
                                && g.left_on.len() <= LOADS_SHOWN
                            {
                                g.left_on.insert((rank[staged[k]], staged[k]));
                                k = next[k];
                            }
                        } else {
                            for &m in unstaged.iter().take_while(|&&m| rank[m] < rank_l) {
                                if g.left_on.len() > LOADS_SHOWN {
                                    break;
                                }
                                g.left_on.insert((rank[m], m));
                            }
                        }
                    }
                }
            }
            for &l in &staged {
                on[l] = false;
            }
            for l in reset {
                sup_opened[l] = false;
                backed[l] = false;
            }
        }
        for key in touched {
            touched_flag[key] = false;
            if let Some(g) = found[key].as_mut() {
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
        .enumerate()
        .filter_map(|(key, g)| g.map(|g| (key / RULES, key % RULES, g)))
        .map(|(pos, rule, g)| {
            let opened: BTreeSet<(u32, usize)> = (0..n_loads)
                .filter(|&l| g.opened[l])
                .map(|l| (rank[l], l))
                .collect();
            let verb = if g.left_on.len() == 1 { "is" } else { "are" };
            let (rule, what) = match rule {
                0 => ("rank-order", format!("{verb} still connected")),
                1 => (
                    "unassigned-lower-rank",
                    format!("{verb} connected and in no stage"),
                ),
                3 => (
                    "rank-order",
                    format!(
                        "{verb} still connected on a fall fast enough for it to act before the slower {}, {me} having {:.2} s and {:.2} s; list them in {me} too, or make the slower stage's delay and breaker time no longer than {me}'s",
                        g.slower
                            .iter()
                            .map(|&a| format!(
                                "{} ({}, delay {:.2} s, breaker {:.2} s)",
                                scheme.stages[a].id,
                                super::describe_trigger(plant, &scheme.stages[a].trigger),
                                scheme.stages[a].delay_s,
                                scheme.stages[a].breaker_s
                            ))
                            .collect::<Vec<_>>()
                            .join(", "),
                        scheme.stages[order[pos]].delay_s,
                        scheme.stages[order[pos]].breaker_s,
                        me = scheme.stages[order[pos]].id,
                    ),
                ),
                _ => (
                    "df/dt-supervised",
                    format!(
                        "{verb} still connected when the df/dt-supervised stage before it does not operate (a fall slower than its df/dt setting)"
                    ),
                ),
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
                    names(&opened, usize::MAX),
                    names(&g.left_on, LOADS_SHOWN),
                    places.join("; ")
                ),
            }
        })
        .collect::<Vec<Finding>>();
    let (supervised_notes, findings): (Vec<Finding>, Vec<Finding>) = findings
        .into_iter()
        .partition(|f| f.rule == "df/dt-supervised");
    let notes = order
        .iter()
        .filter_map(|&i| elsewhere[i].as_ref().map(|e| (i, e)))
        .map(|(i, (loads, place))| {
            let sec = &plant.sections[measures[i].unwrap_or(0)].id;
            Finding {
                rule: "measured-elsewhere",
                message: format!(
                    "stage {} measures at {sec}; once its loads are in different islands ({place}) it also opens {} on {sec}'s frequency, and the rank rule does not count them there",
                    scheme.stages[i].id,
                    names(loads, LOADS_SHOWN)
                ),
            }
        })
        .chain(supervised_notes)
        .chain(order.iter().filter(|&&i| !sized[i].0.is_empty()).map(|&i| {
            let (said, more) = &sized[i];
            let more = if *more > 0 {
                format!("; and at {more} more (event, operating point) pair(s)")
            } else {
                String::new()
            };
            Finding {
                rule: "flow-sized",
                message: format!(
                    "stage {} is sized from the flow through {} just before it opens: {}{more}",
                    scheme.stages[i].id,
                    match scheme.stages[i].trigger {
                        StageTrigger::Breaker(b) => super::breaker_name(plant, b),
                        StageTrigger::Frequency { .. } => String::new(),
                    },
                    said.join("; ")
                ),
            }
        }))
        .collect();
    (findings, notes, basis)
}
