//! What every sizing of one design shares: the plant, cases and rows, the candidate loads and
//! their MW, the simulator's settings, the solver's counts ([`Context`]); a row judged against a
//! table, and the memo of rows already judged for a layout's assignments ([`Memo`]).

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
    pub(super) solver: Arc<SolverCounts>,
}

/// Counts of one design's assignment solves, kept across threads.
#[derive(Debug, Default)]
pub(super) struct SolverCounts {
    pub(super) solves: AtomicUsize,
    pub(super) most_nodes: AtomicU64,
    /// Solves that exhausted their node budget: each dropped the layout it was sizing.
    pub(super) unsolved: AtomicUsize,
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

    pub(super) fn rank_weight(&self, load: usize) -> f64 {
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
