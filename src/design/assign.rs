//! The assignment of loads to stages as a mixed-integer linear programme, built with good_lp and
//! solved by its pure-Rust microlp backend under a branch-and-bound node budget (a count, never a
//! time): the only file that knows good_lp and microlp.
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

use good_lp::solvers::microlp::MicroLpProblem;
use good_lp::{variable, Expression, ProblemVariables, SolverModel, Variable};
use microlp::{SolveOptions, TerminationReason};

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
const MIP_GAP: f64 = 0.002;
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
    let reach = reachable(p);
    match solve_with(p, &reach) {
        Err(Pruned::Infeasible(_)) if reach.iter().all(|&r| r) => Err(AssignError::Infeasible),
        Err(Pruned::Infeasible(nodes)) => match solve_with(p, &vec![true; p.loads.len()]) {
            // The pruning was too tight for this set of requirements: solved with every load.
            Ok(mut s) => {
                s.nodes += nodes;
                Ok(s)
            }
            Err(Pruned::Infeasible(_)) => Err(AssignError::Infeasible),
            Err(Pruned::Other(e)) => Err(e),
        },
        Err(Pruned::Other(e)) => Err(e),
        Ok(s) => Ok(s),
    }
}

/// How one solve of the model failed: infeasible (with the nodes spent), or otherwise.
enum Pruned {
    Infeasible(u64),
    Other(AssignError),
}

/// A linear row under construction: terms in the order they were added, merged per variable
/// when the row is finished (duplicates summed in that order; a term that sums to zero is kept).
#[derive(Default)]
struct Row(Vec<(usize, f64)>);

impl Row {
    /// `coef` times the variable created `var`-th.
    fn add(&mut self, var: usize, coef: f64) {
        self.0.push((var, coef));
    }
    /// `x(j, k)` times `coef`: the cumulative difference y[j][k] − y[j][k−1].
    fn add_x(&mut self, yj: &[usize], k: usize, coef: f64) {
        self.add(yj[k], coef);
        if k > 0 {
            self.add(yj[k - 1], -coef);
        }
    }
    fn merged(mut self) -> Vec<(usize, f64)> {
        self.0.sort_by_key(|&(v, _)| v);
        let mut out: Vec<(usize, f64)> = Vec::with_capacity(self.0.len());
        for (v, c) in self.0 {
            match out.last_mut() {
                Some((lv, lc)) if *lv == v => *lc += c,
                _ => out.push((v, c)),
            }
        }
        out
    }
}

/// The model's variables in creation order, to turn merged rows back into expressions.
struct Vars(Vec<Variable>);

impl Vars {
    fn expr(&self, row: Row) -> Expression {
        let merged = row.merged();
        let mut e = Expression::with_capacity(merged.len());
        for (v, c) in merged {
            e.add_mul(c, self.0[v]);
        }
        e
    }
}

fn solve_with(p: &Problem, reach: &[bool]) -> Result<Solved, Pruned> {
    let n = p.loads.len();
    let s = p.stages;
    // Variables in creation order: y[j][k] first, then the continuous variables between tiers.
    let mut created: Vec<bool> = Vec::new(); // binary?
    let mut new_var = |binary: bool| {
        created.push(binary);
        created.len() - 1
    };
    // y[j][k]: load j is opened by stage k or an earlier one (cumulative, so y[j][k] ≤ y[j][k+1]).
    let y_idx: Vec<Option<Vec<usize>>> = (0..n)
        .map(|j| reach[j].then(|| (0..s).map(|_| new_var(true)).collect()))
        .collect();
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
    let between_idx: Vec<Vec<usize>> = (0..tiers.len().saturating_sub(1))
        .map(|_| (0..s).map(|_| new_var(false)).collect())
        .collect();
    let counter = created.len();

    // The objective, each coefficient summed in the order the terms arise, x[j][k] by x[j][k].
    let mut obj = vec![0.0; counter];
    for (j, yj) in y_idx.iter().enumerate() {
        if let Some(yj) = yj {
            for k in 0..s {
                let mut c = p.cost[j][k];
                if p.change_cost > 0.0 && p.start[j] != Some(k) {
                    c += p.change_cost;
                }
                obj[yj[k]] += c;
                if k > 0 {
                    obj[yj[k - 1]] += -c;
                }
            }
            if p.change_cost > 0.0 && p.start[j].is_some() {
                // Leaving unshed a load that the start sheds is a change too (the constant
                // part of that cost does not move the optimum).
                obj[yj[s - 1]] += -p.change_cost;
            }
        }
    }
    let mut problem_vars = ProblemVariables::new();
    let vars = Vars(
        created
            .iter()
            .map(|&binary| {
                problem_vars.add(if binary {
                    variable().binary()
                } else {
                    variable().min(0.0).max(1.0)
                })
            })
            .collect(),
    );
    let mut objective = Expression::with_capacity(counter);
    for (i, &c) in obj.iter().enumerate() {
        objective.add_mul(c, vars.0[i]);
    }
    let mut model = problem_vars.minimise(objective).using(good_lp::microlp);
    let (y, between) = (y_idx, between_idx);
    // Every row as `expression ≤ rhs`.
    let le = |model: &mut MicroLpProblem, row: Row, rhs: f64| {
        model.add_constraint(vars.expr(row).leq(rhs));
    };

    for yj in y.iter().flatten() {
        for k in 1..s {
            let mut r = Row::default();
            r.add(yj[k - 1], 1.0);
            r.add(yj[k], -1.0);
            le(&mut model, r, 0.0);
        }
    }
    for (t, c) in between.iter().enumerate() {
        for k in 0..s {
            for &i in &tiers[t] {
                let mut r = Row::default();
                r.add(c[k], 1.0);
                if let Some(yi) = &y[i] {
                    r.add(yi[k], -1.0);
                }
                le(&mut model, r, 0.0);
            }
            for &j in &tiers[t + 1] {
                if let Some(yj) = &y[j] {
                    let mut r = Row::default();
                    r.add(yj[k], 1.0);
                    r.add(c[k], -1.0);
                    le(&mut model, r, 0.0);
                }
            }
        }
    }
    // Every stage opens at least one load at every operating point: a stage with nothing
    // switched on at some point has nothing to shed there (and an empty stage nothing to
    // measure with). A stage with a chosen measuring section holds a load of that section.
    for k in 0..s {
        for mw in p.mw {
            let mut r = Row::default();
            for j in (0..n).filter(|&j| mw[p.loads[j].0] > 0.0) {
                if let Some(yj) = &y[j] {
                    r.add_x(yj, k, -1.0);
                }
            }
            le(&mut model, r, -1.0);
        }
        if let Some(section) = p.measure.get(k).copied().flatten() {
            let mut r = Row::default();
            for j in (0..n).filter(|&j| p.load_section[j] == section) {
                if let Some(yj) = &y[j] {
                    r.add_x(yj, k, -1.0);
                }
            }
            le(&mut model, r, -1.0);
        }
    }
    for req in p.requirements {
        let sign = if req.at_least { -1.0 } else { 1.0 };
        let mut r = Row::default();
        for (j, &(load, _)) in p.loads.iter().enumerate() {
            let mw = p.mw[req.op][load];
            if mw == 0.0 {
                continue;
            }
            if let Some(yj) = &y[j] {
                for &k in &req.stages {
                    r.add_x(yj, k, sign * mw);
                }
            }
        }
        let rhs = if req.at_least {
            -(req.mw - 1e-6)
        } else {
            req.mw + 1e-6
        };
        le(&mut model, r, rhs);
    }

    // good_lp builds the model; the solve goes to its microlp backend directly, because good_lp
    // offers that backend only a wall-clock limit and design needs a node budget (a count, the
    // same on every machine). microlp numbers variables in creation order, which is good_lp's
    // order (`Variable::index`), so values are read back by position.
    let mut options = SolveOptions::default();
    options.mip_gap = MIP_GAP;
    options.node_limit = Some(NODE_LIMIT);
    let solution = match model.as_inner().solve_with(options) {
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
    if values.len() != counter {
        return Err(Pruned::Other(AssignError::Solver(format!(
            "the solver returned {} values for {counter} variables",
            values.len()
        ))));
    }
    let assignment = (0..n)
        .map(|j| {
            y[j].as_ref()
                .and_then(|yj| (0..s).find(|&k| values[yj[k]] > 0.5))
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

#[cfg(test)]
mod tests {
    use super::*;

    /// A small deterministic generator (64-bit LCG, Knuth's MMIX constants).
    struct Lcg(u64);
    impl Lcg {
        fn unit(&mut self) -> f64 {
            self.0 = self
                .0
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (self.0 >> 11) as f64 / (1u64 << 53) as f64
        }
    }

    /// Every assignment of `n` loads to `s` stages or none, by brute force: the feasible one of
    /// least cost under the model's rules (rank order between tiers, a live load in every stage
    /// at every point, a load of the measuring section, the requirements).
    fn brute_force(p: &Problem) -> Option<f64> {
        let (n, s) = (p.loads.len(), p.stages);
        let mut best: Option<f64> = None;
        let mut a = vec![s; n]; // s = unshed
        loop {
            let assignment: Vec<Option<usize>> = a.iter().map(|&k| (k < s).then_some(k)).collect();
            if feasible(p, &assignment) {
                let cost = cost_of(p, &assignment);
                if best.is_none_or(|b| cost < b) {
                    best = Some(cost);
                }
            }
            // Next assignment (odometer over 0..=s).
            let mut j = 0;
            while j < n && a[j] == 0 {
                a[j] = s;
                j += 1;
            }
            if j == n {
                return best;
            }
            a[j] -= 1;
        }
    }

    fn cost_of(p: &Problem, a: &[Option<usize>]) -> f64 {
        a.iter()
            .enumerate()
            .filter_map(|(j, k)| k.map(|k| p.cost[j][k]))
            .sum()
    }

    /// The model's rules, checked directly on an assignment.
    fn feasible(p: &Problem, a: &[Option<usize>]) -> bool {
        let (n, s) = (p.loads.len(), p.stages);
        let pos = |j: usize| a[j].unwrap_or(s);
        let ranked =
            (0..n).all(|i| (0..n).all(|j| p.loads[i].1 >= p.loads[j].1 || pos(i) <= pos(j)));
        let live = (0..s).all(|k| {
            p.mw.iter()
                .all(|mw| (0..n).any(|j| a[j] == Some(k) && mw[p.loads[j].0] > 0.0))
                && p.measure[k]
                    .is_none_or(|sec| (0..n).any(|j| a[j] == Some(k) && p.load_section[j] == sec))
        });
        let meets = p.requirements.iter().all(|r| {
            let total: f64 = (0..n)
                .filter(|&j| a[j].is_some_and(|k| r.stages.contains(&k)))
                .map(|j| p.mw[r.op][p.loads[j].0])
                .sum();
            if r.at_least {
                total >= r.mw - 1e-6
            } else {
                total <= r.mw + 1e-6
            }
        });
        ranked && live && meets
    }

    /// Against brute force over every assignment (the reference: exhaustive enumeration), on
    /// random small problems with shared rank tiers, two operating points (one load off at the
    /// second), a measuring section and at-least / at-most requirements: the solver finds a
    /// feasible assignment whenever one exists, within the relative gap of the optimum, and says
    /// infeasible only when there is none.
    #[test]
    fn matches_brute_force_on_small_problems() {
        let mut rng = Lcg(7);
        let mut solved = 0;
        for trial in 0..60 {
            let n = 7;
            let s = 1 + trial % 3;
            let loads: Vec<(usize, u32)> = [1, 2, 2, 3, 3, 3, 4]
                .iter()
                .enumerate()
                .map(|(i, &r)| (i, r))
                .collect();
            // MW at the two points; load 3 is switched off at the second.
            let pairs: Vec<(f64, f64)> = (0..n)
                .map(|j| {
                    let first = (0.1 + rng.unit()).round_to(2);
                    let second = if j == 3 {
                        0.0
                    } else {
                        (0.1 + rng.unit()).round_to(2)
                    };
                    (first, second)
                })
                .collect();
            let mw = vec![
                pairs.iter().map(|p| p.0).collect::<Vec<f64>>(),
                pairs.iter().map(|p| p.1).collect(),
            ];
            let load_section: Vec<usize> = (0..n).map(|j| j % 2).collect();
            let measure: Vec<Option<usize>> = (0..s)
                .map(|k| (k == s - 1 && trial % 2 == 0).then_some(1))
                .collect();
            let total0: f64 = mw[0].iter().sum();
            let mut requirements = vec![Requirement {
                op: 0,
                stages: (0..s).collect(),
                mw: (0.2 + 0.5 * rng.unit()) * total0,
                at_least: true,
            }];
            if s > 1 {
                requirements.push(Requirement {
                    op: 1,
                    stages: vec![0],
                    mw: (0.1 + 0.4 * rng.unit()) * total0,
                    at_least: trial % 4 != 1,
                });
            }
            let cost: Vec<Vec<f64>> = (0..n)
                .map(|j| {
                    (0..s)
                        .map(|k| mw[0][j] * (1.0 + (s - k) as f64 * rng.unit()))
                        .collect()
                })
                .collect();
            let start = vec![None; n];
            let p = Problem {
                loads: &loads,
                mw: &mw,
                stages: s,
                load_section: &load_section,
                measure: &measure,
                requirements: &requirements,
                cost: &cost,
                start: &start,
                change_cost: 0.0,
            };
            let reference = brute_force(&p);
            match (solve(&p), reference) {
                (Ok(got), Some(best)) => {
                    assert!(
                        feasible(&p, &got.assignment),
                        "trial {trial}: {got:?} breaks a rule"
                    );
                    let c = cost_of(&p, &got.assignment);
                    assert!(
                        c <= best * (1.0 + MIP_GAP) + 1e-9,
                        "trial {trial}: cost {c} against the optimum {best}"
                    );
                    solved += 1;
                }
                (Err(AssignError::Infeasible), None) => {}
                (got, reference) => {
                    panic!("trial {trial}: solver {got:?}, brute force {reference:?}")
                }
            }
        }
        // The generator must exercise both outcomes for the check to mean anything.
        assert!((10..60).contains(&solved), "{solved} of 60 feasible");
    }

    trait Round {
        fn round_to(self, digits: i32) -> f64;
    }
    impl Round for f64 {
        fn round_to(self, digits: i32) -> f64 {
            let f = 10f64.powi(digits);
            (self * f).round() / f
        }
    }
}
