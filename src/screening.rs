//! Closed-form screening figures: what an engineer works out by hand before any simulation.
//!
//! Owns: per operating point and island, the balance, spinning reserve, stored kinetic energy
//! and sheddable load; per case and operating point, the immediate power deficit of each island,
//! the initial rate of change of frequency and the steady-state frequency with governors and load
//! damping but no shedding; per scheme stage, the load it sheds at each operating point.
//! Must not: simulate (that is [`crate::sim`]), print, or read files. It depends on
//! [`crate::model`] and [`crate::topology`] only.
//!
//! The formulas, with their published source:
//! * Initial ROCOF from the aggregated swing equation at t = 0+, before any governor or load
//!   response: `df/dt = −ΔP·f0 / (2·E_k)` with `E_k = Σ H_i·S_i` in MW·s (Kundur, *Power System
//!   Stability and Control*, 1994, §3.9 and §11.1; `ΔP` positive for a shortage).
//! * Steady-state deviation with droop and load damping: `Δf = −ΔP / (D + Σ S_i/R_i)` in per
//!   unit (Kundur 1994, ch. 11, `Δf_ss = −ΔP/(D + 1/R)` on a common base), with MW per pu here,
//!   `D = Σ k_j·P_j` from each load's frequency exponent, and each governor's response limited by
//!   its headroom and dead band. The piecewise-linear equation is solved exactly (every clamp is a
//!   breakpoint), which is the same as "clamp units at their limit and recompute".
//!
//! Conventions decided here and documented in docs/files.md:
//! * A governor dead band offsets the error: a unit answers `K·(|x| − db)` outside the band.
//! * An isochronous unit absorbs the whole deficit within its headroom (frequency returns to
//!   nominal); beyond it, it stays at its limit and the droop units carry the rest.
//! * The frequency floor for "held" is 0.85·f0: below it no steady state is reported.
//! * For a case that starts islanded, the import is taken up by the governed machines of the
//!   utility's island in proportion to their droop gain S/R, each within its headroom, and
//!   frequency is taken as restored to nominal (the operator or a secondary control has
//!   re-balanced the island before the case starts).
//! * A voltage dip acts on the named section only: a load drops out when the dip is deeper than
//!   its element's `below_pu` and longer than its `after_s`; a generator trips when the dip is
//!   deeper and longer than any of its ride-through elements. Dropped loads do not return.
//! * Protection (generator, interface, shedding) does not act in these figures.

use crate::model::{Action, BreakerRef, CaseSet, Plant, PrimeMover, Scheme, StageTrigger, Start};
use crate::topology::{islands, BreakerState, Island};
use serde::Serialize;

/// Lowest steady frequency, as a fraction of nominal, for which an island counts as held.
pub const COLLAPSE_FLOOR_PU: f64 = 0.85;

/// Events closer than this in time count as simultaneous.
const SAME_TIME_S: f64 = 1e-9;

/// Every screening figure for one plant, and optionally its cases and scheme.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Screening {
    pub plant: String,
    pub nominal_hz: f64,
    pub operating_points: Vec<PointFigures>,
    pub cases: Vec<CaseFigures>,
    pub scheme: Option<SchemeFigures>,
}

/// One operating point before any event, utility breaker closed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointFigures {
    pub operating_point: String,
    pub load_mw: f64,
    pub generation_mw: f64,
    pub import_mw: f64,
    pub islands: Vec<IslandFigures>,
}

/// One island of an operating point before any event.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IslandFigures {
    /// Section ids.
    pub sections: Vec<String>,
    pub on_utility: bool,
    pub generation_mw: f64,
    pub load_mw: f64,
    /// The import this island receives (0 unless on the utility).
    pub import_mw: f64,
    /// Generation plus import minus load; not zero means the operating point does not balance.
    pub balance_mw: f64,
    pub online_mva: f64,
    /// Σ (max_mw − output) of the online governed machines.
    pub spinning_reserve_mw: f64,
    /// Σ H·S of the online machines.
    pub generator_energy_mws: f64,
    /// Σ H·P of the loads with a declared motor inertia.
    pub motor_energy_mws: f64,
    /// (generator + motor energy) / online MVA; `None` when no machine runs.
    pub h_sys_s: Option<f64>,
    /// Σ S_i/R_i of the online droop machines.
    pub droop_gain_mw_per_pu: f64,
    /// D = Σ k_j·P_j.
    pub damping_mw_per_pu: f64,
    pub sheddable_mw: f64,
    pub never_shed_mw: f64,
    /// Sheddable load by rank, rank 1 first; cumulative in shedding order.
    pub sheddable_by_rank: Vec<RankFigure>,
}

/// Sheddable load at one rank.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RankFigure {
    pub rank: u32,
    pub mw: f64,
    pub cumulative_mw: f64,
}

/// One case at one operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CaseFigures {
    pub case: String,
    pub operating_point: String,
    pub start: StartKind,
    /// Why no figures could be computed, when that is so.
    pub problem: Option<CaseProblem>,
    /// After every event at the time of the first event.
    pub after_first: Option<StateFigures>,
    /// After all events, without shedding; `None` when all events share one time.
    pub after_all: Option<StateFigures>,
    /// For a grid-wide event given as a utility frequency profile.
    pub utility_profile: Option<ProfileFigures>,
}

/// How the case starts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StartKind {
    Connected,
    Islanded,
}

/// A case that cannot be screened at an operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum CaseProblem {
    /// Starting islanded, the machines cannot take up the import.
    IslandedStartShortfall { import_mw: f64, headroom_mw: f64 },
}

/// The plant after a set of events.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StateFigures {
    /// Time of the last event applied.
    pub at_s: f64,
    pub tripped_generators: Vec<String>,
    pub dropped_loads: Vec<String>,
    /// Σ of load steps applied.
    pub load_step_mw: f64,
    pub islands: Vec<IslandResponse>,
}

/// The response of one island to the events applied.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IslandResponse {
    pub sections: Vec<String>,
    pub on_utility: bool,
    /// Load minus generation the moment after the events, MW (positive: shortage); 0 on the
    /// utility, which takes up any imbalance.
    pub deficit_mw: f64,
    /// Σ H·S of the machines still running plus Σ H·P of the motor loads still connected.
    pub stored_energy_mws: f64,
    /// −ΔP·f0 / (2·E_k); `None` on the utility or with no machine running.
    pub initial_rocof_hz_per_s: Option<f64>,
    pub steady_state: SteadyState,
}

/// Steady state after governors and load damping have acted, without shedding.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum SteadyState {
    /// The island is on the utility, which takes up any imbalance at nominal frequency.
    HeldByUtility,
    /// A steady frequency exists above the collapse floor.
    Held {
        hz: f64,
        delta_hz: f64,
        /// Σ governor response, MW (positive: more output).
        governor_mw: f64,
        /// D·Δf, MW (positive: less demand).
        load_relief_mw: f64,
        /// The isochronous machine that brought frequency back to nominal, if one did.
        isochronous: Option<String>,
        /// Machines at their output limit.
        at_limit: Vec<String>,
        responses: Vec<UnitResponse>,
    },
    /// No governor can hold it: headroom plus load relief at the floor falls short.
    NotHeld {
        floor_hz: f64,
        /// Governor headroom plus load relief at the floor, MW.
        available_mw: f64,
    },
    /// No machine runs in the island.
    NoGeneration,
}

/// One governed machine's steady-state change of output.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UnitResponse {
    pub generator: String,
    pub mw: f64,
}

/// A utility frequency profile.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProfileFigures {
    pub min_hz: f64,
    pub min_at_s: f64,
    /// Steepest fall between profile points, Hz/s (positive number).
    pub max_fall_hz_per_s: f64,
    /// Frequency stages whose pickup lies above the profile's minimum (and whose df/dt
    /// supervision the profile's steepest fall satisfies); empty without a scheme.
    pub stages_reached: Vec<String>,
}

/// The shedding table at each operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SchemeFigures {
    pub scheme: String,
    pub operating_points: Vec<String>,
    /// Plant load at each operating point, MW.
    pub plant_load_mw: Vec<f64>,
    /// In order of operation: armed stages first, then frequency stages by falling pickup.
    pub stages: Vec<StageFigures>,
}

/// One stage at each operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StageFigures {
    pub stage: String,
    pub trigger: TriggerFigure,
    pub delay_s: f64,
    pub breaker_s: f64,
    pub loads: Vec<String>,
    /// By operating point (same order as [`SchemeFigures::operating_points`]): every load the
    /// stage lists, as it opens them when it operates first.
    pub mw: Vec<f64>,
    /// Up to and including this stage, each load counted once however many stages list it.
    pub cumulative_mw: Vec<f64>,
    pub pct_of_load: Vec<f64>,
    pub cumulative_pct_of_load: Vec<f64>,
}

/// A stage trigger with breaker ids spelled out.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum TriggerFigure {
    Frequency {
        pickup_hz: f64,
        min_rocof_hz_per_s: Option<f64>,
    },
    Armed {
        breaker: String,
    },
}

/// A governed machine as the steady-state solver sees it.
#[derive(Debug, Clone, PartialEq)]
pub struct GovernorUnit {
    pub id: String,
    /// S/R, MW per pu speed deviation.
    pub gain_mw_per_pu: f64,
    /// Half-width of the dead band, pu of nominal frequency.
    pub deadband_pu: f64,
    /// Headroom upwards, MW.
    pub raise_mw: f64,
    /// Room downwards to min_mw, MW.
    pub lower_mw: f64,
    pub isochronous: bool,
}

// ---------------------------------------------------------------- entry points

/// All figures: operating points always, cases and scheme when given.
pub fn screen(plant: &Plant, cases: Option<&CaseSet>, scheme: Option<&Scheme>) -> Screening {
    Screening {
        plant: plant.name.clone(),
        nominal_hz: plant.nominal_hz,
        operating_points: screen_points(plant),
        cases: cases
            .map(|c| screen_cases(plant, c, scheme))
            .unwrap_or_default(),
        scheme: scheme.map(|s| screen_scheme(plant, s)),
    }
}

/// Figures for every operating point before any event.
pub fn screen_points(plant: &Plant) -> Vec<PointFigures> {
    (0..plant.operating_points.len())
        .map(|op_idx| {
            let state = State::initial(plant, op_idx, true);
            let op = &plant.operating_points[op_idx];
            let islands = islands(plant, &state.breakers)
                .iter()
                .map(|island| island_figures(plant, &state, island))
                .collect();
            PointFigures {
                operating_point: op.id.clone(),
                load_mw: op.load_mw.iter().sum(),
                generation_mw: state.generation_total(),
                import_mw: op.import_mw,
                islands,
            }
        })
        .collect()
}

/// Figures for every case at every operating point it applies to.
pub fn screen_cases(plant: &Plant, cases: &CaseSet, scheme: Option<&Scheme>) -> Vec<CaseFigures> {
    let mut out = Vec::new();
    for case in &cases.cases {
        let profile = profile_figures(&case.utility_profile, scheme);
        for &op_idx in &case.applies_to {
            let Some(op) = plant.operating_points.get(op_idx) else {
                continue;
            };
            let start = match case.start {
                Start::Connected => StartKind::Connected,
                Start::Islanded => StartKind::Islanded,
            };
            let mut figures = CaseFigures {
                case: case.id.clone(),
                operating_point: op.id.clone(),
                start,
                problem: None,
                after_first: None,
                after_all: None,
                utility_profile: profile.clone(),
            };
            let mut state = State::initial(plant, op_idx, case.start == Start::Connected);
            if case.start == Start::Islanded {
                if let Err(problem) = state.take_up_import(plant) {
                    figures.problem = Some(problem);
                    out.push(figures);
                    continue;
                }
            }
            let pre = state.clone();
            if let Some(first) = case.events.first() {
                let n_first = case
                    .events
                    .iter()
                    .take_while(|e| (e.at_s - first.at_s).abs() <= SAME_TIME_S)
                    .count();
                for event in &case.events[..n_first] {
                    state.apply(plant, &event.action);
                }
                figures.after_first = Some(state_figures(plant, &pre, &state, first.at_s));
                if n_first < case.events.len() {
                    for event in &case.events[n_first..] {
                        state.apply(plant, &event.action);
                    }
                    let last_s = case.events.last().map_or(first.at_s, |e| e.at_s);
                    figures.after_all = Some(state_figures(plant, &pre, &state, last_s));
                }
            }
            out.push(figures);
        }
    }
    out
}

/// Load shed by each stage at each operating point.
pub fn screen_scheme(plant: &Plant, scheme: &Scheme) -> SchemeFigures {
    let ops = &plant.operating_points;
    let plant_load: Vec<f64> = ops.iter().map(|op| op.load_mw.iter().sum()).collect();
    let mut cumulative = vec![0.0; ops.len()];
    // A load in several stages (an armed stage and its under-frequency backup) is opened once:
    // the cumulative figure counts it at the first stage in operating order that lists it.
    let mut counted = vec![false; plant.loads.len()];
    let stages = scheme
        .operating_order()
        .into_iter()
        .map(|i| {
            let stage = &scheme.stages[i];
            let mw: Vec<f64> = ops
                .iter()
                .map(|op| stage.sheds.iter().filter_map(|&l| op.load_mw.get(l)).sum())
                .collect();
            for &l in &stage.sheds {
                if let Some(seen) = counted.get_mut(l).filter(|seen| !**seen) {
                    *seen = true;
                    for (c, op) in cumulative.iter_mut().zip(ops) {
                        *c += op.load_mw.get(l).copied().unwrap_or(0.0);
                    }
                }
            }
            let pct = |v: &[f64]| -> Vec<f64> {
                v.iter()
                    .zip(&plant_load)
                    .map(|(m, total)| if *total > 0.0 { 100.0 * m / total } else { 0.0 })
                    .collect()
            };
            StageFigures {
                stage: stage.id.clone(),
                trigger: match stage.trigger {
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    } => TriggerFigure::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    },
                    StageTrigger::Breaker(b) => TriggerFigure::Armed {
                        breaker: breaker_id(plant, b),
                    },
                },
                delay_s: stage.delay_s,
                breaker_s: stage.breaker_s,
                loads: stage
                    .sheds
                    .iter()
                    .filter_map(|&l| plant.loads.get(l).map(|x| x.id.clone()))
                    .collect(),
                pct_of_load: pct(&mw),
                cumulative_pct_of_load: pct(&cumulative),
                cumulative_mw: cumulative.clone(),
                mw,
            }
        })
        .collect();
    SchemeFigures {
        scheme: scheme.name.clone(),
        operating_points: ops.iter().map(|o| o.id.clone()).collect(),
        plant_load_mw: plant_load,
        stages,
    }
}

/// Initial rate of change of frequency, Hz/s, for a shortage `deficit_mw` on stored energy
/// `stored_energy_mws` (Σ H·S): `−ΔP·f0 / (2·E_k)`. `None` without stored energy.
pub fn initial_rocof_hz_per_s(
    deficit_mw: f64,
    stored_energy_mws: f64,
    nominal_hz: f64,
) -> Option<f64> {
    if stored_energy_mws > 0.0 {
        Some(-deficit_mw * nominal_hz / (2.0 * stored_energy_mws))
    } else {
        None
    }
}

/// Steady state of an island off the utility after a shortage `deficit_mw` (negative: surplus),
/// with load damping `damping_mw_per_pu` and the governed machines `units`.
pub fn steady_state(
    units: &[GovernorUnit],
    damping_mw_per_pu: f64,
    deficit_mw: f64,
    nominal_hz: f64,
) -> SteadyState {
    let floor_hz = COLLAPSE_FLOOR_PU * nominal_hz;
    let max_dev_pu = 1.0 - COLLAPSE_FLOOR_PU;
    // Solve for a surplus as a mirrored shortage: x is the speed deviation in the direction the
    // imbalance drives it, so x ≥ 0 always.
    let sign = if deficit_mw < 0.0 { -1.0 } else { 1.0 };
    let need = deficit_mw.abs();
    let room = |u: &GovernorUnit| {
        if sign > 0.0 {
            u.raise_mw.max(0.0)
        } else {
            u.lower_mw.max(0.0)
        }
    };
    let mut response = vec![0.0; units.len()];
    let mut remaining = need;
    let mut isochronous = None;
    for (i, u) in units.iter().enumerate() {
        if u.isochronous && remaining > 0.0 {
            let take = remaining.min(room(u));
            response[i] = take;
            remaining -= take;
            isochronous = Some(u.id.clone());
        }
    }
    let droop: Vec<usize> = (0..units.len())
        .filter(|&i| !units[i].isochronous && units[i].gain_mw_per_pu > 0.0)
        .collect();
    let droop_at = |i: usize, x: f64| {
        let u = &units[i];
        (u.gain_mw_per_pu * (x - u.deadband_pu).max(0.0)).min(room(u))
    };
    let total_at = |x: f64| -> f64 {
        droop.iter().map(|&i| droop_at(i, x)).sum::<f64>() + damping_mw_per_pu.max(0.0) * x
    };
    let x = if remaining <= 0.0 {
        0.0
    } else {
        if total_at(max_dev_pu) < remaining {
            let iso_room: f64 = units.iter().filter(|u| u.isochronous).map(room).sum();
            return SteadyState::NotHeld {
                floor_hz,
                available_mw: sign * (total_at(max_dev_pu) + iso_room),
            };
        }
        isochronous = None;
        // g(x) is continuous, non-decreasing and linear between these breakpoints.
        let mut points: Vec<f64> = vec![0.0, max_dev_pu];
        for &i in &droop {
            let u = &units[i];
            for p in [u.deadband_pu, u.deadband_pu + room(u) / u.gain_mw_per_pu] {
                if p > 0.0 && p < max_dev_pu {
                    points.push(p);
                }
            }
        }
        points.sort_by(f64::total_cmp);
        let mut x = max_dev_pu;
        for w in points.windows(2) {
            let (a, b) = (w[0], w[1]);
            let (ga, gb) = (total_at(a), total_at(b));
            if gb >= remaining {
                x = if gb > ga {
                    a + (remaining - ga) * (b - a) / (gb - ga)
                } else {
                    a
                };
                break;
            }
        }
        x
    };
    for &i in &droop {
        response[i] = droop_at(i, x);
    }
    let at_limit = units
        .iter()
        .zip(&response)
        .filter(|(u, r)| (u.gain_mw_per_pu > 0.0 || u.isochronous) && **r >= room(u) - 1e-9)
        .map(|(u, _)| u.id.clone())
        .collect();
    let delta_hz = -sign * x * nominal_hz;
    SteadyState::Held {
        hz: nominal_hz + delta_hz,
        delta_hz,
        governor_mw: sign * response.iter().sum::<f64>(),
        load_relief_mw: sign * damping_mw_per_pu.max(0.0) * x,
        isochronous,
        at_limit,
        responses: units
            .iter()
            .zip(&response)
            .map(|(u, r)| UnitResponse {
                generator: u.id.clone(),
                mw: sign * r,
            })
            .collect(),
    }
}

// ---------------------------------------------------------------- internals

/// Plant state between events: what runs, what is connected, what each machine produces.
#[derive(Debug, Clone)]
struct State {
    breakers: BreakerState,
    /// By generator: running and connected.
    running: Vec<bool>,
    output_mw: Vec<f64>,
    /// By load: still connected.
    connected: Vec<bool>,
    load_mw: Vec<f64>,
    /// Constant-power steps by section.
    step_mw: Vec<f64>,
    import_mw: f64,
}

impl State {
    fn initial(plant: &Plant, op_idx: usize, utility_closed: bool) -> State {
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
        }
    }

    fn generation_total(&self) -> f64 {
        self.output_mw
            .iter()
            .zip(&self.running)
            .filter(|(_, r)| **r)
            .map(|(p, _)| p)
            .sum()
    }

    /// Starting islanded: the utility island's governed machines take up the import in
    /// proportion to S/R within their headroom (see the module doc).
    fn take_up_import(&mut self, plant: &Plant) -> Result<(), CaseProblem> {
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

    fn apply(&mut self, plant: &Plant, action: &Action) {
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

    fn generation_in(&self, plant: &Plant, island: &Island) -> f64 {
        plant
            .generators
            .iter()
            .enumerate()
            .filter(|(g, gen)| self.running[*g] && island.contains(gen.section))
            .map(|(g, _)| self.output_mw[g])
            .sum()
    }

    fn load_in(&self, plant: &Plant, island: &Island) -> f64 {
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

    fn energy_in(&self, plant: &Plant, island: &Island) -> (f64, f64) {
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

    fn damping_in(&self, plant: &Plant, island: &Island) -> f64 {
        plant
            .loads
            .iter()
            .enumerate()
            .filter(|(l, load)| self.connected[*l] && island.contains(load.section))
            .map(|(l, load)| load.freq_exp * self.load_mw[l])
            .sum()
    }

    fn governor_units(&self, plant: &Plant, island: &Island) -> Vec<GovernorUnit> {
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
                raise_mw: (gen.max_mw - self.output_mw[g]).max(0.0),
                lower_mw: (self.output_mw[g] - gen.min_mw).max(0.0),
                isochronous: gen.governor.isochronous,
            })
            .collect()
    }
}

fn section_ids(plant: &Plant, island: &Island) -> Vec<String> {
    island
        .sections
        .iter()
        .filter_map(|s| plant.sections.get(*s).map(|x| x.id.clone()))
        .collect()
}

fn island_figures(plant: &Plant, state: &State, island: &Island) -> IslandFigures {
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

fn state_figures(plant: &Plant, pre: &State, state: &State, at_s: f64) -> StateFigures {
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

fn profile_figures(profile: &[(f64, f64)], scheme: Option<&Scheme>) -> Option<ProfileFigures> {
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

fn breaker_id(plant: &Plant, breaker: BreakerRef) -> String {
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

#[cfg(test)]
mod tests {
    use super::*;

    fn unit(id: &str, gain: f64, raise: f64) -> GovernorUnit {
        GovernorUnit {
            id: id.into(),
            gain_mw_per_pu: gain,
            deadband_pu: 0.0,
            raise_mw: raise,
            lower_mw: raise,
            isochronous: false,
        }
    }

    #[test]
    fn clamped_unit_leaves_the_rest_to_the_others() {
        // 10 MW short; unit a (gain 1000) can give only 2 MW, unit b (gain 1000) is free,
        // D = 0: a clamps at 2, b gives 8 at x = 0.008 pu.
        let s = steady_state(
            &[unit("a", 1000.0, 2.0), unit("b", 1000.0, 50.0)],
            0.0,
            10.0,
            50.0,
        );
        let SteadyState::Held {
            delta_hz,
            responses,
            at_limit,
            ..
        } = s
        else {
            panic!("held expected");
        };
        assert!((delta_hz + 0.4).abs() < 1e-9);
        assert!((responses[0].mw - 2.0).abs() < 1e-9);
        assert!((responses[1].mw - 8.0).abs() < 1e-9);
        assert_eq!(at_limit, vec!["a".to_string()]);
    }

    #[test]
    fn no_headroom_and_no_damping_is_not_held() {
        let s = steady_state(&[unit("a", 1000.0, 2.0)], 0.0, 3.0, 50.0);
        assert!(
            matches!(s, SteadyState::NotHeld { available_mw, .. } if (available_mw - 2.0).abs() < 1e-9)
        );
    }

    #[test]
    fn isochronous_unit_restores_nominal_within_its_headroom() {
        let mut iso = unit("iso", 0.0, 5.0);
        iso.isochronous = true;
        let s = steady_state(&[iso, unit("b", 100.0, 5.0)], 10.0, 4.0, 60.0);
        assert!(
            matches!(s, SteadyState::Held { hz, ref isochronous, .. } if hz == 60.0 && isochronous.as_deref() == Some("iso"))
        );
    }

    #[test]
    fn deadband_offsets_the_response() {
        // Gain 100 MW/pu, dead band 0.001 pu, 1 MW short, no damping: x = 0.001 + 0.01.
        let mut u = unit("a", 100.0, 10.0);
        u.deadband_pu = 0.001;
        let SteadyState::Held { delta_hz, .. } = steady_state(&[u], 0.0, 1.0, 50.0) else {
            panic!("held expected");
        };
        assert!((delta_hz + 0.011 * 50.0).abs() < 1e-9);
    }

    #[test]
    fn surplus_raises_frequency() {
        let SteadyState::Held { delta_hz, .. } =
            steady_state(&[unit("a", 100.0, 10.0)], 0.0, -1.0, 50.0)
        else {
            panic!("held expected");
        };
        assert!((delta_hz - 0.5).abs() < 1e-9);
    }
}
