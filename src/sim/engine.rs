//! The run loop: owns time, the event queue, breaker and relay state, and the island records.
//!
//! Each pass handles every event due now (one `match` over [`Event`]), re-evaluates the relays
//! on the measured signals, then integrates to the next timer or to the first located guard
//! crossing, whichever comes first. The solver is restarted after every discrete change.

use super::event::{Event, Queue};
use super::integrate::{integrate, Band, StateGuard, StepOptions};
use super::record::Recorder;
use super::rhs::{
    measured_index, rocof_index, speed_index, Conditions, IslandMode, LoadUnit, Machine,
    PlantEquations, SegmentEquations,
};
use super::{
    Cause, EventKind, IslandEnd, IslandSummary, LoggedEvent, Run, SimConfig, StopReason, Trace,
};
use crate::dynamics::governor::Governor;
use crate::model::{Action, BreakerRef, Case, Plant, Scheme, Start};
use crate::relay::protection::{Element, ElementAction, ElementState};
use crate::relay::stage::{StageAction, StageRelay, StageState};
use crate::relay::{Guard, Quantity, Signal};
use crate::topology::{self, BreakerState, Island};

/// A frequency level counts as near within this distance (Hz); the relaxed step cap needs twice
/// it at the start of a segment and ends when the state comes within it.
const NEAR_HZ: f64 = 0.1;
/// The same for a ROCOF level (Hz/s).
const NEAR_HZ_PER_S: f64 = 0.25;
/// While the tight cap is on, the loop looks again this often (s) whether it may be relaxed.
const RECHECK_S: f64 = 0.25;
/// Frequency changing faster than this (Hz/s) keeps the tight cap.
const QUIET_RATE_HZ_PER_S: f64 = 0.5;

pub fn run(plant: &Plant, case: &Case, op: usize, scheme: &Scheme, cfg: &SimConfig) -> Run {
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
    gen_elems: Vec<Vec<Element>>,
    iface: Vec<Element>,
    queue: Queue,
    events: Vec<LoggedEvent>,
    n_events: usize,
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
                let governor = Governor::new(gen, p_ref[g], f0);
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
            stages,
            gen_elems,
            iface,
            queue,
            events,
            n_events: 0,
            max_events,
            dips: vec![],
            shed_mw: 0.0,
            dropped_mw: 0.0,
            t: 0.0,
            y: vec![0.0; offset],
            rec: Recorder::new(f0, n_sec, cfg.sample_interval_s.max(1e-4), recover),
            tight_step_s: tight_step(plant, scheme, cfg.max_step_s.max(1e-4)),
            first_failure: None,
            fault: None,
        };
        e.adopt_islands(islands);
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
            self.rec
                .segment(seg, &frozen, t_stop, &y_stop, &dy, self.shed_mw);
            self.t = t_stop;
            self.y = y_stop;
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

    /// Nothing pending: no relay timing, every watched level at least twice its near distance
    /// away, and every separated island's frequency changing slowly (`dy` is dy/dt now).
    fn is_quiet(&self, guards: &[StateGuard], dy: &[f64]) -> bool {
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
        }) || (self.breakers.utility_closed
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
    fn bands(&self, guards: &[StateGuard]) -> Vec<Band> {
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

    /// Every discrete change of a run passes through this match.
    fn handle(&mut self, at_s: f64, ev: Event) {
        match ev {
            Event::CaseAction(i) => match self.case.events[i].action {
                Action::Open(br) => self.open_breaker(br, Cause::Case),
                Action::LoadStep { section, mw } => {
                    self.cond.step_mw[section] += mw;
                    let section = self.plant.sections[section].id.clone();
                    self.log(EventKind::LoadStep { section, mw });
                }
                Action::VoltageDip {
                    section,
                    remaining_pu,
                    duration_s,
                } => self.start_dip(section, remaining_pu, duration_s),
            },
            Event::DipEnd(d) => {
                self.dips[d].active = false;
                let s = self.dips[d].section;
                self.update_voltage(s);
                let section = self.plant.sections[s].id.clone();
                self.log(EventKind::VoltageRestored { section });
            }
            Event::UtilityProfile => {}
            Event::StageDelay { stage, timer_s } => {
                if let Some(StageAction::Commanded { opens_s }) =
                    self.stages[stage].delay_expired(at_s, timer_s)
                {
                    let id = self.scheme.stages[stage].id.clone();
                    self.log(EventKind::StageTripCommand { stage: id });
                    self.queue.push(
                        opens_s,
                        Event::StageBreaker {
                            stage,
                            timer_s: opens_s,
                        },
                    );
                }
            }
            Event::StageBreaker { stage, timer_s } => {
                if self.stages[stage].breaker_done(timer_s) {
                    self.open_stage_loads(stage);
                }
            }
            Event::GeneratorElement {
                generator,
                element,
                timer_s,
            } => {
                if self.cond.machine_on[generator]
                    && self.gen_elems[generator][element]
                        .expired(timer_s)
                        .is_some()
                {
                    let what = self.gen_elems[generator][element].describe();
                    self.open_breaker(
                        BreakerRef::Generator(generator),
                        Cause::Protection { element: what },
                    );
                }
            }
            Event::InterfaceElement { element, timer_s } => {
                if self.breakers.utility_closed && self.iface[element].expired(timer_s).is_some() {
                    let what = format!("interface {}", self.iface[element].describe());
                    self.open_breaker(BreakerRef::Utility, Cause::Protection { element: what });
                }
            }
            Event::LoadUndervoltage { load } => {
                if self.cond.load_on[load] {
                    self.cond.load_on[load] = false;
                    let mw = self.eq.loads[load].p0_mw;
                    let isl = self.cond.island_of_section[self.eq.loads[load].section];
                    let r = self.island_record[isl];
                    self.records[r].dropped_mw += mw;
                    self.dropped_mw += mw;
                    let id = self.plant.loads[load].id.clone();
                    self.log(EventKind::LoadDroppedOut { load: id, mw });
                }
            }
            Event::GeneratorUndervoltage { generator, dip } => {
                if self.cond.machine_on[generator] {
                    let v = self.dips[dip].remaining_pu;
                    self.open_breaker(
                        BreakerRef::Generator(generator),
                        Cause::Protection {
                            element: format!("undervoltage ride-through ({v} pu)"),
                        },
                    );
                }
            }
            Event::Crossing => self.evaluate_relays(),
        }
    }

    fn open_breaker(&mut self, br: BreakerRef, cause: Cause) {
        match br {
            BreakerRef::Utility => {
                if !self.breakers.utility_closed {
                    return;
                }
                self.breakers.utility_closed = false;
                let breaker = self
                    .plant
                    .utility
                    .as_ref()
                    .map_or_else(|| "utility".to_string(), |u| u.breaker_id.clone());
                self.log(EventKind::BreakerOpened { breaker, cause });
                self.retopologize();
            }
            BreakerRef::Tie(i) => {
                if !self.breakers.tie_closed.get(i).copied().unwrap_or(false) {
                    return;
                }
                self.breakers.tie_closed[i] = false;
                let breaker = self.plant.ties[i].id.clone();
                self.log(EventKind::BreakerOpened { breaker, cause });
                self.retopologize();
            }
            BreakerRef::Generator(g) => {
                if !self.cond.machine_on[g] {
                    return;
                }
                self.cond.machine_on[g] = false;
                let generator = self.plant.generators[g].id.clone();
                let (element, cascade) = match &cause {
                    Cause::Case => ("case action".to_string(), false),
                    Cause::Protection { element } => (element.clone(), true),
                };
                self.log(EventKind::BreakerOpened {
                    breaker: generator.clone(),
                    cause,
                });
                self.log(EventKind::GeneratorTripped {
                    generator,
                    element,
                    cascade,
                });
                self.check_blackout();
            }
        }
        for i in 0..self.stages.len() {
            if let Some(StageAction::PickedUp { expires_s }) =
                self.stages[i].breaker_opened(self.t, br)
            {
                let stage = self.scheme.stages[i].id.clone();
                self.log(EventKind::StagePickup { stage });
                self.queue.push(
                    expires_s,
                    Event::StageDelay {
                        stage: i,
                        timer_s: expires_s,
                    },
                );
            }
        }
    }

    fn open_stage_loads(&mut self, stage: usize) {
        let mut ids = Vec::new();
        let mut mw = 0.0;
        for &l in &self.scheme.stages[stage].sheds {
            if !self.cond.load_on[l] {
                continue;
            }
            self.cond.load_on[l] = false;
            let p = self.eq.loads[l].p0_mw;
            mw += p;
            let isl = self.cond.island_of_section[self.eq.loads[l].section];
            let r = self.island_record[isl];
            self.records[r].shed_mw += p;
            ids.push(self.plant.loads[l].id.clone());
        }
        self.shed_mw += mw;
        let id = self.scheme.stages[stage].id.clone();
        self.log(EventKind::LoadsOpened {
            stage: id,
            loads: ids,
            mw,
        });
    }

    fn start_dip(&mut self, section: usize, remaining_pu: f64, duration_s: f64) {
        let d = self.dips.len();
        self.dips.push(Dip {
            section,
            remaining_pu,
            active: true,
        });
        self.update_voltage(section);
        self.queue
            .push(self.t + duration_s.max(0.0), Event::DipEnd(d));
        let id = self.plant.sections[section].id.clone();
        self.log(EventKind::VoltageDip {
            section: id,
            remaining_pu,
            duration_s,
        });
        for (l, ld) in self.plant.loads.iter().enumerate() {
            if let (true, Some(uv)) = (
                ld.section == section && self.cond.load_on[l],
                ld.undervoltage,
            ) {
                if uv.below_pu > remaining_pu && duration_s > uv.after_s {
                    self.queue.push(
                        self.t + uv.after_s.max(0.0),
                        Event::LoadUndervoltage { load: l },
                    );
                }
            }
        }
        for (g, gen) in self.plant.generators.iter().enumerate() {
            if gen.section != section || !self.cond.machine_on[g] {
                continue;
            }
            let soonest = gen
                .undervoltage_trips
                .iter()
                .filter(|uv| uv.below_pu > remaining_pu && duration_s > uv.after_s)
                .map(|uv| uv.after_s.max(0.0))
                .reduce(f64::min);
            if let Some(after) = soonest {
                self.queue.push(
                    self.t + after,
                    Event::GeneratorUndervoltage {
                        generator: g,
                        dip: d,
                    },
                );
            }
        }
    }

    fn update_voltage(&mut self, section: usize) {
        let v = self
            .dips
            .iter()
            .filter(|d| d.active && d.section == section)
            .map(|d| d.remaining_pu.max(0.0))
            .fold(1.0, f64::min);
        self.cond.v_sq[section] = v * v;
    }

    fn signals(&self) -> Vec<Signal> {
        (0..self.eq.n_sections)
            .map(|s| Signal {
                frequency_hz: self.f0 * (1.0 + self.y[measured_index(s)]),
                rocof_hz_per_s: self.f0 * self.y[rocof_index(s)],
            })
            .collect()
    }

    fn evaluate_relays(&mut self) {
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
        let floor = self.cfg.collapse_fraction - 1.0;
        for i in 0..self.islands.len() {
            let s0 = self.islands[i].sections[0];
            if self.islands[i].on_utility || self.frozen[s0] {
                continue;
            }
            if self.y[speed_index(s0)] < floor {
                let r = self.island_record[i];
                self.freeze(i, IslandEnd::Collapsed);
                self.log(EventKind::Collapse { island: r });
                if self.first_failure.is_none() {
                    self.first_failure = Some(StopReason::Collapse {
                        island: r,
                        at_s: self.t,
                    });
                }
            }
        }
    }

    fn freeze(&mut self, island: usize, end: IslandEnd) {
        for &s in &self.islands[island].sections {
            self.frozen[s] = true;
        }
        let r = self.island_record[island];
        self.records[r].end = end;
        self.records[r].to_s = Some(self.t);
        self.refresh_modes();
    }

    fn check_blackout(&mut self) {
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

    fn retopologize(&mut self) {
        let new = topology::islands(self.plant, &self.breakers);
        self.adopt_islands(new);
        self.check_blackout();
    }

    /// Take a new island list: unchanged islands keep their record; changed ones get new records.
    fn adopt_islands(&mut self, new: Vec<Island>) {
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

    fn refresh_modes(&mut self) {
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
    fn utility_pu(&self, t: f64) -> f64 {
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
    fn utility_slope(&self, t: f64) -> f64 {
        let p = &self.case.utility_profile;
        for w in p.windows(2) {
            if t >= w[0].0 && t < w[1].0 && w[1].0 > w[0].0 {
                return (w[1].1 - w[0].1) / (w[1].0 - w[0].0) / self.f0;
            }
        }
        0.0
    }

    /// Every level whose crossing may change a relay or the collapse state. With `for_quiet`,
    /// the list that decides the relaxed cap: a df/dt-supervised stage whose measured df/dt is
    /// far on the blocking side cannot pick up before that df/dt crosses its level, so only the
    /// df/dt level of such a stage is watched.
    fn guards_for(&self, for_quiet: bool) -> Vec<StateGuard> {
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
                    level: self.cfg.collapse_fraction - 1.0,
                });
            }
        }
        out
    }

    fn finish(self) -> Run {
        let rec = &self.rec;
        let t_end = self.t;
        let (disturbance_s, _) = self.case.disturbance_span();
        let window = self.cfg.rocof_window_s.max(rec.sample_interval_s);
        let mut samples = rec.samples(t_end);
        let mut islands = Vec::with_capacity(self.records.len());
        for (r, isl) in self.records.iter().enumerate() {
            let to = isl.to_s.unwrap_or(t_end);
            let s0 = isl.sections[0];
            let within: Vec<(f64, f64)> = rec.candidates[s0]
                .iter()
                .copied()
                .filter(|(t, _)| *t >= isl.from_s - 1e-12 && *t <= to + 1e-12)
                .collect();
            let mut nadir = (isl.from_s, f64::INFINITY);
            for &(t, f) in &within {
                if f < nadir.1 {
                    nadir = (t, f);
                }
            }
            let final_hz = within.last().map_or(self.f0, |c| c.1);
            if within.is_empty() {
                nadir.1 = final_hz;
            }
            let peak = rec.peak_after(s0, disturbance_s, isl.from_s, to);
            islands.push(IslandSummary {
                index: r,
                sections: isl
                    .sections
                    .iter()
                    .map(|s| self.plant.sections[*s].id.clone())
                    .collect(),
                on_utility: isl.on_utility,
                from_s: isl.from_s,
                to_s: to,
                nadir_hz: nadir.1,
                nadir_at_s: nadir.0,
                peak_hz: peak.map(|p| p.1),
                peak_at_s: peak.map(|p| p.0),
                final_hz,
                max_rocof_hz_per_s: samples.windowed_rocof(s0, window, isl.from_s, to),
                shed_mw: isl.shed_mw,
                dropped_mw: isl.dropped_mw,
                end: isl.end,
            });
        }
        let worst = islands
            .iter()
            .enumerate()
            .min_by(|a, b| a.1.nadir_hz.total_cmp(&b.1.nadir_hz).then(a.0.cmp(&b.0)))
            .map(|(i, _)| i);
        let (nadir_hz, nadir_at_s, nadir_section) = worst
            .map(|i| {
                (
                    islands[i].nadir_hz,
                    islands[i].nadir_at_s,
                    self.records[i].sections[0],
                )
            })
            .unwrap_or((self.f0, 0.0, 0));
        let peak = islands
            .iter()
            .filter_map(|i| Some((i.peak_at_s?, i.peak_hz?)))
            .fold(None, |best: Option<(f64, f64)>, p| match best {
                Some(b) if b.1 >= p.1 => Some(b),
                _ => Some(p),
            });
        let alive: Vec<usize> = self
            .records
            .iter()
            .enumerate()
            .filter(|(_, r)| r.end == IslandEnd::Running)
            .map(|(i, _)| i)
            .collect();
        let final_hz = alive
            .iter()
            .map(|i| islands[*i].final_hz)
            .reduce(f64::min)
            .unwrap_or_else(|| {
                rec.candidates
                    .get(nadir_section)
                    .and_then(|c| c.last())
                    .map_or(self.f0, |c| c.1)
            });
        let alive_sections: Vec<usize> = alive
            .iter()
            .flat_map(|i| self.records[*i].sections.clone())
            .collect();
        let recovered_above_at_s =
            if alive_sections.iter().any(|s| rec.ends_below(*s)) || alive_sections.is_empty() {
                None
            } else {
                // The last upward crossing of any section; a run that never went below the
                // level has recovered from the start.
                Some(
                    alive_sections
                        .iter()
                        .filter_map(|s| rec.last_up_s[*s])
                        .fold(0.0, f64::max),
                )
            };
        let max_rocof_hz_per_s = (0..self.eq.n_sections)
            .map(|s| samples.windowed_rocof(s, window, f64::NEG_INFINITY, t_end))
            .fold(0.0, f64::max);
        let stop = self
            .fault
            .clone()
            .or_else(|| self.first_failure.clone())
            .unwrap_or(StopReason::EndTime);
        let trace = self.cfg.record_trace.then(|| Trace {
            t_s: (0..samples.len).map(|k| samples.time(k)).collect(),
            section_hz: (0..self.eq.n_sections)
                .map(|s| (0..samples.len).map(|k| samples.hz(s, k)).collect())
                .collect(),
            shed_mw: (0..samples.len).map(|k| samples.shed_mw(k)).collect(),
        });
        Run {
            stop,
            islands,
            nadir_hz,
            nadir_at_s,
            peak_hz: peak.map(|p| p.1),
            peak_at_s: peak.map(|p| p.0),
            went_below_recover_level: rec.went_below(),
            max_rocof_hz_per_s,
            final_hz,
            recovered_above_at_s,
            events: self.events,
            shed_mw: self.shed_mw,
            dropped_mw: self.dropped_mw,
            trace,
        }
    }
}

/// The tight step cap: the configured one, and below half the shortest stage delay, stage
/// breaker time or protection time of the run so that no relay sequence fits inside one step.
fn tight_step(plant: &Plant, scheme: &Scheme, configured_s: f64) -> f64 {
    let stage_times = scheme.stages.iter().flat_map(|s| [s.delay_s, s.breaker_s]);
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

/// Breakers, islands, connected loads and running machines at t = 0.
fn start_state(
    plant: &Plant,
    case: &Case,
    op_idx: usize,
) -> (BreakerState, Vec<Island>, Vec<bool>, Vec<bool>) {
    let op = &plant.operating_points[op_idx];
    let utility_closed = case.start == Start::Connected && plant.utility.is_some();
    let breakers = BreakerState::initial(plant, op_idx, utility_closed);
    let islands = topology::islands(plant, &breakers);
    let load_on: Vec<bool> = (0..plant.loads.len())
        .map(|l| op.load_mw.get(l).copied().unwrap_or(0.0) > 0.0)
        .collect();
    let machine_on: Vec<bool> = (0..plant.generators.len())
        .map(|g| op.online.get(g).copied().unwrap_or(false))
        .collect();
    (breakers, islands, load_on, machine_on)
}

/// Machine outputs (MW) a run starts from; see [`initial_dispatch`].
pub fn initial_outputs(plant: &Plant, case: &Case, op_idx: usize) -> Vec<f64> {
    let (_, islands, load_on, machine_on) = start_state(plant, case, op_idx);
    initial_dispatch(plant, op_idx, &islands, &load_on, &machine_on).0
}

/// Machine outputs at t = 0 and the `InitialDeficit` events: the operating point's dispatch,
/// with each separated island's imbalance `Σ load − Σ dispatch` taken up by its governed machines
/// by the rule of [`crate::screening`] (its module doc): isochronous machines first, each within
/// its room; then the droop machines in proportion to S/R, each within its room (water-filling).
/// What cannot be carried stays as an initial deficit.
fn initial_dispatch(
    plant: &Plant,
    op_idx: usize,
    islands: &[Island],
    load_on: &[bool],
    machine_on: &[bool],
) -> (Vec<f64>, Vec<LoggedEvent>) {
    let op = &plant.operating_points[op_idx];
    let mut p_ref: Vec<f64> = (0..plant.generators.len())
        .map(|g| {
            if machine_on[g] {
                op.output_mw.get(g).copied().unwrap_or(0.0)
            } else {
                0.0
            }
        })
        .collect();
    let mut events = Vec::new();
    for (i, isl) in islands.iter().enumerate() {
        if isl.on_utility {
            continue;
        }
        let load: f64 = plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, ld)| load_on[*l] && isl.contains(ld.section))
            .map(|(l, _)| op.load_mw[l])
            .sum();
        let gens: Vec<usize> = (0..plant.generators.len())
            .filter(|g| machine_on[*g] && isl.contains(plant.generators[*g].section))
            .collect();
        let gen: f64 = gens.iter().map(|g| p_ref[*g]).sum();
        let remainder = share_imbalance(plant, &gens, &mut p_ref, load - gen);
        if remainder.abs() > 1e-9 && !gens.is_empty() {
            events.push(LoggedEvent {
                at_s: 0.0,
                what: EventKind::InitialDeficit {
                    island: i,
                    mw: remainder,
                },
            });
        }
    }
    (p_ref, events)
}

/// Share an imbalance (positive: more load than dispatch) over the governed machines `gens`:
/// isochronous ones first in index order, then droop ones in proportion to S/R, all within
/// [min_mw, max_mw]; returns what could not be carried.
fn share_imbalance(plant: &Plant, gens: &[usize], p_ref: &mut [f64], mut imbalance: f64) -> f64 {
    let governed =
        |g: &usize| plant.generators[*g].governor.prime_mover != crate::model::PrimeMover::Fixed;
    let room = |g: usize, p: f64, up: bool| {
        let gen = &plant.generators[g];
        if up {
            (gen.max_mw - p).max(0.0)
        } else {
            (p - gen.min_mw).max(0.0)
        }
    };
    for &g in gens.iter().filter(|g| governed(g)) {
        if !plant.generators[g].governor.isochronous || imbalance.abs() <= 1e-12 {
            continue;
        }
        let take = imbalance.abs().min(room(g, p_ref[g], imbalance > 0.0));
        let take = take.copysign(imbalance);
        p_ref[g] += take;
        imbalance -= take;
    }
    let gain = |g: usize| {
        let gen = &plant.generators[g];
        crate::model::base::droop_gain_mw_per_pu(gen.rating_mva, gen.governor.droop_pct)
    };
    let mut free: Vec<usize> = gens
        .iter()
        .copied()
        .filter(|g| {
            governed(g)
                && !plant.generators[*g].governor.isochronous
                && plant.generators[*g].governor.droop_pct > 0.0
                && gain(*g) > 0.0
        })
        .collect();
    for _ in 0..=free.len() {
        if imbalance.abs() <= 1e-12 || free.is_empty() {
            break;
        }
        let total: f64 = free.iter().map(|&g| gain(g)).sum();
        if total <= 0.0 {
            break;
        }
        let mut carried = 0.0;
        let mut still = Vec::new();
        for &g in &free {
            let want = imbalance * gain(g) / total;
            let cap = room(g, p_ref[g], imbalance > 0.0);
            let got = want.abs().min(cap).copysign(imbalance);
            carried += got;
            p_ref[g] += got;
            if want.abs() < cap {
                still.push(g);
            }
        }
        imbalance -= carried;
        free = still;
    }
    imbalance
}
