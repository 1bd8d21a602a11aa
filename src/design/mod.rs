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
pub mod context;
pub mod evaluate;
mod existing;
mod finish;
pub mod layout;
mod requirement;
mod search;
pub mod sizing;
mod why;

pub use search::{starting_layouts, EXHAUSTIVE_LAYOUTS};

use crate::model::{BreakerRef, CaseSet, Plant, Scheme};
use backstop::Backstop;
use bound::{Bound, Shortfall};
use context::Context;
use evaluate::design_sim_config;
use existing::keep_existing;
use finish::{drop_idle_last_stages, finish};
use rayon::prelude::*;
use search::{armable, search};
use serde::Serialize;
use sizing::Sized;

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
    /// With `--from` when the existing settings could not be kept: why, one reason per method
    /// tried, in words (the output prints them).
    pub from_why_not: Vec<String>,
    /// Where the proposal came from.
    pub source: Source,
    /// What became of the loads no studied case needs.
    pub backstop: Backstop,
    /// Sheddable loads (ids) that no stage of the proposal opens.
    pub unassigned: Vec<String>,
    pub layouts_sized: usize,
    pub replays: usize,
    /// What the assignment solves took; the output warns when any exhausted its node budget.
    #[serde(skip)]
    pub solver: context::SolverSummary,
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
    /// The case declares shedding the intended response: its shed and bounds count in no total.
    pub intended: bool,
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
    /// Whether the table breaks none of the plant's rules (else it is never proposed).
    pub rules_clean: bool,
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
    let mut kept_scheme = None;
    let mut from_why_not = Vec::new();
    if let Some(existing) = from {
        progress("existing table");
        let kept = keep_existing(&ctx, existing);
        replays += kept.runs;
        from_outcome = Some(kept.outcome);
        kept_scheme = kept.scheme;
        from_why_not = kept.why_not;
        if let Some(s) = kept.sized {
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
        // Only a baseline that keeps the plant's rules (rank order per event and island) may
        // be proposed; one that does not is still printed for comparison.
        let better = match &chosen {
            Some((c, _)) => b.objective < c.objective - 1e-9 && from.is_none(),
            None => true,
        } && ctx.rules_clean(&ctx.scheme(&b.layout, &b.assignment));
        if better {
            chosen = Some((b.clone(), Source::Baseline));
            backstop = baseline_backstop.unwrap_or(Backstop::NotNeeded);
        }
    }
    let Some((best, source)) = chosen else {
        return Err(DesignError::NoLayout(why_no_layout(&ctx)));
    };
    // A kept table is written exactly as it stands, its stages in their own order.
    let exact = (source == Source::Existing)
        .then_some(kept_scheme)
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
    proposal.from_why_not = from_why_not;
    proposal.fresh = fresh.map(|f| BaselineSummary {
        objective: f.objective,
        stages: f.layout.stages.len(),
        rules_clean: true,
        scheme: ctx.scheme(&f.layout, &f.assignment),
    });
    Ok(proposal)
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
