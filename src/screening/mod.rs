//! Closed-form screening figures: what an engineer works out by hand before any simulation.
//!
//! Owns: per operating point and island, the balance, spinning reserve, stored kinetic energy
//! and sheddable load; per case and operating point, the immediate power deficit of each island,
//! the initial rate of change of frequency and the steady-state frequency with governors and load
//! damping but no shedding; per scheme stage, the load it sheds at each operating point.
//! Must not: simulate (that is [`crate::sim`]), print, or read files. It depends on
//! [`crate::model`] and [`crate::topology`] only.
//!
//! The formulas, with their published source:
//! * Initial ROCOF from the aggregated swing equation at t = 0+, before any governor or load
//!   response: `df/dt = −ΔP·f0 / (2·E_k)` with `E_k = Σ H_i·S_i` in MW·s (Kundur, *Power System
//!   Stability and Control*, 1994, §3.9 and §11.1; `ΔP` positive for a shortage).
//! * Steady-state deviation with droop and load damping: `Δf = −ΔP / (D + Σ S_i/R_i)` in per
//!   unit (Kundur 1994, ch. 11, `Δf_ss = −ΔP/(D + 1/R)` on a common base), with MW per pu here,
//!   `D = Σ k_j·P_j` from each load's frequency exponent, and each governor's response limited by
//!   its headroom and dead band. The piecewise-linear equation is solved exactly (every clamp is a
//!   breakpoint), which is the same as "clamp units at their limit and recompute".
//!
//! Conventions decided here and documented in docs/files.md:
//! * A governor dead band offsets the error: a unit answers `K·(|x| − db)` outside the band.
//! * An isochronous unit absorbs the whole deficit within its headroom (frequency returns to
//!   nominal); beyond it, it stays at its limit and the droop units carry the rest.
//! * The frequency floor for "held" is 0.85·f0: below it no steady state is reported.
//! * For a case that starts islanded, the import is taken up by the governed machines of the
//!   utility's island in proportion to their droop gain S/R, each within its headroom, and
//!   frequency is taken as restored to nominal (the operator or a secondary control has
//!   re-balanced the island before the case starts).
//! * A voltage dip acts on the named section only: a load drops out when the dip is deeper than
//!   its element's `below_pu` and longer than its `after_s`; a generator trips when the dip is
//!   deeper and longer than any of its ride-through elements. Dropped loads do not return.
//! * Protection (generator, interface, shedding) does not act in these figures.
//!
//! Split by concept: [`figures`] the result types, [`closed`] the two closed forms (initial
//! ROCOF and steady state), [`state`] the plant state between events and the figures drawn
//! from it; this file holds the entry points.

mod closed;
mod figures;
mod state;

pub use closed::{initial_rocof_hz_per_s, steady_state};
pub use figures::*;

use crate::model::{Allowance, CaseSet, OverAction, Plant, Scheme, Sizing, StageTrigger, Start};
use crate::topology::islands;
use state::{breaker_id, island_figures, profile_figures, state_figures, State};

/// Lowest steady frequency, as a fraction of nominal, for which an island counts as held.
pub const COLLAPSE_FLOOR_PU: f64 = 0.85;

/// Events closer than this in time count as simultaneous.
const SAME_TIME_S: f64 = 1e-9;

/// All figures: operating points always, cases and scheme when given.
pub fn screen(plant: &Plant, cases: Option<&CaseSet>, scheme: Option<&Scheme>) -> Screening {
    Screening {
        plant: plant.name.clone(),
        nominal_hz: plant.nominal_hz,
        operating_points: screen_points(plant),
        cases: cases
            .map(|c| screen_cases(plant, c, scheme))
            .unwrap_or_default(),
        scheme: scheme.map(|s| screen_scheme(plant, s)),
    }
}

/// Figures for every operating point before any event.
pub fn screen_points(plant: &Plant) -> Vec<PointFigures> {
    (0..plant.operating_points.len())
        .map(|op_idx| {
            let state = State::initial(plant, op_idx, true);
            let op = &plant.operating_points[op_idx];
            let islands = islands(plant, &state.breakers)
                .iter()
                .map(|island| island_figures(plant, &state, island))
                .collect();
            PointFigures {
                operating_point: op.id.clone(),
                load_mw: op.load_mw.iter().sum(),
                generation_mw: state.generation_total(),
                import_mw: op.import_mw,
                islands,
            }
        })
        .collect()
}

/// Figures for every case at every operating point it applies to.
pub fn screen_cases(plant: &Plant, cases: &CaseSet, scheme: Option<&Scheme>) -> Vec<CaseFigures> {
    let mut out = Vec::new();
    for case in &cases.cases {
        let profile = profile_figures(&case.utility_profile, scheme);
        for &op_idx in &case.applies_to {
            let Some(op) = plant.operating_points.get(op_idx) else {
                continue;
            };
            let start = match case.start {
                Start::Connected => StartKind::Connected,
                Start::Islanded => StartKind::Islanded,
            };
            let mut figures = CaseFigures {
                case: case.id.clone(),
                operating_point: op.id.clone(),
                start,
                problem: None,
                after_first: None,
                after_all: None,
                utility_profile: profile.clone(),
            };
            let mut state = State::initial(plant, op_idx, case.start == Start::Connected);
            if case.start == Start::Islanded {
                if let Err(problem) = state.take_up_import(plant) {
                    figures.problem = Some(problem);
                    out.push(figures);
                    continue;
                }
            }
            let pre = state.clone();
            if let Some(first) = case.events.first() {
                let n_first = case
                    .events
                    .iter()
                    .take_while(|e| (e.at_s - first.at_s).abs() <= SAME_TIME_S)
                    .count();
                for event in &case.events[..n_first] {
                    state.apply(plant, &event.action);
                }
                figures.after_first = Some(state_figures(plant, &pre, &state, first.at_s));
                if n_first < case.events.len() {
                    for event in &case.events[n_first..] {
                        state.apply(plant, &event.action);
                    }
                    let last_s = case.events.last().map_or(first.at_s, |e| e.at_s);
                    figures.after_all = Some(state_figures(plant, &pre, &state, last_s));
                }
            }
            out.push(figures);
        }
    }
    out
}

/// Load shed by each stage at each operating point.
pub fn screen_scheme(plant: &Plant, scheme: &Scheme) -> SchemeFigures {
    let ops = &plant.operating_points;
    let plant_load: Vec<f64> = ops.iter().map(|op| op.load_mw.iter().sum()).collect();
    let mut cumulative = vec![0.0; ops.len()];
    // A load in several stages (an armed stage and its under-frequency backup) is opened once:
    // the cumulative figure counts it at the first stage in operating order that lists it.
    let mut counted = vec![vec![false; plant.loads.len()]; ops.len()];
    let stages = scheme
        .operating_order()
        .into_iter()
        .map(|i| {
            let stage = &scheme.stages[i];
            // Nothing at a point where the setting group in force takes the stage out of service.
            let serves: Vec<bool> = (0..ops.len())
                .map(|k| stage.in_group(scheme.group_at(k)).is_some())
                .collect();
            let mw: Vec<f64> = ops
                .iter()
                .zip(&serves)
                .map(|(op, &on)| {
                    if on {
                        stage.sheds.iter().filter_map(|&l| op.load_mw.get(l)).sum()
                    } else {
                        0.0
                    }
                })
                .collect();
            for &l in &stage.sheds {
                for (k, op) in ops.iter().enumerate() {
                    if serves[k] && !counted[k][l] {
                        counted[k][l] = true;
                        cumulative[k] += op.load_mw.get(l).copied().unwrap_or(0.0);
                    }
                }
            }
            let pct = |v: &[f64]| -> Vec<f64> {
                v.iter()
                    .zip(&plant_load)
                    .map(|(m, total)| if *total > 0.0 { 100.0 * m / total } else { 0.0 })
                    .collect()
            };
            StageFigures {
                stage: stage.id.clone(),
                trigger: match stage.trigger {
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    } => TriggerFigure::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    },
                    StageTrigger::Breaker(b) => TriggerFigure::Armed {
                        breaker: breaker_id(plant, b),
                    },
                },
                delay_s: stage.delay_s,
                breaker_s: stage.breaker_s,
                loads: stage
                    .sheds
                    .iter()
                    .filter_map(|&l| plant.loads.get(l).map(|x| x.id.clone()))
                    .collect(),
                pct_of_load: pct(&mw),
                cumulative_pct_of_load: pct(&cumulative),
                cumulative_mw: cumulative.clone(),
                mw,
            }
        })
        .collect();
    SchemeFigures {
        scheme: scheme.name.clone(),
        operating_points: ops.iter().map(|o| o.id.clone()).collect(),
        plant_load_mw: plant_load,
        stages,
        notes: scheme_notes(plant, scheme),
    }
}

/// A flow-sized stage's sizing and each stage's settings per setting group, in words.
fn scheme_notes(plant: &Plant, scheme: &Scheme) -> Vec<String> {
    let mut out = Vec::new();
    let allowance = |a: Allowance| match a {
        Allowance::Mw(mw) => format!("{mw} MW"),
        Allowance::ReservePct(pct) => format!("{pct} % of the spinning reserve"),
    };
    for i in scheme.operating_order() {
        let st = &scheme.stages[i];
        if let (Sizing::Flow(a), StageTrigger::Breaker(b)) = (st.sizing, st.trigger) {
            out.push(format!(
                "{} is sized from the flow through {} just before it opens, less {}: its MW above is the most it opens; it opens the rank-order part of its loads that covers the flow, and nothing when the plant exports",
                st.id,
                breaker_id(plant, b),
                allowance(a)
            ));
        }
        for g in &st.groups {
            let Some(group) = scheme.groups.get(g.group) else {
                continue;
            };
            let points: Vec<&str> = group
                .operating_points
                .iter()
                .filter_map(|&op| plant.operating_points.get(op).map(|o| o.id.as_str()))
                .collect();
            let settings = if !g.in_service {
                "out of service (0 MW above)".to_string()
            } else {
                let trigger = match g.trigger {
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s: None,
                    } => format!("{pickup_hz} Hz, "),
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s: Some(r),
                    } => format!("{pickup_hz} Hz and df/dt < -{r} Hz/s, "),
                    StageTrigger::Breaker(_) => String::new(),
                };
                let sized = match g.sizing {
                    Sizing::Flow(a) => format!(", allowance {}", allowance(a)),
                    Sizing::All => String::new(),
                };
                format!("{trigger}delay {} s{sized}", g.delay_s)
            };
            out.push(format!(
                "{} in setting group {} ({}): {settings}",
                st.id,
                group.id,
                points.join(", ")
            ));
        }
        if !st.in_service {
            out.push(format!(
                "{} is out of service at the points in no setting group (0 MW above)",
                st.id
            ));
        }
    }
    for o in &scheme.over_frequency {
        let g = o.action.generator();
        let what = match o.action {
            OverAction::Trip { .. } => format!("trips generator {}", plant.generators[g].id),
            OverAction::RunBack { mw, .. } => {
                format!("runs generator {} back by {mw} MW", plant.generators[g].id)
            }
        };
        out.push(format!(
            "{} (over-frequency, not in the table) {what} when above {} Hz for {} s, breaker {} s",
            o.id, o.pickup_hz, o.delay_s, o.breaker_s
        ));
    }
    out
}
