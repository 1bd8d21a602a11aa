//! Judging a candidate table on one case at one operating point: did it hold, was it short of
//! shedding or did it shed too much, which stages operated, and what it shed.
//!
//! The pass test is the verification's own (criteria, off-nominal band times) plus, when asked,
//! the plant's required margins, each judged as the margin search would judge it but stopping
//! as soon as the answer is known (one run when the row holds at the end of the searched range);
//! the final table is still verified in full.

use crate::model::{Case, Plant, Scheme};
use crate::sim::{self, EventKind, Run, SimConfig, StopReason};
use crate::verify::criteria::judge;
use crate::verify::margins::{
    grow_disturbance, has_scalable_event, meets_disturbance, meets_model_error, weaken_model,
};
use crate::verify::matrix::{observe, sim_config_for};
use crate::verify::offnominal::band_times;

/// What went wrong in a row, seen from the shedding table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    Holds,
    /// Frequency fell too far or too long, or the run ended early: shed more, sooner.
    Short,
    /// Frequency rose too high after shedding: shed less.
    TooMuch,
}

/// One row judged.
#[derive(Debug, Clone, PartialEq)]
pub struct RowEval {
    pub verdict: Verdict,
    /// Stages (indices into the scheme) that gave a trip command in the studied run, in scheme
    /// order.
    pub operated: Vec<usize>,
    /// Loads opened by stages in the studied run, by index.
    pub shed_loads: Vec<usize>,
    /// Stages that operated in the run that decided the verdict: the studied run, or the margin
    /// run (grown disturbance, weakened model) that failed. A failing row's requirement is set
    /// on these.
    pub acting: Vec<usize>,
    /// Every stage that operated in any of the row's runs: the row's outcome depends on the
    /// loads of these stages only.
    pub touched: Vec<usize>,
}

/// The simulator settings the design uses for every run.
pub fn design_sim_config(plant: &Plant) -> SimConfig {
    SimConfig {
        ..sim_config_for(plant, &SimConfig::default())
    }
}

/// Judge `scheme` on `case` at operating point `op`; with `margins`, the row holds only when it
/// also holds with the plant's required margins (one run at each required value).
pub fn evaluate(
    plant: &Plant,
    case: &Case,
    op: usize,
    scheme: &Scheme,
    cfg: &SimConfig,
    margins: bool,
) -> RowEval {
    let run = sim::simulate(plant, case, op, scheme, cfg);
    let mut verdict = verdict_of(plant, case, op, &run);
    let (operated, shed_loads) = stages_and_loads(plant, scheme, &run);
    let mut acting = operated.clone();
    let mut touched = operated.clone();
    // Each required margin judged as verify's margin search would judge it, walking its
    // bisection only until the answer is known: the verdict is that of the last failing run.
    let c = &plant.criteria;
    let failed: std::cell::RefCell<Option<(Verdict, Vec<usize>)>> = Default::default();
    let mut judge = |p: &Plant, case: &Case| {
        let r = sim::simulate(p, case, op, scheme, cfg);
        let v = verdict_of(p, case, op, &r);
        let (ops, _) = stages_and_loads(plant, scheme, &r);
        touched.extend(ops.iter().copied());
        if v != Verdict::Holds {
            *failed.borrow_mut() = Some((v, ops));
        }
        v == Verdict::Holds
    };
    if margins
        && verdict == Verdict::Holds
        && c.required_disturbance_factor > 1.0
        && has_scalable_event(case)
        && !meets_disturbance(c.required_disturbance_factor, |k| {
            judge(plant, &grow_disturbance(plant, case, op, k))
        })
    {
        (verdict, acting) = failed.take().unwrap_or((Verdict::Short, acting.clone()));
    }
    if margins
        && verdict == Verdict::Holds
        && c.required_model_error_pct > 0.0
        && !meets_model_error(c.required_model_error_pct, |pct| {
            judge(&weaken_model(plant, pct), case)
        })
    {
        (verdict, acting) = failed.take().unwrap_or((Verdict::Short, acting.clone()));
    }
    touched.sort_unstable();
    touched.dedup();
    RowEval {
        verdict,
        operated,
        shed_loads,
        acting,
        touched,
    }
}

/// Whether a run holds, and if not, which way the table is wrong.
pub fn verdict_of(plant: &Plant, case: &Case, op: usize, run: &Run) -> Verdict {
    let c = &plant.criteria;
    let seen = observe(run, case, c);
    let failures = judge(&seen, c);
    let off_band = band_times(plant, op, run).iter().any(|b| b.exceeded());
    if failures.is_empty() && !off_band {
        return Verdict::Holds;
    }
    // A machine tripped by its own protection while frequency was rising was tripped by the
    // shedding (over-frequency, or df/dt on the way up): the table shed too much at once.
    if let Some(rising) = first_cascade_on_rise(plant, run) {
        return if rising {
            Verdict::TooMuch
        } else {
            Verdict::Short
        };
    }
    // The sampled trace is built only when a ROCOF failure asks which way it went.
    let rocof_rising = failures.iter().any(|f| f.criterion == "rocof")
        && steepest_window_rises(run, c.rocof_window_s);
    let too_high = failures.iter().any(|f| match f.criterion {
        "max_hz" => true,
        "rocof" => rocof_rising,
        "settle" => seen
            .settle_range_hz
            .is_some_and(|(_, hi)| hi > c.settle_high_hz),
        _ => false,
    });
    // Over speed: the table (or the case) left far too little load; any other early stop fails
    // low.
    let overspeed = matches!(run.stop, StopReason::Overspeed { .. });
    let too_high = too_high || overspeed;
    let too_low = (seen.abnormal_end.is_some() && !overspeed)
        || seen.nadir_hz < c.min_hz
        || failures.iter().any(|f| match f.criterion {
            "recover" => true,
            "run" => !overspeed,
            "rocof" => !rocof_rising,
            _ => false,
        })
        || seen
            .settle_range_hz
            .is_some_and(|(lo, _)| lo < c.settle_low_hz);
    if too_high && !too_low {
        Verdict::TooMuch
    } else {
        Verdict::Short
    }
}

/// For the first generator tripped by its own protection: whether its section's frequency was
/// rising over the 0.1 s before; `None` without such a trip.
fn first_cascade_on_rise(plant: &Plant, run: &Run) -> Option<bool> {
    let (at_s, generator) = run.events.iter().find_map(|e| match &e.what {
        EventKind::GeneratorTripped {
            generator,
            cascade: true,
            ..
        } => Some((e.at_s, generator)),
        _ => None,
    })?;
    let section = plant.generators[plant.generator_index(generator)?].section;
    let path = &run.trajectory;
    let at = |t: f64| path.grid_hz(section, path.grid_at_or_before(t));
    Some(at(at_s) > at(at_s - 0.1))
}

/// Whether the steepest frequency change over `window_s` (on the sampled trace, any section) is
/// a rise: a ROCOF failure on a rise comes from shedding too much at once.
fn steepest_window_rises(run: &Run, window_s: f64) -> bool {
    let trace = run.sampled_trace();
    let mut best = (0.0_f64, false);
    for section in &trace.section_hz {
        let mut back = 0;
        for (k, &t) in trace.t_s.iter().enumerate() {
            while back < k && trace.t_s[back] < t - window_s - 1e-9 {
                back += 1;
            }
            if back == k || t - trace.t_s[back] < 0.5 * window_s {
                continue;
            }
            let change = section[k] - section[back];
            if change.abs() > best.0 {
                best = (change.abs(), change > 0.0);
            }
        }
    }
    best.1
}

fn stages_and_loads(plant: &Plant, scheme: &Scheme, run: &Run) -> (Vec<usize>, Vec<usize>) {
    let mut operated = Vec::new();
    let mut loads = Vec::new();
    for e in &run.events {
        match &e.what {
            EventKind::StageTripCommand { stage } => {
                if let Some(k) = scheme.stage_index(stage) {
                    if !operated.contains(&k) {
                        operated.push(k);
                    }
                }
            }
            EventKind::LoadsOpened {
                stage, loads: ids, ..
            } => {
                // The loads a stage opens are among its own, in its order: looked up there (a
                // walk with a cursor), not by a search through every load of the plant, which
                // costs a string comparison per load and dominates a run at 1,000 loads.
                let own: &[usize] = scheme
                    .stage_index(stage)
                    .map_or(&[], |k| &scheme.stages[k].sheds);
                let mut at = 0;
                for id in ids {
                    let found = own[at..]
                        .iter()
                        .position(|&i| plant.loads[i].id == *id)
                        .map(|p| at + p)
                        .or_else(|| own.iter().position(|&i| plant.loads[i].id == *id));
                    match found {
                        Some(p) => {
                            at = p + 1;
                            loads.push(own[p]);
                        }
                        None => loads.extend(plant.load_index(id)),
                    }
                }
            }
            _ => {}
        }
    }
    operated.sort_unstable();
    loads.sort_unstable();
    loads.dedup();
    (operated, loads)
}
