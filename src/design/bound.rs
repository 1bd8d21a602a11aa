//! The lower bound on shedding: for one case at one operating point, the least MW that any
//! table must shed, found by replaying the case with an ideal shed — constant-power relief taken
//! evenly from every sheddable load of the sections whose frequency falls, at the very instant of
//! each event — and bisecting on its size, event by event. A table sheds later (pickup, delay,
//! breaker) and in whole loads, so it needs at least this much.
//!
//! When even shedding every sheddable load at once does not hold a case, the shortfall is
//! measured the same way: how much more relief, beyond every sheddable load, it would need.

use super::evaluate::{verdict_of, Verdict};
use crate::model::{Action, Case, CaseEvent, Measurement, OperatingPoint, Plant, Scheme};
use crate::sim::{self, SimConfig};
use crate::verify::criteria::judge;
use crate::verify::matrix::observe;
use serde::Serialize;

/// Bisection resolution, MW.
const RESOLUTION_MW: f64 = 0.005;

/// Scan points over the sheddable MW, and over the plant's load for a shortfall, before
/// bisecting.
const SCAN: usize = 40;
const SHORTFALL_SCAN: usize = 200;

/// The bound of one row.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Bound {
    /// Least ideal shed, MW at nominal frequency.
    pub mw: f64,
}

/// A row that no table can hold.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Shortfall {
    pub case: String,
    pub operating_point: String,
    /// Sheddable MW in the falling sections at this point.
    pub sheddable_mw: f64,
    /// Further relief needed beyond shedding all of it, when some amount would do.
    pub short_mw: Option<f64>,
    /// What still fails with every sheddable load shed at once, in words.
    pub failure: String,
}

impl Shortfall {
    /// The message a user reads.
    pub fn message(&self) -> String {
        let base = format!(
            "case {} at {}: shedding all {:.2} MW of sheddable load at the instant of the disturbance still fails ({})",
            self.case, self.operating_point, self.sheddable_mw, self.failure
        );
        match self.short_mw {
            Some(mw) => format!(
                "{base}; it falls short by {mw:.2} MW: about that much more load must become sheddable, or generation or spinning reserve added, for any table to hold it"
            ),
            None => format!("{base}; no amount of load shedding holds it"),
        }
    }
}

/// Bound of `case` at operating point `op`.
pub fn bound(plant: &Plant, case: &Case, op: usize, cfg: &SimConfig) -> Result<Bound, Shortfall> {
    let empty = Scheme {
        groups: Vec::new(),
        name: String::new(),
        measurement: Measurement::default(),
        stages: Vec::new(),
        over_frequency: Vec::new(),
    };
    let run = |c: &Case| sim::simulate(plant, c, op, &empty, cfg);
    let holds = |c: &Case| verdict_of(plant, c, op, &run(c)) == Verdict::Holds;
    // The unshed run decides both whether the row needs shedding and where frequency falls.
    let unshed = run(case);
    if verdict_of(plant, case, op, &unshed) == Verdict::Holds {
        return Ok(Bound { mw: 0.0 });
    }
    let falling = falling_sections(plant, case, op, &unshed);
    let point = &plant.operating_points[op];
    let sheddable = sheddable_by_section(plant, point, &falling);
    let total: f64 = sheddable.iter().map(|(_, mw)| mw).sum();
    let mut times: Vec<f64> = case.events.iter().map(|e| e.at_s).collect();
    times.dedup();
    if times.is_empty() {
        times.push(crate::verify::matrix::disturbance_span(case).0);
    }
    // Relief (as fractions of the sheddable MW) placed at each event time so far.
    let mut placed: Vec<(f64, f64)> = Vec::new();
    let mut used = 0.0;
    for (e, &t) in times.iter().enumerate() {
        let upto = times.get(e + 1).copied();
        let trial = |fraction: f64| {
            let mut c = truncated(case, upto);
            for &(at, f) in placed.iter().chain(std::iter::once(&(t, fraction))) {
                relieve(&mut c, at, &sheddable, f, 0.0);
            }
            c
        };
        if holds(&trial(0.0)) {
            continue;
        }
        let room = 1.0 - used;
        let found = (total > 0.0)
            .then(|| least_holding(room, total, |f| holds(&trial(f))))
            .flatten();
        let Some(good) = found else {
            return Err(shortfall(
                plant, case, op, cfg, &sheddable, total, &placed, t, room, &empty, upto,
            ));
        };
        placed.push((t, good));
        used += good;
    }
    Ok(Bound { mw: used * total })
}

/// Sections whose frequency falls below the normal band in the unshed run (every section, if
/// none does: the run failed some other way).
fn falling_sections(plant: &Plant, case: &Case, op: usize, run: &sim::Run) -> Vec<usize> {
    let _ = (case, op);
    let low = plant.criteria.normal_low_hz;
    let mut out: Vec<usize> = (0..plant.sections.len())
        .filter(|&s| run.trajectory.first_grid_below(&[s], 0.0, low).is_some())
        .collect();
    if out.is_empty() {
        out = (0..plant.sections.len()).collect();
    }
    out
}

/// The case with only the events before `upto` (all of them when `None`).
fn truncated(case: &Case, upto: Option<f64>) -> Case {
    let mut c = case.clone();
    if let Some(t) = upto {
        c.events.retain(|e| e.at_s < t);
    }
    c
}

/// Add ideal relief at `at_s`: `fraction` of each section's sheddable MW plus `extra_mw` spread
/// over the sections in proportion to it (evenly when nothing is sheddable).
fn relieve(case: &mut Case, at_s: f64, sheddable: &[(usize, f64)], fraction: f64, extra_mw: f64) {
    let total: f64 = sheddable.iter().map(|(_, mw)| mw).sum();
    for &(section, mw) in sheddable {
        let share = if total > 0.0 {
            mw / total
        } else {
            1.0 / sheddable.len() as f64
        };
        let relief = fraction * mw + extra_mw * share;
        if relief > 0.0 {
            case.events.push(CaseEvent {
                at_s,
                action: Action::LoadStep {
                    section,
                    mw: -relief,
                },
            });
        }
    }
    // Stable: relief at the same instant comes after the event it answers.
    case.events.sort_by(|a, b| {
        a.at_s
            .partial_cmp(&b.at_s)
            .unwrap_or(std::cmp::Ordering::Equal)
    });
}

#[allow(clippy::too_many_arguments)]
fn shortfall(
    plant: &Plant,
    case: &Case,
    op: usize,
    cfg: &SimConfig,
    sheddable: &[(usize, f64)],
    total: f64,
    placed: &[(f64, f64)],
    t: f64,
    room: f64,
    empty: &Scheme,
    upto: Option<f64>,
) -> Shortfall {
    let with_extra = |extra: f64| {
        let mut c = truncated(case, upto);
        for &(at, f) in placed {
            relieve(&mut c, at, sheddable, f, 0.0);
        }
        relieve(&mut c, t, sheddable, room, extra);
        c
    };
    let judge_case = |c: &Case| {
        let run = sim::simulate(plant, c, op, empty, cfg);
        (verdict_of(plant, c, op, &run), run)
    };
    let all_shed = with_extra(0.0);
    let (_, run) = judge_case(&all_shed);
    let failures = judge(&observe(&run, &all_shed, &plant.criteria), &plant.criteria);
    let failure = failures
        .first()
        .map(|f| f.message.clone())
        .unwrap_or_else(|| "a generator stays too long in an abnormal frequency band".into());
    let load: f64 = plant.operating_points[op].load_mw.iter().sum();
    // As for the bound: too little relief fails low, too much overshoots, so scan, then bisect.
    let holds_with = |extra: f64| judge_case(&with_extra(extra)).0 == Verdict::Holds;
    let step = load / SHORTFALL_SCAN as f64;
    let short_mw = (1..=SHORTFALL_SCAN)
        .find(|&j| holds_with(step * j as f64))
        .map(|j| {
            let (mut bad, mut good) = (step * (j - 1) as f64, step * j as f64);
            while good - bad > RESOLUTION_MW {
                let mid = 0.5 * (bad + good);
                if holds_with(mid) {
                    good = mid;
                } else {
                    bad = mid;
                }
            }
            good
        });
    Shortfall {
        case: case.id.clone(),
        operating_point: plant.operating_points[op].id.clone(),
        sheddable_mw: total,
        short_mw,
        failure,
    }
}

/// The realisable bound of one row: the least shed of any table whose stages respond no faster
/// than the plant's fastest allowed relay and shed whole loads in rank order — as a stated lower
/// end, never below the ideal bound.
///
/// For each event time in turn (as for the ideal bound), the relief is placed at the earliest
/// moment a stage can open a breaker: `min_delay_s + breaker_s` after the event when the event
/// opens a breaker that may arm a stage, else the moment frequency in a falling section first
/// crosses the highest allowed pickup, plus the measurement lag, the minimum delay and the breaker
/// time; its least size is found as for the ideal bound. The total is then rounded up to whole
/// loads in rank order (lower ranks in full, then the least subset of the next rank's loads that
/// reaches it) when the falling sections form one island at the end of the case. What it does not
/// know: that one table must serve every row, and that a stage's pickup and delay are on a grid.
pub fn realisable(
    plant: &Plant,
    case: &Case,
    op: usize,
    cfg: &SimConfig,
    lag_s: f64,
    ideal_mw: f64,
) -> f64 {
    if ideal_mw <= 0.0 {
        return 0.0;
    }
    let empty = Scheme {
        groups: Vec::new(),
        name: String::new(),
        measurement: Measurement::default(),
        stages: Vec::new(),
        over_frequency: Vec::new(),
    };
    let run = |c: &Case| sim::simulate(plant, c, op, &empty, cfg);
    let holds = |c: &Case| verdict_of(plant, c, op, &run(c)) == Verdict::Holds;
    let unshed = run(case);
    let falling = falling_sections(plant, case, op, &unshed);
    let point = &plant.operating_points[op];
    let sheddable = sheddable_by_section(plant, point, &falling);
    let total: f64 = sheddable.iter().map(|(_, mw)| mw).sum();
    if total <= 0.0 {
        return ideal_mw;
    }
    let limits = &plant.design;
    let mut times: Vec<f64> = case.events.iter().map(|e| e.at_s).collect();
    times.dedup();
    if times.is_empty() {
        times.push(crate::verify::matrix::disturbance_span(case).0);
    }
    let mut placed: Vec<(f64, f64)> = Vec::new();
    let mut used = 0.0;
    for (e, &t) in times.iter().enumerate() {
        let upto = times.get(e + 1).copied();
        let base = |extra: Option<(f64, f64)>| {
            let mut c = truncated(case, upto);
            for &(at, f) in placed.iter().chain(extra.iter()) {
                relieve(&mut c, at, &sheddable, f, 0.0);
            }
            c
        };
        let without = base(None);
        if holds(&without) {
            continue;
        }
        let armed = case.events.iter().any(|ev| {
            (ev.at_s - t).abs() < 1e-12
                && matches!(ev.action, Action::Open(b) if limits.armed_by.contains(&b))
        });
        let at = if armed {
            Some(t + limits.min_delay_s + limits.breaker_s)
        } else {
            first_below(&run(&without), &falling, t, limits.highest_pickup_hz)
                .map(|c| c + lag_s + limits.min_delay_s + limits.breaker_s)
        };
        // A stage that never picks up cannot relieve this event: the ideal bound stands.
        let Some(at) = at else {
            return ideal_mw;
        };
        let room = 1.0 - used;
        let Some(good) = least_holding(room, total, |f| holds(&base(Some((at, f))))) else {
            return ideal_mw;
        };
        placed.push((at, good));
        used += good;
    }
    let delayed = used * total;
    let one_island = {
        let mut state = crate::topology::BreakerState::initial(
            plant,
            op,
            case.start == crate::model::Start::Connected,
        );
        for ev in &case.events {
            if let Action::Open(crate::model::BreakerRef::Tie(k)) = ev.action {
                state.tie_closed[k] = false;
            }
        }
        let islands = crate::topology::islands(plant, &state);
        falling.iter().all(|&s| {
            crate::topology::island_of(&islands, s)
                == crate::topology::island_of(&islands, falling[0])
        })
    };
    let whole = if one_island {
        whole_loads(plant, op, &falling, delayed)
    } else {
        delayed
    };
    whole.max(ideal_mw)
}

/// The first time at or after `from` that frequency in any of `sections` is below `hz`.
fn first_below(run: &sim::Run, sections: &[usize], from: f64, hz: f64) -> Option<f64> {
    run.trajectory.first_grid_below(sections, from, hz)
}

/// The least MW of whole loads in rank order (in `sections`, switched on at `op`) that reaches
/// `mw`: every lower rank in full, then the least subset of the next rank's loads (exactly when
/// that rank has at most 16 loads there, else the remainder itself).
fn whole_loads(plant: &Plant, op: usize, sections: &[usize], mw: f64) -> f64 {
    let point = &plant.operating_points[op];
    let mut loads: Vec<(u32, f64)> = plant
        .loads
        .iter()
        .enumerate()
        .filter(|(i, l)| !l.never_shed && sections.contains(&l.section) && point.load_mw[*i] > 0.0)
        .map(|(i, l)| (l.rank, point.load_mw[i]))
        .collect();
    loads.sort_by(|a, b| a.0.cmp(&b.0));
    let mut sum = 0.0;
    let mut k = 0;
    while k < loads.len() {
        let rank = loads[k].0;
        let tier: Vec<f64> = loads[k..]
            .iter()
            .take_while(|l| l.0 == rank)
            .map(|l| l.1)
            .collect();
        let tier_total: f64 = tier.iter().sum();
        let need = mw - sum;
        if need <= 1e-9 {
            return sum;
        }
        if tier_total < need - 1e-9 {
            sum += tier_total;
            k += tier.len();
            continue;
        }
        let least = if tier.len() <= 16 {
            (1u32..(1 << tier.len()))
                .map(|mask| {
                    (0..tier.len())
                        .filter(|&j| mask & (1 << j) != 0)
                        .map(|j| tier[j])
                        .sum::<f64>()
                })
                .filter(|&s| s >= need - 1e-9)
                .fold(f64::INFINITY, f64::min)
        } else {
            need
        };
        return sum + least;
    }
    sum.max(mw)
}

/// Each falling section with the MW of its sheddable (not never-shed) loads at the operating point.
fn sheddable_by_section(
    plant: &Plant,
    point: &OperatingPoint,
    falling: &[usize],
) -> Vec<(usize, f64)> {
    falling
        .iter()
        .map(|&s| {
            let mw = plant
                .loads
                .iter()
                .enumerate()
                .filter(|(_, l)| l.section == s && !l.never_shed)
                .map(|(i, _)| point.load_mw[i])
                .sum::<f64>();
            (s, mw)
        })
        .collect()
}

/// The least fraction of `room` (a share of `total` MW) whose relief holds, to [`RESOLUTION_MW`].
/// Too little relief fails low and too much overshoots, so holding is not monotone over the whole
/// range: scan for the first of [`SCAN`] amounts that holds, then bisect between it and the scan
/// point before. `None` when no scanned amount holds.
fn least_holding(room: f64, total: f64, holds_at: impl Fn(f64) -> bool) -> Option<f64> {
    let j = (1..=SCAN).find(|&j| holds_at(room * j as f64 / SCAN as f64))?;
    let (mut bad, mut good) = (
        room * (j - 1) as f64 / SCAN as f64,
        room * j as f64 / SCAN as f64,
    );
    while (good - bad) * total > RESOLUTION_MW {
        let mid = 0.5 * (bad + good);
        if holds_at(mid) {
            good = mid;
        } else {
            bad = mid;
        }
    }
    Some(good)
}
