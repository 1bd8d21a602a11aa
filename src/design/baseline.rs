//! The plain table a design is measured against: the most stages the limits allow, pickups in
//! equal steps from the highest to the lowest allowed, every delay at its minimum, no armed or
//! df/dt-supervised stage, and loads taken in rank order in equal MW steps (at the first
//! operating point) — with the step chosen, from a scan, as the one that holds every row with the least shed. It is
//! proposed only when it also breaks none of the plant's rules (`Context::rules_clean`).

use super::context::Context;
use super::evaluate::RowEval;
use super::evaluate::Verdict;
use super::layout::{self, Layout};
use super::sizing::Sized;
use crate::model::Scheme;
use rayon::prelude::*;

/// Step sizes tried.
const SCAN: usize = 24;

/// The plain table sized to hold every row, if any step size does.
pub fn plain(ctx: &Context) -> Option<Sized> {
    let limits = &ctx.plant.design;
    let k = limits.max_stages.max(1);
    let (hi, lo) = (limits.highest_pickup_hz, limits.lowest_pickup_hz);
    let pickups: Vec<f64> = (0..k)
        .map(|j| {
            let p = if k == 1 {
                hi
            } else {
                hi - j as f64 * (hi - lo) / (k - 1) as f64
            };
            (p * 100.0).round() / 100.0
        })
        .collect();
    let total: f64 = ctx.loads.iter().map(|&(i, _)| ctx.mw[0][i]).sum();
    if total <= 0.0 {
        return None;
    }
    // Passing is not monotone in the step (a larger first step can leave a two-event case short
    // when the later stages no longer operate), so scan the step from a sixth of the even split
    // to twice it and keep the passing table that sheds least.
    //
    // Two passes, the same choice as judging every step with the margins: a row's studied run
    // does not depend on the margins, and a row that fails it fails with them, so every step is
    // first replayed without the margins (its objective comes from these runs), and only the
    // steps that hold are judged with them, cheapest first, until one holds.
    let even = total / k as f64;
    let quick = ctx.without_margins();
    let mut runs = 0;
    let mut holding: Vec<Sized> = Vec::new();
    // Rows that failed the step before are replayed first: a step that fails is known to fail
    // after a few replays.
    let mut order: Vec<usize> = (0..ctx.rows.len()).collect();
    for j in 0..SCAN {
        let step = even * (1.0 / 6.0 + (2.0 - 1.0 / 6.0) * j as f64 / (SCAN - 1) as f64);
        let (layout, assignment) = table(ctx, &pickups, step);
        let scheme = ctx.scheme(&layout, &assignment);
        let (judged, n) = all_hold(&quick, &scheme, &mut order);
        runs += n;
        if let Some(evals) = judged {
            let objective = ctx.objective(&evals);
            holding.push(Sized {
                layout,
                assignment,
                evals,
                objective,
                runs: 0,
            });
        }
    }
    let mut best = if ctx.margins {
        with_margins(ctx, holding, &mut runs)
    } else {
        least_first(holding)
    }?;
    best.runs = runs;
    Some(best)
}

/// Rows replayed at a time by [`all_hold`]: a fixed number, so the replays counted do not depend
/// on the thread count.
const CHUNK: usize = 8;

/// Replay the rows in `order`, [`CHUNK`] at a time, stopping after the first chunk in which a
/// row fails; the evaluations in matrix order when every row holds, and the replays made. The
/// rows that failed move to the front of `order`, in matrix order.
fn all_hold(
    ctx: &Context,
    scheme: &Scheme,
    order: &mut Vec<usize>,
) -> (Option<Vec<RowEval>>, usize) {
    let mut evals: Vec<Option<RowEval>> = vec![None; ctx.rows.len()];
    let mut runs = 0;
    for chunk in order.chunks(CHUNK) {
        let found: Vec<RowEval> = chunk
            .par_iter()
            .map(|&r| ctx.evaluate_row(r, scheme))
            .collect();
        runs += chunk.len();
        let mut failed: Vec<usize> = Vec::new();
        for (&r, e) in chunk.iter().zip(found) {
            if e.verdict != Verdict::Holds {
                failed.push(r);
            }
            evals[r] = Some(e);
        }
        if !failed.is_empty() {
            failed.sort_unstable();
            let rest: Vec<usize> = order
                .iter()
                .copied()
                .filter(|r| !failed.contains(r))
                .collect();
            *order = failed.into_iter().chain(rest).collect();
            return (None, runs);
        }
    }
    (evals.into_iter().collect(), runs)
}

/// The step kept among tables that hold, in scan order: each replaces the one kept so far when
/// its objective is lower by more than rounding.
fn least_first(tables: Vec<Sized>) -> Option<Sized> {
    let mut best: Option<Sized> = None;
    for s in tables {
        if best
            .as_ref()
            .is_none_or(|b| s.objective < b.objective - 1e-9)
        {
            best = Some(s);
        }
    }
    best
}

/// Among `tables` (in scan order, each holding without the margins), the one [`least_first`]
/// would keep among those that also hold with them. They are judged with the margins in order
/// of objective until one holds; only tables within a rounding of that objective can still be
/// kept before it, so those are judged too, and the scan-order rule decides among them.
fn with_margins(ctx: &Context, mut tables: Vec<Sized>, runs: &mut usize) -> Option<Sized> {
    let mut order: Vec<usize> = (0..tables.len()).collect();
    order.sort_by(|&a, &b| tables[a].objective.total_cmp(&tables[b].objective));
    let mut holds: Vec<Option<bool>> = vec![None; tables.len()];
    // Judged with the margins; a table that holds keeps the evaluations of that judgement.
    let mut judge = |tables: &mut Vec<Sized>, j: usize| -> bool {
        if let Some(h) = holds[j] {
            return h;
        }
        let scheme = ctx.scheme(&tables[j].layout, &tables[j].assignment);
        let evals = ctx.evaluate_all(&scheme);
        *runs += evals.len();
        let h = evals.iter().all(|e| e.verdict == Verdict::Holds);
        if h {
            tables[j].evals = evals;
        }
        holds[j] = Some(h);
        h
    };
    let first = order.iter().copied().find(|&j| judge(&mut tables, j))?;
    // A table kept before `first` in scan order must be within rounding of its objective
    // (each replacement lowers the objective by more than 1e-9, and the last one kept is within
    // 1e-9 of the least); 1e-6 covers every table that can take part in such a chain.
    let near = tables[first].objective + 1e-6;
    let candidates: Vec<usize> = (0..tables.len())
        .filter(|&j| tables[j].objective <= near)
        .collect();
    let passing: Vec<bool> = candidates.iter().map(|&j| judge(&mut tables, j)).collect();
    let kept: Vec<Sized> = tables
        .into_iter()
        .enumerate()
        .filter_map(|(j, t)| {
            candidates
                .iter()
                .position(|&c| c == j)
                .filter(|&p| passing[p])
                .map(|_| t)
        })
        .collect();
    least_first(kept)
}

/// The plain layout and assignment for one step size: a load goes to the stage whose step its
/// cumulative MW (before it) falls in; stages left empty are dropped.
fn table(ctx: &Context, pickups: &[f64], step: f64) -> (Layout, Vec<Option<usize>>) {
    let k = pickups.len();
    let delay = ctx.plant.design.min_delay_s;
    let mut cumulative = 0.0;
    let raw: Vec<Option<usize>> = ctx
        .loads
        .iter()
        .map(|&(i, _)| {
            let stage = (cumulative / step + 1e-9).floor() as usize;
            cumulative += ctx.mw[0][i];
            (stage < k).then_some(stage)
        })
        .collect();
    let used: Vec<usize> = (0..k).filter(|s| raw.contains(&Some(*s))).collect();
    let frequency: Vec<(f64, f64, Option<f64>)> =
        used.iter().map(|&s| (pickups[s], delay, None)).collect();
    let assignment = raw
        .iter()
        .map(|a| a.and_then(|s| used.iter().position(|&u| u == s)))
        .collect();
    (
        layout::build(&ctx.plant.design, &[], &frequency),
        assignment,
    )
}
