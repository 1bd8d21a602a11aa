//! Islands during a run: new island lists after a breaker opens, their records, frozen and
//! blacked-out islands, and each island's mode (on the utility, free, frozen).

use super::{Engine, IslandRecord};
use crate::sim::event::Event;
use crate::sim::rhs::IslandMode;
use crate::sim::{EventKind, IslandEnd, StopReason};
use crate::topology::{self, Island};

impl Engine<'_> {
    pub(super) fn freeze(&mut self, island: usize, end: IslandEnd) {
        for &s in &self.islands[island].sections {
            self.frozen[s] = true;
        }
        let r = self.island_record[island];
        self.records[r].end = end;
        self.records[r].to_s = Some(self.t);
        self.refresh_modes();
    }

    pub(super) fn check_blackout(&mut self) {
        for i in 0..self.islands.len() {
            let isl = &self.islands[i];
            if isl.on_utility || self.frozen[isl.sections[0]] {
                continue;
            }
            let any_machine = self
                .eq
                .machines
                .iter()
                .enumerate()
                .any(|(g, m)| self.cond.machine_on[g] && isl.contains(m.section));
            if !any_machine {
                let r = self.island_record[i];
                self.freeze(i, IslandEnd::Blackout);
                self.log(EventKind::Blackout { island: r });
                if self.first_failure.is_none() {
                    self.first_failure = Some(StopReason::Blackout {
                        island: r,
                        at_s: self.t,
                    });
                }
            }
        }
    }

    pub(super) fn retopologize(&mut self) {
        let new = topology::islands(self.plant, &self.breakers);
        self.adopt_islands(new);
        self.check_blackout();
        self.schedule_transfers();
    }

    /// Pressure-controlled machines whose island is off the utility at t = 0 are in speed
    /// control from the start (the plant has been running islanded).
    pub(super) fn start_in_speed_control(&mut self) {
        for g in 0..self.eq.machines.len() {
            let isl = self.cond.island_of_section[self.eq.machines[g].section];
            if self.islands[isl].on_utility {
                continue;
            }
            if let Some(p) = self.eq.machines[g].governor.pressure.as_mut() {
                p.speed_control = true;
                self.transfer_set[g] = true;
            }
        }
    }

    /// A pressure-controlled machine whose island has just lost the utility transfers to speed
    /// control `transfer_s` later (one transfer per machine).
    fn schedule_transfers(&mut self) {
        for (g, gen) in self.plant.generators.iter().enumerate() {
            let Some(pc) = gen.governor.pressure_control else {
                continue;
            };
            let isl = self.cond.island_of_section[gen.section];
            if self.transfer_set[g] || !self.cond.machine_on[g] || self.islands[isl].on_utility {
                continue;
            }
            self.transfer_set[g] = true;
            self.queue.push(
                self.t + pc.transfer_s.max(0.0),
                Event::PressureTransfer { generator: g },
            );
        }
    }

    /// Take a new island list: unchanged islands keep their record; changed ones get new records.
    pub(super) fn adopt_islands(&mut self, new: Vec<Island>) {
        let mut new_records = Vec::with_capacity(new.len());
        for isl in &new {
            let kept = self
                .islands
                .iter()
                .position(|o| o == isl)
                .map(|o| self.island_record[o]);
            if let Some(r) = kept {
                new_records.push(r);
                continue;
            }
            for (o, old) in self.islands.iter().enumerate() {
                let r = self.island_record[o];
                if old.sections.iter().any(|s| isl.contains(*s)) && self.records[r].to_s.is_none() {
                    self.records[r].to_s = Some(self.t);
                    self.records[r].end = IslandEnd::Changed;
                }
            }
            let r = self.records.len();
            let frozen = isl.sections.iter().all(|s| self.frozen[*s]);
            self.records.push(IslandRecord {
                sections: isl.sections.clone(),
                on_utility: isl.on_utility,
                from_s: self.t,
                to_s: frozen.then_some(self.t),
                end: if frozen {
                    IslandEnd::Collapsed
                } else {
                    IslandEnd::Running
                },
                shed_mw: 0.0,
                dropped_mw: 0.0,
            });
            new_records.push(r);
            let sections = isl
                .sections
                .iter()
                .map(|s| self.plant.sections[*s].id.clone())
                .collect();
            self.log(EventKind::IslandFormed {
                island: r,
                sections,
                on_utility: isl.on_utility,
            });
        }
        self.islands = new;
        self.island_record = new_records;
        for (i, isl) in self.islands.iter().enumerate() {
            for &s in &isl.sections {
                self.cond.island_of_section[s] = i;
            }
        }
        self.refresh_modes();
    }

    pub(super) fn refresh_modes(&mut self) {
        let slope = self.utility_slope(self.t);
        self.cond.modes = self
            .islands
            .iter()
            .map(|isl| {
                if isl.on_utility {
                    IslandMode::Utility {
                        slope_pu_per_s: slope,
                    }
                } else if self.frozen[isl.sections[0]] {
                    IslandMode::Frozen
                } else {
                    IslandMode::Free
                }
            })
            .collect();
    }

    /// Utility frequency deviation at `t` (pu), the profile joined by straight lines.
    pub(super) fn utility_pu(&self, t: f64) -> f64 {
        let p = &self.case.utility_profile;
        let hz = match p.len() {
            0 => self.f0,
            _ if t <= p[0].0 => p[0].1,
            _ if t >= p[p.len() - 1].0 => p[p.len() - 1].1,
            _ => {
                let k = p
                    .windows(2)
                    .position(|w| t >= w[0].0 && t < w[1].0)
                    .unwrap_or(0);
                let (a, b) = (p[k], p[k + 1]);
                a.1 + (b.1 - a.1) * (t - a.0) / (b.0 - a.0)
            }
        };
        (hz - self.f0) / self.f0
    }

    /// Slope of the utility profile on the piece that starts at or after `t` (pu/s).
    pub(super) fn utility_slope(&self, t: f64) -> f64 {
        let p = &self.case.utility_profile;
        for w in p.windows(2) {
            if t >= w[0].0 && t < w[1].0 && w[1].0 > w[0].0 {
                return (w[1].1 - w[0].1) / (w[1].0 - w[0].0) / self.f0;
            }
        }
        0.0
    }
}
