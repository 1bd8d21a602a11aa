//! Relays on the measured signals: under-frequency stages, generator and interface protection,
//! and the collapse and over-speed levels that freeze an island.

use super::Engine;
use crate::relay::protection::ElementAction;
use crate::relay::stage::StageAction;
use crate::relay::Signal;
use crate::sim::event::Event;
use crate::sim::rhs::{measured_index, rocof_index, speed_index};
use crate::sim::{EventKind, IslandEnd, StopReason};

impl Engine<'_> {
    pub(super) fn signals(&self) -> Vec<Signal> {
        (0..self.eq.n_sections)
            .map(|s| Signal {
                frequency_hz: self.f0 * (1.0 + self.y[measured_index(s)]),
                rocof_hz_per_s: self.f0 * self.y[rocof_index(s)],
            })
            .collect()
    }

    pub(super) fn evaluate_relays(&mut self) {
        let sig = self.signals();
        for i in 0..self.stages.len() {
            let Some(s) = self.stages[i].section else {
                continue;
            };
            if self.frozen[s] {
                continue;
            }
            let action = self.stages[i].update(self.t, &sig[s]);
            if action.is_none() {
                continue;
            }
            let stage = self.scheme.stages[i].id.clone();
            match action {
                Some(StageAction::PickedUp { expires_s }) => {
                    self.log(EventKind::StagePickup { stage });
                    self.queue.push(
                        expires_s,
                        Event::StageDelay {
                            stage: i,
                            timer_s: expires_s,
                        },
                    );
                }
                Some(StageAction::Reset) => self.log(EventKind::StageReset { stage }),
                _ => {}
            }
        }
        for g in 0..self.gen_elems.len() {
            let s = self.plant.generators[g].section;
            if !self.cond.machine_on[g] || self.frozen[s] {
                continue;
            }
            for j in 0..self.gen_elems[g].len() {
                let action = self.gen_elems[g][j].update(self.t, &sig[s]);
                if action.is_none() {
                    continue;
                }
                let element = format!(
                    "{} {}",
                    self.plant.generators[g].id,
                    self.gen_elems[g][j].describe()
                );
                match action {
                    Some(ElementAction::Started { expires_s }) => {
                        self.log(EventKind::ProtectionPickup { element });
                        self.queue.push(
                            expires_s,
                            Event::GeneratorElement {
                                generator: g,
                                element: j,
                                timer_s: expires_s,
                            },
                        );
                    }
                    Some(ElementAction::Reset) => self.log(EventKind::ProtectionReset { element }),
                    _ => {}
                }
            }
        }
        if self.breakers.utility_closed {
            for j in 0..self.iface.len() {
                let s = self.iface[j].section;
                let action = self.iface[j].update(self.t, &sig[s]);
                if action.is_none() {
                    continue;
                }
                let element = format!("interface {}", self.iface[j].describe());
                match action {
                    Some(ElementAction::Started { expires_s }) => {
                        self.log(EventKind::ProtectionPickup { element });
                        self.queue.push(
                            expires_s,
                            Event::InterfaceElement {
                                element: j,
                                timer_s: expires_s,
                            },
                        );
                    }
                    Some(ElementAction::Reset) => self.log(EventKind::ProtectionReset { element }),
                    _ => {}
                }
            }
        }
        for j in 0..self.over.len() {
            let g = self.scheme.over_frequency[j].action.generator();
            let s = self.over[j].section;
            if !self.cond.machine_on[g] || self.frozen[s] {
                continue;
            }
            let stage = self.scheme.over_frequency[j].id.clone();
            match self.over[j].update(self.t, &sig[s]) {
                Some(ElementAction::Started { expires_s }) => {
                    self.log(EventKind::StagePickup { stage });
                    self.queue.push(
                        expires_s,
                        Event::OverDelay {
                            stage: j,
                            timer_s: expires_s,
                        },
                    );
                }
                Some(ElementAction::Reset) => self.log(EventKind::StageReset { stage }),
                _ => {}
            }
        }
        let floor = self.cfg.floor_pu(self.f0);
        let ceiling = self.cfg.overspeed_pu();
        for i in 0..self.islands.len() {
            let s0 = self.islands[i].sections[0];
            if self.islands[i].on_utility || self.frozen[s0] {
                continue;
            }
            let dw = self.y[speed_index(s0)];
            if dw < floor {
                let r = self.island_record[i];
                self.freeze(i, IslandEnd::Collapsed);
                self.log(EventKind::Collapse { island: r });
                if self.first_failure.is_none() {
                    self.first_failure = Some(StopReason::Collapse {
                        island: r,
                        at_s: self.t,
                    });
                }
            } else if dw > ceiling {
                let r = self.island_record[i];
                self.freeze(i, IslandEnd::Overspeed);
                self.log(EventKind::Overspeed { island: r });
                if self.first_failure.is_none() {
                    self.first_failure = Some(StopReason::Overspeed {
                        island: r,
                        at_s: self.t,
                    });
                }
            }
        }
    }
}
