//! The assignment of loads to stages as a mixed-integer linear programme, built with good_lp and
//! solved by its pure-Rust microlp backend under a branch-and-bound node budget (a count, never a
//! time): the only module that knows good_lp and microlp.
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
//! fixed out before the model is built. A large model is first given a starting incumbent found
//! from its linear relaxation (`seed.rs`), which changes how fast an answer within the gap is
//! found, not the gap.
//!
//! Split by concept: `model.rs` builds the model's rows, `seed.rs` finds a starting incumbent for
//! large models, this file solves and reads the answer.

mod model;
mod seed;
#[cfg(test)]
mod tests;

use microlp::{SolveOptions, TerminationReason};
use model::{build, Built};
use seed::starting_incumbent;

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
    /// A starting assignment (stage position per candidate load): with `change_cost`, the
    /// assignment to stay close to; its loads are always among the candidates the model keeps.
    pub start: &'a [Option<usize>],
    /// Extra cost of each candidate load whose stage differs from `start` (0: none).
    pub change_cost: f64,
}

/// Why no assignment was found.
#[derive(Debug, Clone, PartialEq)]
pub enum AssignError {
    Infeasible,
    /// The branch-and-bound node budget ran out before the gap closed: reported, never taken
    /// as an answer.
    NodeLimit {
        nodes: u64,
    },
    Solver(String),
}

/// Relative optimality gap the solver may stop at.
pub(super) const MIP_GAP: f64 = 0.002;
/// The branch-and-bound budget of one solve, in nodes: a count, not a time, so that whether a
/// solve finishes never depends on the machine's speed. A solve that exhausts it is an error
/// ([`AssignError::NodeLimit`]), not a silently weaker answer.
pub const NODE_LIMIT: u64 = 200_000;

/// A solved assignment.
#[derive(Debug, Clone, PartialEq)]
pub struct Solved {
    /// The stage position (or `None`) of each candidate load.
    pub assignment: Vec<Option<usize>>,
    /// Branch-and-bound nodes the solve took (the pruned and the full model together).
    pub nodes: u64,
}

/// Solve for the least-cost assignment (within the relative gap [`MIP_GAP`]).
pub fn solve(p: &Problem) -> Result<Solved, AssignError> {
    solve_guided(p, GUIDE)
}

/// [`solve`] with the starting incumbent's settings `guide`.
pub(super) fn solve_guided(p: &Problem, guide: Guide) -> Result<Solved, AssignError> {
    let reach = reachable(p);
    let pruned: Vec<Scope> = reach
        .iter()
        .map(|&r| if r { Scope::Free } else { Scope::Fixed(None) })
        .collect();
    match solve_in(p, &pruned, guide) {
        Err(Pruned::Infeasible(_)) if reach.iter().all(|&r| r) => Err(AssignError::Infeasible),
        Err(Pruned::Infeasible(nodes)) => {
            match solve_in(p, &vec![Scope::Free; p.loads.len()], guide) {
                // The pruning was too tight for this set of requirements: solved with every load.
                Ok(mut s) => {
                    s.nodes += nodes;
                    Ok(s)
                }
                Err(Pruned::Infeasible(_)) => Err(AssignError::Infeasible),
                Err(Pruned::Other(e)) => Err(e),
            }
        }
        Err(Pruned::Other(e)) => Err(e),
        Ok(s) => Ok(s),
    }
}

/// How one solve of the model failed: infeasible (with the nodes spent), or otherwise.
pub(super) enum Pruned {
    Infeasible(u64),
    Other(AssignError),
}

/// What the model decides about one candidate load: its stage, or nothing (the load is fixed at
/// a stage position, or unshed, and enters the rows as a constant).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum Scope {
    Free,
    Fixed(Option<usize>),
}

/// When and how wide the starting incumbent ([`starting_incumbent`]) is sought.
#[derive(Debug, Clone, Copy)]
pub(super) struct Guide {
    /// Models with more binaries than this get a starting incumbent before the full solve.
    /// Below it the full model is solved as it stands (the demo's models are far below it, so
    /// their answers are those of the plain search).
    pub(super) above: usize,
    /// Loads on each side (in priority order) of a load the linear relaxation leaves undecided
    /// that the restricted model also decides, beside the undecided loads' whole rank tiers.
    pub(super) window: usize,
}

const GUIDE: Guide = Guide {
    above: 1_500,
    window: 12,
};

/// Solve the model with the loads of `scope` decided, the others fixed: the full model, seeded
/// with a starting incumbent when it is large.
fn solve_in(p: &Problem, scope: &[Scope], guide: Guide) -> Result<Solved, Pruned> {
    let binaries = scope.iter().filter(|&&s| s == Scope::Free).count() * p.stages;
    let mut hint = None;
    let mut nodes = 0;
    if binaries > guide.above {
        if let Some(seed) = starting_incumbent(p, scope, guide.window) {
            hint = Some(seed.hint);
            nodes = seed.nodes;
        }
    }
    let built = build(p, scope, false)?;
    let mut solved = run(&built, p, scope, hint)?;
    solved.nodes += nodes;
    Ok(solved)
}

/// Solve a built model (under the gap and the node budget, seeded with `hint` when given) and
/// read its assignment.
fn run(
    built: &Built,
    p: &Problem,
    scope: &[Scope],
    hint: Option<Vec<(microlp::Variable, f64)>>,
) -> Result<Solved, Pruned> {
    // good_lp builds the model; the solve goes to its microlp backend directly, because good_lp
    // offers that backend only a wall-clock limit and design needs a node budget (a count, the
    // same on every machine). microlp numbers variables in creation order, which is good_lp's
    // order (`Variable::index`), so values are read back by position.
    let mut options = SolveOptions::default();
    options.mip_gap = MIP_GAP;
    options.node_limit = Some(NODE_LIMIT);
    options.warm_start = hint;
    let solution = match built.model.as_inner().solve_with(options) {
        Ok(outcome) => match outcome.into_solution() {
            Ok(sol) if sol.termination_reason() == TerminationReason::NodeLimit => {
                return Err(Pruned::Other(AssignError::NodeLimit {
                    nodes: sol.stats().nodes_solved,
                }))
            }
            Ok(sol) => sol,
            Err(interrupted) => {
                return Err(Pruned::Other(AssignError::NodeLimit {
                    nodes: interrupted.stats().nodes_solved,
                }))
            }
        },
        // Infeasibility is proven at the root or by exhausting the tree, never by a limit.
        Err(microlp::Error::Infeasible) => return Err(Pruned::Infeasible(0)),
        Err(other) => return Err(Pruned::Other(AssignError::Solver(other.to_string()))),
    };
    let values: Vec<f64> = solution.iter().map(|(_, value)| value).collect();
    if values.len() != built.counter {
        return Err(Pruned::Other(AssignError::Solver(format!(
            "the solver returned {} values for {} variables",
            values.len(),
            built.counter
        ))));
    }
    let assignment = (0..p.loads.len())
        .map(|j| match (&built.y[j], scope[j]) {
            (Some(yj), _) => (0..p.stages).find(|&k| values[yj[k]] > 0.5),
            (None, Scope::Fixed(a)) => a,
            (None, Scope::Free) => None,
        })
        .collect();
    Ok(Solved {
        assignment,
        nodes: solution.stats().nodes_solved,
    })
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
