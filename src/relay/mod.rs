//! Relays: frequency and ROCOF measurement, shedding stages, generator and interface protection.
//!
//! Relays see time and measured signals per bus section only ([`Signal`]); they know nothing
//! about how the signals were computed and never import [`crate::dynamics`]. Each element is a
//! small state machine whose timers the simulation loop schedules and delivers back; every level
//! a relay watches is published as a [`Guard`] so that the loop can locate its crossing.

pub mod measurement;
pub mod protection;
pub mod stage;

/// Measured quantities at one bus section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Signal {
    pub frequency_hz: f64,
    pub rocof_hz_per_s: f64,
}

/// Which measured quantity a guard watches.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    Frequency,
    Rocof,
}

/// A level whose crossing may change a relay's condition.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Guard {
    pub section: usize,
    pub quantity: Quantity,
    /// Hz or Hz/s.
    pub level: f64,
}
