//! The assignment of loads to stages as a mixed-integer linear programme (good_lp with the
//! pure-Rust microlp solver): the only file that knows good_lp.
//!
//! Variables are cumulative binaries y[i][k]: load i is opened by stage k or an earlier one
//! (stages in operating order), so y[i][k] ≤ y[i][k+1] and the stage's own loads are
//! y[i][k] − y[i][k−1]. Rank order is kept with O(n·S) rows rather than O(n²·S) pairs: between
//! adjacent rank tiers, one continuous variable per stage sits below every y of the lower tier
//! and above every y of the higher tier. An unshed load has y = 0 throughout, so a lower rank is
//! never left connected while a higher one is shed. With rank order every cumulative set is the
//! lower tiers in full plus part of one tier, so the integer decisions are only where each tier
//! is cut; this formulation's linear relaxation says so directly (an earlier one with position
//! windows per tier was several times slower to solve). Loads past any requirement's reach are
//! fixed out before the model is built.

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
    /// Section of each candidate load (`loads` order).
    pub load_section: &'a [usize],
    /// The section each stage must measure at (a load of it in the stage), if chosen.
    pub measure: &'a [Option<usize>],
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
    // y[j][k]: load j is opened by stage k or an earlier one (cumulative, so y[j][k] ≤ y[j][k+1]).
    let y: Vec<Option<Vec<Variable>>> = (0..n)
        .map(|j| reach[j].then(|| (0..s).map(|_| vars.add(variable().binary())).collect()))
        .collect();
    // x[j][k] = y[j][k] − y[j][k−1]: load j is opened by stage k itself.
    let x = |j: usize, k: usize| -> Option<Expression> {
        y[j].as_ref().map(|yj| {
            if k == 0 {
                Expression::from(yj[0])
            } else {
                yj[k] - yj[k - 1]
            }
        })
    };
    let mut tiers: Vec<Vec<usize>> = Vec::new();
    let mut last_rank = None;
    for (j, &(_, rank)) in p.loads.iter().enumerate() {
        if last_rank == Some(rank) {
            if let Some(t) = tiers.last_mut() {
                t.push(j);
            }
        } else {
            tiers.push(vec![j]);
            last_rank = Some(rank);
        }
    }
    // Between adjacent tiers, at each stage: a continuous c with y(higher tier) ≤ c ≤ y(lower
    // tier), so that a load of the higher tier is opened by stage k only if every load of the
    // lower tier is.
    let between: Vec<Vec<Variable>> = (0..tiers.len().saturating_sub(1))
        .map(|_| {
            (0..s)
                .map(|_| vars.add(variable().min(0.0).max(1.0)))
                .collect()
        })
        .collect();

    let mut objective = Expression::from(0.0);
    for j in 0..n {
        for k in 0..s {
            if let Some(xe) = x(j, k) {
                let mut c = p.cost[j][k];
                if p.change_cost > 0.0 && p.start[j] != Some(k) {
                    c += p.change_cost;
                }
                objective += c * xe;
            }
        }
        if p.change_cost > 0.0 && p.start[j].is_some() {
            if let Some(yj) = &y[j] {
                // Leaving unshed a load that the start sheds is a change too.
                objective += p.change_cost;
                objective -= p.change_cost * yj[s - 1];
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
        .filter_map(|j| y[j].as_ref().map(|yj| (j, yj)))
        .flat_map(|(j, yj)| {
            (0..s).map(move |k| {
                let on = p.start[j].is_some_and(|st| st <= k);
                (yj[k], if on { 1.0 } else { 0.0 })
            })
        })
        .collect();
    model = model.with_initial_solution(start);

    for yj in y.iter().flatten() {
        for k in 1..s {
            model = model.with(constraint!(yj[k - 1] <= yj[k]));
        }
    }
    for (t, c) in between.iter().enumerate() {
        for k in 0..s {
            for &i in &tiers[t] {
                match &y[i] {
                    Some(yi) => model = model.with(constraint!(c[k] <= yi[k])),
                    None => model = model.with(constraint!(c[k] <= 0.0)),
                }
            }
            for &j in &tiers[t + 1] {
                if let Some(yj) = &y[j] {
                    model = model.with(constraint!(yj[k] <= c[k]));
                }
            }
        }
    }
    // Every stage opens at least one load at every operating point: a stage with nothing
    // switched on at some point has nothing to shed there (and an empty stage nothing to
    // measure with). A stage with a chosen measuring section holds a load of that section.
    for k in 0..s {
        for mw in p.mw {
            let members: Expression = (0..n)
                .filter(|&j| mw[p.loads[j].0] > 0.0)
                .filter_map(|j| x(j, k))
                .sum();
            model = model.with(constraint!(members >= 1.0));
        }
        if let Some(section) = p.measure.get(k).copied().flatten() {
            let members: Expression = (0..n)
                .filter(|&j| p.load_section[j] == section)
                .filter_map(|j| x(j, k))
                .sum();
            model = model.with(constraint!(members >= 1.0));
        }
    }
    for req in p.requirements {
        let mut total = Expression::from(0.0);
        for (j, &(load, _)) in p.loads.iter().enumerate() {
            let mw = p.mw[req.op][load];
            if mw == 0.0 {
                continue;
            }
            for &k in &req.stages {
                if let Some(xe) = x(j, k) {
                    total += mw * xe;
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
        .map(|j| {
            y[j].as_ref()
                .and_then(|yj| (0..s).find(|&k| solution.value(yj[k]) > 0.5))
        })
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
