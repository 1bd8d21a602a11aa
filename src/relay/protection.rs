//! Definite-time frequency and ROCOF protection of generators and of the utility interface; the
//! scheme's over-frequency stages use the same element (pickup above a level, definite delay).
//!
//! An element starts timing when its condition holds (measured f below/above its level, or
//! |measured df/dt| above its level), resets when the condition drops, and operates when it has
//! held for `after_s`. `after_s` is taken as the whole time to the breaker opening (relay and
//! breaker together), so the breaker opens at expiry.

use super::{Guard, Quantity, Signal};
use crate::model::FrequencyTrip;

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ElementState {
    Idle,
    Timing { expires_s: f64 },
    Operated,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ElementAction {
    Started { expires_s: f64 },
    Reset,
    Operated,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Element {
    pub trip: FrequencyTrip,
    pub section: usize,
    pub state: ElementState,
}

impl Element {
    pub fn new(trip: FrequencyTrip, section: usize) -> Element {
        Element {
            trip,
            section,
            state: ElementState::Idle,
        }
    }

    pub fn condition(&self, sig: &Signal) -> bool {
        match self.trip {
            FrequencyTrip::Under { hz, .. } => sig.frequency_hz < hz,
            // At the level counts as above: a located upward crossing stops on or just past
            // the level (`sim::integrate` returns the first instant at or beyond it).
            FrequencyTrip::Over { hz, .. } => sig.frequency_hz >= hz,
            FrequencyTrip::Rocof { hz_per_s, .. } => sig.rocof_hz_per_s.abs() > hz_per_s,
        }
    }

    fn after_s(&self) -> f64 {
        match self.trip {
            FrequencyTrip::Under { after_s, .. }
            | FrequencyTrip::Over { after_s, .. }
            | FrequencyTrip::Rocof { after_s, .. } => after_s.max(0.0),
        }
    }

    pub fn guards(&self, out: &mut Vec<Guard>) {
        if self.state == ElementState::Operated {
            return;
        }
        let section = self.section;
        match self.trip {
            FrequencyTrip::Under { hz, .. } | FrequencyTrip::Over { hz, .. } => out.push(Guard {
                section,
                quantity: Quantity::Frequency,
                level: hz,
            }),
            FrequencyTrip::Rocof { hz_per_s, .. } => {
                for level in [hz_per_s, -hz_per_s] {
                    out.push(Guard {
                        section,
                        quantity: Quantity::Rocof,
                        level,
                    })
                }
            }
        }
    }

    pub fn update(&mut self, t_s: f64, sig: &Signal) -> Option<ElementAction> {
        let cond = self.condition(sig);
        match self.state {
            ElementState::Idle if cond => {
                let expires_s = t_s + self.after_s();
                self.state = ElementState::Timing { expires_s };
                Some(ElementAction::Started { expires_s })
            }
            ElementState::Timing { .. } if !cond => {
                self.state = ElementState::Idle;
                Some(ElementAction::Reset)
            }
            _ => None,
        }
    }

    /// A timer set at start has run out; stale timers are ignored.
    pub fn expired(&mut self, timer_s: f64) -> Option<ElementAction> {
        match self.state {
            ElementState::Timing { expires_s } if expires_s == timer_s => {
                self.state = ElementState::Operated;
                Some(ElementAction::Operated)
            }
            _ => None,
        }
    }

    /// Human-readable element description for the event log.
    pub fn describe(&self) -> String {
        match self.trip {
            FrequencyTrip::Under { hz, after_s } => {
                format!("under-frequency {hz} Hz / {after_s} s")
            }
            FrequencyTrip::Over { hz, after_s } => format!("over-frequency {hz} Hz / {after_s} s"),
            FrequencyTrip::Rocof { hz_per_s, after_s } => {
                format!("rocof {hz_per_s} Hz/s / {after_s} s")
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn under_frequency_times_and_resets() {
        let mut e = Element::new(
            FrequencyTrip::Under {
                hz: 47.5,
                after_s: 1.0,
            },
            0,
        );
        let low = Signal {
            frequency_hz: 47.4,
            rocof_hz_per_s: 0.0,
        };
        let ok = Signal {
            frequency_hz: 47.6,
            rocof_hz_per_s: 0.0,
        };
        assert_eq!(
            e.update(2.0, &low),
            Some(ElementAction::Started { expires_s: 3.0 })
        );
        assert_eq!(e.update(2.5, &ok), Some(ElementAction::Reset));
        assert_eq!(e.expired(3.0), None);
        e.update(2.6, &low);
        assert_eq!(e.expired(3.6), Some(ElementAction::Operated));
    }
}
