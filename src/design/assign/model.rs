//! The assignment model's rows, built with good_lp: cumulative binaries per free load and stage,
//! rank order between tiers, a live load in every stage, the requirements; fixed loads enter as
//! constants.

use super::{Problem, Pruned, Scope};
use good_lp::solvers::microlp::MicroLpProblem;
use good_lp::{variable, Expression, ProblemVariables, SolverModel, Variable};

/// A linear row under construction: terms in the order they were added, merged per variable
/// when the row is finished (duplicates summed in that order; a term that sums to zero is kept),
/// and the sum of its fixed loads' terms.
#[derive(Default)]
struct Row {
    terms: Vec<(usize, f64)>,
    constant: f64,
}

impl Row {
    /// `coef` times the variable created `var`-th.
    fn add(&mut self, var: usize, coef: f64) {
        self.terms.push((var, coef));
    }
    fn merged(mut self) -> Vec<(usize, f64)> {
        self.terms.sort_by_key(|&(v, _)| v);
        let mut out: Vec<(usize, f64)> = Vec::with_capacity(self.terms.len());
        for (v, c) in self.terms {
            match out.last_mut() {
                Some((lv, lc)) if *lv == v => *lc += c,
                _ => out.push((v, c)),
            }
        }
        out
    }
}

/// The cumulative y of every candidate load: a variable for a free load, a constant for a fixed
/// one.
struct Cumulative<'a> {
    y: &'a [Option<Vec<usize>>],
    scope: &'a [Scope],
}

impl Cumulative<'_> {
    /// `coef` times y[j][k] (load j opened by stage k or earlier).
    fn add(&self, row: &mut Row, j: usize, k: usize, coef: f64) {
        match (&self.y[j], self.scope[j]) {
            (Some(yj), _) => row.add(yj[k], coef),
            (None, Scope::Fixed(Some(a))) if a <= k => row.constant += coef,
            _ => {}
        }
    }
    /// `coef` times x[j][k] = y[j][k] − y[j][k−1] (load j opened by stage k itself).
    fn add_x(&self, row: &mut Row, j: usize, k: usize, coef: f64) {
        self.add(row, j, k, coef);
        if k > 0 {
            self.add(row, j, k - 1, -coef);
        }
    }
    /// y[j][k] as a number when load j is fixed.
    fn fixed(&self, j: usize, k: usize) -> Option<f64> {
        match self.scope[j] {
            Scope::Free => None,
            Scope::Fixed(a) => Some(if a.is_some_and(|a| a <= k) { 1.0 } else { 0.0 }),
        }
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

/// A built model: the microlp problem, the y variables of each free load, and the number of
/// variables created.
pub(super) struct Built {
    pub(super) model: MicroLpProblem,
    pub(super) y: Vec<Option<Vec<usize>>>,
    pub(super) counter: usize,
}

/// Build the model for the loads of `scope` (binaries, or with `relaxed` their linear
/// relaxation). `Err(Infeasible)` when a row of fixed loads alone cannot hold.
pub(super) fn build(p: &Problem, scope: &[Scope], relaxed: bool) -> Result<Built, Pruned> {
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
        .map(|j| (scope[j] == Scope::Free).then(|| (0..s).map(|_| new_var(true)).collect()))
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
                problem_vars.add(if binary && !relaxed {
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
    let (y, between) = (Cumulative { y: &y_idx, scope }, between_idx);
    // Every row as `expression ≤ rhs`; a row of fixed loads alone is checked here, and the model
    // is infeasible when it fails.
    let mut infeasible = false;
    let mut le = |model: &mut MicroLpProblem, row: Row, rhs: f64| {
        if row.terms.is_empty() {
            infeasible |= row.constant > rhs;
            return;
        }
        let rhs = rhs - row.constant;
        model.add_constraint(vars.expr(row).leq(rhs));
    };

    for yj in y_idx.iter().flatten() {
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
                y.add(&mut r, i, k, -1.0);
                le(&mut model, r, 0.0);
            }
            for &j in &tiers[t + 1] {
                // A fixed unopened load of the higher tier says nothing (c ≥ 0 already).
                if y.fixed(j, k) == Some(0.0) {
                    continue;
                }
                let mut r = Row::default();
                y.add(&mut r, j, k, 1.0);
                r.add(c[k], -1.0);
                le(&mut model, r, 0.0);
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
                y.add_x(&mut r, j, k, -1.0);
            }
            le(&mut model, r, -1.0);
        }
        if let Some(section) = p.measure.get(k).copied().flatten() {
            let mut r = Row::default();
            for j in (0..n).filter(|&j| p.load_section[j] == section) {
                y.add_x(&mut r, j, k, -1.0);
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
            for &k in &req.stages {
                y.add_x(&mut r, j, k, sign * mw);
            }
        }
        let rhs = if req.at_least {
            -(req.mw - 1e-6)
        } else {
            req.mw + 1e-6
        };
        le(&mut model, r, rhs);
    }
    if infeasible {
        return Err(Pruned::Infeasible(0));
    }
    Ok(Built {
        model,
        y: y_idx,
        counter,
    })
}
