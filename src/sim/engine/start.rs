//! The state at t = 0: breakers, islands, connected loads and running machines, and the
//! machines' starting outputs with each separated island's imbalance shared out.

use crate::model::{Case, Plant, Start};
use crate::sim::{EventKind, LoggedEvent};
use crate::topology::{self, BreakerState, Island};

/// Breakers, islands, connected loads and running machines at t = 0.
pub(super) fn start_state(
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
pub(super) fn initial_dispatch(
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
/// [min_mw, `Generator::upper_mw` of the dispatch]; returns what could not be carried.
fn share_imbalance(plant: &Plant, gens: &[usize], p_ref: &mut [f64], mut imbalance: f64) -> f64 {
    let governed =
        |g: &usize| plant.generators[*g].governor.prime_mover != crate::model::PrimeMover::Fixed;
    let upper: Vec<f64> = (0..p_ref.len())
        .map(|g| plant.generators[g].upper_mw(p_ref[g]))
        .collect();
    let room = |g: usize, p: f64, up: bool| {
        let gen = &plant.generators[g];
        if up {
            (upper[g] - p).max(0.0)
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
