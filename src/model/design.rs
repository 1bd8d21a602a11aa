//! The limits a proposed shedding table must keep: how many frequency stages, the band and grid
//! of pickups and delays, the load breakers' time, which breakers may arm a stage, and how the
//! shed of each rank is weighted in the design objective.

use super::scheme::BreakerRef;

/// Design limits of a plant (the plant file's `design` block, or its defaults).
#[derive(Debug, Clone, PartialEq)]
pub struct DesignLimits {
    /// Fewest and most under-frequency stages (armed stages not counted).
    pub min_stages: usize,
    pub max_stages: usize,
    /// Pickups are chosen on the grid `highest_pickup_hz − j·pickup_step_hz` down to
    /// `lowest_pickup_hz`.
    pub highest_pickup_hz: f64,
    pub lowest_pickup_hz: f64,
    pub pickup_step_hz: f64,
    /// Intentional delays are chosen on the grid `min_delay_s + j·delay_step_s` up to
    /// `max_delay_s`.
    pub min_delay_s: f64,
    pub max_delay_s: f64,
    pub delay_step_s: f64,
    /// Trip command to load breaker open, the same for every stage the design proposes.
    pub breaker_s: f64,
    /// Breakers whose opening may arm a stage (empty: no armed stages).
    pub armed_by: Vec<BreakerRef>,
    /// When set, the design may supervise its first stage with this df/dt threshold (Hz/s).
    pub rocof_supervision_hz_per_s: Option<f64>,
    /// Objective weight per MW shed of a rank, as (rank, weight); a rank not listed weighs its
    /// own number (rank 1 weighs 1, rank 7 weighs 7).
    pub rank_weights: Vec<(u32, f64)>,
    /// Every sheddable load no studied case needs shed is still assigned, to a backstop at the
    /// lowest pickup (beyond-design events get the whole sheddable load, in rank order).
    pub backstop: bool,
    /// A long-delay stage the design may add (`None`: not offered): pickup near the recovery
    /// level and a delay of seconds, for a frequency that hangs below the recovery level with
    /// the governors at their limits.
    pub long_delay: Option<LongDelayGrid>,
}

/// The grid of the long-delay stage: pickups from `highest_pickup_hz` down to
/// `lowest_pickup_hz` in `pickup_step_hz`, delays from `min_delay_s` up to `max_delay_s` in
/// `delay_step_s`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LongDelayGrid {
    pub highest_pickup_hz: f64,
    pub lowest_pickup_hz: f64,
    pub pickup_step_hz: f64,
    pub min_delay_s: f64,
    pub max_delay_s: f64,
    pub delay_step_s: f64,
}

/// Most points (pickups × delays) the long-delay grid may have: each is one more layout to try
/// in an exhaustive search (a bound on the search, not a rule of the trade).
pub const MAX_LONG_DELAY_POINTS: f64 = 100.0;

impl LongDelayGrid {
    /// Defaults scaled from nominal frequency (docs/files.md gives their basis): pickups
    /// 0.988·f0 down to 0.984·f0 in 0.002·f0 steps (49.4–49.2 Hz at 50 Hz, just under the
    /// default 49.5 Hz recovery level), delays 2–8 s in 2 s steps.
    pub fn defaults(nominal_hz: f64) -> LongDelayGrid {
        LongDelayGrid {
            highest_pickup_hz: 0.988 * nominal_hz,
            lowest_pickup_hz: 0.984 * nominal_hz,
            pickup_step_hz: 0.002 * nominal_hz,
            min_delay_s: 2.0,
            max_delay_s: 8.0,
            delay_step_s: 2.0,
        }
    }

    /// Points of the pickup grid and of the delay grid (see [`DesignLimits::grid_points`]).
    pub fn grid_points(&self) -> (f64, f64) {
        (
            axis_points(
                self.highest_pickup_hz - self.lowest_pickup_hz,
                self.pickup_step_hz,
            ),
            axis_points(self.max_delay_s - self.min_delay_s, self.delay_step_s),
        )
    }
}

impl DesignLimits {
    /// Defaults scaled from nominal frequency (docs/files.md gives each one's basis); the
    /// utility breaker may arm a stage when the plant has one (reading a plant file widens this
    /// to every breaker — ties and generators too — when its design block leaves `armed_by` out).
    pub fn defaults(nominal_hz: f64, has_utility: bool) -> DesignLimits {
        DesignLimits {
            min_stages: 1,
            max_stages: 6,
            highest_pickup_hz: 0.98 * nominal_hz,
            lowest_pickup_hz: 0.96 * nominal_hz,
            pickup_step_hz: 0.002 * nominal_hz,
            min_delay_s: 0.1,
            max_delay_s: 0.5,
            delay_step_s: 0.05,
            breaker_s: 0.08,
            armed_by: if has_utility {
                vec![BreakerRef::Utility]
            } else {
                Vec::new()
            },
            rocof_supervision_hz_per_s: None,
            rank_weights: Vec::new(),
            backstop: true,
            long_delay: None,
        }
    }

    /// Objective weight of one MW of a load of `rank`.
    pub fn rank_weight(&self, rank: u32) -> f64 {
        self.rank_weights
            .iter()
            .find(|(r, _)| *r == rank)
            .map(|(_, w)| *w)
            .unwrap_or(rank as f64)
    }

    /// Points of the pickup grid and of the delay grid, as floating-point counts so that an
    /// absurd step (1e-300) gives a huge count instead of overflowing: each grid runs from one
    /// end to the other in whole steps, both ends included when the step divides the band.
    /// The one count that validation checks against the grid limit and that the design's grid
    /// building obeys.
    pub fn grid_points(&self) -> (f64, f64) {
        (
            axis_points(
                self.highest_pickup_hz - self.lowest_pickup_hz,
                self.pickup_step_hz,
            ),
            axis_points(self.max_delay_s - self.min_delay_s, self.delay_step_s),
        )
    }
}

/// Most grid points (pickups × delays) the design ever builds, whatever the limit
/// `max_design_grid_points` is raised to: past it a grid costs gigabytes.
pub const GRID_POINTS_CEILING: f64 = 1e7;

/// Points from one end of a band `width` wide to the other in steps of `step`; the slack keeps
/// the last point that decimal steps (0.1 Hz) reach only up to binary rounding. Infinite for a
/// step that is not a positive finite number.
pub fn axis_points(width: f64, step: f64) -> f64 {
    if !(step > 0.0 && step.is_finite() && width.is_finite()) {
        return f64::INFINITY;
    }
    (width / step + 1e-9).floor().max(0.0) + 1.0
}
