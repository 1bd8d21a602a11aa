//! Why a row of the final table sheds more than its realisable bound, in words, found by asking
//! the simulator rather than by a fixed sentence.
//!
//! For a row above its bound, design takes the table one step cheaper for that row — its
//! highest-ranked shed load taken out of the stages the row operated, or, for a row that needs
//! no shedding, those stages taken out — and replays:
//!
//! 1. the row as studied, without margins: if it now fails, the row needs that load itself; the
//!    excess is **whole loads** when the step down would shed below the realisable bound (the
//!    table's loads jump over it), else **relay speed** (the table's stages act later than the
//!    fastest relay the bound assumes, on the grid of pickups and delays);
//! 2. the row with the disturbance margin only (the case grown by the required factor), then with
//!    the model-error margin only: if one fails, that **margin** is the cause;
//! 3. the rows whose runs go through the changed stages: if one of them fails, **one table serves
//!    every row** and that row needs the step (with the margins named when it holds as studied);
//!    if none fails but together they would shed more, in the objective, than this row saves, the
//!    step is the cheaper table for them, and the row that would shed most more is named;
//! 4. else the audit: the cheaper table breaks rank order in some event; or nothing forbids it, and
//!    the sentence says the search stopped above this row's least shed.
//!
//! A few replays per row above its bound (rows in parallel, collected in order: deterministic).

use super::context::Context;
use super::evaluate::{evaluate, RowEval, Verdict};
use crate::model::{Plant, Scheme};
use crate::report::figures::fixed;
use rayon::prelude::*;

/// Within this much of the realisable bound a row is at it: 0.05 MW or 2 %.
fn slack(realisable_mw: f64) -> f64 {
    0.05_f64.max(0.02 * realisable_mw)
}

/// Each row's reason, in matrix order.
pub(super) fn reasons(
    ctx: &Context,
    scheme: &Scheme,
    evals: &[RowEval],
    shed: &[f64],
    realisable: &[f64],
) -> Vec<String> {
    let c = &ctx.plant.criteria;
    // The plant with one required margin at a time.
    let mut disturbance_only = ctx.plant.clone();
    disturbance_only.criteria.required_model_error_pct = 0.0;
    let mut model_error_only = ctx.plant.clone();
    model_error_only.criteria.required_disturbance_factor = 1.0;
    let margins = Margins {
        disturbance_only: (c.required_disturbance_factor > 1.0).then_some(&disturbance_only),
        model_error_only: (c.required_model_error_pct > 0.0).then_some(&model_error_only),
        factor: c.required_disturbance_factor,
        pct: c.required_model_error_pct,
    };
    (0..ctx.rows.len())
        .into_par_iter()
        .map(|r| reason(ctx, &margins, scheme, evals, shed, realisable, r))
        .collect()
}

struct Margins<'a> {
    disturbance_only: Option<&'a Plant>,
    model_error_only: Option<&'a Plant>,
    factor: f64,
    pct: f64,
}

fn reason(
    ctx: &Context,
    margins: &Margins,
    scheme: &Scheme,
    evals: &[RowEval],
    shed: &[f64],
    realisable: &[f64],
    r: usize,
) -> String {
    let (ci, op) = ctx.rows[r];
    let case = &ctx.cases.cases[ci];
    if case.shedding_intended {
        return "shedding intended: its shed is not counted as cost".into();
    }
    if shed[r] <= realisable[r] + slack(realisable[r]) {
        return if shed[r] <= 1e-9 {
            "at its bound: sheds nothing".into()
        } else {
            "at its realisable bound".into()
        };
    }
    let excess = shed[r] - realisable[r];
    let needs_none = realisable[r] <= 1e-9;
    let head = if needs_none {
        format!("needs no shedding, yet sheds {} MW", fixed(excess, 2))
    } else {
        format!("{} MW above it", fixed(excess, 2))
    };
    let stage_names = |ks: &[usize]| {
        ks.iter()
            .map(|&k| scheme.stages[k].id.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let operated = &evals[r].operated;
    // The table one step cheaper for this row, and that step in words.
    let (cheaper, step, step_mw, changed) = if needs_none {
        let mut s = scheme.clone();
        for &k in operated {
            s.stages[k].sheds.clear();
        }
        (
            s,
            format!("without {}", stage_names(operated)),
            shed[r],
            operated.clone(),
        )
    } else {
        let Some(&(last, _)) = ctx
            .loads
            .iter()
            .rev()
            .find(|(i, _)| evals[r].shed_loads.contains(i))
        else {
            return head;
        };
        let mut s = scheme.clone();
        let mut from = Vec::new();
        for &k in operated {
            let before = s.stages[k].sheds.len();
            s.stages[k].sheds.retain(|&l| l != last);
            if s.stages[k].sheds.len() != before {
                from.push(k);
            }
        }
        if from.is_empty() {
            // No stage the row operated lists it: no step to take back.
            return head;
        }
        let mw = ctx.mw[op][last];
        (
            s,
            format!(
                "without {} ({} MW) in {}",
                ctx.plant.loads[last].id,
                fixed(mw, 2),
                stage_names(&from)
            ),
            mw,
            from,
        )
    };
    let replay = |plant: &Plant, row: usize, with_margins: bool| {
        let (ci, op) = ctx.rows[row];
        evaluate(
            plant,
            &ctx.cases.cases[ci],
            op,
            &cheaper,
            &ctx.sim,
            with_margins,
        )
    };
    let holds = |plant: &Plant, row: usize, with_margins: bool| {
        replay(plant, row, with_margins).verdict == Verdict::Holds
    };
    // What a row's shed costs in the objective: case weight × rank weight × MW.
    let cost = |row: usize, loads: &[usize]| {
        let (ci, op) = ctx.rows[row];
        ctx.cases.cases[ci].cost_weight()
            * loads
                .iter()
                .map(|&l| ctx.plant.design.rank_weight(ctx.plant.loads[l].rank) * ctx.mw[op][l])
                .sum::<f64>()
    };
    // 1. The row itself, as studied.
    if !holds(ctx.plant, r, false) {
        return if needs_none {
            format!("{head}: {step} it fails as studied, although the bound (a lower end) needs no relief")
        } else if shed[r] - step_mw < realisable[r] - slack(realisable[r]) {
            format!(
                "{head}: whole loads — {step} it would shed {} MW, below its realisable bound, and fails",
                fixed(shed[r] - step_mw, 2)
            )
        } else {
            format!(
                "{head}: relay speed — {step} it fails as studied; the table's pickups and delays, on the design grid, act later than the fastest relay the bound assumes"
            )
        };
    }
    // 2. The row with each required margin.
    if let Some(p) = margins.disturbance_only {
        if !holds(p, r, true) {
            return format!(
                "{head}: the {:.2}× disturbance margin — {step} it holds as studied but not {:.2}× larger",
                margins.factor, margins.factor
            );
        }
    }
    if let Some(p) = margins.model_error_only {
        if !holds(p, r, true) {
            return format!(
                "{head}: the {:.0} % model-error margin — {step} it holds as studied but not with the model {:.0} % weaker",
                margins.pct, margins.pct
            );
        }
    }
    // 3. The rows whose runs went through the changed stages, the one with the largest bound
    // first: one that fails without the step needs it; else the step is worth what the others
    // would shed more without it.
    let mut sharing: Vec<usize> = (0..ctx.rows.len())
        .filter(|&q| q != r && evals[q].touched.iter().any(|k| changed.contains(k)))
        .collect();
    sharing.sort_by(|&a, &b| realisable[b].total_cmp(&realisable[a]).then(a.cmp(&b)));
    let row_name = |q: usize| {
        let (qc, qop) = ctx.rows[q];
        format!(
            "{} at {}",
            ctx.cases.cases[qc].id, ctx.plant.operating_points[qop].id
        )
    };
    let mut saved =
        cost(r, &evals[r].shed_loads) - cost(r, &replay(ctx.plant, r, false).shed_loads);
    let mut most: Option<(usize, f64)> = None;
    for q in sharing {
        let e = replay(ctx.plant, q, ctx.margins);
        if e.verdict != Verdict::Holds {
            let larger = if ctx.margins && holds(ctx.plant, q, false) {
                " with the required margins"
            } else {
                ""
            };
            return format!(
                "{head}: one table serves every row — {step}, {} fails{larger}",
                row_name(q)
            );
        }
        let more = cost(q, &e.shed_loads) - cost(q, &evals[q].shed_loads);
        saved -= more;
        if more > 1e-9 && most.is_none_or(|(_, m)| more > m) {
            most = Some((q, more));
        }
    }
    if let (true, Some((q, _))) = (saved < -1e-9, most) {
        let (_, qop) = ctx.rows[q];
        let now: f64 = evals[q].shed_loads.iter().map(|&l| ctx.mw[qop][l]).sum();
        let then: f64 = replay(ctx.plant, q, false)
            .shed_loads
            .iter()
            .map(|&l| ctx.mw[qop][l])
            .sum();
        return format!(
            "{head}: one table serves every row — {step}, {} would shed {} MW instead of {} MW, which costs more than this row saves",
            row_name(q),
            fixed(then, 2),
            fixed(now, 2)
        );
    }
    // 4. Nothing fails: the audit, or the search.
    if !ctx.rules_clean(&cheaper) {
        return format!(
            "{head}: rank order — {step} every row holds, but the table breaks rank order in some event"
        );
    }
    format!("{head}: {step} every row still holds; the search stopped above this row's least shed")
}
