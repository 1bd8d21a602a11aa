//! The requirements of failing rows: for each row that a layout's assignment fails, how many more
//! loads (the next in priority order) its deepest operated stage must open for it to hold — or, if
//! it shed too much, how many fewer — found by bisection over replays of that row alone, and
//! recorded as the MW its operated stages must open at its operating point. Used by the sizing
//! loop (`sizing.rs`).

use super::assign::Requirement;
use super::context::Context;
use super::evaluate::{RowEval, Verdict};
use super::layout::{self, Layout};
use rayon::prelude::*;

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
pub(super) fn requirements_of(
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
    let req = at_least_opened(ctx, op, upto, &moved(top));
    (Some(req), runs.get())
}

/// The requirement that stages `upto` open at least the MW that `assignment` puts in them at
/// point `op`.
fn at_least_opened(
    ctx: &Context,
    op: usize,
    upto: Vec<usize>,
    assignment: &[Option<usize>],
) -> Requirement {
    let mw: f64 = ctx
        .loads
        .iter()
        .zip(assignment)
        .filter(|(_, a)| a.is_some_and(|k| upto.contains(&k)))
        .map(|((i, _), _)| ctx.mw[op][*i])
        .sum();
    Requirement {
        op,
        stages: upto,
        mw,
        at_least: true,
    }
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
                let req = at_least_opened(ctx, op, upto, &trial);
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
