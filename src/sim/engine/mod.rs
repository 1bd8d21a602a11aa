//! The run loop: owns time, the event queue, breaker and relay state, and the island records.
//!
//! Each pass handles every event due now (one `match` over [`Event`]), re-evaluates the relays
//! on the measured signals, then integrates to the next timer or to the first located guard
//! crossing, whichever comes first. The solver is restarted after every discrete change.
//!
//! Split by concept: [`step`] the step cap and watched levels, [`events`] the discrete changes,
//! [`relays`] the relays on the measured signals, [`islands`] the island list and records,
//! [`summary`] the [`Run`] at the end, [`start`] the state at t = 0.

mod events;
mod islands;
mod relays;
mod start;
mod step;
mod summary;

pub use start::initial_outputs;

use super::event::{Event, Queue};
use super::integrate::{integrate, StepOptions};
use super::record::Recorder;
use super::rhs::{
    measured_index, speed_index, Conditions, IslandMode, LoadUnit, Machine, PlantEquations,
    SegmentEquations,
};
use super::{EventKind, IslandEnd, LoggedEvent, Run, SimConfig, StopReason};
use crate::dynamics::governor::Governor;
use crate::model::{Case, FrequencyTrip, Plant, Scheme};
use crate::relay::protection::Element;
use crate::relay::stage::StageRelay;
use crate::topology::{BreakerState, Island};
use start::{initial_dispatch, start_state};
use step::tight_step;

/// While the tight cap is on, the loop looks again this often (s) whether it may be relaxed.
const RECHECK_S: f64 = 0.25;

pub fn run(plant: &Plant, case: &Case, op: usize, scheme: &Scheme, cfg: &SimConfig) -> Run {
    // The relays hold the settings of the group in force at this point; stages out of service
    // there are left out.
    let held;
    let scheme = if scheme.groups.is_empty() && scheme.stages.iter().all(|s| s.in_service) {
        scheme
    } else {
        held = scheme.at_point(op);
        &held
    };
    let mut e = Engine::new(plant, case, op, scheme, cfg);
    e.execute();
    e.finish()
}

struct IslandRecord {
    sections: Vec<usize>,
    on_utility: bool,
    from_s: f64,
    to_s: Option<f64>,
    end: IslandEnd,
    shed_mw: f64,
    dropped_mw: f64,
}

struct Dip {
    section: usize,
    remaining_pu: f64,
    active: bool,
}

struct Engine<'a> {
    plant: &'a Plant,
    case: &'a Case,
    scheme: &'a Scheme,
    cfg: SimConfig,
    f0: f64,
    t_end: f64,
    eq: PlantEquations,
    cond: Conditions,
    breakers: BreakerState,
    islands: Vec<Island>,
    island_record: Vec<usize>,
    records: Vec<IslandRecord>,
    frozen: Vec<bool>,
    stages: Vec<StageRelay>,
    /// By stage: the loads a flow-sized stage chose when its breaker opened.
    picked: Vec<Option<Vec<usize>>>,
    gen_elems: Vec<Vec<Element>>,
    iface: Vec<Element>,
    queue: Queue,
    events: Vec<LoggedEvent>,
    n_events: usize,
    /// State values kept so far (accepted steps × state entries), against
    /// `SimConfig::max_kept_values`.
    kept_values: usize,
    max_events: usize,
    dips: Vec<Dip>,
    shed_mw: f64,
    dropped_mw: f64,
    t: f64,
    y: Vec<f64>,
    rec: Recorder,
    /// Tight step cap: the configured one, below half the shortest relay time.
    tight_step_s: f64,
    first_failure: Option<StopReason>,
    fault: Option<StopReason>,
    /// By machine: a pressure-controlled machine's transfer is scheduled or done.
    transfer_set: Vec<bool>,
    /// The scheme's over-frequency stages as definite-time elements at their generator's section.
    over: Vec<Element>,
}

impl<'a> Engine<'a> {
    fn new(
        plant: &'a Plant,
        case: &'a Case,
        op_idx: usize,
        scheme: &'a Scheme,
        cfg: &SimConfig,
    ) -> Self {
        let f0 = plant.nominal_hz;
        let op = &plant.operating_points[op_idx];
        let n_sec = plant.sections.len();
        let (breakers, islands, load_on, machine_on) = start_state(plant, case, op_idx);
        let (p_ref, events) = initial_dispatch(plant, op_idx, &islands, &load_on, &machine_on);
        let mut offset = 3 * n_sec;
        let machines: Vec<Machine> = plant
            .generators
            .iter()
            .enumerate()
            .map(|(g, gen)| {
                let dispatch = op.output_mw.get(g).copied().unwrap_or(0.0);
                let governor = Governor::new(gen, p_ref[g], dispatch, f0);
                let m = Machine {
                    section: gen.section,
                    stored_mws: gen.inertia_s * gen.rating_mva,
                    governor,
                    offset,
                };
                offset += governor.n_states();
                m
            })
            .collect();
        let loads: Vec<LoadUnit> = plant
            .loads
            .iter()
            .enumerate()
            .map(|(l, ld)| {
                let p0 = op.load_mw.get(l).copied().unwrap_or(0.0);
                LoadUnit {
                    section: ld.section,
                    p0_mw: p0,
                    freq_exp: ld.freq_exp,
                    stored_mws: ld.inertia_s.max(0.0) * p0,
                }
            })
            .collect();
        let eq = PlantEquations {
            n_sections: n_sec,
            n_states: offset,
            machines,
            loads,
            frequency_lag_s: scheme.measurement.frequency_lag_s.max(0.0),
            rocof_window_s: scheme.measurement.rocof_window_s,
        };
        let cond = Conditions {
            island_of_section: vec![0; n_sec],
            modes: vec![],
            machine_on,
            load_on,
            v_sq: vec![1.0; n_sec],
            step_mw: vec![0.0; n_sec],
        };
        let stages = scheme
            .stages
            .iter()
            .map(|s| StageRelay::new(s, s.measuring_section(plant)))
            .collect();
        let gen_elems = plant
            .generators
            .iter()
            .map(|g| {
                g.trips
                    .iter()
                    .map(|t| Element::new(*t, g.section))
                    .collect()
            })
            .collect();
        let iface = plant
            .utility
            .as_ref()
            .map(|u| {
                u.interface_trips
                    .iter()
                    .map(|t| Element::new(*t, u.section))
                    .collect()
            })
            .unwrap_or_default();
        let mut queue = Queue::default();
        for (i, ce) in case.events.iter().enumerate() {
            queue.push(ce.at_s.max(0.0), Event::CaseAction(i));
        }
        for &(t, _) in &case.utility_profile {
            if t > 0.0 {
                queue.push(t, Event::UtilityProfile);
            }
        }
        let recover = cfg.recover_above_hz.unwrap_or(0.99 * f0);
        let max_events = cfg.max_events + case.events.len() + case.utility_profile.len();
        let mut e = Engine {
            plant,
            case,
            scheme,
            cfg: *cfg,
            f0,
            t_end: case.duration_s.max(0.0),
            eq,
            cond,
            breakers,
            islands: vec![],
            island_record: vec![],
            records: vec![],
            frozen: vec![false; n_sec],
            picked: vec![None; scheme.stages.len()],
            stages,
            gen_elems,
            iface,
            queue,
            events,
            n_events: 0,
            kept_values: 0,
            max_events,
            dips: vec![],
            shed_mw: 0.0,
            dropped_mw: 0.0,
            t: 0.0,
            y: vec![0.0; offset],
            rec: Recorder::new(f0, n_sec, cfg.sample_interval_s.max(1e-4), recover)
                .watching(cfg.stop_when_failing, cfg.rocof_window_s),
            tight_step_s: tight_step(plant, scheme, cfg.max_step_s.max(1e-4)),
            first_failure: None,
            fault: None,
            transfer_set: vec![false; plant.generators.len()],
            over: scheme
                .over_frequency
                .iter()
                .map(|o| {
                    let trip = FrequencyTrip::Over {
                        hz: o.pickup_hz,
                        after_s: o.delay_s,
                    };
                    Element::new(trip, plant.generators[o.action.generator()].section)
                })
                .collect(),
        };
        e.adopt_islands(islands);
        e.start_in_speed_control();
        let u0 = e.utility_pu(0.0);
        for s in 0..n_sec {
            let dw = if e.islands[e.cond.island_of_section[s]].on_utility {
                u0
            } else {
                0.0
            };
            e.y[speed_index(s)] = dw;
            e.y[measured_index(s)] = dw;
        }
        for m in &e.eq.machines {
            let n = m.governor.n_states();
            let dw = e.y[speed_index(m.section)];
            m.governor.init(dw, &mut e.y[m.offset..m.offset + n]);
        }
        e.check_blackout();
        e.rec.start(&e.y);
        e
    }

    fn log(&mut self, what: EventKind) {
        self.events.push(LoggedEvent { at_s: self.t, what });
    }

    fn execute(&mut self) {
        self.evaluate_relays();
        let mut dy = vec![0.0; self.y.len()];
        // The previous segment's equations and its last step: a restart with unchanged equations
        // (a recheck of the step cap, a timer or crossing that changed nothing continuous) starts
        // from that step instead of a fresh estimate.
        let mut previous: Option<(SegmentEquations, f64)> = None;
        loop {
            while let Some((at, ev)) = self.queue.pop_due(self.t) {
                self.handle(at, ev);
                self.n_events += 1;
                if self.n_events > self.max_events {
                    self.fault = Some(StopReason::NumericalFault {
                        at_s: self.t,
                        detail: "event storm".into(),
                    });
                }
                if self.fault.is_some() {
                    return;
                }
            }
            self.evaluate_relays();
            if self.queue.next_time().is_some_and(|tq| tq <= self.t) {
                continue;
            }
            if self.t >= self.t_end {
                return;
            }
            let mut t_next = self
                .queue
                .next_time()
                .map_or(self.t_end, |tq| tq.min(self.t_end));
            self.refresh_modes();
            let seq = SegmentEquations::new(&self.eq, &self.cond);
            seq.derivatives(&self.y, &mut dy);
            let guards = self.guards_for(false);
            let watched = self.guards_for(true);
            let quiet = self.is_quiet(&watched, &dy);
            if !quiet && self.cfg.quiet_max_step_s > self.tight_step_s {
                // Look again soon whether the relaxed cap may be used.
                t_next = t_next.min(self.t + RECHECK_S);
            }
            let opt = StepOptions {
                max_step_s: if quiet {
                    self.cfg.quiet_max_step_s.max(self.tight_step_s)
                } else {
                    self.tight_step_s
                },
                rtol: self.cfg.rtol,
                atol: self.cfg.atol,
                first_step_s: match &previous {
                    Some((p, h)) if *p == seq => *h,
                    _ => 0.0,
                },
                max_kept_values: self.cfg.max_kept_values.saturating_sub(self.kept_values),
            };
            let bands = if quiet {
                self.bands(&watched)
            } else {
                Vec::new()
            };
            let seg = match integrate(&seq, self.t, &self.y, t_next, &guards, &bands, &opt) {
                Ok(s) => s,
                Err(detail) => {
                    self.fault = Some(StopReason::NumericalFault {
                        at_s: self.t,
                        detail,
                    });
                    return;
                }
            };
            self.kept_values = self.kept_values.saturating_add(seg.kept_values());
            if self.kept_values > self.cfg.max_kept_values {
                self.fault = Some(StopReason::NumericalFault {
                    at_s: self.t,
                    detail: format!(
                        "the run needs more than {} kept state values ({} integration steps of \
                         {} states), its memory ceiling; shorten the case (duration_s) or split \
                         the plant",
                        self.cfg.max_kept_values,
                        self.cfg.max_kept_values / self.y.len().max(1),
                        self.y.len()
                    ),
                });
                return;
            }
            let last_t = seg.times[seg.times.len() - 1];
            let (t_stop, crossed) = match seg
                .guard_hit
                .then(|| seg.locate(&guards, self.cfg.locate_tol_s))
                .flatten()
            {
                Some(tc) => (tc, true),
                None if seg.guard_hit || seg.band_left => (last_t, false),
                None => (t_next, false),
            };
            let y_stop = if crossed {
                seg.at(t_stop)
            } else {
                seg.last_state().to_vec()
            };
            if y_stop.iter().any(|v| !v.is_finite()) {
                self.fault = Some(StopReason::NumericalFault {
                    at_s: t_stop,
                    detail: "state is not finite".into(),
                });
                return;
            }
            if crossed {
                seq.derivatives(&y_stop, &mut dy);
            } else {
                dy.copy_from_slice(seg.slope(seg.n_points() - 1));
            }
            let frozen: Vec<bool> = (0..self.eq.n_sections)
                .map(|s| self.cond.modes[self.cond.island_of_section[s]] == IslandMode::Frozen)
                .collect();
            let h_last = seg.last_step_s();
            self.rec
                .segment(seg, &frozen, t_stop, &y_stop, &dy, self.shed_mw);
            previous = Some((seq, h_last));
            self.t = t_stop;
            self.y = y_stop;
            if let Some((at_s, criterion)) = self.rec.certain_failure() {
                // Asked only whether the run holds, and it cannot: the rest is not simulated.
                self.first_failure
                    .get_or_insert(StopReason::CertainFailure { at_s, criterion });
                return;
            }
            if crossed {
                self.handle(self.t, Event::Crossing);
                self.n_events += 1;
                if self.n_events > self.max_events {
                    self.fault = Some(StopReason::NumericalFault {
                        at_s: self.t,
                        detail: "event storm".into(),
                    });
                    return;
                }
            }
        }
    }
}
