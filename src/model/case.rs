//! The cases: named disturbances to replay, each a list of timed actions, optionally limited to
//! some operating points.

use super::scheme::BreakerRef;

/// All cases of one cases file.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseSet {
    pub cases: Vec<Case>,
}

/// One disturbance scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct Case {
    pub id: String,
    pub description: String,
    pub start: Start,
    /// Operating points (by index) this case applies to; every point when the file lists none.
    pub applies_to: Vec<usize>,
    /// Simulated time after t = 0.
    pub duration_s: f64,
    /// Weight of this case's shed in the design objective.
    pub weight: f64,
    /// Shedding is the response this case asks for (e.g. a grid-wide under-frequency event for
    /// which the grid operator requires the plant's loads): design counts none of its shed as
    /// cost, nor its bounds. Default false: shedding is unwanted.
    pub shedding_intended: bool,
    /// Sorted by time; ties keep file order.
    pub events: Vec<CaseEvent>,
    /// Utility frequency while connected, as (time, Hz) points joined by straight lines; empty
    /// means nominal throughout.
    pub utility_profile: Vec<(f64, f64)>,
}

impl Case {
    /// Weight of this case's shed in the design objective: 0 when shedding is intended.
    pub fn cost_weight(&self) -> f64 {
        if self.shedding_intended {
            0.0
        } else {
            self.weight
        }
    }

    /// When the disturbance starts and when its last part happens: see [`disturbance_span`].
    pub fn disturbance_span(&self) -> (f64, f64) {
        disturbance_span(&self.events, &self.utility_profile)
    }
}

/// When a disturbance starts and when its last part happens: the first and last event, and for a
/// utility frequency profile the moment it first leaves nominal (the profile counts as starting
/// then and as having no later part). With neither, (0, 0). Settling is judged from the start,
/// recovery from the last part.
pub fn disturbance_span(events: &[CaseEvent], utility_profile: &[(f64, f64)]) -> (f64, f64) {
    let profile_start = utility_profile
        .windows(2)
        .find(|w| w[1].1 != w[0].1)
        .map(|w| w[0].0);
    let first = events.iter().map(|e| e.at_s).reduce(f64::min);
    let last = events.iter().map(|e| e.at_s).reduce(f64::max);
    let start = match (first, profile_start) {
        (Some(a), Some(b)) => a.min(b),
        (a, b) => a.or(b).unwrap_or(0.0),
    };
    (start, last.unwrap_or(start).max(start))
}

/// Whether the plant is joined to the utility when the case starts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Start {
    Connected,
    /// The utility breaker is open from the start; the import is carried by the plant's machines.
    Islanded,
}

/// An action at a time.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseEvent {
    pub at_s: f64,
    pub action: Action,
}

/// What happens at an event.
#[derive(Debug, Clone, PartialEq)]
pub enum Action {
    /// Open a breaker: the utility breaker, a bus tie, or a generator breaker.
    Open(BreakerRef),
    /// A step of load on a section (positive: more demand), constant power.
    LoadStep { section: usize, mw: f64 },
    /// The voltage of a section falls to `remaining_pu` for `duration_s`.
    VoltageDip {
        section: usize,
        remaining_pu: f64,
        duration_s: f64,
    },
}
