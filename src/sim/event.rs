//! The closed set of discrete events and the time-ordered queue that delivers them.
//!
//! Every discrete change of a run is one [`Event`] handled in one `match` in the engine. Timers
//! carry the time they were set for; a relay ignores a timer that no longer matches its state
//! (that is how a reset cancels a pending expiry).

/// A discrete event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Event {
    /// The case's own action (index into `case.events`).
    CaseAction(usize),
    /// A voltage dip (index into the engine's dip list) ends.
    DipEnd(usize),
    /// A breakpoint of the utility frequency profile: the slope changes.
    UtilityProfile,
    StageDelay {
        stage: usize,
        timer_s: f64,
    },
    StageBreaker {
        stage: usize,
        timer_s: f64,
    },
    GeneratorElement {
        generator: usize,
        element: usize,
        timer_s: f64,
    },
    InterfaceElement {
        element: usize,
        timer_s: f64,
    },
    LoadUndervoltage {
        load: usize,
    },
    GeneratorUndervoltage {
        generator: usize,
        dip: usize,
    },
    /// An over-frequency stage's delay (started at `timer_s` − delay) runs out.
    OverDelay {
        stage: usize,
        timer_s: f64,
    },
    /// An over-frequency stage's command takes effect on its generator.
    OverAct {
        stage: usize,
    },
    /// A pressure-controlled steam machine's transfer to speed control falls due.
    PressureTransfer {
        generator: usize,
    },
    /// A located guard crossing: re-evaluate every relay and the collapse floor.
    Crossing,
}

/// Pending timed events, delivered by time, then by insertion order.
#[derive(Debug, Default)]
pub struct Queue {
    items: Vec<(f64, u64, Event)>,
    seq: u64,
}

impl Queue {
    pub fn push(&mut self, at_s: f64, ev: Event) {
        self.items.push((at_s, self.seq, ev));
        self.seq += 1;
    }

    pub fn next_time(&self) -> Option<f64> {
        self.items.iter().map(|e| e.0).reduce(f64::min)
    }

    /// Remove and return the earliest event due at or before `t_s`.
    pub fn pop_due(&mut self, t_s: f64) -> Option<(f64, Event)> {
        let mut best: Option<usize> = None;
        for (i, e) in self.items.iter().enumerate() {
            if e.0 <= t_s {
                match best {
                    Some(b) if (self.items[b].0, self.items[b].1) <= (e.0, e.1) => {}
                    _ => best = Some(i),
                }
            }
        }
        best.map(|i| {
            let (t, _, ev) = self.items.remove(i);
            (t, ev)
        })
    }
}
