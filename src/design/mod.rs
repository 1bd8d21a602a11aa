//! Design: propose a shedding table — stage pickups and delays, an armed or df/dt-supervised
//! stage where it helps, and the loads of each stage — that holds every case at every operating
//! point it applies to, with the least load shed, weighted by rank and by case.
//!
//! The method (docs/design.md): a search over stage settings on the plant's grid ([`layout`]);
//! for each layout, a loop between the simulator and a mixed-integer assignment model that
//! sizes the stages ([`sizing`], [`assign`]); a lower bound from an ideal instant shed
//! ([`bound`]); and a plain equal-step table as the honest baseline ([`baseline`]).
//!
//! Every step is deterministic: rows are replayed in parallel but collected in matrix order, and
//! layouts are tried in a fixed order, so the proposal does not depend on the thread count.

pub mod assign;
pub mod backstop;
pub mod baseline;
pub mod bound;
pub mod evaluate;
pub mod layout;
pub mod sizing;

use crate::model::{Action, BreakerRef, CaseSet, Plant, Scheme, StageTrigger};
use backstop::Backstop;
use bound::{Bound, Shortfall};
use evaluate as sizing_eval;
use evaluate::{design_sim_config, Verdict};
use layout::Layout;
use rayon::prelude::*;
use serde::Serialize;
use sizing::{Context, Sized};

/// Layout counts up to which every layout on the grid is sized (an exhaustive search over
/// settings); above it the search is the heuristic of docs/design.md.
pub const EXHAUSTIVE_LAYOUTS: usize = 64;

/// Local-search passes from each start, and how many of the best starting layouts to refine.
const LOCAL_PASSES: usize = 6;
const LOCAL_STARTS: usize = 3;
/// Tables trimmed at the end of a heuristic search.
const FINALISTS: usize = 4;

/// The design's result.
#[derive(Debug, Clone, Serialize)]
pub struct Proposal {
    #[serde(skip)]
    pub scheme: Scheme,
    /// Objective: MW at nominal frequency, weighted by rank and case weight, over all rows.
    pub objective: f64,
    pub rows: Vec<RowShed>,
    /// Per operating point, the sheddable load against the worst studied shed.
    pub headroom: Vec<Headroom>,
    /// The plain table's objective and total shed, when one holds every row.
    pub baseline: Option<BaselineSummary>,
    /// How the proposal relates to the `--from` table.
    pub from: Option<FromOutcome>,
    /// With `--from` when the existing settings were kept: what a fresh design would cost.
    pub fresh: Option<BaselineSummary>,
    /// Where the proposal came from.
    pub source: Source,
    /// What became of the loads no studied case needs.
    pub backstop: Backstop,
    /// Sheddable loads (ids) that no stage of the proposal opens.
    pub unassigned: Vec<String>,
    pub layouts_sized: usize,
    pub replays: usize,
}

/// Per operating point: how much sheddable load the table holds against the most any studied
/// case sheds there — how much larger a disturbance it can meet before it runs out of load.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Headroom {
    pub operating_point: String,
    /// The loads of the table's stages switched on at this point, MW at nominal frequency.
    pub sheddable_mw: f64,
    /// The most any studied case sheds at this point (`None`: no case applies there).
    pub worst_shed_mw: Option<f64>,
}

/// One matrix row: what the proposal sheds, the lower bound, and what the baseline sheds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RowShed {
    pub case: String,
    pub operating_point: String,
    pub weight: f64,
    /// MW opened, at nominal frequency.
    pub shed_mw: f64,
    /// The ideal-instant bound.
    pub bound_mw: f64,
    /// The realisable bound: relief no sooner than the fastest allowed relay, in whole loads in
    /// rank order (a lower end; see `bound::realisable`).
    pub realisable_mw: f64,
    /// In words: whether the row is at its realisable bound, and if not, why.
    pub why: String,
    pub baseline_mw: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BaselineSummary {
    pub objective: f64,
    pub stages: usize,
    #[serde(skip)]
    pub scheme: Scheme,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Source {
    /// The settings search found it.
    Search,
    /// The plain table was better than anything the search found, and is proposed as it is.
    Baseline,
    /// The existing table, kept or with loads reassigned.
    Existing,
    /// No case needs shedding: the backstop stage alone.
    BackstopOnly,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum FromOutcome {
    /// The existing table holds every row and is kept unchanged.
    Unchanged,
    /// Settings kept; some loads moved between stages.
    Reassigned,
    /// The existing settings could not be kept.
    Redesigned,
}

/// Why nothing was proposed.
#[derive(Debug, Clone, PartialEq)]
pub enum DesignError {
    /// Rows that no table can hold, even shedding every sheddable load at once.
    Unholdable(Vec<Shortfall>),
    /// No layout within the limits could be sized to hold every row.
    NoLayout(String),
    /// No case needs shedding and the plant's design block turns the backstop off: there is no
    /// table to propose.
    NothingNeeded,
}

/// What design reports as it goes.
pub type Progress<'a> = &'a (dyn Fn(&str) + Sync);

/// Propose a table for `plant` and `cases`, starting from `from` when given.
pub fn design(
    plant: &Plant,
    cases: &CaseSet,
    from: Option<&Scheme>,
    progress: Progress,
) -> Result<Proposal, DesignError> {
    layout::check_grid(&plant.design).map_err(DesignError::NoLayout)?;
    let sim = design_sim_config(plant);
    let measurement = from.map(|s| s.measurement).unwrap_or_default();
    // A table designed from an existing one keeps its name.
    let name = from.map_or("proposed by nadir design", |s| s.name.as_str());
    let ctx = Context::new(plant, cases, sim, measurement, name);

    progress("lower bounds");
    let bounds = bounds(&ctx)?;

    if from.is_none() && backstop::nothing_needed(&ctx) {
        // No case needs shedding: the backstop alone, labelled as such; never a token stage.
        if !plant.design.backstop {
            return Err(DesignError::NothingNeeded);
        }
        progress("backstop table");
        if let Some(best) = backstop::alone(&ctx) {
            return Ok(finish(
                &ctx,
                &bounds,
                None,
                best,
                None,
                None,
                Source::BackstopOnly,
                Backstop::NewStage,
                0,
                0,
            ));
        }
    }

    progress("plain baseline table");
    let mut baseline = baseline::plain(&ctx);
    let mut replays = baseline.as_ref().map_or(0, |b| b.runs);
    // The baseline gets the same backstop, so that the two are compared like for like.
    let baseline_backstop = baseline.as_mut().map(|b| backstop::add(&ctx, b));

    let mut chosen: Option<(Sized, Source)> = None;
    let mut from_outcome = None;
    if let Some(existing) = from {
        progress("existing table");
        let (result, outcome, n) = keep_existing(&ctx, existing);
        replays += n;
        from_outcome = Some(outcome);
        if let Some(s) = result {
            chosen = Some((s, Source::Existing));
        }
    }
    let mut backstop = Backstop::NotNeeded;
    // With `--from`, a fresh design too, so that the cost of keeping the settings is known.
    let mut fresh: Option<Sized> = None;
    let layouts_sized;
    {
        progress(if chosen.is_some() {
            "fresh design, for comparison"
        } else {
            "settings search"
        });
        let (best, sized, n) = search(&ctx, progress);
        layouts_sized = sized;
        replays += n;
        let mut fresh_backstop = Backstop::NotNeeded;
        let found = best.map(|mut b| {
            drop_idle_last_stages(&ctx, &mut b);
            fresh_backstop = backstop::add(&ctx, &mut b);
            b
        });
        if chosen.is_none() {
            chosen = found.map(|b| (b, Source::Search));
            backstop = fresh_backstop;
        } else {
            fresh = found;
        }
    }
    if let Some(b) = &baseline {
        let better = match &chosen {
            Some((c, _)) => b.objective < c.objective - 1e-9 && from.is_none(),
            None => true,
        };
        if better {
            chosen = Some((b.clone(), Source::Baseline));
            backstop = baseline_backstop.unwrap_or(Backstop::NotNeeded);
        }
    }
    let Some((best, source)) = chosen else {
        return Err(DesignError::NoLayout(why_no_layout(&ctx)));
    };
    let exact = (from_outcome == Some(FromOutcome::Unchanged) && source == Source::Existing)
        .then(|| from.cloned())
        .flatten();
    let mut proposal = finish(
        &ctx,
        &bounds,
        exact,
        best,
        baseline,
        from_outcome,
        source,
        backstop,
        layouts_sized,
        replays,
    );
    proposal.fresh = fresh.map(|f| BaselineSummary {
        objective: f.objective,
        stages: f.layout.stages.len(),
        scheme: ctx.scheme(&f.layout, &f.assignment),
    });
    Ok(proposal)
}

/// The proposal of a finished table.
#[allow(clippy::too_many_arguments)]
fn finish(
    ctx: &Context,
    bounds: &[Bound],
    exact: Option<Scheme>,
    best: Sized,
    baseline: Option<Sized>,
    from: Option<FromOutcome>,
    source: Source,
    backstop: Backstop,
    layouts_sized: usize,
    replays: usize,
) -> Proposal {
    let (plant, cases) = (ctx.plant, ctx.cases);
    // A kept table is the existing one as written; else the table of the layout.
    let scheme = exact.unwrap_or_else(|| ctx.scheme(&best.layout, &best.assignment));
    let realisable: Vec<f64> = ctx
        .rows
        .par_iter()
        .zip(bounds)
        .map(|(&(ci, op), b)| {
            bound::realisable(
                plant,
                &cases.cases[ci],
                op,
                &ctx.sim,
                ctx.measurement.frequency_lag_s,
                b.mw,
            )
        })
        .collect();
    let shed: Vec<f64> = ctx
        .rows
        .iter()
        .enumerate()
        .map(|(r, &(_, op))| shed_mw(ctx, op, &best.evals[r].shed_loads))
        .collect();
    let rows = ctx
        .rows
        .iter()
        .enumerate()
        .map(|(r, &(ci, op))| RowShed {
            case: cases.cases[ci].id.clone(),
            operating_point: plant.operating_points[op].id.clone(),
            weight: cases.cases[ci].weight,
            shed_mw: shed[r],
            bound_mw: bounds[r].mw,
            realisable_mw: realisable[r],
            why: why_not_at_bound(ctx, &scheme, &best.evals, &shed, &realisable, r),
            baseline_mw: baseline
                .as_ref()
                .map(|b| shed_mw(ctx, op, &b.evals[r].shed_loads)),
        })
        .collect();
    let unassigned = ctx
        .loads
        .iter()
        .zip(&best.assignment)
        .filter(|(_, a)| a.is_none())
        .map(|(&(i, _), _)| plant.loads[i].id.clone())
        .collect();
    let headroom = plant
        .operating_points
        .iter()
        .enumerate()
        .map(|(op, point)| {
            let sheddable: f64 = ctx
                .loads
                .iter()
                .zip(&best.assignment)
                .filter(|(_, a)| a.is_some())
                .map(|(&(i, _), _)| ctx.mw[op][i])
                .sum();
            let worst = ctx
                .rows
                .iter()
                .zip(&best.evals)
                .filter(|((_, o), _)| *o == op)
                .map(|(_, e)| shed_mw(ctx, op, &e.shed_loads))
                .fold(None, |m: Option<f64>, v| Some(m.map_or(v, |m| m.max(v))));
            Headroom {
                operating_point: point.id.clone(),
                sheddable_mw: sheddable,
                worst_shed_mw: worst,
            }
        })
        .collect();
    Proposal {
        headroom,
        scheme,
        objective: best.objective,
        rows,
        baseline: baseline.map(|b| BaselineSummary {
            objective: b.objective,
            stages: b.layout.stages.len(),
            scheme: ctx.scheme(&b.layout, &b.assignment),
        }),
        from,
        fresh: None,
        source,
        backstop,
        unassigned,
        layouts_sized,
        replays: replays + best.runs,
    }
}

/// Whether row `r` sheds no more than its realisable bound (within 0.05 MW or 2 %), and if it
/// sheds more, why, in words: the stages it operates also serve rows that need them, or (when
/// no other row shares them) the grid of pickups and delays acts later than the fastest relay.
fn why_not_at_bound(
    ctx: &Context,
    scheme: &Scheme,
    evals: &[sizing_eval::RowEval],
    shed: &[f64],
    realisable: &[f64],
    r: usize,
) -> String {
    let slack = 0.05_f64.max(0.02 * realisable[r]);
    if shed[r] <= realisable[r] + slack {
        return if shed[r] <= 1e-9 {
            "at its bound: sheds nothing".into()
        } else {
            "at its realisable bound".into()
        };
    }
    let name = |k: usize| scheme.stages[k].id.clone();
    let row_name = |q: usize| {
        let (ci, op) = ctx.rows[q];
        format!(
            "{} at {}",
            ctx.cases.cases[ci].id, ctx.plant.operating_points[op].id
        )
    };
    // The row that most needs each stage this row operates: another row operating it whose
    // realisable bound is the largest.
    let mut reasons: Vec<String> = Vec::new();
    for &k in &evals[r].operated {
        let needer = (0..ctx.rows.len())
            .filter(|&q| q != r && evals[q].operated.contains(&k) && realisable[q] > 1e-9)
            .max_by(|&a, &b| realisable[a].total_cmp(&realisable[b]));
        if let Some(q) = needer {
            reasons.push(format!("{} is also needed by {}", name(k), row_name(q)));
        }
    }
    let excess = shed[r] - realisable[r];
    if realisable[r] <= 1e-9 {
        if reasons.is_empty() {
            format!("needs no shedding, yet sheds {excess:.2} MW: its stages act on a dip the table cannot tell from one that needs them")
        } else {
            format!(
                "needs no shedding, yet sheds {excess:.2} MW: one table serves every row, and {}",
                reasons.join("; ")
            )
        }
    } else if reasons.is_empty() {
        format!("{excess:.2} MW above it: the stages' pickups and delays are on the design grid and act later than the fastest relay the bound assumes")
    } else {
        format!(
            "{excess:.2} MW above it: one table serves every row, and {}",
            reasons.join("; ")
        )
    }
}

/// Remove frequency stages at the bottom that no row operates (above the limits' minimum count),
/// leaving their loads unshed. Exact: a stage that never trips changes no run, and the loads of
/// the last stage are the highest-ranked shed, so rank order holds.
fn drop_idle_last_stages(ctx: &Context, best: &mut Sized) {
    loop {
        let Some(k) = best.layout.stages.len().checked_sub(1) else {
            return;
        };
        let idle = best.evals.iter().all(|e| !e.operated.contains(&k));
        let frequency = matches!(
            best.layout.stages[k].trigger,
            StageTrigger::Frequency { .. }
        );
        if !idle
            || !frequency
            || best.layout.frequency_stages() <= ctx.plant.design.min_stages.max(1)
        {
            return;
        }
        best.layout.stages.pop();
        best.layout.ids.truncate(best.layout.stages.len());
        for a in best.assignment.iter_mut() {
            if *a == Some(k) {
                *a = None;
            }
        }
    }
}

/// Why no layout holds: the rows that still fail when every sheddable load is opened as early as
/// the limits allow (by an armed stage where one may be armed, else at the highest pickup with the
/// shortest delay), with what fails.
fn why_no_layout(ctx: &Context) -> String {
    let limits = &ctx.plant.design;
    let armed: Vec<(BreakerRef, f64)> = armable(ctx)
        .into_iter()
        .map(|b| (b, limits.min_delay_s))
        .collect();
    let layout = layout::build(
        limits,
        &armed,
        &[(limits.highest_pickup_hz, limits.min_delay_s, None)],
    );
    let everything: Vec<Option<usize>> = vec![Some(0); ctx.loads.len()];
    let scheme = ctx.scheme(&layout, &everything);
    let config = crate::verify::matrix::VerifyConfig {
        sim: ctx.sim,
        margins: false,
    };
    let failing: Vec<String> = ctx
        .rows
        .par_iter()
        .map(|&(ci, op)| {
            let row = crate::verify::matrix::verify_one(
                ctx.plant,
                &ctx.cases.cases[ci],
                ci,
                op,
                &scheme,
                &config,
            );
            (!row.pass).then(|| {
                let what = row
                    .failures
                    .first()
                    .map(|f| f.message.clone())
                    .unwrap_or_default();
                format!("{} at {} ({what})", row.case, row.operating_point)
            })
        })
        .collect::<Vec<_>>()
        .into_iter()
        .flatten()
        .collect();
    let mut out = String::from(
        "no layout within the design limits holds every case; the ideal instant shed can, so the stages act too late or in the wrong amount",
    );
    if !failing.is_empty() {
        out.push_str(&format!(
            ". Opening every sheddable load as early as the limits allow still fails: {}",
            failing.join("; ")
        ));
    }
    out.push_str(
        ". Widen the pickup band, allow more stages or an armed stage, or shorten the delays",
    );
    out
}

/// The lower bound of every row, or every row that no table can hold.
pub fn bounds(ctx: &Context) -> Result<Vec<Bound>, DesignError> {
    let found: Vec<Result<Bound, Shortfall>> = ctx
        .rows
        .par_iter()
        .map(|&(ci, op)| bound::bound(ctx.plant, &ctx.cases.cases[ci], op, &ctx.sim))
        .collect();
    let short: Vec<Shortfall> = found
        .iter()
        .filter_map(|r| r.as_ref().err().cloned())
        .collect();
    if !short.is_empty() {
        return Err(DesignError::Unholdable(short));
    }
    Ok(found.into_iter().filter_map(Result::ok).collect())
}

fn shed_mw(ctx: &Context, op: usize, loads: &[usize]) -> f64 {
    loads.iter().map(|&i| ctx.mw[op][i]).sum()
}

/// Keep the existing table if it holds; else keep its settings and move as few loads as
/// possible. Returns the result, how it relates to the table, and the replays used.
fn keep_existing(ctx: &Context, existing: &Scheme) -> (Option<Sized>, FromOutcome, usize) {
    let (layout, order) = layout::of_scheme(ctx.plant, existing);
    let position = |load: usize| {
        existing
            .stages
            .iter()
            .position(|s| s.sheds.contains(&load))
            .and_then(|k| order.iter().position(|&o| o == k))
    };
    let start: Vec<Option<usize>> = ctx.loads.iter().map(|&(i, _)| position(i)).collect();
    let clean = existing.stages.iter().all(|s| {
        s.sheds
            .iter()
            .all(|&l| ctx.loads.iter().any(|&(i, _)| i == l))
    });
    if clean {
        // The existing table itself, as written (its stages' order and load lists).
        let evals = ctx.evaluate_all(existing);
        let runs = evals.len();
        let audit_ok = ctx.rules_clean(existing);
        if audit_ok && evals.iter().all(|e| e.verdict == Verdict::Holds) {
            let objective = ctx.objective(&evals);
            let s = Sized {
                layout,
                assignment: start,
                evals,
                objective,
                runs: 0,
            };
            return (Some(s), FromOutcome::Unchanged, runs);
        }
    }
    // Any change must cost more than any amount of shedding, so the model changes as few
    // assignments as it can and only then sheds least.
    let everything: f64 = ctx
        .rows
        .iter()
        .map(|&(ci, op)| {
            ctx.cases.cases[ci].weight
                * ctx
                    .loads
                    .iter()
                    .map(|&(i, r)| ctx.plant.design.rank_weight(r) * ctx.mw[op][i])
                    .sum::<f64>()
        })
        .sum();
    match sizing::size(ctx, &layout, Some(&start), everything + 1.0) {
        Ok(s) => {
            let runs = s.runs;
            (Some(s), FromOutcome::Reassigned, runs)
        }
        Err(_) => (None, FromOutcome::Redesigned, 0),
    }
}

/// Size the starting layouts, then improve the best few by moving one setting at a time. Returns
/// the best sized layout, the number of layouts sized and the replays used.
fn search(ctx: &Context, progress: Progress) -> (Option<Sized>, usize, usize) {
    let (start, exhaustive) = starting_layouts(ctx);
    let total = start.len();
    // Different starts reach the same neighbours: size each layout once.
    let mut known: std::collections::HashMap<String, Option<Sized>> = Default::default();
    let key = |l: &Layout| format!("{:?}", l.stages);
    progress(&format!("sizing {total} starting layouts"));
    let sized_start: Vec<Option<Sized>> = start
        .par_iter()
        .map(|layout| sizing::size(ctx, layout, None, 0.0).ok())
        .collect();
    let mut sized = total;
    let mut replays: usize = sized_start.iter().flatten().map(|s| s.runs).sum();
    for (l, s) in start.iter().zip(&sized_start) {
        known.insert(key(l), s.clone());
    }
    let mut ranked: Vec<Sized> = sized_start.into_iter().flatten().collect();
    // Stable: equal objectives keep the fixed layout order.
    ranked.sort_by(|a, b| a.objective.total_cmp(&b.objective));
    if exhaustive {
        let (best, extra) = trim_all(ctx, ranked);
        return (best, sized, replays + extra);
    }
    for (n, seed) in ranked.into_iter().take(LOCAL_STARTS).enumerate() {
        let mut current = seed;
        for pass in 0..LOCAL_PASSES {
            let moves: Vec<Layout> = neighbours(ctx, &current.layout)
                .into_iter()
                .filter(|l| !known.contains_key(&key(l)))
                .collect();
            progress(&format!(
                "refining start {}, pass {} ({} moves)",
                n + 1,
                pass + 1,
                moves.len()
            ));
            sized += moves.len();
            let tried: Vec<Option<Sized>> = moves
                .par_iter()
                .map(|layout| sizing::size(ctx, layout, None, 0.0).ok())
                .collect();
            replays += tried.iter().flatten().map(|s| s.runs).sum::<usize>();
            for (l, s) in moves.iter().zip(&tried) {
                known.insert(key(l), s.clone());
            }
            let Some(better) = tried
                .into_iter()
                .flatten()
                .filter(|s| s.objective < current.objective - 1e-9)
                .min_by(|a, b| a.objective.total_cmp(&b.objective))
            else {
                break;
            };
            current = better;
        }
    }
    // The descent that trims excess shed is the costly part of sizing: give it to the best few
    // layouts found, not to every layout tried.
    let mut finalists: Vec<Sized> = known.into_values().flatten().collect();
    finalists.sort_by(|a, b| {
        a.objective
            .total_cmp(&b.objective)
            .then_with(|| format!("{:?}", a.layout.stages).cmp(&format!("{:?}", b.layout.stages)))
    });
    finalists.truncate(FINALISTS);
    progress(&format!("trimming the best {} tables", finalists.len()));
    let (best, extra) = trim_all(ctx, finalists);
    (best, sized, replays + extra)
}

/// Order of preference among finished tables: less objective (beyond rounding), then fewer
/// stages — a stage that no case operates costs nothing in the objective but is one more setting
/// to maintain. (The search itself ranks by objective alone: preferring fewer stages there steers
/// it into worse tables, measured on the benchmark.)
fn better_first(a: &Sized, b: &Sized) -> std::cmp::Ordering {
    if (a.objective - b.objective).abs() > 1e-9 {
        a.objective.total_cmp(&b.objective)
    } else {
        a.layout.stages.len().cmp(&b.layout.stages.len())
    }
}

/// Trim every table (in parallel) and keep the one that sheds least, the first on a tie; with
/// the replays the trimming added.
fn trim_all(ctx: &Context, tables: Vec<Sized>) -> (Option<Sized>, usize) {
    let before: usize = tables.iter().map(|s| s.runs).sum();
    let trimmed: Vec<Sized> = tables
        .into_par_iter()
        .map(|s| sizing::trim(ctx, s))
        .collect();
    let after: usize = trimmed.iter().map(|s| s.runs).sum();
    let best = trimmed.into_iter().reduce(|a, b| {
        if better_first(&b, &a) == std::cmp::Ordering::Less {
            b
        } else {
            a
        }
    });
    (best, after - before)
}

/// Breakers that may arm a stage and that some case opens.
fn armable(ctx: &Context) -> Vec<BreakerRef> {
    ctx.plant
        .design
        .armed_by
        .iter()
        .copied()
        .filter(|b| {
            ctx.cases.cases.iter().any(|c| {
                c.events
                    .iter()
                    .any(|e| matches!(e.action, Action::Open(x) if x == *b))
            })
        })
        .collect()
}

/// Every layout on the grid when there are few (and `true`), else a spread of starting points.
pub fn starting_layouts(ctx: &Context) -> (Vec<Layout>, bool) {
    let limits = &ctx.plant.design;
    let pickups = layout::pickup_grid(limits);
    let delays = layout::delay_grid(limits);
    let gap = layout::spacing_steps(ctx.plant);
    // Armed stages, one per breaker: none, each breaker alone, and every breaker together (in
    // an exhaustive search, every subset).
    let breakers = armable(ctx);
    let subsets = |n: usize| -> Vec<Vec<BreakerRef>> {
        (0u32..(1 << n))
            .map(|mask| {
                (0..n)
                    .filter(|&j| mask & (1 << j) != 0)
                    .map(|j| breakers[j])
                    .collect()
            })
            .collect()
    };
    let mut few: Vec<Vec<BreakerRef>> = vec![Vec::new()];
    few.extend(breakers.iter().map(|&b| vec![b]));
    if breakers.len() > 1 {
        few.push(breakers.clone());
    }
    let rocof = limits.rocof_supervision_hz_per_s;
    // df/dt supervision on any subset of the frequency stages (by mask), or on none.
    let rocof_masks = |k: usize, all: bool| -> Vec<u32> {
        match rocof {
            None => vec![0],
            Some(_) if all => (0u32..(1 << k.min(12))).collect(),
            Some(_) => vec![0, 1],
        }
    };
    let max_k = limits.max_stages.min(ctx.loads.len());
    let min_k = limits.min_stages.max(1).min(max_k);

    // Exhaustive: every spaced choice of pickups, every delay and df/dt choice for each.
    let mut all: Vec<Vec<(f64, f64, Option<f64>)>> = Vec::new();
    let mut count = 0usize;
    for k in min_k..=max_k {
        count = count.saturating_add(
            spaced_choices(pickups.len(), k, gap)
                .saturating_mul(delays.len().saturating_pow(k as u32))
                .saturating_mul(rocof_masks(k, true).len()),
        );
    }
    let exhaustive =
        breakers.len() < 16 && count.saturating_mul(1 << breakers.len()) <= EXHAUSTIVE_LAYOUTS;
    let with_rocof = |j: usize, mask: u32| rocof.filter(|_| mask & (1 << j) != 0);
    if exhaustive {
        for k in min_k..=max_k {
            for choice in choose_spaced(pickups.len(), k, gap) {
                for ds in delay_combinations(delays.len(), k) {
                    for mask in rocof_masks(k, true) {
                        all.push(
                            choice
                                .iter()
                                .zip(&ds)
                                .enumerate()
                                .map(|(j, (&p, &d))| (pickups[p], delays[d], with_rocof(j, mask)))
                                .collect(),
                        );
                    }
                }
            }
        }
    } else {
        for k in min_k..=max_k {
            let mut choices: Vec<Vec<usize>> = Vec::new();
            // Packed at the top of the band, and spread over it.
            let packed: Vec<usize> = (0..k).map(|j| j * gap).collect();
            if packed.last().is_some_and(|&l| l < pickups.len()) {
                choices.push(packed);
            }
            if k > 1 {
                let step = ((pickups.len() - 1) / (k - 1)).max(gap);
                let spread: Vec<usize> = (0..k).map(|j| j * step).collect();
                if spread.last().is_some_and(|&l| l < pickups.len()) && !choices.contains(&spread) {
                    choices.push(spread);
                }
            }
            for choice in choices {
                for mask in rocof_masks(k, false) {
                    all.push(
                        choice
                            .iter()
                            .enumerate()
                            .map(|(j, &p)| (pickups[p], delays[0], with_rocof(j, mask)))
                            .collect(),
                    );
                }
            }
        }
    }
    // Armed options of the heuristic: none, each breaker alone, every breaker together.
    let armed_options = if exhaustive {
        subsets(breakers.len())
    } else {
        few
    };
    let mut out = Vec::new();
    for armed in &armed_options {
        let armed: Vec<(BreakerRef, f64)> =
            armed.iter().map(|&b| (b, limits.min_delay_s)).collect();
        for f in &all {
            out.push(layout::build(limits, &armed, f));
        }
    }
    (out, exhaustive)
}

/// Layouts one step away from `layout`: one stage's pickup one grid step either way or its delay
/// at any other grid value,
/// every frequency stage's pickup one step either way, df/dt supervision on or off for one stage
/// (when the limits offer it), one frequency stage fewer or one more at the bottom, and the armed
/// stage removed or added — each kept within the limits and the spacing.
fn neighbours(ctx: &Context, layout: &Layout) -> Vec<Layout> {
    let limits = &ctx.plant.design;
    let pickups = layout::pickup_grid(limits);
    let delays = layout::delay_grid(limits);
    let gap = layout::spacing_steps(ctx.plant);
    let index = |grid: &[f64], v: f64| grid.iter().position(|g| (g - v).abs() < 1e-6);
    let set_pickup = |l: &mut Layout, k: usize, p: f64| {
        if let StageTrigger::Frequency {
            min_rocof_hz_per_s, ..
        } = l.stages[k].trigger
        {
            l.stages[k].trigger = StageTrigger::Frequency {
                pickup_hz: p,
                min_rocof_hz_per_s,
            };
        }
    };
    let mut out = Vec::new();
    let frequency: Vec<usize> = (0..layout.stages.len())
        .filter(|&k| matches!(layout.stages[k].trigger, StageTrigger::Frequency { .. }))
        .collect();
    for k in 0..layout.stages.len() {
        let st = layout.stages[k];
        if let StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } = st.trigger
        {
            if let Some(p) = index(&pickups, pickup_hz) {
                for q in [p.wrapping_sub(1), p + 1] {
                    if q < pickups.len() {
                        let mut l = layout.clone();
                        set_pickup(&mut l, k, pickups[q]);
                        out.push(l);
                    }
                }
            }
            if let Some(r) = limits.rocof_supervision_hz_per_s {
                let mut l = layout.clone();
                l.stages[k].trigger = StageTrigger::Frequency {
                    pickup_hz,
                    min_rocof_hz_per_s: if min_rocof_hz_per_s.is_some() {
                        None
                    } else {
                        Some(r)
                    },
                };
                out.push(l);
            }
            // Where the stage measures, when the plant has more than one section.
            if ctx.plant.sections.len() > 1 {
                for sec in 0..ctx.plant.sections.len() {
                    if st.section != Some(sec) {
                        let mut l = layout.clone();
                        l.stages[k].section = Some(sec);
                        out.push(l);
                    }
                }
            }
        }
        // Every other delay: a long delay can ride through a slow dip that a short one cannot,
        // which no single step shows.
        for &d in &delays {
            if (d - st.delay_s).abs() > 1e-9 {
                let mut l = layout.clone();
                l.stages[k].delay_s = d;
                out.push(l);
            }
        }
    }
    for up in [true, false] {
        let mut l = layout.clone();
        let mut ok = true;
        for &k in &frequency {
            if let StageTrigger::Frequency { pickup_hz, .. } = l.stages[k].trigger {
                match index(&pickups, pickup_hz) {
                    Some(p) if up && p > 0 => set_pickup(&mut l, k, pickups[p - 1]),
                    Some(p) if !up && p + 1 < pickups.len() => {
                        set_pickup(&mut l, k, pickups[p + 1])
                    }
                    _ => ok = false,
                }
            }
        }
        if ok {
            out.push(l);
        }
    }
    if frequency.len() > limits.min_stages.max(1) {
        for &k in &frequency {
            let mut l = layout.clone();
            l.stages.remove(k);
            out.push(l);
        }
    }
    if frequency.len() < limits.max_stages {
        if let Some(&last) = frequency.last() {
            if let StageTrigger::Frequency { pickup_hz, .. } = layout.stages[last].trigger {
                if let Some(p) = index(&pickups, pickup_hz) {
                    if p + gap < pickups.len() {
                        let mut l = layout.clone();
                        l.stages.push(layout::Setting {
                            trigger: StageTrigger::Frequency {
                                pickup_hz: pickups[p + gap],
                                min_rocof_hz_per_s: None,
                            },
                            delay_s: delays[0],
                            breaker_s: limits.breaker_s,
                            section: None,
                        });
                        out.push(l);
                    }
                }
            }
        }
    }
    // Each breaker that may arm a stage: its stage removed when there is one, added when there
    // is none (one stage per breaker; armed stages stay in the fixed order of `armable`).
    let breakers = armable(ctx);
    for &b in &breakers {
        let mut l = layout.clone();
        if let Some(k) = l
            .stages
            .iter()
            .position(|s| s.trigger == StageTrigger::Breaker(b))
        {
            l.stages.remove(k);
        } else {
            let at = l
                .stages
                .iter()
                .take_while(|s| match s.trigger {
                    StageTrigger::Breaker(o) => {
                        breakers.iter().position(|&x| x == o)
                            < breakers.iter().position(|&x| x == b)
                    }
                    StageTrigger::Frequency { .. } => false,
                })
                .count();
            l.stages.insert(
                at,
                layout::Setting {
                    trigger: StageTrigger::Breaker(b),
                    delay_s: limits.min_delay_s,
                    breaker_s: limits.breaker_s,
                    section: None,
                },
            );
        }
        out.push(l);
    }
    out.retain(|l| spaced(l, &pickups, gap) && l.frequency_stages() >= 1);
    out.dedup();
    out
}

/// Whether the frequency stages of a layout are in falling order, at least `gap` grid steps
/// apart.
fn spaced(layout: &Layout, pickups: &[f64], gap: usize) -> bool {
    let idx: Vec<usize> = layout
        .stages
        .iter()
        .filter_map(|s| match s.trigger {
            StageTrigger::Frequency { pickup_hz, .. } => {
                pickups.iter().position(|g| (g - pickup_hz).abs() < 1e-6)
            }
            _ => None,
        })
        .collect();
    idx.windows(2).all(|w| w[1] >= w[0] + gap)
}

/// Number of ways to choose `k` of `n` grid points at least `gap` apart.
fn spaced_choices(n: usize, k: usize, gap: usize) -> usize {
    choose_spaced(n, k, gap).len()
}

/// Every choice of `k` of `n` grid points (indices, rising) at least `gap` apart.
fn choose_spaced(n: usize, k: usize, gap: usize) -> Vec<Vec<usize>> {
    fn go(
        n: usize,
        k: usize,
        gap: usize,
        from: usize,
        cur: &mut Vec<usize>,
        out: &mut Vec<Vec<usize>>,
    ) {
        if out.len() > 100_000 {
            return;
        }
        if cur.len() == k {
            out.push(cur.clone());
            return;
        }
        for i in from..n {
            cur.push(i);
            go(n, k, gap, i + gap, cur, out);
            cur.pop();
        }
    }
    let mut out = Vec::new();
    go(n, k, gap, 0, &mut Vec::new(), &mut out);
    out
}

/// Every assignment of one of `n` delays to each of `k` stages.
fn delay_combinations(n: usize, k: usize) -> Vec<Vec<usize>> {
    let mut out = vec![Vec::new()];
    for _ in 0..k {
        out = out
            .into_iter()
            .flat_map(|c| {
                (0..n).map(move |d| {
                    let mut c = c.clone();
                    c.push(d);
                    c
                })
            })
            .collect();
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spaced_choices_count_like_combinations_with_gaps() {
        // Choosing k of n points at least g apart: C(n − (k−1)(g−1), k).
        assert_eq!(spaced_choices(11, 3, 1), 165);
        assert_eq!(spaced_choices(11, 3, 2), 84);
        assert_eq!(spaced_choices(3, 3, 1), 1);
        assert_eq!(spaced_choices(3, 2, 2), 1);
        assert_eq!(delay_combinations(2, 3).len(), 8);
    }
}
