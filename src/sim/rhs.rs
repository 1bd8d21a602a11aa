//! The right-hand side of the whole plant: the one derivative function the integrator advances.
//!
//! State layout (fixed for a run; docs/models.md §2): for each section `s` in index order,
//! `y[3s] = Δω_s` (pu speed deviation of the section's island), `y[3s+1] = m_s` (measured Δω, pu),
//! `y[3s+2] = r_s` (measured dΔω/dt, pu/s); then each generator's governor states in generator
//! order (see [`crate::dynamics::governor`]; a tripped or offline machine keeps its slots, frozen).
//! Sections of one island carry identical values, so a split needs no re-layout: each part simply
//! continues from the parent's values. This function is pure in (equations, conditions, y).

use crate::dynamics::{governor::Governor, load, swing};
use crate::relay::measurement;

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

/// Scratch space for [`derivatives`]: three sums per island.
pub fn scratch_for(cond: &Conditions) -> Vec<f64> {
    vec![0.0; 3 * cond.modes.len()]
}

/// dy/dt for the plant. `scratch` must come from [`scratch_for`].
pub fn derivatives(
    eq: &PlantEquations,
    cond: &Conditions,
    scratch: &mut [f64],
    y: &[f64],
    dy: &mut [f64],
) {
    let n_isl = cond.modes.len();
    scratch.iter_mut().for_each(|v| *v = 0.0);
    let (pm, rest) = scratch.split_at_mut(n_isl);
    let (pe, energy) = rest.split_at_mut(n_isl);
    for (i, m) in eq.machines.iter().enumerate() {
        let n = m.governor.n_states();
        let xs = &y[m.offset..m.offset + n];
        let isl = cond.island_of_section[m.section];
        let frozen = cond.modes[isl] == IslandMode::Frozen;
        if !cond.machine_on[i] || frozen {
            dy[m.offset..m.offset + n].iter_mut().for_each(|v| *v = 0.0);
            continue;
        }
        let dw = y[speed_index(m.section)];
        m.governor
            .derivatives(dw, xs, &mut dy[m.offset..m.offset + n]);
        pm[isl] += m.governor.power_mw(dw, xs);
        energy[isl] += m.stored_mws;
    }
    for (l, ld) in eq.loads.iter().enumerate() {
        if !cond.load_on[l] {
            continue;
        }
        let isl = cond.island_of_section[ld.section];
        if cond.modes[isl] != IslandMode::Free {
            continue;
        }
        let dw = y[speed_index(ld.section)];
        pe[isl] += load::power_mw(ld.p0_mw, ld.freq_exp, dw, cond.v_sq[ld.section]);
        energy[isl] += ld.stored_mws;
    }
    for s in 0..eq.n_sections {
        let isl = cond.island_of_section[s];
        if cond.modes[isl] == IslandMode::Free {
            pe[isl] += cond.step_mw[s];
        }
    }
    for s in 0..eq.n_sections {
        let isl = cond.island_of_section[s];
        let (iw, im, ir) = (speed_index(s), measured_index(s), rocof_index(s));
        let dw = match cond.modes[isl] {
            IslandMode::Frozen => {
                dy[iw] = 0.0;
                dy[im] = 0.0;
                dy[ir] = 0.0;
                continue;
            }
            IslandMode::Utility { slope_pu_per_s } => slope_pu_per_s,
            IslandMode::Free if energy[isl] > 0.0 => {
                swing::acceleration_pu_per_s(pm[isl], pe[isl], energy[isl])
            }
            IslandMode::Free => 0.0,
        };
        dy[iw] = dw;
        let dm = measurement::measured_derivative(y[iw], dw, y[im], eq.frequency_lag_s);
        dy[im] = dm;
        dy[ir] = measurement::rocof_derivative(dm, y[ir], eq.rocof_window_s);
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
