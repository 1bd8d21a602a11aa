//! The right-hand side of the whole plant: the one derivative function the integrator advances.
//!
//! State layout (fixed for a run; docs/models.md §2): for each section `s` in index order,
//! `y[3s] = Δω_s` (pu speed deviation of the section's island), `y[3s+1] = m_s` (measured Δω, pu),
//! `y[3s+2] = r_s` (measured dΔω/dt, pu/s); then each generator's governor states in generator
//! order (see [`crate::dynamics::governor`]; a tripped or offline machine keeps its slots, frozen).
//! The measurement slots `m_s`, `r_s` are not ODE states: their derivative here is zero, and the
//! integrator advances them over each step by the measurement's exact solution driven by the
//! step's dense output of `Δω_s` ([`SegmentEquations::filtered`], [`crate::relay::measurement`]).
//! Sections of one island carry identical values, so a split needs no re-layout: each part simply
//! continues from the parent's values. This function is pure in (equations, conditions, y).

use crate::dynamics::{governor::Governor, load, swing};
use crate::relay::measurement::Lags;

/// A pair of components that are linear filters of another one (a relay's measured frequency
/// `m` and measured df/dt `r` of a section's speed, [`crate::relay::measurement`]): not ODE
/// states (their derivative in the equations is zero), but advanced over each accepted step by
/// the filters' exact solution driven by the step's dense output of the input component.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Filtered {
    pub input: usize,
    pub measured: usize,
    pub rocof: usize,
    pub lags: Lags,
}

/// A running or stopped machine.
#[derive(Debug, Clone, PartialEq)]
pub struct Machine {
    pub section: usize,
    /// H·S, MW·s.
    pub stored_mws: f64,
    pub governor: Governor,
    /// First state index.
    pub offset: usize,
}

/// A load with its operating-point demand.
#[derive(Debug, Clone, PartialEq)]
pub struct LoadUnit {
    pub section: usize,
    pub p0_mw: f64,
    pub freq_exp: f64,
    /// H_l·P0, MW·s (0 without a declared inertia).
    pub stored_mws: f64,
}

/// Everything continuous that does not change during a run.
#[derive(Debug, Clone, PartialEq)]
pub struct PlantEquations {
    pub n_sections: usize,
    pub n_states: usize,
    pub machines: Vec<Machine>,
    pub loads: Vec<LoadUnit>,
    pub frequency_lag_s: f64,
    pub rocof_window_s: f64,
}

/// How an island's speed evolves in a segment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IslandMode {
    /// Joined to the utility: speed follows the utility's frequency with this slope.
    Utility { slope_pu_per_s: f64 },
    /// Separated: own swing equation.
    Free,
    /// Collapsed or blacked out: every state of its sections and machines is held.
    Frozen,
}

/// The discrete state the derivative depends on, constant within a segment.
#[derive(Debug, Clone, PartialEq)]
pub struct Conditions {
    pub island_of_section: Vec<usize>,
    pub modes: Vec<IslandMode>,
    pub machine_on: Vec<bool>,
    pub load_on: Vec<bool>,
    /// Squared remaining voltage per section (1 outside dips).
    pub v_sq: Vec<f64>,
    /// Constant-power load steps per section, MW.
    pub step_mw: Vec<f64>,
}

pub fn speed_index(section: usize) -> usize {
    3 * section
}
pub fn measured_index(section: usize) -> usize {
    3 * section + 1
}
pub fn rocof_index(section: usize) -> usize {
    3 * section + 2
}

/// Scratch space for [`derivatives`] (kept for callers of the slice form; the work itself is
/// done by [`SegmentEquations`], which needs none).
pub fn scratch_for(cond: &Conditions) -> Vec<f64> {
    vec![0.0; 3 * cond.modes.len()]
}

/// dy/dt for the plant. `scratch` must come from [`scratch_for`].
///
/// This is [`SegmentEquations::derivatives`] after specialising the equations to `cond`; the
/// integrator calls the specialised form directly so that the per-segment constants (stored
/// energy, connected load by frequency exponent, constant-power steps) are summed once.
pub fn derivatives(
    eq: &PlantEquations,
    cond: &Conditions,
    scratch: &mut [f64],
    y: &[f64],
    dy: &mut [f64],
) {
    scratch.iter_mut().for_each(|v| *v = 0.0);
    SegmentEquations::new(eq, cond).derivatives(y, dy);
}

/// The plant equations with one segment's discrete conditions folded in.
///
/// Same equations as docs/models.md §3–§5; only the order of summation differs from a plain
/// loop over loads (connected loads of one island with the same frequency exponent are summed
/// before the exponent is applied, which is exact because the load model is linear in `P0·v²`).
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentEquations {
    pub n_states: usize,
    machines: Vec<ActiveMachine>,
    islands: Vec<IslandEquations>,
    /// Per section: its island.
    island_of_section: Vec<usize>,
    frequency_lag_s: f64,
    rocof_window_s: f64,
}

#[derive(Debug, Clone, PartialEq)]
struct ActiveMachine {
    governor: Governor,
    offset: usize,
    n: usize,
    speed: usize,
    island: usize,
}

#[derive(Debug, Clone, PartialEq)]
struct IslandEquations {
    mode: IslandMode,
    /// Stored energy of running machines and connected loads with inertia, MW·s.
    energy_mws: f64,
    /// Load that does not depend on frequency (exponent 0, constant-power steps), MW.
    constant_mw: f64,
    /// (frequency exponent, its form for computing, Σ P0·v² of the connected loads with it), MW.
    by_exponent: Vec<(f64, load::Exponent, f64)>,
    /// Speed index of the island's first section (all its sections carry the same value).
    speed: usize,
}

impl SegmentEquations {
    pub fn new(eq: &PlantEquations, cond: &Conditions) -> SegmentEquations {
        let mut first_section = vec![usize::MAX; cond.modes.len()];
        for (s, &isl) in cond.island_of_section.iter().enumerate() {
            if first_section[isl] == usize::MAX {
                first_section[isl] = s;
            }
        }
        let mut islands: Vec<IslandEquations> = cond
            .modes
            .iter()
            .zip(&first_section)
            .map(|(&mode, &s)| IslandEquations {
                mode,
                energy_mws: 0.0,
                constant_mw: 0.0,
                by_exponent: Vec::new(),
                speed: speed_index(if s == usize::MAX { 0 } else { s }),
            })
            .collect();
        let mut machines = Vec::new();
        for (i, m) in eq.machines.iter().enumerate() {
            let isl = cond.island_of_section[m.section];
            if !cond.machine_on[i] || cond.modes[isl] == IslandMode::Frozen {
                continue;
            }
            islands[isl].energy_mws += m.stored_mws;
            machines.push(ActiveMachine {
                governor: m.governor,
                offset: m.offset,
                n: m.governor.n_states(),
                speed: speed_index(m.section),
                island: isl,
            });
        }
        for (l, ld) in eq.loads.iter().enumerate() {
            let isl = cond.island_of_section[ld.section];
            if !cond.load_on[l] || cond.modes[isl] != IslandMode::Free {
                continue;
            }
            let island = &mut islands[isl];
            island.energy_mws += ld.stored_mws;
            let p = ld.p0_mw * cond.v_sq[ld.section];
            if ld.freq_exp == 0.0 {
                island.constant_mw += p;
            } else if let Some(g) = island.by_exponent.iter_mut().find(|g| g.0 == ld.freq_exp) {
                g.2 += p;
            } else {
                let form = load::Exponent::of(ld.freq_exp);
                island.by_exponent.push((ld.freq_exp, form, p));
            }
        }
        for s in 0..eq.n_sections {
            let isl = cond.island_of_section[s];
            if cond.modes[isl] == IslandMode::Free {
                islands[isl].constant_mw += cond.step_mw[s];
            }
        }
        SegmentEquations {
            n_states: eq.n_states,
            machines,
            islands,
            island_of_section: cond.island_of_section.clone(),
            frequency_lag_s: eq.frequency_lag_s,
            rocof_window_s: eq.rocof_window_s,
        }
    }

    /// dy/dt at `y` (both of length `n_states`).
    pub fn derivatives(&self, y: &[f64], dy: &mut [f64]) {
        const ON_STACK: usize = 8;
        let n_isl = self.islands.len();
        let mut pm_stack = [0.0; ON_STACK];
        let mut pm_heap = Vec::new();
        let pm: &mut [f64] = if n_isl <= ON_STACK {
            &mut pm_stack[..n_isl]
        } else {
            pm_heap.resize(n_isl, 0.0);
            &mut pm_heap
        };
        dy.iter_mut().for_each(|v| *v = 0.0);
        for m in &self.machines {
            let xs = &y[m.offset..m.offset + m.n];
            let dw = y[m.speed];
            pm[m.island] +=
                m.governor
                    .derivatives_and_power(dw, xs, &mut dy[m.offset..m.offset + m.n]);
        }
        for (i, isl) in self.islands.iter().enumerate() {
            let dw_dt = match isl.mode {
                IslandMode::Frozen => continue,
                IslandMode::Utility { slope_pu_per_s } => slope_pu_per_s,
                IslandMode::Free if isl.energy_mws > 0.0 => {
                    let dw = y[isl.speed];
                    // As `load::power_mw(p, k, dw, 1.0)`, with the exponent's form chosen once.
                    let ratio = (1.0 + dw).max(0.0);
                    let pe = isl
                        .by_exponent
                        .iter()
                        .fold(isl.constant_mw, |acc, &(_, form, p)| {
                            acc + p * form.factor(ratio)
                        });
                    swing::acceleration_pu_per_s(pm[i], pe, isl.energy_mws)
                }
                IslandMode::Free => 0.0,
            };
            // Reuse the island slot for the section loop below.
            pm[i] = dw_dt;
        }
        for (s, &isl) in self.island_of_section.iter().enumerate() {
            if self.islands[isl].mode == IslandMode::Frozen {
                continue;
            }
            dy[speed_index(s)] = pm[isl];
        }
    }

    /// The measurement of every section not held (frozen): measured frequency and df/dt as
    /// filters of the section's speed, advanced by the integrator outside the ODE. A frozen
    /// section's measurement is held with the rest of its island.
    pub fn filtered(&self) -> Vec<Filtered> {
        let lags = Lags::new(self.frequency_lag_s, self.rocof_window_s);
        self.island_of_section
            .iter()
            .enumerate()
            .filter(|&(_, &isl)| self.islands[isl].mode != IslandMode::Frozen)
            .map(|(s, _)| Filtered {
                input: speed_index(s),
                measured: measured_index(s),
                rocof: rocof_index(s),
                lags,
            })
            .collect()
    }

    /// Entries of the state that are not ODE states: the two measurement slots of every section.
    pub fn n_outside_ode(&self) -> usize {
        2 * self.island_of_section.len()
    }
}

/// Mechanical power of machine `i` at state `y` (MW), 0 when off.
pub fn machine_power_mw(eq: &PlantEquations, cond: &Conditions, i: usize, y: &[f64]) -> f64 {
    let m = &eq.machines[i];
    if !cond.machine_on[i] {
        return 0.0;
    }
    let n = m.governor.n_states();
    m.governor
        .power_mw(y[speed_index(m.section)], &y[m.offset..m.offset + n])
}
