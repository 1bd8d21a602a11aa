//! The final table and what is reported of it: bottom stages no row operates dropped, each
//! row's shed against its ideal and realisable bounds with the reason in words ([`super::why`]), the headroom per
//! operating point, and the proposal that carries them.

use super::backstop::Backstop;
use super::bound::{self, Bound};
use super::context::Context;
use super::sizing::Sized;
use super::{BaselineSummary, FromOutcome, Headroom, Proposal, RowShed, Source};
use crate::model::{Scheme, StageTrigger};
use rayon::prelude::*;

/// The proposal of a finished table.
#[allow(clippy::too_many_arguments)]
pub(super) fn finish(
    ctx: &Context,
    bounds: &[Bound],
    exact: Option<Scheme>,
    best: Sized,
    baseline: Option<Sized>,
    from: Option<FromOutcome>,
    source: Source,
    backstop: Backstop,
    layouts_sized: usize,
    replays: usize,
) -> Proposal {
    let (plant, cases) = (ctx.plant, ctx.cases);
    // A kept table is the existing one as written; else the table of the layout.
    let scheme = exact.unwrap_or_else(|| ctx.scheme(&best.layout, &best.assignment));
    let realisable: Vec<f64> = ctx
        .rows
        .par_iter()
        .zip(bounds)
        .map(|(&(ci, op), b)| {
            bound::realisable(
                plant,
                &cases.cases[ci],
                op,
                &ctx.sim,
                ctx.measurement.frequency_lag_s,
                b.mw,
            )
        })
        .collect();
    let shed: Vec<f64> = ctx
        .rows
        .iter()
        .enumerate()
        .map(|(r, &(_, op))| shed_mw(ctx, op, &best.evals[r].shed_loads))
        .collect();
    let why = super::why::reasons(ctx, &scheme, &best.evals, &shed, &realisable);
    let rows = ctx
        .rows
        .iter()
        .enumerate()
        .map(|(r, &(ci, op))| RowShed {
            case: cases.cases[ci].id.clone(),
            operating_point: plant.operating_points[op].id.clone(),
            weight: cases.cases[ci].weight,
            intended: cases.cases[ci].shedding_intended,
            shed_mw: shed[r],
            bound_mw: bounds[r].mw,
            realisable_mw: realisable[r],
            why: why[r].clone(),
            baseline_mw: baseline
                .as_ref()
                .map(|b| shed_mw(ctx, op, &b.evals[r].shed_loads)),
        })
        .collect();
    let unassigned = ctx
        .loads
        .iter()
        .zip(&best.assignment)
        .filter(|(_, a)| a.is_none())
        .map(|(&(i, _), _)| plant.loads[i].id.clone())
        .collect();
    let headroom = plant
        .operating_points
        .iter()
        .enumerate()
        .map(|(op, point)| {
            let sheddable: f64 = ctx
                .loads
                .iter()
                .zip(&best.assignment)
                .filter(|(_, a)| a.is_some())
                .map(|(&(i, _), _)| ctx.mw[op][i])
                .sum();
            let worst = ctx
                .rows
                .iter()
                .zip(&best.evals)
                .filter(|((_, o), _)| *o == op)
                .map(|(_, e)| shed_mw(ctx, op, &e.shed_loads))
                .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))));
            Headroom {
                operating_point: point.id.clone(),
                sheddable_mw: sheddable,
                worst_shed_mw: worst,
            }
        })
        .collect();
    Proposal {
        headroom,
        scheme,
        objective: best.objective,
        rows,
        baseline: baseline.map(|b| BaselineSummary {
            objective: b.objective,
            stages: b.layout.stages.len(),
            rules_clean: ctx.rules_clean(&ctx.scheme(&b.layout, &b.assignment)),
            scheme: ctx.scheme(&b.layout, &b.assignment),
        }),
        from,
        fresh: None,
        from_why_not: Vec::new(),
        source,
        backstop,
        unassigned,
        layouts_sized,
        replays: replays + best.runs,
        solver: ctx.solver_summary(),
    }
}

/// Remove frequency stages at the bottom that no row operates (above the limits' minimum count),
/// leaving their loads unshed. Exact: a stage that never trips changes no run, and the loads of
/// the last stage are the highest-ranked shed, so rank order holds.
pub(super) fn drop_idle_last_stages(ctx: &Context, best: &mut Sized) {
    loop {
        let Some(k) = best.layout.stages.len().checked_sub(1) else {
            return;
        };
        // Idle in every run of every row, margin runs included.
        let idle = best.evals.iter().all(|e| !e.touched.contains(&k));
        let frequency = matches!(
            best.layout.stages[k].trigger,
            StageTrigger::Frequency { .. }
        );
        if !idle
            || !frequency
            || best.layout.frequency_stages() <= ctx.plant.design.min_stages.max(1)
        {
            return;
        }
        best.layout.stages.pop();
        best.layout.ids.truncate(best.layout.stages.len());
        for a in best.assignment.iter_mut() {
            if *a == Some(k) {
                *a = None;
            }
        }
    }
}

pub(super) fn shed_mw(ctx: &Context, op: usize, loads: &[usize]) -> f64 {
    loads.iter().map(|&i| ctx.mw[op][i]).sum()
}
