//! `--from EXISTING`: keep the existing table when it still holds every row and breaks no audit
//! rule; else keep its settings and move as few loads between stages as the cases need.
//!
//! Keeping the settings means every stage as written: its trigger, delay, breaker time, and the
//! section it measures at (its first listed load). A table written with one stage per bus
//! section at each step (the same settings, `-a` and `-b`) keeps that shape: a load moves into the
//! stage of its own section among the stages with the target's settings. The loads move one at a
//! time, each move chosen by replaying the tables it could make ([`move_few`]); when no single move
//! brings a failing row nearer, the assignment model is tried over the table's stage positions
//! ([`sizing::size`] with a cost on every change), and when that fails too, the reasons of both are
//! kept for the output and the table is designed afresh.

use super::context::{Context, Memo};
use super::evaluate::{RowEval, Verdict};
use super::layout;
use super::sizing::{self, NotSized, Sized};
use super::FromOutcome;
use crate::model::{Scheme, StageTrigger};

/// Most loads moved before the existing settings are given up.
const MAX_MOVES: usize = 6;

/// What `--from` made of the existing table.
pub(super) struct Kept {
    /// The table that holds, with its replays; `None`: the settings could not be kept.
    pub sized: Option<Sized>,
    /// The table exactly as it is to be written, when the settings are kept.
    pub scheme: Option<Scheme>,
    pub outcome: FromOutcome,
    /// Replays used.
    pub runs: usize,
    /// Why the settings could not be kept, in words (empty when they were).
    pub why_not: Vec<String>,
}

/// Keep the existing table if it holds; else keep its settings and move as few loads as
/// possible.
pub(super) fn keep_existing(ctx: &Context, existing: &Scheme) -> Kept {
    let (layout, order) = layout::of_scheme(ctx.plant, existing);
    let position = |scheme: &Scheme, load: usize| {
        order
            .iter()
            .position(|&k| scheme.stages[k].sheds.contains(&load))
    };
    let sized_of = |scheme: &Scheme, evals: Vec<RowEval>, runs: usize| Sized {
        layout: layout.clone(),
        assignment: ctx
            .loads
            .iter()
            .map(|&(i, _)| position(scheme, i))
            .collect(),
        objective: ctx.objective(&evals),
        evals,
        runs,
    };
    let clean = existing.stages.iter().all(|s| {
        s.sheds
            .iter()
            .all(|&l| ctx.loads.iter().any(|&(i, _)| i == l))
    });
    let mut why_not = Vec::new();
    let mut runs = 0;
    if clean {
        // The existing table itself, as written (its stages' order and load lists).
        let evals = ctx.evaluate_all(existing);
        runs += evals.len();
        let audit_ok = ctx.rules_clean(existing);
        if audit_ok && evals.iter().all(|e| e.verdict == Verdict::Holds) {
            return Kept {
                sized: Some(sized_of(existing, evals, 0)),
                scheme: Some(existing.clone()),
                outcome: FromOutcome::Unchanged,
                runs,
                why_not,
            };
        }
        match move_few(ctx, existing, evals) {
            Ok((scheme, evals, n)) => {
                runs += n;
                return Kept {
                    sized: Some(sized_of(&scheme, evals, 0)),
                    scheme: Some(scheme),
                    outcome: FromOutcome::Reassigned,
                    runs,
                    why_not,
                };
            }
            Err((why, n)) => {
                runs += n;
                why_not.push(format!("moving loads one at a time: {why}"));
            }
        }
    } else {
        why_not.push(
            "the table lists loads design may not move (never-shed, or switched off at every operating point)"
                .to_string(),
        );
    }
    // Any change must cost more than any amount of shedding, so the model changes as few
    // assignments as it can and only then sheds least.
    let start: Vec<Option<usize>> = ctx
        .loads
        .iter()
        .map(|&(i, _)| position(existing, i))
        .collect();
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
            runs += s.runs;
            Kept {
                sized: Some(s),
                scheme: None,
                outcome: FromOutcome::Reassigned,
                runs,
                why_not: Vec::new(),
            }
        }
        Err(e) => {
            why_not.push(format!(
                "the assignment model over the table's stage positions: {}",
                not_sized_words(ctx, &e)
            ));
            Kept {
                sized: None,
                scheme: None,
                outcome: FromOutcome::Redesigned,
                runs,
                why_not,
            }
        }
    }
}

/// Why the sizing loop gave up, in words.
fn not_sized_words(ctx: &Context, e: &NotSized) -> String {
    match e {
        NotSized::Infeasible => {
            "no assignment meets every row's requirement while keeping one rank order over the stages in operating order (stages with the same settings on different sections count as successive stages there)".into()
        }
        NotSized::Rules => "the table it found breaks rank order in some event".into(),
        NotSized::NoStageActs { row } => {
            let (ci, op) = ctx.rows[*row];
            format!(
                "{} at {} fails and none of the table's stages acts in it",
                ctx.cases.cases[ci].id, ctx.plant.operating_points[op].id
            )
        }
        NotSized::Stuck => "an assignment repeated before every row held".into(),
        NotSized::Solver(s) => format!("the solver stopped: {s}"),
    }
}

/// The stages with the same settings as stage `k` (trigger, delay, breaker time), `k` included:
/// the per-section stages of one step.
fn twins(scheme: &Scheme, k: usize) -> Vec<usize> {
    let s = &scheme.stages[k];
    (0..scheme.stages.len())
        .filter(|&j| {
            let t = &scheme.stages[j];
            t.trigger == s.trigger && t.delay_s == s.delay_s && t.breaker_s == s.breaker_s
        })
        .collect()
}

/// Starting from `existing` (whose rows `evals` judged), move one load at a time until every row
/// holds and the table breaks no audit rule, at most [`MAX_MOVES`] loads. A failing row short of
/// shedding pulls the next sheddable load in priority order into the stages it operated (into the
/// stage of the load's own section among those with the same settings); one that shed too much
/// pushes the highest-ranked load of its deepest operated stage to the next step. Every candidate
/// table keeps each stage's first listed load (so where it measures) and a load switched on at
/// every operating point in every stage; the one with the fewest failing rows, then the least
/// objective, is taken when it has fewer failing rows than before. Returns the table, its rows
/// and the replays used, or why it stopped.
fn move_few(
    ctx: &Context,
    existing: &Scheme,
    mut evals: Vec<RowEval>,
) -> Result<(Scheme, Vec<RowEval>, usize), (String, usize)> {
    let order = existing.operating_order();
    let mut position = vec![0; existing.stages.len()];
    for (p, &k) in order.iter().enumerate() {
        position[k] = p;
    }
    let mut memo = Memo::new(ctx.rows.len());
    let mut runs = 0;
    let mut current = existing.clone();
    let failing = |evals: &[RowEval]| evals.iter().filter(|e| e.verdict != Verdict::Holds).count();
    for moved in 0..=MAX_MOVES {
        let fails = failing(&evals);
        if fails == 0 {
            if ctx.rules_clean(&current) {
                return Ok((current, evals, runs));
            }
            return Err((
                format!("after {moved} move(s) every row holds, but the table breaks rank order in some event (`nadir audit --cases`)"),
                runs,
            ));
        }
        if moved == MAX_MOVES {
            break;
        }
        let mut candidates: Vec<Scheme> = Vec::new();
        for e in evals.iter().filter(|e| e.verdict != Verdict::Holds) {
            let stages: Vec<usize> = if e.acting.is_empty() {
                // Nothing operated: the first frequency step must act.
                order
                    .iter()
                    .copied()
                    .find(|&k| matches!(current.stages[k].trigger, StageTrigger::Frequency { .. }))
                    .into_iter()
                    .collect()
            } else {
                e.acting.clone()
            };
            for &k in &stages {
                let c = match e.verdict {
                    Verdict::Short => pull(ctx, &current, &order, &position, k),
                    _ => push(ctx, &current, &order, &position, k),
                };
                if let Some(c) = c.filter(|c| keeps_shape(ctx, existing, c)) {
                    if !candidates.contains(&c) {
                        candidates.push(c);
                    }
                }
            }
        }
        let mut best: Option<(usize, f64, Scheme, Vec<RowEval>)> = None;
        for c in candidates {
            let (e, n) = ctx.evaluate_memo(&c, &mut memo);
            runs += n;
            let f = failing(&e);
            let objective = ctx.objective(&e);
            let better = match &best {
                None => true,
                Some((bf, bo, _, _)) => f < *bf || (f == *bf && objective < *bo - 1e-9),
            };
            if better {
                best = Some((f, objective, c, e));
            }
        }
        match best {
            Some((f, _, c, e)) if f < fails => {
                current = c;
                evals = e;
            }
            _ => {
                return Err((
                    format!(
                        "after {moved} move(s), no single load moved between stages brings fewer than {fails} row(s) failing"
                    ),
                    runs,
                ))
            }
        }
    }
    Err((
        format!("{MAX_MOVES} loads moved and some row still fails"),
        runs,
    ))
}

/// The table with one more load opened by stage `k` or a stage with its settings: the sheddable
/// load first in priority order that no stage at or before `k`'s step opens, taken from the later
/// stages that list it and added to the stage of its own section among `k`'s twins (`k` itself
/// when none measures there).
fn pull(
    ctx: &Context,
    scheme: &Scheme,
    order: &[usize],
    position: &[usize],
    k: usize,
) -> Option<Scheme> {
    let step = twins(scheme, k);
    let last = step.iter().map(|&j| position[j]).max()?;
    let early: Vec<usize> = order[..=last]
        .iter()
        .flat_map(|&j| scheme.stages[j].sheds.iter().copied())
        .collect();
    let &(load, _) = ctx.loads.iter().find(|(i, _)| !early.contains(i))?;
    let section = ctx.plant.loads[load].section;
    let target = step
        .iter()
        .copied()
        .find(|&j| scheme.stages[j].measuring_section(ctx.plant) == Some(section))
        .unwrap_or(k);
    let mut out = scheme.clone();
    for &j in &order[last + 1..] {
        out.stages[j].sheds.retain(|&l| l != load);
    }
    out.stages[target].sheds.push(load);
    Some(out)
}

/// The table with one load fewer opened by stage `k`'s step: the highest-ranked load its stages
/// list and no earlier stage does, moved to the stage of its section at the next step (or left
/// unshed when there is none).
fn push(
    ctx: &Context,
    scheme: &Scheme,
    order: &[usize],
    position: &[usize],
    k: usize,
) -> Option<Scheme> {
    let step = twins(scheme, k);
    let first = step.iter().map(|&j| position[j]).min()?;
    let last = step.iter().map(|&j| position[j]).max()?;
    let before: Vec<usize> = order[..first]
        .iter()
        .flat_map(|&j| scheme.stages[j].sheds.iter().copied())
        .collect();
    let &(load, _) = ctx.loads.iter().rev().find(|(i, _)| {
        !before.contains(i) && step.iter().any(|&j| scheme.stages[j].sheds.contains(i))
    })?;
    let section = ctx.plant.loads[load].section;
    let mut out = scheme.clone();
    for &j in &step {
        out.stages[j].sheds.retain(|&l| l != load);
    }
    if let Some(&next) = order.get(last + 1) {
        let step = twins(scheme, next);
        let target = step
            .iter()
            .copied()
            .find(|&j| scheme.stages[j].measuring_section(ctx.plant) == Some(section))
            .unwrap_or(next);
        if !out.stages[target].sheds.contains(&load) {
            out.stages[target].sheds.push(load);
        }
    }
    Some(out)
}

/// Whether `candidate` keeps the existing settings' shape: every stage still measures where it
/// did (its first listed load's section), and opens a load switched on at every operating point
/// where it did before.
fn keeps_shape(ctx: &Context, existing: &Scheme, candidate: &Scheme) -> bool {
    existing
        .stages
        .iter()
        .zip(&candidate.stages)
        .all(|(old, new)| {
            let live = |s: &crate::model::Stage, mw: &[f64]| s.sheds.iter().any(|&l| mw[l] > 0.0);
            new.measuring_section(ctx.plant) == old.measuring_section(ctx.plant)
                && ctx.mw.iter().all(|mw| live(new, mw) || !live(old, mw))
        })
}
