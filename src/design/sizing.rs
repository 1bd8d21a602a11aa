//! Sizing the stages of one layout: the loop between the simulator and the assignment model.
//!
//! Start with one load per stage. Replay every row; for each row that fails, find by bisection
//! how many more loads (the next ones in priority order) its deepest operated stage must open
//! for it to hold — or, if it shed too much, how many fewer — and record that as a requirement
//! on the MW its operated stages open at its operating point. Solve the assignment model for the
//! least-cost loads that meet every requirement so far, replay again, and repeat until every row
//! holds. Requirements only accumulate, so the loop ends: either every row holds, or the model
//! becomes infeasible, or an assignment repeats (the layout cannot hold the cases).

use super::assign::{self, AssignError, Problem, Requirement};
use super::context::{Context, Memo};
use super::evaluate::{RowEval, Verdict};
use super::layout::{self, Layout};
use super::requirement::requirements_of;
use std::sync::atomic::Ordering;

/// A layout with its loads, holding every row.
#[derive(Debug, Clone)]
pub struct Sized {
    pub layout: Layout,
    /// Stage position of each candidate load (`Context::loads` order).
    pub assignment: Vec<Option<usize>>,
    pub evals: Vec<RowEval>,
    pub objective: f64,
    /// Replays used.
    pub runs: usize,
}

/// Why a layout could not be sized.
#[derive(Debug, Clone, PartialEq)]
pub enum NotSized {
    /// A row failed without any stage acting: the layout's pickups never see it.
    NoStageActs {
        row: usize,
    },
    /// The requirements cannot all be met by one assignment.
    Infeasible,
    /// The loop came back to an assignment it had tried.
    Stuck,
    /// The table holds every row but breaks one of the plant's rules (the audit's, with the
    /// cases' events): several armed stages whose rank order no single assignment can keep.
    Rules,
    Solver(String),
}

/// Most simulate–assign rounds per layout.
const MAX_ROUNDS: usize = 24;

/// Size `layout`. `start` seeds the loop (for `--from`); `change_cost` makes the model prefer
/// the start's assignment.
pub fn size(
    ctx: &Context,
    layout: &Layout,
    start: Option<&[Option<usize>]>,
    change_cost: f64,
) -> Result<Sized, NotSized> {
    let stages = layout.stages.len();
    if ctx.loads.len() < stages {
        return Err(NotSized::Infeasible);
    }
    let keep: Vec<Option<usize>> = match start {
        Some(s) => s.to_vec(),
        None => vec![None; ctx.loads.len()],
    };
    let mut assignment: Vec<Option<usize>> = match start {
        Some(s) => s.to_vec(),
        None => (0..ctx.loads.len())
            .map(|j| (j < stages).then_some(j))
            .collect(),
    };
    let mut requirements: Vec<Requirement> = Vec::new();
    let mut seen: Vec<Vec<Option<usize>>> = Vec::new();
    let mut runs = 0;
    let mut memo = Memo::new(ctx.rows.len());
    for _ in 0..MAX_ROUNDS {
        let scheme = ctx.scheme(layout, &assignment);
        let (evals, n) = ctx.evaluate_memo(&scheme, &mut memo);
        runs += n;
        let failing: Vec<usize> = (0..evals.len())
            .filter(|&r| evals[r].verdict != Verdict::Holds)
            .collect();
        if failing.is_empty() && ctx.well_formed(layout, &assignment) {
            if !ctx.rules_clean(&scheme) {
                return Err(NotSized::Rules);
            }
            let objective = ctx.objective(&evals);
            let sized = Sized {
                layout: layout.clone(),
                assignment,
                evals,
                objective,
                runs,
            };
            return Ok(sized);
        }
        seen.push(assignment.clone());
        if let Some(&r) = failing.iter().find(|&&r| evals[r].acting.is_empty()) {
            if evals[r].verdict == Verdict::Short {
                return Err(NotSized::NoStageActs { row: r });
            }
        }
        let found = requirements_of(ctx, layout, &assignment, &failing, &evals);
        for (req, n) in found {
            runs += n;
            if let Some(req) = req {
                add(&mut requirements, req);
            }
        }
        let cost = costs(ctx, layout, stages, &evals);
        let measure: Vec<Option<usize>> = layout.stages.iter().map(|s| s.section).collect();
        let problem = Problem {
            loads: &ctx.loads,
            mw: &ctx.mw,
            stages,
            load_section: &ctx.load_section,
            measure: &measure,
            requirements: &requirements,
            cost: &cost,
            start: &keep,
            change_cost,
        };
        ctx.solver.solves.fetch_add(1, Ordering::Relaxed);
        let solved = assign::solve(&problem);
        let nodes = match &solved {
            Ok(s) => s.nodes,
            Err(AssignError::NodeLimit { nodes }) => *nodes,
            Err(_) => 0,
        };
        ctx.solver.most_nodes.fetch_max(nodes, Ordering::Relaxed);
        assignment = match solved {
            Ok(s) => s.assignment,
            Err(AssignError::Infeasible) => return Err(NotSized::Infeasible),
            Err(AssignError::NodeLimit { nodes }) => {
                ctx.solver.unsolved.fetch_add(1, Ordering::Relaxed);
                return Err(NotSized::Solver(format!(
                    "the assignment model was not solved within {nodes} branch-and-bound nodes"
                )));
            }
            Err(AssignError::Solver(s)) => return Err(NotSized::Solver(s)),
        };
        if seen.contains(&assignment) {
            return Err(NotSized::Stuck);
        }
    }
    Err(NotSized::Stuck)
}

/// Passes of [`trim`] over the stages, and the stage size up to which it tries every count.
const TRIM_PASSES: usize = 3;
const TRIM_SCAN: usize = 3;
const PULL_SCAN: usize = 4;

/// Improve a table that holds every row by moving loads between neighbouring stages: for each
/// stage from the last to the first, its highest-ranked loads moved to the next stage (or, from
/// the last stage, left unshed); then for each stage the next stage's lowest-ranked loads pulled
/// into it. A move is kept when every row still holds and the objective falls. The requirements of the sizing loop only ever grow, and the costs see only the stages
/// that operated at the last replay, so the loop can stop at a table that sheds more than needed
/// in its milder rows; this descent removes that excess. Every accepted step holds every row.
pub fn trim(ctx: &Context, mut best: Sized) -> Sized {
    let memo = &mut Memo::new(ctx.rows.len());
    let stages = best.layout.stages.len();
    for _ in 0..TRIM_PASSES {
        let mut improved = false;
        for k in (0..stages).rev() {
            let mine: Vec<usize> = (0..ctx.loads.len())
                .rev()
                .filter(|&j| best.assignment[j] == Some(k))
                .collect();
            if mine.len() < 2 {
                continue;
            }
            let to = (k + 1 < stages).then_some(k + 1);
            let moved = |m: usize| {
                let mut a = best.assignment.clone();
                for &j in &mine[..m] {
                    a[j] = to;
                }
                a
            };
            let mut tried: Option<(Vec<Option<usize>>, Vec<RowEval>, f64)> = None;
            let mut runs = 0;
            let mut all_hold = |m: usize| {
                let a = moved(m);
                let (evals, n) = ctx.evaluate_memo(&ctx.scheme(&best.layout, &a), memo);
                runs += n;
                let ok = evals.iter().all(|e| e.verdict == Verdict::Holds);
                if ok
                    && ctx.well_formed(&best.layout, &a)
                    && ctx.rules_clean(&ctx.scheme(&best.layout, &a))
                {
                    let objective = ctx.objective(&evals);
                    if tried.as_ref().is_none_or(|(_, _, o)| objective < *o - 1e-9) {
                        tried = Some((a, evals, objective));
                    }
                }
                ok
            };
            let n = mine.len() - 1;
            // The first few counts one by one (holding need not be monotone in the count: one
            // load moved can leave a row short that two moved let fall through to the next
            // stage), then the largest count that holds, assuming holding is monotone beyond.
            let scan = n.min(TRIM_SCAN);
            let mut last_ok = false;
            for m in 1..=scan {
                last_ok = all_hold(m);
            }
            if n > scan && last_ok {
                let (mut good, mut bad) = (scan, n + 1);
                if all_hold(n) {
                    good = n;
                }
                while bad - good > 1 && good < n {
                    let mid = (good + bad) / 2;
                    if all_hold(mid) {
                        good = mid;
                    } else {
                        bad = mid;
                    }
                }
            }
            best.runs += runs;
            if let Some((a, evals, objective)) = tried {
                if objective < best.objective - 1e-9 {
                    best.assignment = a;
                    best.evals = evals;
                    best.objective = objective;
                    improved = true;
                }
            }
        }
        // Pulling the first loads of a stage into the one before can let a milder row stop a
        // stage earlier and shed less in all.
        for k in 0..stages.saturating_sub(1) {
            let next: Vec<usize> = (0..ctx.loads.len())
                .filter(|&j| best.assignment[j] == Some(k + 1))
                .collect();
            if next.len() < 2 {
                continue;
            }
            let n = next.len() - 1;
            let mut counts: Vec<usize> = (1..=n.min(PULL_SCAN)).collect();
            counts.extend([n / 4, n / 2, 3 * n / 4, n]);
            counts.retain(|&m| m >= 1 && m <= n);
            counts.sort_unstable();
            counts.dedup();
            let mut found: Option<(Vec<Option<usize>>, Vec<RowEval>, f64)> = None;
            for m in counts {
                let mut a = best.assignment.clone();
                for &j in &next[..m] {
                    a[j] = Some(k);
                }
                let (evals, r) = ctx.evaluate_memo(&ctx.scheme(&best.layout, &a), memo);
                best.runs += r;
                if evals.iter().all(|e| e.verdict == Verdict::Holds)
                    && ctx.well_formed(&best.layout, &a)
                    && ctx.rules_clean(&ctx.scheme(&best.layout, &a))
                {
                    let objective = ctx.objective(&evals);
                    let bar = found.as_ref().map_or(best.objective, |f| f.2);
                    if objective < bar - 1e-9 {
                        found = Some((a, evals, objective));
                    }
                }
            }
            if let Some((a, evals, objective)) = found {
                best.assignment = a;
                best.evals = evals;
                best.objective = objective;
                improved = true;
            }
        }
        if !improved {
            break;
        }
    }
    best
}

/// Keep the strongest requirement per (operating point, stage set, direction).
fn add(reqs: &mut Vec<Requirement>, new: Requirement) {
    match reqs
        .iter_mut()
        .find(|r| r.op == new.op && r.stages == new.stages && r.at_least == new.at_least)
    {
        Some(r) if r.at_least => r.mw = r.mw.max(new.mw),
        Some(r) => r.mw = r.mw.min(new.mw),
        None => reqs.push(new),
    }
}

/// Objective coefficient of each candidate load in each stage, from which stages operated in
/// each row at the last replay; a small cost on every assigned MW keeps unneeded loads unshed.
fn costs(ctx: &Context, layout: &Layout, stages: usize, evals: &[RowEval]) -> Vec<Vec<f64>> {
    let first = 0;
    ctx.loads
        .iter()
        .map(|&(i, _)| {
            let rw = ctx.rank_weight(i);
            let mut c = vec![1e-3 * rw * ctx.mw[first][i].max(1e-3); stages];
            for (&(ci, op), e) in ctx.rows.iter().zip(evals) {
                let w = ctx.cases.cases[ci].cost_weight();
                for k in layout::effective(layout, &e.operated) {
                    c[k] += w * rw * ctx.mw[op][i];
                }
            }
            c
        })
        .collect()
}
