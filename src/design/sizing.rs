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
use super::evaluate::{evaluate, RowEval, Verdict};
use super::layout::{self, Layout};
use crate::model::{CaseSet, Measurement, Plant, Scheme};
use crate::sim::SimConfig;
use rayon::prelude::*;
use std::sync::atomic::{AtomicU64, AtomicUsize, Ordering};
use std::sync::Arc;

/// What every sizing of one design shares.
#[derive(Debug, Clone)]
pub struct Context<'a> {
    pub plant: &'a Plant,
    pub cases: &'a CaseSet,
    /// (case index, operating point index) in matrix order.
    pub rows: Vec<(usize, usize)>,
    /// Sheddable loads in priority order (rank, then file order): (load index, rank).
    pub loads: Vec<(usize, u32)>,
    /// Section of each candidate load (`loads` order).
    pub load_section: Vec<usize>,
    /// `mw[op][load]`: demand of each load at each operating point.
    pub mw: Vec<Vec<f64>>,
    pub sim: SimConfig,
    pub measurement: Measurement,
    pub name: String,
    /// Whether a row holds only with the plant's required margins too. The settings search
    /// sizes without them (`Context::without_margins`); the finalists are sized again with them.
    pub margins: bool,
    /// The assignment solves of this design (shared by every clone of the context).
    solver: Arc<SolverCounts>,
}

/// Counts of one design's assignment solves, kept across threads.
#[derive(Debug, Default)]
struct SolverCounts {
    solves: AtomicUsize,
    most_nodes: AtomicU64,
    /// Solves that exhausted their node budget: each dropped the layout it was sizing.
    unsolved: AtomicUsize,
}

/// What the assignment solves of one design took.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct SolverSummary {
    pub solves: usize,
    /// The most branch-and-bound nodes any one solve took.
    pub most_nodes: u64,
    /// Solves that exhausted the node budget (`assign::NODE_LIMIT`); each dropped the layout it
    /// was sizing, so a proposal made with any is not known to be the search's best.
    pub unsolved: usize,
}

impl<'a> Context<'a> {
    pub fn new(
        plant: &'a Plant,
        cases: &'a CaseSet,
        sim: SimConfig,
        measurement: Measurement,
        name: &str,
    ) -> Context<'a> {
        let mw: Vec<Vec<f64>> = plant
            .operating_points
            .iter()
            .map(|op| op.load_mw.clone())
            .collect();
        let mut loads: Vec<(usize, u32)> = plant
            .loads
            .iter()
            .enumerate()
            .filter(|(i, l)| !l.never_shed && mw.iter().any(|m| m[*i] > 0.0))
            .map(|(i, l)| (i, l.rank))
            .collect();
        loads.sort_by_key(|&(i, rank)| (rank, i));
        let load_section = loads.iter().map(|&(i, _)| plant.loads[i].section).collect();
        Context {
            plant,
            cases,
            rows: crate::verify::matrix::pairs(cases),
            loads,
            load_section,
            mw,
            sim,
            measurement,
            name: name.to_string(),
            margins: plant.criteria.margins_required(),
            solver: Arc::new(SolverCounts::default()),
        }
    }

    /// The assignment solves so far (counts only: the same on every run and thread count).
    pub fn solver_summary(&self) -> SolverSummary {
        SolverSummary {
            solves: self.solver.solves.load(Ordering::Relaxed),
            most_nodes: self.solver.most_nodes.load(Ordering::Relaxed),
            unsolved: self.solver.unsolved.load(Ordering::Relaxed),
        }
    }

    /// The same context judging rows without the required margins: the cheap judge of the
    /// settings search.
    pub fn without_margins(&self) -> Context<'a> {
        Context {
            margins: false,
            ..self.clone()
        }
    }

    /// Judge `scheme` on row `r`.
    pub fn evaluate_row(&self, r: usize, scheme: &Scheme) -> RowEval {
        let (ci, op) = self.rows[r];
        evaluate(
            self.plant,
            &self.cases.cases[ci],
            op,
            scheme,
            &self.sim,
            self.margins,
        )
    }

    /// The table of `layout` with `assignment` (a stage position per candidate load).
    pub fn scheme(&self, layout: &Layout, assignment: &[Option<usize>]) -> Scheme {
        layout::scheme(
            self.plant,
            &self.name,
            self.measurement,
            layout,
            &self.loads,
            assignment,
        )
    }

    /// Whether every stage of `layout` opens some load switched on at every operating point, and
    /// holds a load of the section it is to measure at: the rules the assignment model keeps,
    /// checked for tables built outside it (the first guess, trimmed tables).
    pub fn well_formed(&self, layout: &Layout, assignment: &[Option<usize>]) -> bool {
        layout.stages.iter().enumerate().all(|(k, st)| {
            let mine: Vec<usize> = (0..self.loads.len())
                .filter(|&j| assignment[j] == Some(k))
                .collect();
            let live = self
                .mw
                .iter()
                .all(|mw| mine.iter().any(|&j| mw[self.loads[j].0] > 0.0));
            let measured = st
                .section
                .is_none_or(|s| mine.iter().any(|&j| self.load_section[j] == s));
            live && measured
        })
    }

    /// Whether `scheme` breaks none of the plant's rules, rank order judged in every event of
    /// the cases (the audit's own check).
    pub fn rules_clean(&self, scheme: &Scheme) -> bool {
        crate::verify::audit::audit_cases(
            self.plant,
            scheme,
            Some(self.cases),
            &crate::verify::audit::AuditRules::for_plant(self.plant),
        )
        .violations
        .is_empty()
    }

    /// Replay every row.
    pub fn evaluate_all(&self, scheme: &Scheme) -> Vec<RowEval> {
        (0..self.rows.len())
            .into_par_iter()
            .map(|r| self.evaluate_row(r, scheme))
            .collect()
    }

    /// Replay the rows whose outcome may differ from `memo`'s, reuse the others; returns the
    /// evaluations and the number of replays made. A row's run depends only on the loads of the
    /// stages it operated and on where each stage measures: a stage that never trips changes
    /// nothing, so when those are the same the earlier replay is the replay.
    pub fn evaluate_memo(&self, scheme: &Scheme, memo: &mut Memo) -> (Vec<RowEval>, usize) {
        let sections: Vec<Option<usize>> = scheme
            .stages
            .iter()
            .map(|s| s.sheds.first().map(|&l| self.plant.loads[l].section))
            .collect();
        let stale: Vec<usize> = (0..self.rows.len())
            .filter(|&r| match &memo.rows[r] {
                None => true,
                Some((stages, eval)) => {
                    stages.len() != scheme.stages.len()
                        || memo.sections != sections
                        || eval
                            .touched
                            .iter()
                            .any(|&k| stages[k] != scheme.stages[k].sheds)
                }
            })
            .collect();
        let fresh: Vec<RowEval> = stale
            .par_iter()
            .map(|&r| self.evaluate_row(r, scheme))
            .collect();
        let contents: Vec<Vec<usize>> = scheme.stages.iter().map(|s| s.sheds.clone()).collect();
        for (&r, e) in stale.iter().zip(fresh) {
            memo.rows[r] = Some((contents.clone(), e));
        }
        memo.sections = sections;
        let evals = memo
            .rows
            .iter()
            .map(|m| {
                m.as_ref()
                    .map(|(_, e)| e.clone())
                    .unwrap_or_else(unreachable_eval)
            })
            .collect();
        (evals, stale.len())
    }

    /// The design objective of replayed rows: MW opened at nominal frequency, weighted by rank
    /// and by case; the shed of a case whose shedding is intended costs nothing.
    pub fn objective(&self, evals: &[RowEval]) -> f64 {
        self.rows
            .iter()
            .zip(evals)
            .map(|(&(ci, op), e)| {
                let w = self.cases.cases[ci].cost_weight();
                e.shed_loads
                    .iter()
                    .map(|&i| w * self.rank_weight(i) * self.mw[op][i])
                    .sum::<f64>()
            })
            .sum()
    }

    fn rank_weight(&self, load: usize) -> f64 {
        self.plant.design.rank_weight(self.plant.loads[load].rank)
    }
}

/// Earlier replays of one layout's rows, with the stage contents each was replayed with.
#[derive(Debug, Clone, Default)]
pub struct Memo {
    rows: Vec<Option<(Vec<Vec<usize>>, RowEval)>>,
    sections: Vec<Option<usize>>,
}

impl Memo {
    pub fn new(rows: usize) -> Memo {
        Memo {
            rows: vec![None; rows],
            sections: Vec::new(),
        }
    }
}

/// Every row is filled by `evaluate_memo` before it is read; this is never called.
fn unreachable_eval() -> RowEval {
    RowEval {
        verdict: Verdict::Short,
        operated: Vec::new(),
        shed_loads: Vec::new(),
        acting: Vec::new(),
        touched: Vec::new(),
    }
}

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

/// The requirements the failing rows set, in the order of `failing`, each with the replays it
/// used.
///
/// Rows that are short at the same operating point with the same single operated stage share
/// their search: each row's requirement is then on the same stages, the same MW function of the
/// count of loads moved into that stage, and the model keeps only the largest of them (`add`).
/// So the group needs only its largest count: the first row's count is found by bisection, the
/// other rows are replayed at the largest count so far (in parallel), and only a row still short
/// there bisects above it. With "no longer short" monotone in the count (the bisection's own
/// assumption) this is the largest of the rows' own counts, so the requirements are those of
/// [`requirement`] row by row. Other rows (several operated stages, too much shed) search alone.
fn requirements_of(
    ctx: &Context,
    layout: &Layout,
    assignment: &[Option<usize>],
    failing: &[usize],
    evals: &[RowEval],
) -> Vec<(Option<Requirement>, usize)> {
    let shared = |r: usize| {
        let e = &evals[r];
        (e.verdict == Verdict::Short && e.acting.len() == 1).then(|| (ctx.rows[r].1, e.acting[0]))
    };
    // Groups of positions in `failing`, in order of their first row.
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for (p, &r) in failing.iter().enumerate() {
        let key = shared(r);
        match groups
            .iter_mut()
            .find(|g| key.is_some() && shared(failing[g[0]]) == key)
        {
            Some(g) => g.push(p),
            None => groups.push(vec![p]),
        }
    }
    let found: Vec<(Option<Requirement>, usize)> = groups
        .par_iter()
        .map(|g| match shared(failing[g[0]]) {
            Some((op, stage)) if g.len() > 1 => {
                let rows: Vec<usize> = g.iter().map(|&p| failing[p]).collect();
                shared_requirement(ctx, layout, assignment, &rows, op, stage)
            }
            _ => {
                let r = failing[g[0]];
                requirement(ctx, layout, assignment, r, &evals[r])
            }
        })
        .collect();
    let mut out: Vec<(Option<Requirement>, usize)> = vec![(None, 0); failing.len()];
    for (g, (req, runs)) in groups.iter().zip(found) {
        for (j, &p) in g.iter().enumerate() {
            out[p] = (req.clone(), if j == 0 { runs } else { 0 });
        }
    }
    out
}

/// The largest requirement of `rows`, each short at operating point `op` with `stage` the only
/// stage operated (see [`requirements_of`]); with the replays used.
fn shared_requirement(
    ctx: &Context,
    layout: &Layout,
    assignment: &[Option<usize>],
    rows: &[usize],
    op: usize,
    stage: usize,
) -> (Option<Requirement>, usize) {
    let later: Vec<usize> = (0..ctx.loads.len())
        .filter(|&j| assignment[j].is_none_or(|k| k > stage) && ctx.mw[op][ctx.loads[j].0] > 0.0)
        .collect();
    let n = later.len();
    if n == 0 {
        return (None, 0);
    }
    let moved = |m: usize| {
        let mut a = assignment.to_vec();
        for &j in &later[..m] {
            a[j] = Some(stage);
        }
        a
    };
    let runs = std::cell::Cell::new(0);
    let not_short = |r: usize, m: usize| {
        runs.set(runs.get() + 1);
        ctx.evaluate_row(r, &ctx.scheme(layout, &moved(m))).verdict != Verdict::Short
    };
    // The largest count so far; `None` from `least` (short even with every later load) is the
    // whole list, above which no row can go.
    let mut top = least(n, |m| not_short(rows[0], m)).unwrap_or(n);
    let mut rest: Vec<usize> = rows[1..].to_vec();
    while top < n && !rest.is_empty() {
        let scheme = ctx.scheme(layout, &moved(top));
        let still: Vec<bool> = rest
            .par_iter()
            .map(|&r| ctx.evaluate_row(r, &scheme).verdict == Verdict::Short)
            .collect();
        runs.set(runs.get() + rest.len());
        rest = rest
            .iter()
            .zip(still)
            .filter_map(|(&r, s)| s.then_some(r))
            .collect();
        let Some((&r, others)) = rest.split_first() else {
            break;
        };
        // Least count above `top` for this row, as `least` would find it: the whole list
        // first, then a bisection.
        if !not_short(r, n) {
            top = n;
            break;
        }
        let (mut bad, mut good) = (top, n);
        while good - bad > 1 {
            let mid = (bad + good) / 2;
            if not_short(r, mid) {
                good = mid;
            } else {
                bad = mid;
            }
        }
        top = good;
        rest = others.to_vec();
    }
    let upto = layout::effective(layout, &[stage]);
    let mw: f64 = ctx
        .loads
        .iter()
        .zip(&moved(top))
        .filter(|(_, a)| a.is_some_and(|k| upto.contains(&k)))
        .map(|((i, _), _)| ctx.mw[op][*i])
        .sum();
    let req = Requirement {
        op,
        stages: upto,
        mw,
        at_least: true,
    };
    (Some(req), runs.get())
}

/// The requirement a failing row sets, found by replaying that row alone with loads moved into
/// (or out of) its deepest operated stage; with the number of replays used.
fn requirement(
    ctx: &Context,
    layout: &Layout,
    assignment: &[Option<usize>],
    row: usize,
    eval: &RowEval,
) -> (Option<Requirement>, usize) {
    let (_, op) = ctx.rows[row];
    let Some(&deepest) = eval.acting.last() else {
        return (None, 0);
    };
    let stages = layout.stages.len();
    let mut runs = 0;
    // Bisect on the side of the failure only: "no longer short" is monotone in the loads added
    // even where adding many would overshoot, and the overshoot is the next round's business.
    let mut judge = |trial: &[Option<usize>]| {
        runs += 1;
        let scheme = ctx.scheme(layout, trial);
        ctx.evaluate_row(row, &scheme).verdict
    };
    let covered = layout::effective(layout, &eval.acting);
    let opened = |trial: &[Option<usize>]| -> f64 {
        ctx.loads
            .iter()
            .zip(trial)
            .filter(|(_, a)| a.is_some_and(|k| covered.contains(&k)))
            .map(|((i, _), _)| ctx.mw[op][*i])
            .sum()
    };
    match eval.verdict {
        Verdict::Holds => (None, 0),
        Verdict::Short => {
            // The next loads in priority order that the row did not shed, moved into its
            // deepest operated stage until it is no longer short. When that overshoots (the
            // stage acts too late, so enough of it sheds too much), the same into the operated
            // stage before it, and so on to the first; if no stage holds the row, the deepest's.
            let mut fallback = None;
            for &stage in eval.acting.iter().rev() {
                let later: Vec<usize> = (0..ctx.loads.len())
                    .filter(|&j| {
                        assignment[j].is_none_or(|k| k > stage) && ctx.mw[op][ctx.loads[j].0] > 0.0
                    })
                    .collect();
                if later.is_empty() {
                    continue;
                }
                let moved = |m: usize| {
                    let mut a = assignment.to_vec();
                    for &j in &later[..m] {
                        a[j] = Some(stage);
                    }
                    a
                };
                let found = least(later.len(), |m| judge(&moved(m)) != Verdict::Short);
                let trial = moved(found.unwrap_or(later.len()));
                let upto: Vec<usize> = layout::effective(
                    layout,
                    &eval
                        .acting
                        .iter()
                        .copied()
                        .filter(|&k| k <= stage)
                        .collect::<Vec<_>>(),
                );
                let mw: f64 = ctx
                    .loads
                    .iter()
                    .zip(&trial)
                    .filter(|(_, a)| a.is_some_and(|k| upto.contains(&k)))
                    .map(|((i, _), _)| ctx.mw[op][*i])
                    .sum();
                let req = Requirement {
                    op,
                    stages: upto,
                    mw,
                    at_least: true,
                };
                if found.is_some() && judge(&trial) == Verdict::Holds {
                    return (Some(req), runs);
                }
                if fallback.is_none() {
                    fallback = Some(req);
                }
            }
            (fallback, runs)
        }
        Verdict::TooMuch => {
            let mine: Vec<usize> = (0..ctx.loads.len())
                .rev()
                .filter(|&j| assignment[j] == Some(deepest))
                .collect();
            if mine.len() < 2 {
                return (None, 0);
            }
            let to = (deepest + 1 < stages).then_some(deepest + 1);
            let moved = |m: usize| {
                let mut a = assignment.to_vec();
                for &j in &mine[..m] {
                    a[j] = to;
                }
                a
            };
            let m = least(mine.len() - 1, |m| judge(&moved(m)) != Verdict::TooMuch);
            let trial = moved(m.unwrap_or(mine.len() - 1));
            let req = Requirement {
                op,
                stages: layout::effective(layout, &eval.acting),
                mw: opened(&trial),
                at_least: false,
            };
            (Some(req), runs)
        }
    }
}

/// Least m in 1..=n with `ok(m)`, assuming `ok` is monotone; `None` when `ok(n)` fails.
fn least(n: usize, mut ok: impl FnMut(usize) -> bool) -> Option<usize> {
    if n == 0 || !ok(n) {
        return None;
    }
    let (mut bad, mut good) = (0, n);
    while good - bad > 1 {
        let mid = (bad + good) / 2;
        if ok(mid) {
            good = mid;
        } else {
            bad = mid;
        }
    }
    Some(good)
}

#[cfg(test)]
mod tests {
    use super::least;

    #[test]
    fn least_finds_the_first_passing_count() {
        for threshold in 1..=9 {
            assert_eq!(least(9, |m| m >= threshold), Some(threshold));
        }
        assert_eq!(least(9, |_| false), None);
        assert_eq!(least(0, |_| true), None);
    }
}
