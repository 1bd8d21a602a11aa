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
    /// Sorted by time; ties keep file order.
    pub events: Vec<CaseEvent>,
    /// Utility frequency while connected, as (time, Hz) points joined by straight lines; empty
    /// means nominal throughout.
    pub utility_profile: Vec<(f64, f64)>,
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
