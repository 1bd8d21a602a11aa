//! Discrete changes of a run: the one `match` over [`Event`], breakers opening, a stage's loads
//! opening (a stage sized from the pre-event flow chooses its loads as its breaker opens), and
//! voltage dips with the undervoltage drop-outs they start.

use super::{Dip, Engine};
use crate::dynamics::load;
use crate::model::{Action, BreakerRef, Candidate, OverAction, Sizing, StageTrigger};
use crate::relay::stage::{StageAction, StageState};
use crate::sim::event::Event;
use crate::sim::rhs::{machine_power_mw, speed_index, SegmentEquations};
use crate::sim::{Cause, EventKind};
use crate::topology::flow_before_opening;

impl Engine<'_> {
    /// Every discrete change of a run passes through this match.
    pub(super) fn handle(&mut self, at_s: f64, ev: Event) {
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
            Event::OverDelay { stage, timer_s } => {
                if self.over[stage].expired(timer_s).is_some() {
                    let o = &self.scheme.over_frequency[stage];
                    let id = o.id.clone();
                    self.queue
                        .push(self.t + o.breaker_s.max(0.0), Event::OverAct { stage });
                    self.log(EventKind::StageTripCommand { stage: id });
                }
            }
            Event::OverAct { stage } => {
                let o = &self.scheme.over_frequency[stage];
                let stage = o.id.clone();
                match o.action {
                    OverAction::Trip { generator } => {
                        self.open_breaker(BreakerRef::Generator(generator), Cause::Stage { stage })
                    }
                    OverAction::RunBack { generator, mw } => {
                        if self.cond.machine_on[generator] {
                            let gov = &mut self.eq.machines[generator].governor;
                            let before = gov.p_ref_mw;
                            gov.p_ref_mw = (before - mw).max(gov.limits.min_mw.min(before));
                            let mw = before - gov.p_ref_mw;
                            let generator = self.plant.generators[generator].id.clone();
                            self.log(EventKind::RunBack {
                                stage,
                                generator,
                                mw,
                            });
                        }
                    }
                }
            }
            Event::PressureTransfer { generator } => {
                let isl = self.cond.island_of_section[self.plant.generators[generator].section];
                let pressure = &mut self.eq.machines[generator].governor.pressure;
                if let Some(p) = pressure.as_mut().filter(|p| !p.speed_control) {
                    if self.cond.machine_on[generator] && !self.islands[isl].on_utility {
                        p.speed_control = true;
                        let generator = self.plant.generators[generator].id.clone();
                        self.log(EventKind::SpeedControl { generator });
                    }
                }
            }
            Event::Crossing => self.evaluate_relays(),
        }
    }

    pub(super) fn open_breaker(&mut self, br: BreakerRef, cause: Cause) {
        // Flow-sized stages take the flow of the moment before the breaker opens.
        let picks = self.flow_picks(br);
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
                    Cause::Stage { stage } => (format!("over-frequency stage {stage}"), false),
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
            // A flow-sized stage with nothing to cover (the plant exported, or the allowance
            // covers the flow) issues no trip command at all.
            let pick = picks.iter().find(|p| p.0 == i);
            if let Some((_, loads, flow_mw, allowance_mw)) = pick.filter(|p| p.1.is_empty()) {
                self.stages[i].state = StageState::Done;
                let stage = self.scheme.stages[i].id.clone();
                self.log(EventKind::StageSized {
                    stage,
                    flow_mw: *flow_mw,
                    allowance_mw: *allowance_mw,
                    loads: loads
                        .iter()
                        .map(|&l| self.plant.loads[l].id.clone())
                        .collect(),
                });
                continue;
            }
            if let Some(StageAction::PickedUp { expires_s }) =
                self.stages[i].breaker_opened(self.t, br)
            {
                let stage = self.scheme.stages[i].id.clone();
                self.log(EventKind::StagePickup {
                    stage: stage.clone(),
                });
                if let Some((_, loads, flow_mw, allowance_mw)) = pick {
                    self.log(EventKind::StageSized {
                        stage,
                        flow_mw: *flow_mw,
                        allowance_mw: *allowance_mw,
                        loads: loads
                            .iter()
                            .map(|&l| self.plant.loads[l].id.clone())
                            .collect(),
                    });
                    self.picked[i] = Some(loads.clone());
                }
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

    /// For each flow-sized stage armed by `br` and still idle: the loads it opens, the flow and
    /// the allowance, from the state of this moment (the breaker still closed). The flow comes
    /// from each section's net demand (loads at their present frequency and voltage, load steps,
    /// less the machines' mechanical power, plus the power going into the stored energy of its
    /// island), as [`flow_before_opening`] takes it; the allowance from the spinning reserve
    /// (the governor's upper limit, `Generator::upper_mw`, less present mechanical power) of the
    /// running machines that stay in the island that lost the flow.
    fn flow_picks(&self, br: BreakerRef) -> Vec<(usize, Vec<usize>, f64, f64)> {
        let sized: Vec<usize> = (0..self.scheme.stages.len())
            .filter(|&i| {
                let st = &self.scheme.stages[i];
                st.trigger == StageTrigger::Breaker(br)
                    && matches!(st.sizing, Sizing::Flow(_))
                    && self.stages[i].state == StageState::Idle
            })
            .collect();
        if sized.is_empty() {
            return Vec::new();
        }
        let mut dy = vec![0.0; self.y.len()];
        SegmentEquations::new(&self.eq, &self.cond).derivatives(&self.y, &mut dy);
        let n_sec = self.eq.n_sections;
        let mut net = self.cond.step_mw.clone();
        net.resize(n_sec, 0.0);
        for (l, ld) in self.eq.loads.iter().enumerate() {
            if self.cond.load_on[l] {
                let s = ld.section;
                let dw = self.y[speed_index(s)];
                net[s] += load::power_mw(ld.p0_mw, ld.freq_exp, dw, self.cond.v_sq[s]);
                net[s] += 2.0 * ld.stored_mws * dy[speed_index(s)];
            }
        }
        let mut pm = vec![0.0; self.eq.machines.len()];
        let mut electrical = vec![0.0; self.eq.machines.len()];
        for (g, m) in self.eq.machines.iter().enumerate() {
            if !self.cond.machine_on[g] {
                continue;
            }
            pm[g] = machine_power_mw(&self.eq, &self.cond, g, &self.y);
            let into_store = 2.0 * m.stored_mws * dy[speed_index(m.section)];
            electrical[g] = pm[g] - into_store;
            net[m.section] -= electrical[g];
        }
        let Some(cut) = flow_before_opening(self.plant, &self.breakers, br, &net, &electrical)
        else {
            return Vec::new();
        };
        let reserve: f64 = self
            .plant
            .generators
            .iter()
            .enumerate()
            .filter(|&(g, gen)| {
                self.cond.machine_on[g]
                    && br != BreakerRef::Generator(g)
                    && cut.sections.binary_search(&gen.section).is_ok()
            })
            .map(|(g, _)| (self.eq.machines[g].governor.limits.max_mw - pm[g]).max(0.0))
            .sum();
        sized
            .into_iter()
            .map(|i| {
                let st = &self.scheme.stages[i];
                let candidates: Vec<Candidate> = st
                    .sheds
                    .iter()
                    .filter(|&&l| {
                        self.cond.load_on[l]
                            && cut
                                .sections
                                .binary_search(&self.eq.loads[l].section)
                                .is_ok()
                    })
                    .map(|&l| Candidate {
                        load: l,
                        mw: self.eq.loads[l].p0_mw,
                    })
                    .collect();
                let allowance_mw = match st.sizing {
                    Sizing::Flow(a) => a.mw(reserve),
                    Sizing::All => 0.0,
                };
                let loads = st.flow_pick(self.plant, &candidates, cut.flow_mw, allowance_mw);
                (i, loads, cut.flow_mw, allowance_mw)
            })
            .collect()
    }

    pub(super) fn open_stage_loads(&mut self, stage: usize) {
        let mut ids = Vec::new();
        let mut mw = 0.0;
        let listed = match &self.picked[stage] {
            Some(loads) => loads.clone(),
            None => self.scheme.stages[stage].sheds.clone(),
        };
        for &l in &listed {
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

    pub(super) fn start_dip(&mut self, section: usize, remaining_pu: f64, duration_s: f64) {
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

    pub(super) fn update_voltage(&mut self, section: usize) {
        let v = self
            .dips
            .iter()
            .filter(|d| d.active && d.section == section)
            .map(|d| d.remaining_pu.max(0.0))
            .fold(1.0, f64::min);
        self.cond.v_sq[section] = v * v;
    }
}
