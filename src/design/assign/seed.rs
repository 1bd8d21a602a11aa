//! A starting incumbent for a large assignment model, found from its linear relaxation and a
//! model restricted to the loads the relaxation leaves undecided.

use super::model::build;
use super::{run, Problem, Scope};

/// A starting incumbent for the full model ([`Seed`]): the linear relaxation is solved; the loads whose stage it decides in whole
/// numbers are fixed there, and the rest (the loads it splits, their rank tiers and
/// `window` loads on each side) are decided by the model restricted to them. This is the
/// relaxation-induced neighbourhood of Danna, Rothberg & Le Pape (Mathematical Programming 102,
/// 2005), taken from the relaxation alone. The incumbent only seeds the full solve: the full model
/// still proves its answer within [`super::MIP_GAP`] of its own bound, so the seed changes how fast the
/// answer is found, not the guarantee. `None` when the relaxation or the restricted model has no
/// answer (the full solve then starts without a seed).
pub(super) fn starting_incumbent(p: &Problem, scope: &[Scope], window: usize) -> Option<Seed> {
    let relaxed = build(p, scope, true).ok()?;
    let lp = relaxed
        .model
        .as_inner()
        .solve()
        .ok()?
        .into_solution()
        .ok()?;
    let values: Vec<(microlp::Variable, f64)> = lp.iter().collect();
    if values.len() != relaxed.counter {
        return None;
    }
    let n = p.loads.len();
    let whole = |v: f64| (v - v.round()).abs() <= 1e-6;
    // The relaxation's stage of each free load when it decides it in whole numbers.
    let decided: Vec<Option<Option<usize>>> = (0..n)
        .map(|j| match &relaxed.y[j] {
            Some(yj) if yj.iter().all(|&v| whole(values[v].1)) => {
                Some((0..p.stages).find(|&k| values[yj[k]].1 > 0.5))
            }
            _ => None,
        })
        .collect();
    let mut open = vec![false; n];
    for j in (0..n).filter(|&j| scope[j] == Scope::Free && decided[j].is_none()) {
        let rank = p.loads[j].1;
        for (i, o) in open.iter_mut().enumerate() {
            if p.loads[i].1 == rank || i.abs_diff(j) <= window {
                *o = true;
            }
        }
    }
    let restricted: Vec<Scope> = (0..n)
        .map(|j| match (scope[j], decided[j]) {
            (Scope::Free, Some(stage)) if !open[j] => Scope::Fixed(stage),
            (s, _) => s,
        })
        .collect();
    let sub = build(p, &restricted, false).ok()?;
    let solved = run(&sub, p, &restricted, None).ok()?;
    let mut hint = Vec::new();
    for (j, yj) in relaxed.y.iter().enumerate() {
        if let Some(yj) = yj {
            for (k, &v) in yj.iter().enumerate() {
                let opened = solved.assignment[j].is_some_and(|a| a <= k);
                hint.push((values[v].0, if opened { 1.0 } else { 0.0 }));
            }
        }
    }
    Some(Seed {
        hint,
        assignment: solved.assignment,
        nodes: solved.nodes,
        fixed: (0..n)
            .filter(|&j| scope[j] == Scope::Free && restricted[j] != Scope::Free)
            .count(),
    })
}

/// A starting incumbent: the microlp values of the full model's binaries, the same as an
/// assignment, the nodes spent finding it, and how many free loads the relaxation fixed.
// The assignment and the count of fixed loads are read by the tests.
#[cfg_attr(not(test), allow(dead_code))]
pub(super) struct Seed {
    pub(super) hint: Vec<(microlp::Variable, f64)>,
    pub(super) assignment: Vec<Option<usize>>,
    pub(super) nodes: u64,
    pub(super) fixed: usize,
}
