//! The plant state between events (what runs, what is connected, what each machine produces),
//! the import taken up when a case starts islanded, and the figures drawn from a state.

use super::*;
use crate::model::{Action, BreakerRef, PrimeMover};
use crate::topology::{islands, BreakerState, Island};

/// Plant state between events: what runs, what is connected, what each machine produces.
#[derive(Debug, Clone)]
pub(super) struct State {
    pub(super) breakers: BreakerState,
    /// By generator: running and connected.
    pub(super) running: Vec<bool>,
    pub(super) output_mw: Vec<f64>,
    /// By load: still connected.
    pub(super) connected: Vec<bool>,
    pub(super) load_mw: Vec<f64>,
    /// Constant-power steps by section.
    pub(super) step_mw: Vec<f64>,
    pub(super) import_mw: f64,
    /// By generator: the highest output from the operating point's dispatch
    /// (`Generator::upper_mw`, the rule the simulator's limit follows).
    pub(super) upper_mw: Vec<f64>,
}

impl State {
    pub(super) fn initial(plant: &Plant, op_idx: usize, utility_closed: bool) -> State {
        let op = &plant.operating_points[op_idx];
        State {
            breakers: BreakerState::initial(plant, op_idx, utility_closed),
            running: op.online.clone(),
            output_mw: op
                .output_mw
                .iter()
                .zip(&op.online)
                .map(|(p, on)| if *on { *p } else { 0.0 })
                .collect(),
            connected: op.load_mw.iter().map(|p| *p > 0.0).collect(),
            load_mw: op.load_mw.clone(),
            step_mw: vec![0.0; plant.sections.len()],
            import_mw: if plant.utility.is_some() {
                op.import_mw
            } else {
                0.0
            },
            upper_mw: plant
                .generators
                .iter()
                .zip(&op.output_mw)
                .map(|(g, p)| g.upper_mw(*p))
                .collect(),
        }
    }

    pub(super) fn generation_total(&self) -> f64 {
        self.output_mw
            .iter()
            .zip(&self.running)
            .filter(|(_, r)| **r)
            .map(|(p, _)| p)
            .sum()
    }

    /// Starting islanded: the utility island's governed machines take up the import in
    /// proportion to S/R within their headroom (see the module doc).
    pub(super) fn take_up_import(&mut self, plant: &Plant) -> Result<(), CaseProblem> {
        let Some(utility) = &plant.utility else {
            return Ok(());
        };
        let import = self.import_mw;
        self.import_mw = 0.0;
        if import.abs() < 1e-12 {
            return Ok(());
        }
        let all = islands(plant, &self.breakers);
        let Some(island) = all.iter().find(|i| i.contains(utility.section)) else {
            return Ok(());
        };
        let mut units = self.governor_units(plant, island);
        for u in &mut units {
            // Sharing by droop gain alone: no dead band, no load relief, no isochronous priority
            // beyond what the solver gives.
            u.deadband_pu = 0.0;
        }
        let headroom: f64 = units
            .iter()
            .map(|u| if import > 0.0 { u.raise_mw } else { u.lower_mw })
            .sum();
        match steady_state(&units, 0.0, import, plant.nominal_hz) {
            SteadyState::Held { responses, .. } => {
                for r in responses {
                    if let Some(g) = plant.generator_index(&r.generator) {
                        self.output_mw[g] += r.mw;
                    }
                }
                Ok(())
            }
            _ => Err(CaseProblem::IslandedStartShortfall {
                import_mw: import,
                headroom_mw: headroom,
            }),
        }
    }

    pub(super) fn apply(&mut self, plant: &Plant, action: &Action) {
        match action {
            Action::Open(BreakerRef::Utility) => self.breakers.utility_closed = false,
            Action::Open(BreakerRef::Tie(t)) => {
                if let Some(closed) = self.breakers.tie_closed.get_mut(*t) {
                    *closed = false;
                }
            }
            Action::Open(BreakerRef::Generator(g)) => {
                if let Some(r) = self.running.get_mut(*g) {
                    *r = false;
                }
            }
            Action::LoadStep { section, mw } => {
                if let Some(s) = self.step_mw.get_mut(*section) {
                    *s += mw;
                }
            }
            Action::VoltageDip {
                section,
                remaining_pu,
                duration_s,
            } => {
                for (l, load) in plant.loads.iter().enumerate() {
                    if load.section == *section {
                        if let Some(uv) = load.undervoltage {
                            if *remaining_pu < uv.below_pu && *duration_s > uv.after_s {
                                self.connected[l] = false;
                            }
                        }
                    }
                }
                for (g, gen) in plant.generators.iter().enumerate() {
                    if gen.section == *section
                        && gen
                            .undervoltage_trips
                            .iter()
                            .any(|uv| *remaining_pu < uv.below_pu && *duration_s > uv.after_s)
                    {
                        self.running[g] = false;
                    }
                }
            }
        }
    }

    pub(super) fn generation_in(&self, plant: &Plant, island: &Island) -> f64 {
        plant
            .generators
            .iter()
            .enumerate()
            .filter(|(g, gen)| self.running[*g] && island.contains(gen.section))
            .map(|(g, _)| self.output_mw[g])
            .sum()
    }

    pub(super) fn load_in(&self, plant: &Plant, island: &Island) -> f64 {
        let loads: f64 = plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, load)| self.connected[*l] && island.contains(load.section))
            .map(|(l, _)| self.load_mw[l])
            .sum();
        let steps: f64 = island
            .sections
            .iter()
            .filter_map(|s| self.step_mw.get(*s))
            .sum();
        loads + steps
    }

    pub(super) fn energy_in(&self, plant: &Plant, island: &Island) -> (f64, f64) {
        let gen = plant
            .generators
            .iter()
            .enumerate()
            .filter(|(g, gen)| self.running[*g] && island.contains(gen.section))
            .map(|(_, gen)| gen.inertia_s * gen.rating_mva)
            .sum();
        let motors = plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, load)| self.connected[*l] && island.contains(load.section))
            .map(|(l, load)| load.inertia_s * self.load_mw[l])
            .sum();
        (gen, motors)
    }

    pub(super) fn damping_in(&self, plant: &Plant, island: &Island) -> f64 {
        plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, load)| self.connected[*l] && island.contains(load.section))
            .map(|(l, load)| load.freq_exp * self.load_mw[l])
            .sum()
    }

    pub(super) fn governor_units(&self, plant: &Plant, island: &Island) -> Vec<GovernorUnit> {
        plant
            .generators
            .iter()
            .enumerate()
            .filter(|(g, gen)| {
                self.running[*g]
                    && island.contains(gen.section)
                    && gen.governor.prime_mover != PrimeMover::Fixed
            })
            .map(|(g, gen)| GovernorUnit {
                id: gen.id.clone(),
                gain_mw_per_pu: if gen.governor.isochronous {
                    0.0
                } else {
                    crate::model::base::droop_gain_mw_per_pu(gen.rating_mva, gen.governor.droop_pct)
                },
                deadband_pu: gen.governor.deadband_hz / plant.nominal_hz,
                raise_mw: (self.upper_mw[g] - self.output_mw[g]).max(0.0),
                lower_mw: (self.output_mw[g] - gen.min_mw).max(0.0),
                isochronous: gen.governor.isochronous,
            })
            .collect()
    }
}

pub(super) fn section_ids(plant: &Plant, island: &Island) -> Vec<String> {
    island
        .sections
        .iter()
        .filter_map(|s| plant.sections.get(*s).map(|x| x.id.clone()))
        .collect()
}

pub(super) fn island_figures(plant: &Plant, state: &State, island: &Island) -> IslandFigures {
    let generation = state.generation_in(plant, island);
    let load = state.load_in(plant, island);
    let import = if island.on_utility {
        state.import_mw
    } else {
        0.0
    };
    let (gen_energy, motor_energy) = state.energy_in(plant, island);
    let units = state.governor_units(plant, island);
    let online_mva: f64 = plant
        .generators
        .iter()
        .enumerate()
        .filter(|(g, gen)| state.running[*g] && island.contains(gen.section))
        .map(|(_, gen)| gen.rating_mva)
        .sum();
    let mut by_rank: Vec<RankFigure> = Vec::new();
    let mut never_shed = 0.0;
    let mut ranked: Vec<(u32, f64)> = Vec::new();
    for (l, load) in plant.loads.iter().enumerate() {
        if !island.contains(load.section) || !state.connected[l] {
            continue;
        }
        if load.never_shed {
            never_shed += state.load_mw[l];
        } else {
            ranked.push((load.rank, state.load_mw[l]));
        }
    }
    ranked.sort_by_key(|(r, _)| *r);
    let mut cumulative = 0.0;
    for (rank, mw) in ranked {
        cumulative += mw;
        match by_rank.last_mut() {
            Some(last) if last.rank == rank => {
                last.mw += mw;
                last.cumulative_mw = cumulative;
            }
            _ => by_rank.push(RankFigure {
                rank,
                mw,
                cumulative_mw: cumulative,
            }),
        }
    }
    IslandFigures {
        sections: section_ids(plant, island),
        on_utility: island.on_utility,
        generation_mw: generation,
        load_mw: load,
        import_mw: import,
        balance_mw: generation + import - load,
        online_mva,
        spinning_reserve_mw: units.iter().map(|u| u.raise_mw).sum(),
        generator_energy_mws: gen_energy,
        motor_energy_mws: motor_energy,
        h_sys_s: if online_mva > 0.0 {
            Some((gen_energy + motor_energy) / online_mva)
        } else {
            None
        },
        droop_gain_mw_per_pu: units.iter().map(|u| u.gain_mw_per_pu).sum(),
        damping_mw_per_pu: state.damping_in(plant, island),
        sheddable_mw: cumulative,
        never_shed_mw: never_shed,
        sheddable_by_rank: by_rank,
    }
}

pub(super) fn state_figures(plant: &Plant, pre: &State, state: &State, at_s: f64) -> StateFigures {
    let islands = islands(plant, &state.breakers)
        .iter()
        .map(|island| {
            let deficit = state.load_in(plant, island) - state.generation_in(plant, island);
            let (gen_energy, motor_energy) = state.energy_in(plant, island);
            let energy = gen_energy + motor_energy;
            let any_machine = plant
                .generators
                .iter()
                .enumerate()
                .any(|(g, gen)| state.running[g] && island.contains(gen.section));
            let steady = if island.on_utility {
                SteadyState::HeldByUtility
            } else if !any_machine {
                SteadyState::NoGeneration
            } else {
                steady_state(
                    &state.governor_units(plant, island),
                    state.damping_in(plant, island),
                    deficit,
                    plant.nominal_hz,
                )
            };
            IslandResponse {
                sections: section_ids(plant, island),
                on_utility: island.on_utility,
                deficit_mw: if island.on_utility { 0.0 } else { deficit },
                stored_energy_mws: energy,
                initial_rocof_hz_per_s: if island.on_utility || !any_machine {
                    None
                } else {
                    initial_rocof_hz_per_s(deficit, energy, plant.nominal_hz)
                },
                steady_state: steady,
            }
        })
        .collect();
    StateFigures {
        at_s,
        tripped_generators: plant
            .generators
            .iter()
            .enumerate()
            .filter(|(g, _)| pre.running[*g] && !state.running[*g])
            .map(|(_, gen)| gen.id.clone())
            .collect(),
        dropped_loads: plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, _)| pre.connected[*l] && !state.connected[*l])
            .map(|(_, load)| load.id.clone())
            .collect(),
        load_step_mw: state.step_mw.iter().sum(),
        islands,
    }
}

pub(super) fn profile_figures(
    profile: &[(f64, f64)],
    scheme: Option<&Scheme>,
) -> Option<ProfileFigures> {
    let (&(t0, f0), rest) = profile.split_first()?;
    let (mut min_at_s, mut min_hz) = (t0, f0);
    let mut max_fall = 0.0f64;
    let mut prev = (t0, f0);
    for &(t, f) in rest {
        if f < min_hz {
            min_hz = f;
            min_at_s = t;
        }
        if t > prev.0 {
            max_fall = max_fall.max((prev.1 - f) / (t - prev.0));
        }
        prev = (t, f);
    }
    let stages_reached = scheme
        .map(|s| {
            s.stages
                .iter()
                .filter(|stage| match stage.trigger {
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    } => pickup_hz > min_hz && min_rocof_hz_per_s.map_or(true, |r| max_fall >= r),
                    StageTrigger::Breaker(_) => false,
                })
                .map(|stage| stage.id.clone())
                .collect()
        })
        .unwrap_or_default();
    Some(ProfileFigures {
        min_hz,
        min_at_s,
        max_fall_hz_per_s: max_fall,
        stages_reached,
    })
}

pub(super) fn breaker_id(plant: &Plant, breaker: BreakerRef) -> String {
    match breaker {
        BreakerRef::Utility => plant
            .utility
            .as_ref()
            .map_or_else(|| "utility".to_string(), |u| u.breaker_id.clone()),
        BreakerRef::Tie(t) => plant.ties.get(t).map_or_else(String::new, |x| x.id.clone()),
        BreakerRef::Generator(g) => plant
            .generators
            .get(g)
            .map_or_else(String::new, |x| x.id.clone()),
    }
}
