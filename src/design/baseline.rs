//! The plain table a design is measured against: the most stages the limits allow, pickups in
//! equal steps from the highest to the lowest allowed, every delay at its minimum, no armed or
//! df/dt-supervised stage, and loads taken in rank order in equal MW steps (at the first
//! operating point) — with the step chosen, from a scan, as the one that holds every row with the least shed. It is
//! proposed only when it also breaks none of the plant's rules (`Context::rules_clean`).

use super::evaluate::Verdict;
use super::layout::{self, Layout};
use super::sizing::{Context, Sized};

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
    let mut runs = 0;
    let mut try_step = |step: f64| -> Option<Sized> {
        let (layout, assignment) = table(ctx, &pickups, step);
        let scheme = ctx.scheme(&layout, &assignment);
        let evals = ctx.evaluate_all(&scheme);
        runs += evals.len();
        evals.iter().all(|e| e.verdict == Verdict::Holds).then(|| {
            let objective = ctx.objective(&evals);
            Sized {
                layout,
                assignment,
                evals,
                objective,
                runs: 0,
            }
        })
    };
    // Passing is not monotone in the step (a larger first step can leave a two-event case short
    // when the later stages no longer operate), so scan the step from a sixth of the even split
    // to twice it and keep the passing table that sheds least.
    let even = total / k as f64;
    let mut best: Option<Sized> = None;
    for j in 0..SCAN {
        let step = even * (1.0 / 6.0 + (2.0 - 1.0 / 6.0) * j as f64 / (SCAN - 1) as f64);
        if let Some(s) = try_step(step) {
            if best
                .as_ref()
                .is_none_or(|b| s.objective < b.objective - 1e-9)
            {
                best = Some(s);
            }
        }
    }
    let mut best = best?;
    best.runs = runs;
    Some(best)
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
