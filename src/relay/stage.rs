//! One shedding stage as a state machine: idle → picked up → trip commanded → loads open.
//!
//! Frequency stages pick up while measured frequency is below `pickup_hz` (and, with
//! `min_rocof_hz_per_s`, only while the measured −df/dt is at least that); they reset if the
//! condition drops before `delay_s` has run; once the trip command is issued they do not reset,
//! and their loads open `breaker_s` after it. Armed stages issue the command `delay_s` after the
//! named breaker opens. A stage measures at the section of its first listed load.

use super::{Guard, Quantity, Signal};
use crate::model::{BreakerRef, Stage, StageTrigger};

/// Where a stage is in its sequence.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StageState {
    Idle,
    PickedUp {
        since_s: f64,
        expires_s: f64,
    },
    /// The trip command is out; the loads open at `opens_s`.
    Commanded {
        opens_s: f64,
    },
    Done,
}

/// What the loop must do after a stage update.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StageAction {
    /// Picked up: deliver `StageDelay` at `expires_s`.
    PickedUp {
        expires_s: f64,
    },
    Reset,
    /// Trip command issued: deliver `StageBreaker` at `opens_s`.
    Commanded {
        opens_s: f64,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct StageRelay {
    pub trigger: StageTrigger,
    pub delay_s: f64,
    pub breaker_s: f64,
    /// Section the relay measures at (its first load's); `None` for a stage without loads.
    pub section: Option<usize>,
    pub state: StageState,
}

impl StageRelay {
    pub fn new(stage: &Stage, section: Option<usize>) -> StageRelay {
        StageRelay {
            trigger: stage.trigger,
            delay_s: stage.delay_s.max(0.0),
            breaker_s: stage.breaker_s.max(0.0),
            section,
            state: StageState::Idle,
        }
    }

    /// The pickup condition of a frequency stage at a signal (false for armed stages).
    pub fn condition(&self, sig: &Signal) -> bool {
        match self.trigger {
            StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s,
            } => {
                sig.frequency_hz < pickup_hz
                    && min_rocof_hz_per_s.map_or(true, |r| -sig.rocof_hz_per_s >= r)
            }
            StageTrigger::Breaker(_) => false,
        }
    }

    /// Levels this stage watches while it can still change state.
    pub fn guards(&self, out: &mut Vec<Guard>) {
        let (
            Some(section),
            StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s,
            },
        ) = (self.section, self.trigger)
        else {
            return;
        };
        if matches!(self.state, StageState::Idle | StageState::PickedUp { .. }) {
            out.push(Guard {
                section,
                quantity: Quantity::Frequency,
                level: pickup_hz,
            });
            if let Some(r) = min_rocof_hz_per_s {
                out.push(Guard {
                    section,
                    quantity: Quantity::Rocof,
                    level: -r,
                });
            }
        }
    }

    /// Re-evaluate the condition at time `t_s`.
    pub fn update(&mut self, t_s: f64, sig: &Signal) -> Option<StageAction> {
        // An armed stage's timer runs from its breaker opening, not from a measured condition.
        if matches!(self.trigger, StageTrigger::Breaker(_)) {
            return None;
        }
        let cond = self.condition(sig);
        match self.state {
            StageState::Idle if cond => {
                let expires_s = t_s + self.delay_s;
                self.state = StageState::PickedUp {
                    since_s: t_s,
                    expires_s,
                };
                Some(StageAction::PickedUp { expires_s })
            }
            StageState::PickedUp { .. } if !cond => {
                self.state = StageState::Idle;
                Some(StageAction::Reset)
            }
            _ => None,
        }
    }

    /// The delay timer set at pickup has run out; stale timers (after a reset) are ignored.
    pub fn delay_expired(&mut self, t_s: f64, timer_s: f64) -> Option<StageAction> {
        match self.state {
            StageState::PickedUp { expires_s, .. } if expires_s == timer_s => {
                Some(self.command(t_s))
            }
            _ => None,
        }
    }

    /// A breaker opened: an armed stage waiting for it starts its delay.
    pub fn breaker_opened(&mut self, t_s: f64, breaker: BreakerRef) -> Option<StageAction> {
        match (self.trigger, self.state) {
            (StageTrigger::Breaker(b), StageState::Idle) if b == breaker => {
                let expires_s = t_s + self.delay_s;
                self.state = StageState::PickedUp {
                    since_s: t_s,
                    expires_s,
                };
                Some(StageAction::PickedUp { expires_s })
            }
            _ => None,
        }
    }

    /// The stage's breakers interrupt; returns whether this was due.
    pub fn breaker_done(&mut self, timer_s: f64) -> bool {
        match self.state {
            StageState::Commanded { opens_s } if opens_s == timer_s => {
                self.state = StageState::Done;
                true
            }
            _ => false,
        }
    }

    fn command(&mut self, t_s: f64) -> StageAction {
        let opens_s = t_s + self.breaker_s;
        self.state = StageState::Commanded { opens_s };
        StageAction::Commanded { opens_s }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn stage() -> StageRelay {
        StageRelay::new(
            &Stage {
                sizing: crate::model::Sizing::All,
                in_service: true,
                groups: Vec::new(),
                id: "s".into(),
                trigger: StageTrigger::Frequency {
                    pickup_hz: 49.0,
                    min_rocof_hz_per_s: Some(0.5),
                },
                delay_s: 0.1,
                breaker_s: 0.05,
                sheds: vec![0],
            },
            Some(0),
        )
    }

    #[test]
    fn picks_up_resets_and_latches() {
        let mut s = stage();
        let low_falling = Signal {
            frequency_hz: 48.9,
            rocof_hz_per_s: -1.0,
        };
        let low_flat = Signal {
            frequency_hz: 48.9,
            rocof_hz_per_s: -0.1,
        };
        assert_eq!(s.update(1.0, &low_flat), None);
        assert_eq!(
            s.update(1.0, &low_falling),
            Some(StageAction::PickedUp { expires_s: 1.1 })
        );
        assert_eq!(s.update(1.05, &low_flat), Some(StageAction::Reset));
        assert_eq!(s.delay_expired(1.1, 1.1), None);
        s.update(1.2, &low_falling);
        assert_eq!(
            s.delay_expired(1.3, 1.3),
            Some(StageAction::Commanded { opens_s: 1.35 })
        );
        assert_eq!(s.update(1.31, &low_flat), None);
        assert!(s.breaker_done(1.35));
    }

    #[test]
    fn armed_stage_is_not_reset_by_the_measurement() {
        let mut s = StageRelay::new(
            &Stage {
                sizing: crate::model::Sizing::All,
                in_service: true,
                groups: Vec::new(),
                id: "armed".into(),
                trigger: StageTrigger::Breaker(BreakerRef::Utility),
                delay_s: 0.25,
                breaker_s: 0.5,
                sheds: vec![0],
            },
            Some(0),
        );
        let nominal = Signal {
            frequency_hz: 50.0,
            rocof_hz_per_s: 0.0,
        };
        assert_eq!(
            s.breaker_opened(1.0, BreakerRef::Utility),
            Some(StageAction::PickedUp { expires_s: 1.25 })
        );
        assert_eq!(s.update(1.01, &nominal), None);
        assert_eq!(
            s.delay_expired(1.25, 1.25),
            Some(StageAction::Commanded { opens_s: 1.75 })
        );
    }
}
