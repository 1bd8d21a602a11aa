//! The step cap and the watched levels of the run loop: when nothing is pending the step may be
//! relaxed, the levels whose crossing the integrator locates, and the tight cap from the
//! shortest relay time.

use super::Engine;
use crate::model::{Plant, Scheme};
use crate::relay::protection::ElementState;
use crate::relay::stage::StageState;
use crate::relay::{Guard, Quantity};
use crate::sim::integrate::{Band, StateGuard};
use crate::sim::rhs::{measured_index, rocof_index, speed_index};

/// A frequency level counts as near within this distance (Hz); the relaxed step cap needs twice
/// it at the start of a segment and ends when the state comes within it.
const NEAR_HZ: f64 = 0.1;
/// The same for a ROCOF level (Hz/s).
const NEAR_HZ_PER_S: f64 = 0.25;
/// Frequency changing faster than this (Hz/s) keeps the tight cap.
const QUIET_RATE_HZ_PER_S: f64 = 0.5;

impl Engine<'_> {
    /// Nothing pending: no relay timing, every watched level at least twice its near distance
    /// away, and every separated island's frequency changing slowly (`dy` is dy/dt now).
    pub(super) fn is_quiet(&self, guards: &[StateGuard], dy: &[f64]) -> bool {
        let timing = self.stages.iter().any(|s| {
            matches!(
                s.state,
                StageState::PickedUp { .. } | StageState::Commanded { .. }
            )
        }) || self.gen_elems.iter().enumerate().any(|(g, els)| {
            self.cond.machine_on[g]
                && !self.frozen[self.plant.generators[g].section]
                && els
                    .iter()
                    .any(|e| matches!(e.state, ElementState::Timing { .. }))
        }) || self
            .over
            .iter()
            .any(|e| matches!(e.state, ElementState::Timing { .. }))
            || (self.breakers.utility_closed
                && self
                    .iface
                    .iter()
                    .any(|e| matches!(e.state, ElementState::Timing { .. })));
        if timing {
            return false;
        }
        let fast = self.islands.iter().any(|isl| {
            let s0 = isl.sections[0];
            !isl.on_utility
                && !self.frozen[s0]
                && (dy[speed_index(s0)] * self.f0).abs() > QUIET_RATE_HZ_PER_S
        });
        if fast {
            return false;
        }
        guards
            .iter()
            .all(|g| (self.y[g.index] - g.level).abs() > 2.0 * self.near_pu(g))
    }

    /// Near distance of a guard in its component's units (pu or pu/s).
    fn near_pu(&self, g: &StateGuard) -> f64 {
        let is_rocof = (0..self.eq.n_sections).any(|s| rocof_index(s) == g.index);
        if is_rocof {
            NEAR_HZ_PER_S / self.f0
        } else {
            NEAR_HZ / self.f0
        }
    }

    /// For a quiet segment: each watched component must stay farther than its near distance
    /// from every level on the side it is on now.
    pub(super) fn bands(&self, guards: &[StateGuard]) -> Vec<Band> {
        let mut out: Vec<Band> = Vec::new();
        for g in guards {
            let near = self.near_pu(g);
            let v = self.y[g.index];
            let (lo, hi) = if v >= g.level {
                (g.level + near, f64::INFINITY)
            } else {
                (f64::NEG_INFINITY, g.level - near)
            };
            match out.iter_mut().find(|b| b.index == g.index) {
                Some(b) => {
                    b.lo = b.lo.max(lo);
                    b.hi = b.hi.min(hi);
                }
                None => out.push(Band {
                    index: g.index,
                    lo,
                    hi,
                }),
            }
        }
        out
    }

    /// Every level whose crossing may change a relay, the collapse or the over-speed state. With `for_quiet`,
    /// the list that decides the relaxed cap: a df/dt-supervised stage whose measured df/dt is
    /// far on the blocking side cannot pick up before that df/dt crosses its level, so only the
    /// df/dt level of such a stage is watched.
    pub(super) fn guards_for(&self, for_quiet: bool) -> Vec<StateGuard> {
        let mut rg: Vec<Guard> = Vec::new();
        for st in &self.stages {
            if !st.section.is_some_and(|s| !self.frozen[s]) {
                continue;
            }
            let start = rg.len();
            st.guards(&mut rg);
            if for_quiet && rg.len() == start + 2 && rg[start + 1].quantity == Quantity::Rocof {
                let rocof = &rg[start + 1];
                let measured_hz_per_s = self.f0 * self.y[rocof_index(rocof.section)];
                if measured_hz_per_s - rocof.level > 2.0 * NEAR_HZ_PER_S {
                    rg.remove(start);
                }
            }
        }
        for (g, els) in self.gen_elems.iter().enumerate() {
            if self.cond.machine_on[g] && !self.frozen[self.plant.generators[g].section] {
                els.iter().for_each(|e| e.guards(&mut rg));
            }
        }
        if self.breakers.utility_closed {
            self.iface.iter().for_each(|e| e.guards(&mut rg));
        }
        for (j, e) in self.over.iter().enumerate() {
            let g = self.scheme.over_frequency[j].action.generator();
            if self.cond.machine_on[g] && !self.frozen[e.section] {
                e.guards(&mut rg);
            }
        }
        let mut out: Vec<StateGuard> = rg
            .iter()
            .map(|g| match g.quantity {
                Quantity::Frequency => StateGuard {
                    index: measured_index(g.section),
                    level: (g.level - self.f0) / self.f0,
                },
                Quantity::Rocof => StateGuard {
                    index: rocof_index(g.section),
                    level: g.level / self.f0,
                },
            })
            .collect();
        for isl in &self.islands {
            let s0 = isl.sections[0];
            if !isl.on_utility && !self.frozen[s0] {
                out.push(StateGuard {
                    index: speed_index(s0),
                    level: self.cfg.floor_pu(self.f0),
                });
                out.push(StateGuard {
                    index: speed_index(s0),
                    level: self.cfg.overspeed_pu(),
                });
            }
        }
        out
    }
}

/// The tight step cap: the configured one, and below half the shortest stage delay, stage
/// breaker time or protection time of the run so that no relay sequence fits inside one step.
pub(super) fn tight_step(plant: &Plant, scheme: &Scheme, configured_s: f64) -> f64 {
    let stage_times = scheme
        .stages
        .iter()
        .flat_map(|s| [s.delay_s, s.breaker_s])
        .chain(
            scheme
                .over_frequency
                .iter()
                .flat_map(|o| [o.delay_s, o.breaker_s]),
        );
    let trip_time = |t: &crate::model::FrequencyTrip| match *t {
        crate::model::FrequencyTrip::Under { after_s, .. }
        | crate::model::FrequencyTrip::Over { after_s, .. }
        | crate::model::FrequencyTrip::Rocof { after_s, .. } => after_s,
    };
    let trips = plant
        .generators
        .iter()
        .flat_map(|g| g.trips.iter().map(trip_time))
        .chain(
            plant
                .utility
                .iter()
                .flat_map(|u| u.interface_trips.iter().map(trip_time)),
        );
    stage_times
        .chain(trips)
        .filter(|t| *t > 0.0)
        .map(|t| 0.5 * t)
        .fold(configured_s, f64::min)
        .max(1e-4)
}
