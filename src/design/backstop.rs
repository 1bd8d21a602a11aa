//! The backstop: every sheddable load that no studied case needs shed is still assigned, to a
//! stage at the lowest pickup, so that an event beyond the studied ones gets the whole sheddable
//! load in rank order. The objective counts only what the studied cases shed, so a backstop that
//! no case operates costs nothing. Also the table proposed when no case needs shedding at all:
//! the backstop alone.

use super::context::Context;
use super::evaluate::Verdict;
use super::layout::{self, Layout};
use super::sizing::Sized;
use crate::model::{Measurement, Scheme, StageTrigger};

/// What became of the loads no stage sheds.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub enum Backstop {
    /// Every sheddable load was assigned already.
    NotNeeded,
    /// The loads left over went to a new stage at the lowest pickup.
    NewStage,
    /// The loads left over went to the last frequency stage (the lowest pickup, or no room for
    /// one more stage).
    LastStage,
    /// The plant's design block turns the backstop off.
    Off,
    /// Neither placement holds every case; the loads stay in no stage, with the reason.
    NotHeld(String),
}

/// Whether every row holds with no table at all (margins included): nothing needs shedding.
pub fn nothing_needed(ctx: &Context) -> bool {
    let empty = Scheme {
        groups: Vec::new(),
        name: String::new(),
        measurement: Measurement::default(),
        stages: Vec::new(),
        over_frequency: Vec::new(),
    };
    ctx.evaluate_all(&empty)
        .iter()
        .all(|e| e.verdict == Verdict::Holds)
}

/// The backstop table alone: one stage at the lowest pickup with every sheddable load, at the
/// shortest delay that holds every row (it should operate in none); `None` when no delay does.
pub fn alone(ctx: &Context) -> Option<Sized> {
    let limits = &ctx.plant.design;
    let lowest = *layout::pickup_grid(limits).last()?;
    let all: Vec<Option<usize>> = vec![Some(0); ctx.loads.len()];
    let mut runs = 0;
    for delay in layout::delay_grid(limits) {
        let layout = layout::build(limits, &[], &[(lowest, delay, None)]);
        let evals = ctx.evaluate_all(&ctx.scheme(&layout, &all));
        runs += evals.len();
        if evals.iter().all(|e| e.verdict == Verdict::Holds) && ctx.well_formed(&layout, &all) {
            let objective = ctx.objective(&evals);
            return Some(Sized {
                layout,
                assignment: all,
                evals,
                objective,
                runs,
            });
        }
    }
    None
}

/// Assign the loads that `best` leaves in no stage: to a new stage at the lowest pickup, at the
/// shortest delay on the grid that holds, when there is room for one (the stage limit and the
/// spacing), else to the last frequency stage; kept only when every row still holds.
pub fn add(ctx: &Context, best: &mut Sized) -> Backstop {
    if !ctx.plant.design.backstop {
        return Backstop::Off;
    }
    let left: Vec<usize> = (0..ctx.loads.len())
        .filter(|&j| best.assignment[j].is_none())
        .collect();
    if left.is_empty() {
        return Backstop::NotNeeded;
    }
    let limits = &ctx.plant.design;
    let pickups = layout::pickup_grid(limits);
    let gap = layout::spacing_steps(ctx.plant);
    let last_frequency = (0..best.layout.stages.len()).rev().find(|&k| {
        matches!(
            best.layout.stages[k].trigger,
            StageTrigger::Frequency { .. }
        )
    });
    let mut tries: Vec<(Layout, Vec<Option<usize>>, Backstop)> = Vec::new();
    let room = match last_frequency.map(|k| best.layout.stages[k].trigger) {
        Some(StageTrigger::Frequency { pickup_hz, .. }) => pickups
            .iter()
            .position(|g| (g - pickup_hz).abs() < 1e-6)
            .is_some_and(|p| p + gap < pickups.len()),
        _ => true,
    };
    if room && best.layout.frequency_stages() < limits.max_stages {
        // Shortest delay first: a longer one lets a dip that the earlier stages arrest (a
        // disturbance grown by the required margin) turn before the backstop opens.
        for delay in layout::delay_grid(limits) {
            let Some(&lowest) = pickups.last() else {
                break;
            };
            let mut l = best.layout.clone();
            l.stages.push(layout::Setting {
                trigger: StageTrigger::Frequency {
                    pickup_hz: lowest,
                    min_rocof_hz_per_s: None,
                },
                delay_s: delay,
                breaker_s: limits.breaker_s,
                section: None,
                long_delay: false,
            });
            let k = l.stages.len() - 1;
            let mut a = best.assignment.clone();
            for &j in &left {
                a[j] = Some(k);
            }
            tries.push((l, a, Backstop::NewStage));
        }
    }
    if let Some(k) = last_frequency {
        let mut a = best.assignment.clone();
        for &j in &left {
            a[j] = Some(k);
        }
        tries.push((best.layout.clone(), a, Backstop::LastStage));
    }
    let mut why = String::from("the table has no frequency stage to hold them");
    for (layout, assignment, outcome) in tries {
        let evals = ctx.evaluate_all(&ctx.scheme(&layout, &assignment));
        best.runs += evals.len();
        let failing = ctx
            .rows
            .iter()
            .zip(&evals)
            .find(|(_, e)| e.verdict != Verdict::Holds);
        match failing {
            None if ctx.well_formed(&layout, &assignment)
                && ctx.rules_clean(&ctx.scheme(&layout, &assignment)) =>
            {
                best.objective = ctx.objective(&evals);
                best.layout = layout;
                best.assignment = assignment;
                best.evals = evals;
                return outcome;
            }
            None => why = "a backstop stage would open nothing at some operating point".to_string(),
            Some((&(ci, op), e)) => {
                why = format!(
                    "with them at the lowest pickup, case {} at {} {}",
                    ctx.cases.cases[ci].id,
                    ctx.plant.operating_points[op].id,
                    if e.verdict == Verdict::TooMuch {
                        "sheds too much"
                    } else {
                        "no longer holds"
                    }
                )
            }
        }
    }
    Backstop::NotHeld(why)
}
