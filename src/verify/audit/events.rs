//! The events the rank-order rule is judged in: each event of each case at each operating point
//! (the breakers it opens, the islands after it, the stages it arms, what a flow-sized stage
//! opens there), or, without cases, each breaker opening alone. Made one at a time, so memory does
//! not grow with their number. The rule itself is in [`super::rank`].

use super::breaker_name;
use crate::model::{
    Action, BreakerRef, Candidate, Case, CaseSet, Plant, Scheme, Sizing, StageTrigger, Start,
};
use crate::topology::{flow_before_opening, islands, BreakerState, Island};
/// One event at one operating point: the islands after it and the stages it arms.
pub(super) struct Event {
    /// "case utility-loss, utility opens at 0.00 s" or "utility opens alone".
    pub(super) label: String,
    pub(super) op: usize,
    pub(super) islands: Vec<Island>,
    /// Stages armed by a breaker this event opens.
    pub(super) armed: Vec<usize>,
    /// What each flow-sized stage among `armed` opens, with the flow and allowance that sized it.
    pub(super) picked: Vec<Pick>,
    /// Loads opened by armed stages at an earlier event of the same case.
    pub(super) already_open: Vec<bool>,
    /// The case's lowest utility frequency, when it falls below nominal.
    pub(super) grid_low_hz: Option<f64>,
}

/// What a flow-sized stage opens at one event.
#[derive(Debug, Clone)]
pub(super) struct Pick {
    pub(super) stage: usize,
    pub(super) loads: Vec<usize>,
    pub(super) flow_mw: f64,
    pub(super) allowance_mw: f64,
}

/// The picks of the flow-sized stages armed by `breaker`, which opens at breaker state `before`
/// with `running` machines, load `steps` (MW by section) and loads `already_open`: the flow from
/// the operating point's dispatch and demand.
#[allow(clippy::too_many_arguments)]
fn flow_picks(
    plant: &Plant,
    scheme: &Scheme,
    op: usize,
    before: &BreakerState,
    running: &[bool],
    steps: &[f64],
    already_open: &[bool],
    breaker: BreakerRef,
) -> Vec<Pick> {
    let point = &plant.operating_points[op];
    let sized: Vec<usize> = armed_by(scheme, breaker)
        .filter(|&i| matches!(scheme.stages[i].sizing, Sizing::Flow(_)))
        .collect();
    if sized.is_empty() {
        return Vec::new();
    }
    let load_on = |l: usize| point.load_mw[l] > 0.0 && !already_open[l];
    let mut net = steps.to_vec();
    for (l, load) in plant.loads.iter().enumerate() {
        if load_on(l) {
            net[load.section] += point.load_mw[l];
        }
    }
    let gen_mw: Vec<f64> = (0..plant.generators.len())
        .map(|g| if running[g] { point.output_mw[g] } else { 0.0 })
        .collect();
    for (g, gen) in plant.generators.iter().enumerate() {
        net[gen.section] -= gen_mw[g];
    }
    let Some(cut) = flow_before_opening(plant, before, breaker, &net, &gen_mw) else {
        return Vec::new();
    };
    let reserve: f64 = plant
        .generators
        .iter()
        .enumerate()
        .filter(|&(g, gen)| {
            running[g]
                && breaker != BreakerRef::Generator(g)
                && cut.sections.binary_search(&gen.section).is_ok()
        })
        .map(|(g, gen)| (gen.upper_mw(gen_mw[g]) - gen_mw[g]).max(0.0))
        .sum();
    sized
        .into_iter()
        .map(|i| {
            let stage = &scheme.stages[i];
            let candidates: Vec<Candidate> = stage
                .sheds
                .iter()
                .filter(|&&l| {
                    load_on(l) && cut.sections.binary_search(&plant.loads[l].section).is_ok()
                })
                .map(|&l| Candidate {
                    load: l,
                    mw: point.load_mw[l],
                })
                .collect();
            let allowance_mw = match stage.sizing {
                Sizing::Flow(a) => a.mw(reserve),
                Sizing::All => 0.0,
            };
            Pick {
                stage: i,
                loads: stage.flow_pick(plant, &candidates, cut.flow_mw, allowance_mw),
                flow_mw: cut.flow_mw,
                allowance_mw,
            }
        })
        .collect()
}

/// Calls `visit` with each event judged: from the cases, or each breaker opening alone. Returns
/// which, in words. Events are made one at a time, so memory does not grow with their number.
pub(super) fn for_each_event(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
    points: &[usize],
    visit: &mut dyn FnMut(&Event),
) -> String {
    match cases {
        Some(set) => {
            for case in &set.cases {
                for &op in case.applies_to.iter().filter(|op| points.contains(op)) {
                    case_events(plant, scheme, case, op, visit);
                }
            }
            format!(
                "each event of the {} case(s) at each operating point it applies to",
                set.cases.len()
            )
        }
        None => {
            alone_events(plant, scheme, points, visit);
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
    let mut steps = vec![0.0; plant.sections.len()];
    let mut k = 0;
    while k < case.events.len() {
        let at_s = case.events[k].at_s;
        let mut what = Vec::new();
        let mut armed = Vec::new();
        let mut picked = Vec::new();
        while k < case.events.len() && case.events[k].at_s == at_s {
            let action = &case.events[k].action;
            k += 1;
            match *action {
                Action::Open(b) => {
                    let picks = flow_picks(
                        plant,
                        scheme,
                        op,
                        &state,
                        &running,
                        &steps,
                        &already_open,
                        b,
                    );
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
                    let name = breaker_name(plant, b);
                    what.push(match b {
                        BreakerRef::Generator(_) => format!("{name} trips"),
                        _ => format!("{name} opens"),
                    });
                    if was_closed {
                        armed.extend(armed_by(scheme, b));
                        picked.extend(picks);
                    }
                }
                Action::LoadStep { section, mw } => {
                    steps[section] += mw;
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
            picked: picked.clone(),
            already_open: already_open.clone(),
            grid_low_hz,
        });
        for &s in &armed {
            let opened = match picked.iter().find(|p| p.stage == s) {
                Some(p) => &p.loads,
                None => &scheme.stages[s].sheds,
            };
            for &l in opened {
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
                picked: vec![],
                already_open,
                grid_low_hz,
            });
        }
    }
}

fn alone_events(plant: &Plant, scheme: &Scheme, points: &[usize], out: &mut dyn FnMut(&Event)) {
    for &op in points {
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
                picked: vec![],
                already_open: vec![false; plant.loads.len()],
                grid_low_hz: None,
            });
        }
        let running = plant.operating_points[op].online.clone();
        let no_steps = vec![0.0; plant.sections.len()];
        let none_open = vec![false; plant.loads.len()];
        for b in breakers {
            let picked = flow_picks(
                plant, scheme, op, &start, &running, &no_steps, &none_open, b,
            );
            let mut state = start.clone();
            match b {
                BreakerRef::Utility => state.utility_closed = false,
                BreakerRef::Tie(t) => state.tie_closed[t] = false,
                BreakerRef::Generator(_) => {}
            }
            let name = breaker_name(plant, b);
            out(&Event {
                label: match b {
                    BreakerRef::Generator(_) => format!("{name} trips alone"),
                    _ => format!("{name} opens alone"),
                },
                op,
                islands: islands(plant, &state),
                armed: armed_by(scheme, b).collect(),
                picked,
                already_open: vec![false; plant.loads.len()],
                grid_low_hz: None,
            });
        }
    }
}

/// What a flow-sized stage opens at one event, in words: "at case X, utility opens at 1.00 s,
/// at normal: 8.00 MW flowed in, less 0 MW allowance; opens a, b (9.00 MW)".
pub(super) fn pick_words(plant: &Plant, event: &Event, pick: &Pick) -> String {
    let point = &plant.operating_points[event.op];
    let opened: f64 = pick.loads.iter().map(|&l| point.load_mw[l]).sum();
    let flow = if pick.flow_mw > 0.0 {
        format!("{:.2} MW flowed in", pick.flow_mw)
    } else {
        "no flow in (it went the other way)".to_string()
    };
    let what = if pick.loads.is_empty() {
        "opens nothing".to_string()
    } else {
        let names: Vec<&str> = pick
            .loads
            .iter()
            .map(|&l| plant.loads[l].id.as_str())
            .collect();
        let short = if pick.flow_mw - pick.allowance_mw > opened + 1e-9 {
            format!(
                ", short of the {:.2} MW needed: its loads there are all it has",
                pick.flow_mw - pick.allowance_mw
            )
        } else {
            String::new()
        };
        format!("opens {} ({opened:.2} MW){short}", names.join(", "))
    };
    format!(
        "{}, at {}: {flow}, less {:.2} MW allowance; {what}",
        event.label, point.id, pick.allowance_mw
    )
}
