//! The settings search: the starting layouts (every layout on the grid when there are few, else
//! a spread of starting points), the local search that moves one setting at a time, and the
//! trim of the best few tables. Layouts are sized in parallel and ranked in a fixed order, so
//! the result does not depend on timing or thread count.

use super::context::Context;
use super::layout::{self, Layout};
use super::sizing::{self, Sized};
use super::Progress;
use crate::model::{Action, BreakerRef, DesignLimits, LongDelayGrid, StageTrigger};
use rayon::prelude::*;

/// Layout counts up to which every layout on the grid is sized (an exhaustive search over
/// settings); above it the search is the heuristic of docs/design.md.
pub const EXHAUSTIVE_LAYOUTS: usize = 64;

/// Local-search passes from each start, and how many of the best starting layouts to refine.
const LOCAL_PASSES: usize = 6;
const LOCAL_STARTS: usize = 3;
/// Tables trimmed at the end of a heuristic search.
const FINALISTS: usize = 4;

/// Size the starting layouts, then improve the best few by moving one setting at a time. Returns
/// the best sized layout, the number of layouts sized and the replays used.
pub(super) fn search(full: &Context, progress: Progress) -> (Option<Sized>, usize, usize) {
    // The search judges rows without the required margins (a third of the replays); the
    // finalists are then sized again with them, starting from their loads.
    let quick = full.without_margins();
    let ctx = &quick;
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
        let (finalists, extra) = with_margins(full, ranked, progress);
        let (best, trimmed) = trim_all(full, finalists);
        return (best, sized, replays + extra + trimmed);
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
    let (finalists, extra) = with_margins(full, finalists, progress);
    progress(&format!("trimming the best {} tables", finalists.len()));
    let (best, trimmed) = trim_all(full, finalists);
    (best, sized, replays + extra + trimmed)
}

/// The tables sized again so that they also hold with the plant's required margins, each
/// starting from its own loads (the loop adds load where a margin run falls short); tables
/// that cannot are dropped. Unchanged when the plant requires no margin. With the replays used.
fn with_margins(ctx: &Context, tables: Vec<Sized>, progress: Progress) -> (Vec<Sized>, usize) {
    if !ctx.margins {
        return (tables, 0);
    }
    progress(&format!(
        "sizing the best {} tables again with the required margins",
        tables.len()
    ));
    let sized: Vec<Option<Sized>> = tables
        .par_iter()
        .map(|t| sizing::size(ctx, &t.layout, Some(&t.assignment), 0.0).ok())
        .collect();
    let runs = sized.iter().flatten().map(|s| s.runs).sum();
    (sized.into_iter().flatten().collect(), runs)
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
pub(super) fn armable(ctx: &Context) -> Vec<BreakerRef> {
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
    // The long-delay stage: none, or (exhaustive) every point of its grid, or (heuristic) its
    // highest pickup at the middle of its delays.
    let long_grid = limits
        .long_delay
        .map(|g| (layout::long_pickup_grid(&g), layout::long_delay_grid(&g)));
    let long_all: Vec<Option<(f64, f64)>> = std::iter::once(None)
        .chain(long_grid.iter().flat_map(|(ps, ds)| {
            ps.iter()
                .flat_map(move |&p| ds.iter().map(move |&d| Some((p, d))))
        }))
        .collect();
    let long_few: Vec<Option<(f64, f64)>> = std::iter::once(None)
        .chain(
            long_grid
                .iter()
                .map(|(ps, ds)| Some((ps[0], ds[ds.len() / 2]))),
        )
        .collect();
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
    let exhaustive = breakers.len() < 16
        && count
            .saturating_mul(1 << breakers.len())
            .saturating_mul(long_all.len())
            <= EXHAUSTIVE_LAYOUTS;
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
    let long_options = if exhaustive { long_all } else { long_few };
    let mut out = Vec::new();
    for armed in &armed_options {
        let armed: Vec<(BreakerRef, f64)> =
            armed.iter().map(|&b| (b, limits.min_delay_s)).collect();
        for long in &long_options {
            for f in &all {
                let mut l = layout::build(limits, &armed, f);
                if let Some((p, d)) = *long {
                    l.stages.insert(armed.len(), long_setting(limits, p, d));
                }
                out.push(l);
            }
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
    // Ordinary frequency stages (the long-delay stage has moves of its own, below).
    let frequency: Vec<usize> = (0..layout.stages.len())
        .filter(|&k| {
            matches!(layout.stages[k].trigger, StageTrigger::Frequency { .. })
                && !layout.stages[k].long_delay
        })
        .collect();
    if let Some(g) = limits.long_delay {
        long_moves(limits, &g, layout, &mut out);
    }
    for k in 0..layout.stages.len() {
        let st = layout.stages[k];
        if st.long_delay {
            continue;
        }
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
                            long_delay: false,
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
                    long_delay: false,
                },
            );
        }
        out.push(l);
    }
    out.retain(|l| spaced(l, &pickups, gap) && l.frequency_stages() >= 1);
    out.dedup();
    out
}

/// The long-delay stage at pickup `pickup_hz` and delay `delay_s`.
fn long_setting(limits: &DesignLimits, pickup_hz: f64, delay_s: f64) -> layout::Setting {
    layout::Setting {
        trigger: StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s: None,
        },
        delay_s,
        breaker_s: limits.breaker_s,
        section: None,
        long_delay: true,
    }
}

/// Moves of the long-delay stage: removed when the layout has one, else added (first among the
/// frequency stages, at its highest pickup and middle delay); its pickup one step either way on
/// its grid, and its delay at any other point of its grid.
fn long_moves(limits: &DesignLimits, g: &LongDelayGrid, layout: &Layout, out: &mut Vec<Layout>) {
    let pickups = layout::long_pickup_grid(g);
    let delays = layout::long_delay_grid(g);
    let Some(k) = layout.stages.iter().position(|s| s.long_delay) else {
        let at = layout::first_frequency(layout).unwrap_or(layout.stages.len());
        let mut l = layout.clone();
        l.stages.insert(
            at,
            long_setting(limits, pickups[0], delays[delays.len() / 2]),
        );
        out.push(l);
        return;
    };
    let mut l = layout.clone();
    l.stages.remove(k);
    out.push(l);
    let st = layout.stages[k];
    if let StageTrigger::Frequency { pickup_hz, .. } = st.trigger {
        if let Some(p) = pickups.iter().position(|g| (g - pickup_hz).abs() < 1e-6) {
            for q in [p.wrapping_sub(1), p + 1] {
                if q < pickups.len() {
                    let mut l = layout.clone();
                    l.stages[k] = long_setting(limits, pickups[q], st.delay_s);
                    out.push(l);
                }
            }
        }
        for &d in &delays {
            if (d - st.delay_s).abs() > 1e-9 {
                let mut l = layout.clone();
                l.stages[k] = long_setting(limits, pickup_hz, d);
                out.push(l);
            }
        }
    }
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
