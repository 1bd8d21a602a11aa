//! `--from EXISTING`: keep the existing table when it still holds every row and breaks no audit
//! rule; else keep its settings and move as few loads between stages as the cases need.

use super::evaluate::Verdict;
use super::layout;
use super::sizing::{self, Context, Sized};
use super::FromOutcome;
use crate::model::Scheme;

/// Keep the existing table if it holds; else keep its settings and move as few loads as
/// possible. Returns the result, how it relates to the table, and the replays used.
pub(super) fn keep_existing(
    ctx: &Context,
    existing: &Scheme,
) -> (Option<Sized>, FromOutcome, usize) {
    let (layout, order) = layout::of_scheme(ctx.plant, existing);
    let position = |load: usize| {
        existing
            .stages
            .iter()
            .position(|s| s.sheds.contains(&load))
            .and_then(|k| order.iter().position(|&o| o == k))
    };
    let start: Vec<Option<usize>> = ctx.loads.iter().map(|&(i, _)| position(i)).collect();
    let clean = existing.stages.iter().all(|s| {
        s.sheds
            .iter()
            .all(|&l| ctx.loads.iter().any(|&(i, _)| i == l))
    });
    if clean {
        // The existing table itself, as written (its stages' order and load lists).
        let evals = ctx.evaluate_all(existing);
        let runs = evals.len();
        let audit_ok = ctx.rules_clean(existing);
        if audit_ok && evals.iter().all(|e| e.verdict == Verdict::Holds) {
            let objective = ctx.objective(&evals);
            let s = Sized {
                layout,
                assignment: start,
                evals,
                objective,
                runs: 0,
            };
            return (Some(s), FromOutcome::Unchanged, runs);
        }
    }
    // Any change must cost more than any amount of shedding, so the model changes as few
    // assignments as it can and only then sheds least.
    let everything: f64 = ctx
        .rows
        .iter()
        .map(|&(ci, op)| {
            ctx.cases.cases[ci].cost_weight()
                * ctx
                    .loads
                    .iter()
                    .map(|&(i, r)| ctx.plant.design.rank_weight(r) * ctx.mw[op][i])
                    .sum::<f64>()
        })
        .sum();
    match sizing::size(ctx, &layout, Some(&start), everything + 1.0) {
        Ok(s) => {
            let runs = s.runs;
            (Some(s), FromOutcome::Reassigned, runs)
        }
        Err(_) => (None, FromOutcome::Redesigned, 0),
    }
}
