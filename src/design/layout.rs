//! Stage settings without loads (a layout): which stages exist, in operating order, with their
//! triggers and delays; the grid they are chosen on; and the table a layout and an assignment of
//! loads make together.

use crate::model::{
    BreakerRef, DesignLimits, LongDelayGrid, Measurement, Plant, Scheme, Stage, StageTrigger,
};

/// The settings of one stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Setting {
    pub trigger: StageTrigger,
    pub delay_s: f64,
    pub breaker_s: f64,
    /// The section a frequency stage measures at, chosen by the design (the relay measures at
    /// its first listed load's section, so a load of this section is listed first); `None`:
    /// wherever the stage's lowest-ranked load is.
    pub section: Option<usize>,
    /// The long-delay stage of the plant's `long_delay` grid (pickup near the recovery level, a
    /// delay of seconds); it comes first among the frequency stages.
    pub long_delay: bool,
}

/// Stages in operating order: armed stages first, then frequency stages by falling pickup.
#[derive(Debug, Clone, PartialEq)]
pub struct Layout {
    pub stages: Vec<Setting>,
    /// Stage ids to keep (from an existing table); generated when empty.
    pub ids: Vec<String>,
    /// From an existing table: per stage, the loads it lists that an earlier stage (in
    /// operating order) also lists, kept as they are; empty for a designed layout, whose first
    /// frequency stage lists the armed stages' loads instead.
    pub extra: Vec<Vec<usize>>,
}

impl Layout {
    /// Number of under-frequency stages.
    pub fn frequency_stages(&self) -> usize {
        self.stages
            .iter()
            .filter(|s| matches!(s.trigger, StageTrigger::Frequency { .. }))
            .count()
    }
}

/// The pickup grid, highest first.
pub fn pickup_grid(limits: &DesignLimits) -> Vec<f64> {
    grid(
        limits.highest_pickup_hz,
        limits.lowest_pickup_hz,
        -limits.pickup_step_hz,
    )
}

/// The delay grid, shortest first.
pub fn delay_grid(limits: &DesignLimits) -> Vec<f64> {
    grid(limits.min_delay_s, limits.max_delay_s, limits.delay_step_s)
}

/// The long-delay stage's pickup grid, highest first.
pub fn long_pickup_grid(g: &LongDelayGrid) -> Vec<f64> {
    grid(g.highest_pickup_hz, g.lowest_pickup_hz, -g.pickup_step_hz)
}

/// The long-delay stage's delay grid, shortest first.
pub fn long_delay_grid(g: &LongDelayGrid) -> Vec<f64> {
    grid(g.min_delay_s, g.max_delay_s, g.delay_step_s)
}

/// Points from `from` towards `to` in steps of `step`, rounded to 1e-6 so that grid values print
/// as the user wrote them. Never more than [`MAX_GRID_POINTS`] points ([`check_grid`] refuses
/// such a grid before any is built).
fn grid(from: f64, to: f64, step: f64) -> Vec<f64> {
    let points =
        crate::model::design_axis_points((to - from).abs(), step.abs()).min(MAX_GRID_POINTS);
    (0..points as usize)
        .map(|j| ((from + j as f64 * step) * 1e6).round() / 1e6)
        .collect()
}

/// Most grid points (pickups × delays) the design builds, whatever the plant says: a guard for
/// design limits that did not come through validation, which refuses a grid above the limit
/// `max_design_grid_points` (docs/guarantees.md) and above this ceiling.
pub const MAX_GRID_POINTS: f64 = crate::model::GRID_POINTS_CEILING;

/// Refuses a grid of more than [`MAX_GRID_POINTS`] points, naming its size.
pub fn check_grid(limits: &DesignLimits) -> Result<(), String> {
    let (pickups, delays) = limits.grid_points();
    let total = pickups * delays;
    if total <= MAX_GRID_POINTS {
        return Ok(());
    }
    Err(format!(
        "the design grid has {} pickups × {} delays, above the {} grid points the design can \
         search; use coarser steps (design.pickup_hz.step, design.delay_s.step)",
        count(pickups),
        count(delays),
        count(MAX_GRID_POINTS)
    ))
}

fn count(n: f64) -> String {
    if n < 1e15 {
        format!("{}", n as u64)
    } else {
        format!("{n:.1e}")
    }
}

/// Number of grid steps two adjacent frequency stages must be apart: the coordination spacing,
/// rounded up to the grid.
pub fn spacing_steps(plant: &Plant) -> usize {
    let l = &plant.design;
    ((plant.criteria.min_spacing_hz / l.pickup_step_hz) - 1e-9)
        .ceil()
        .max(1.0) as usize
}

/// A layout with `armed` stages first, then frequency stages at the given pickups, delays and
/// df/dt thresholds; every stage with the design's breaker time.
pub fn build(
    limits: &DesignLimits,
    armed: &[(BreakerRef, f64)],
    frequency: &[(f64, f64, Option<f64>)],
) -> Layout {
    let breaker_s = limits.breaker_s;
    let mut stages: Vec<Setting> = armed
        .iter()
        .map(|&(b, delay_s)| Setting {
            trigger: StageTrigger::Breaker(b),
            delay_s,
            breaker_s,
            section: None,
            long_delay: false,
        })
        .collect();
    stages.extend(
        frequency
            .iter()
            .map(|&(pickup_hz, delay_s, rocof)| Setting {
                trigger: StageTrigger::Frequency {
                    pickup_hz,
                    min_rocof_hz_per_s: rocof,
                },
                delay_s,
                breaker_s,
                section: None,
                long_delay: false,
            }),
    );
    Layout {
        stages,
        ids: Vec::new(),
        extra: Vec::new(),
    }
}

/// The layout of an existing table, in operating order, keeping its ids and breaker times; with
/// the table's stage index for each layout position.
pub fn of_scheme(plant: &Plant, scheme: &Scheme) -> (Layout, Vec<usize>) {
    let order = crate::verify::audit::operating_order(scheme);
    let stages = order
        .iter()
        .map(|&k| {
            let s = &scheme.stages[k];
            Setting {
                trigger: s.trigger,
                delay_s: s.delay_s,
                breaker_s: s.breaker_s,
                section: match s.trigger {
                    StageTrigger::Frequency { .. } => {
                        s.sheds.first().map(|&l| plant.loads[l].section)
                    }
                    StageTrigger::Breaker(_) => None,
                },
                long_delay: false,
            }
        })
        .collect();
    let ids = order.iter().map(|&k| scheme.stages[k].id.clone()).collect();
    let mut seen: Vec<usize> = Vec::new();
    let extra = order
        .iter()
        .map(|&k| {
            let again: Vec<usize> = scheme.stages[k]
                .sheds
                .iter()
                .copied()
                .filter(|l| seen.contains(l))
                .collect();
            seen.extend(scheme.stages[k].sheds.iter().copied());
            again
        })
        .collect();
    (Layout { stages, ids, extra }, order)
}

/// The table of a layout with each candidate load's stage position; loads are listed in
/// priority order within a stage, except that a stage with a chosen measuring section lists
/// that section's lowest-ranked load first.
pub fn scheme(
    plant: &Plant,
    name: &str,
    measurement: Measurement,
    layout: &Layout,
    loads: &[(usize, u32)],
    assignment: &[Option<usize>],
) -> Scheme {
    let mut armed = 0;
    let mut uf = 0;
    let stages: Vec<Stage> = layout
        .stages
        .iter()
        .enumerate()
        .map(|(k, st)| {
            let generated = match st.trigger {
                StageTrigger::Breaker(b) => {
                    armed += 1;
                    let what = match b {
                        BreakerRef::Utility => "utility".to_string(),
                        BreakerRef::Tie(t) => plant.ties[t].id.clone(),
                        BreakerRef::Generator(g) => plant.generators[g].id.clone(),
                    };
                    if armed == 1 {
                        format!("armed-{what}")
                    } else {
                        format!("armed-{what}-{armed}")
                    }
                }
                StageTrigger::Frequency { .. } if st.long_delay => "uf-long".to_string(),
                StageTrigger::Frequency { .. } => {
                    uf += 1;
                    format!("uf-{uf}")
                }
            };
            let mut sheds: Vec<usize> = loads
                .iter()
                .zip(assignment)
                .filter(|(_, a)| **a == Some(k))
                .map(|((i, _), _)| *i)
                .collect();
            // The relay measures at its first listed load's section: list the chosen section's
            // lowest-ranked load first.
            if let Some(s) = st.section {
                if let Some(pos) = sheds.iter().position(|&i| plant.loads[i].section == s) {
                    let first = sheds.remove(pos);
                    sheds.insert(0, first);
                }
            }
            Stage {
                sizing: crate::model::Sizing::All,
                in_service: true,
                groups: Vec::new(),
                id: layout.ids.get(k).cloned().unwrap_or(generated),
                trigger: st.trigger,
                delay_s: st.delay_s,
                breaker_s: st.breaker_s,
                sheds,
            }
        })
        .collect();
    let mut stages: Vec<Stage> = stages;
    // Rank order holds in every event (docs/design.md): an event that opens no arming breaker
    // walks the frequency stages from the first, so the first frequency stage also lists the
    // armed stages' loads (a load opened once is not opened again).
    if !layout.extra.is_empty() {
        for (stage, extra) in stages.iter_mut().zip(&layout.extra) {
            for &l in extra {
                if !stage.sheds.contains(&l) {
                    stage.sheds.push(l);
                }
            }
        }
    } else {
        // A fast fall reaches the first ordinary stage before a long delay runs out: that stage
        // also lists the long-delay stage's loads (and, through it, the armed stages').
        for f in listing_stages(layout) {
            let earlier: Vec<usize> = (0..f).flat_map(|k| stages[k].sheds.clone()).collect();
            for l in earlier {
                if !stages[f].sheds.contains(&l) {
                    stages[f].sheds.push(l);
                }
            }
        }
    }
    Scheme {
        groups: Vec::new(),
        name: name.to_string(),
        measurement,
        stages,
        over_frequency: Vec::new(),
    }
}

/// Position of the first frequency stage (the armed stages come before it), if any.
pub fn first_frequency(layout: &Layout) -> Option<usize> {
    layout
        .stages
        .iter()
        .position(|s| matches!(s.trigger, StageTrigger::Frequency { .. }))
}

/// The frequency stages that also list the loads of every stage before them: the first
/// frequency stage (after the armed stages), and the first ordinary stage when a long-delay
/// stage comes before it.
fn listing_stages(layout: &Layout) -> Vec<usize> {
    let mut out = Vec::new();
    if let Some(f) = first_frequency(layout) {
        out.push(f);
        if layout.stages[f].long_delay
            && layout
                .stages
                .get(f + 1)
                .is_some_and(|s| matches!(s.trigger, StageTrigger::Frequency { .. }))
        {
            out.push(f + 1);
        }
    }
    out
}

/// The stage positions whose loads open when the stages `operated` operate: with the first
/// frequency stage, the armed stages' loads too (it lists them); with the first ordinary stage
/// after a long-delay stage, the long-delay stage's loads as well.
pub fn effective(layout: &Layout, operated: &[usize]) -> Vec<usize> {
    let mut out = operated.to_vec();
    if layout.extra.is_empty() {
        for f in listing_stages(layout) {
            if operated.contains(&f) {
                out.extend(0..f);
            }
        }
    } else if let Some(f) = first_frequency(layout) {
        if operated.contains(&f) {
            out.extend(0..f);
        }
    }
    out.sort_unstable();
    out.dedup();
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grids_include_both_ends_and_round_cleanly() {
        let mut l = DesignLimits::defaults(50.0, false);
        l.highest_pickup_hz = 49.0;
        l.lowest_pickup_hz = 48.0;
        l.pickup_step_hz = 0.1;
        let p = pickup_grid(&l);
        assert_eq!(p.len(), 11);
        assert_eq!(p[0], 49.0);
        assert_eq!(p[3], 48.7);
        assert_eq!(p[10], 48.0);
        l.min_delay_s = 0.1;
        l.max_delay_s = 0.4;
        l.delay_step_s = 0.05;
        assert_eq!(delay_grid(&l), vec![0.1, 0.15, 0.2, 0.25, 0.3, 0.35, 0.4]);
    }

    #[test]
    fn absurd_steps_are_refused_not_allocated() {
        let mut l = DesignLimits::defaults(50.0, false);
        for step in [1e-300, 1e-12, f64::MIN_POSITIVE] {
            l.pickup_step_hz = step;
            let e = check_grid(&l).unwrap_err();
            assert!(e.contains("above the 10000000 grid points"), "{e}");
            // Building it anyway stays within the guard.
            assert_eq!(pickup_grid(&l).len(), MAX_GRID_POINTS as usize);
        }
        l.pickup_step_hz = 1e-300;
        assert!(check_grid(&l).unwrap_err().contains("1.0e300 pickups"));
        l.pickup_step_hz = 0.1;
        assert!(check_grid(&l).is_ok());
    }
}
