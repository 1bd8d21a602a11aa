//! The assignment of loads to stages as a mixed-integer linear programme (good_lp with the
//! pure-Rust microlp solver): the only file that knows good_lp.
//!
//! Variables are binaries x[i][k], load i opened by stage k (stages in operating order). Rank
//! order is kept with O(n) rows rather than O(n²) pairs: each load's stage position
//! s_i = Σ_k (k+1)·x[i][k] + (S+1)·(1 − Σ_k x[i][k]) (an unshed load counts as stage S+1) must lie
//! in its rank tier's window [lo_t, hi_t], and windows follow rank: hi_t ≤ lo_{t+1}. Loads of a
//! tier that no requirement can reach are fixed out before the model is built, so the integer
//! decisions are only where each tier is cut.

use good_lp::{
    constraint, microlp, variable, variables, Expression, Solution, SolverModel, Variable,
    WithInitialSolution, WithMipGap, WithTimeLimit,
};

/// A requirement on the MW that a set of stages opens at one operating point.
#[derive(Debug, Clone, PartialEq)]
pub struct Requirement {
    pub op: usize,
    /// Stage positions (in operating order).
    pub stages: Vec<usize>,
    /// At least this many MW (`at_least`) or at most (`!at_least`).
    pub mw: f64,
    pub at_least: bool,
}

/// One assignment problem.
#[derive(Debug, Clone)]
pub struct Problem<'a> {
    /// Candidate loads in priority order (rank, then file order): (load index, rank).
    pub loads: &'a [(usize, u32)],
    /// MW of each plant load at each operating point: `mw[op][load]`.
    pub mw: &'a [Vec<f64>],
    pub stages: usize,
    pub requirements: &'a [Requirement],
    /// Cost of load `loads[j]` in stage k: `cost[j][k]`.
    pub cost: &'a [Vec<f64>],
    /// A starting assignment (stage position per candidate load), used as a warm start and, with
    /// `change_cost`, as the assignment to stay close to.
    pub start: &'a [Option<usize>],
    /// Extra cost of each candidate load whose stage differs from `start` (0: none).
    pub change_cost: f64,
}

/// Why no assignment was found.
#[derive(Debug, Clone, PartialEq)]
pub enum AssignError {
    Infeasible,
    Solver(String),
}

/// Relative optimality gap the solver may stop at.
const MIP_GAP: f32 = 0.002;
/// A safety net only: a run that hits it is reported, since the result could then depend on the
/// machine's speed.
const TIME_LIMIT_S: f64 = 60.0;

/// Solve; returns the stage position (or `None`) of each candidate load.
pub fn solve(p: &Problem) -> Result<Vec<Option<usize>>, AssignError> {
    solve_with(p, reachable(p))
}

fn solve_all(p: &Problem) -> Result<Vec<Option<usize>>, AssignError> {
    solve_with(p, vec![true; p.loads.len()])
}

fn solve_with(p: &Problem, reach: Vec<bool>) -> Result<Vec<Option<usize>>, AssignError> {
    let n = p.loads.len();
    let s = p.stages;
    let mut vars = variables!();
    let mut x: Vec<Vec<Option<Variable>>> = vec![vec![None; s]; n];
    for (j, row) in x.iter_mut().enumerate() {
        if reach[j] {
            for v in row.iter_mut() {
                *v = Some(vars.add(variable().binary()));
            }
        }
    }
    let mut tiers: Vec<(u32, Vec<usize>)> = Vec::new();
    for (j, &(_, rank)) in p.loads.iter().enumerate() {
        match tiers.last_mut() {
            Some((r, members)) if *r == rank => members.push(j),
            _ => tiers.push((rank, vec![j])),
        }
    }
    let top = (s + 1) as f64;
    let windows: Vec<(Variable, Variable)> = tiers
        .iter()
        .map(|_| {
            (
                vars.add(variable().min(1.0).max(top)),
                vars.add(variable().min(1.0).max(top)),
            )
        })
        .collect();

    let mut objective = Expression::from(0.0);
    for j in 0..n {
        for k in 0..s {
            if let Some(v) = x[j][k] {
                let mut c = p.cost[j][k];
                if p.change_cost > 0.0 && p.start[j] != Some(k) {
                    c += p.change_cost;
                }
                objective += c * v;
            }
        }
        if p.change_cost > 0.0 && p.start[j].is_some() && reach[j] {
            // Leaving a load unshed that the start sheds is a change too: cost it through the
            // complement, change_cost · (1 − Σ_k x).
            objective += p.change_cost;
            for v in x[j].iter().flatten() {
                objective -= p.change_cost * *v;
            }
        }
    }
    let mut model = vars
        .minimise(objective)
        .using(microlp)
        .with_mip_gap(MIP_GAP)
        .map_err(|e| AssignError::Solver(e.to_string()))?
        .with_time_limit(TIME_LIMIT_S);

    let start: Vec<(Variable, f64)> = (0..n)
        .flat_map(|j| {
            let xs = &x[j];
            (0..s).filter_map(move |k| {
                xs[k].map(|v| (v, if p.start[j] == Some(k) { 1.0 } else { 0.0 }))
            })
        })
        .collect();
    model = model.with_initial_solution(start);

    for j in 0..n {
        let once: Expression = x[j].iter().flatten().map(|v| Expression::from(*v)).sum();
        model = model.with(constraint!(once.clone() <= 1.0));
    }
    // Rank order through the tier windows.
    for (t, (_, members)) in tiers.iter().enumerate() {
        let (lo, hi) = windows[t];
        model = model.with(constraint!(lo <= hi));
        if t + 1 < tiers.len() {
            model = model.with(constraint!(hi <= windows[t + 1].0));
        }
        for &j in members {
            let mut position = Expression::from(top);
            for (k, v) in x[j].iter().enumerate() {
                if let Some(v) = v {
                    position -= (s - k) as f64 * *v;
                }
            }
            model = model.with(constraint!(position.clone() >= lo));
            model = model.with(constraint!(position <= hi));
        }
    }
    // Every stage opens at least one load: an empty stage has nothing to measure with.
    for k in 0..s {
        let members: Expression = (0..n).filter_map(|j| x[j][k]).map(Expression::from).sum();
        model = model.with(constraint!(members >= 1.0));
    }
    for req in p.requirements {
        let mut total = Expression::from(0.0);
        for (j, &(load, _)) in p.loads.iter().enumerate() {
            let mw = p.mw[req.op][load];
            if mw == 0.0 {
                continue;
            }
            for &k in &req.stages {
                if let Some(v) = x[j][k] {
                    total += mw * v;
                }
            }
        }
        model = if req.at_least {
            model.with(constraint!(total >= req.mw - 1e-6))
        } else {
            model.with(constraint!(total <= req.mw + 1e-6))
        };
    }
    let solution = match model.solve() {
        Ok(sol) => sol,
        Err(good_lp::ResolutionError::Infeasible) if !reach.iter().all(|&r| r) => {
            // The pruning was too tight for this set of requirements: try with every load.
            return solve_all(p);
        }
        Err(good_lp::ResolutionError::Infeasible) => return Err(AssignError::Infeasible),
        Err(other) => return Err(AssignError::Solver(other.to_string())),
    };
    Ok((0..n)
        .map(|j| (0..s).find(|&k| x[j][k].is_some_and(|v| solution.value(v) > 0.5)))
        .collect())
}

/// Candidate loads the model is likely to need: the priority list up to twice the largest
/// at-least requirement at any operating point, to the end of that rank tier, and every load the
/// start uses. Loads beyond could only add shed unless the requirements are tangled; when the
/// pruned model is infeasible the solve is repeated with every load.
fn reachable(p: &Problem) -> Vec<bool> {
    let n = p.loads.len();
    let mut last = 0usize;
    for req in p.requirements.iter().filter(|r| r.at_least) {
        let mut total = 0.0;
        let mut j = 0;
        while j < n && total < 2.0 * req.mw - 1e-6 {
            total += p.mw[req.op][p.loads[j].0];
            j += 1;
        }
        last = last.max(j);
    }
    // At least one load per stage.
    last = last.max(p.stages.min(n));
    // Finish the tier the cut lands in.
    if last > 0 && last < n {
        let rank = p.loads[last - 1].1;
        while last < n && p.loads[last].1 == rank {
            last += 1;
        }
    }
    (0..n).map(|j| j < last || p.start[j].is_some()).collect()
}
