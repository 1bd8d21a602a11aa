//! The verification matrix: every case replayed at every operating point it applies to, each row
//! judged against the plant's criteria, with the stages that operated, cascaded trips and margins.
//!
//! Rows are computed in parallel (rayon) and collected in case-then-operating-point order, so the
//! matrix is the same whatever the number of threads.

use super::criteria::{judge, Failure, Observed};
use super::margins::{self, Margins};
use super::offnominal::{band_times, BandTime};
use crate::model::{Case, CaseSet, Criteria, Plant, Scheme};
use crate::sim::{self, Cause, EventKind, Run, SimConfig};
use rayon::prelude::*;
use serde::Serialize;

/// Options of a verification.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VerifyConfig {
    pub sim: SimConfig,
    /// Search the disturbance and model-error margins (about fifteen extra runs per row).
    pub margins: bool,
}

impl Default for VerifyConfig {
    fn default() -> Self {
        VerifyConfig {
            sim: SimConfig::default(),
            margins: true,
        }
    }
}

/// One case at one operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    pub case: String,
    /// The case declares shedding its intended response (see `Case::shedding_intended`).
    pub shedding_intended: bool,
    pub operating_point: String,
    pub case_index: usize,
    pub operating_point_index: usize,
    pub pass: bool,
    /// Why the run stopped early (collapse, over-speed, blackout, a numerical stop), in the
    /// words of [`sim::StopReason::status`]; `None` for a run that went to its end time. When
    /// set, the run's figures (`observed`, `final_hz`, `off_nominal`) mean nothing: every
    /// format shows this status in their place.
    pub status: Option<String>,
    pub observed: Observed,
    pub final_hz: f64,
    /// Load opened by stages, MW.
    pub shed_mw: f64,
    /// Load dropped by its own undervoltage release, MW (not counted in `shed_mw`).
    pub dropped_mw: f64,
    /// Shed as a percentage of the plant's load at this operating point.
    pub shed_pct: f64,
    /// Stage ids in the order they opened their loads.
    pub stages_operated: Vec<String>,
    /// Generators tripped by their own protection.
    pub cascades: Vec<String>,
    /// The same trips in words: generator, the element that tripped it and when ("tg-3 by
    /// over-frequency 61.25 Hz / 0.3 s at 1.83 s"); the run went on without the machine.
    pub cascade_causes: Vec<String>,
    pub failures: Vec<Failure>,
    pub margins: Option<Margins>,
    /// Time each running generator spent in each abnormal frequency band.
    pub off_nominal: Vec<BandTime>,
}

/// Mark beside the id of a case whose shedding is intended, in every table of the matrix.
pub const INTENDED_MARK: &str = "*";

/// The legend of [`INTENDED_MARK`], printed under any table that uses it.
pub const INTENDED_LEGEND: &str = "* shedding is the intended response of this case (the cases file says `shedding: intended`); design counts none of its shed as cost.";

impl Row {
    /// The case id, marked when the case's shedding is intended.
    pub fn case_label(&self) -> String {
        if self.shedding_intended {
            format!("{} {INTENDED_MARK}", self.case)
        } else {
            self.case.clone()
        }
    }
}

/// The whole matrix.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Matrix {
    pub rows: Vec<Row>,
}

impl Matrix {
    /// Every row holds every criterion (and its required margins).
    pub fn all_pass(&self) -> bool {
        self.rows.iter().all(|r| r.pass)
    }
}

/// Every (case index, operating point index) pair to replay, in matrix order.
pub fn pairs(cases: &CaseSet) -> Vec<(usize, usize)> {
    cases
        .cases
        .iter()
        .enumerate()
        .flat_map(|(ci, c)| c.applies_to.iter().map(move |&op| (ci, op)))
        .collect()
}

/// Verify a scheme against every case; `progress` is called once per finished row.
pub fn verify(
    plant: &Plant,
    cases: &CaseSet,
    scheme: &Scheme,
    config: &VerifyConfig,
    progress: &(dyn Fn() + Sync),
) -> Matrix {
    let rows = pairs(cases)
        .par_iter()
        .map(|&(ci, op)| {
            let row = verify_one(plant, &cases.cases[ci], ci, op, scheme, config);
            progress();
            row
        })
        .collect();
    Matrix { rows }
}

/// Verify one case at one operating point.
pub fn verify_one(
    plant: &Plant,
    case: &Case,
    case_index: usize,
    op: usize,
    scheme: &Scheme,
    config: &VerifyConfig,
) -> Row {
    let sim_config = sim_config_for(plant, &config.sim);
    let run = sim::simulate(plant, case, op, scheme, &sim_config);
    let observed = observe(&run, case, &plant.criteria);
    let mut failures = judge(&observed, &plant.criteria);
    // Time in abnormal bands is a figure of the trajectory too: none from a broken run.
    let off_nominal = if run.stop.is_complete() {
        band_times(plant, op, &run)
    } else {
        Vec::new()
    };
    for b in off_nominal.iter().filter(|b| b.exceeded()) {
        failures.push(Failure {
            criterion: "off_nominal",
            message: format!(
                "{} spent {:.2} s at {}–{} Hz, longer than its {:.0} s limit",
                b.generator,
                b.time_s,
                if b.band.low_hz > 0.0 {
                    format!("{:.2}", b.band.low_hz)
                } else {
                    "0".into()
                },
                if b.band.high_hz.is_finite() {
                    format!("{:.2}", b.band.high_hz)
                } else {
                    "∞".into()
                },
                b.band.max_s
            ),
            excess: b.time_s - b.band.max_s,
        });
    }
    let margins = if config.margins {
        // The base run is the one above: the search starts from it instead of running it again.
        let m = margins::search_from(plant, case, op, scheme, &sim_config, &run);
        failures.extend(margins::judge_required(&m, &plant.criteria));
        Some(m)
    } else {
        None
    };
    let load_mw: f64 = plant.operating_points[op].load_mw.iter().sum();
    Row {
        case: case.id.clone(),
        shedding_intended: case.shedding_intended,
        operating_point: plant.operating_points[op].id.clone(),
        case_index,
        operating_point_index: op,
        pass: failures.is_empty(),
        status: run.stop.status(),
        final_hz: run.final_hz,
        shed_mw: run.shed_mw,
        dropped_mw: run.dropped_mw,
        shed_pct: if load_mw > 0.0 {
            100.0 * run.shed_mw / load_mw
        } else {
            0.0
        },
        stages_operated: stages_operated(&run),
        cascades: cascades(&run),
        cascade_causes: cascade_causes(&run),
        observed,
        failures,
        margins,
        off_nominal,
    }
}

/// The simulator settings a verification needs: the criteria's ROCOF window and recovery level.
/// The settling check reads the run's trajectory, so no sampled trace is asked for (`base`
/// keeps its own choice).
pub fn sim_config_for(plant: &Plant, base: &SimConfig) -> SimConfig {
    SimConfig {
        rocof_window_s: plant.criteria.rocof_window_s,
        recover_above_hz: Some(plant.criteria.recover_above_hz),
        ..*base
    }
}

/// Whether a run holds every criterion (used by the margin searches).
pub fn passes(plant: &Plant, case: &Case, run: &Run) -> bool {
    judge(&observe(run, case, &plant.criteria), &plant.criteria).is_empty()
}

/// Reduce a run to what the criteria look at.
pub fn observe(run: &Run, case: &Case, criteria: &Criteria) -> Observed {
    let (first_event_s, last_event_s) = disturbance_span(case);
    let recovered_at_s = if run.went_below_recover_level {
        run.recovered_above_at_s
    } else {
        None
    };
    // Measured from the last event at or before the recovery (or the disturbance start).
    let recovery_s = recovered_at_s.map(|t| {
        let from = case
            .events
            .iter()
            .map(|e| e.at_s)
            .filter(|&at| at <= t)
            .fold(first_event_s, f64::max);
        (t - from).max(0.0)
    });
    let settle_from = first_event_s + criteria.settle_within_s;
    // On the sample grid, from the run's knots and dense output (the same values the sampled
    // trace would hold there).
    let settle_range_hz = run.trajectory.grid_range_from(settle_from);
    let abnormal_end = run.stop.status();
    Observed {
        first_event_s,
        last_event_s,
        nadir_hz: run.nadir_hz,
        nadir_at_s: run.nadir_at_s,
        peak_hz: run.peak_hz,
        peak_at_s: run.peak_at_s,
        max_rocof_hz_per_s: run.max_rocof_hz_per_s,
        went_below_recover_level: run.went_below_recover_level,
        recovered_at_s,
        recovery_s,
        settle_range_hz,
        abnormal_end,
    }
}

/// When the disturbance starts and when its last part happens (see
/// [`crate::model::disturbance_span`]).
pub fn disturbance_span(case: &Case) -> (f64, f64) {
    case.disturbance_span()
}

fn stages_operated(run: &Run) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for e in &run.events {
        // Shedding stages, and over-frequency stages that tripped or ran back a generator.
        let stage = match &e.what {
            EventKind::LoadsOpened { stage, .. } | EventKind::RunBack { stage, .. } => stage,
            EventKind::BreakerOpened {
                cause: Cause::Stage { stage },
                ..
            } => stage,
            _ => continue,
        };
        if !out.contains(stage) {
            out.push(stage.clone());
        }
    }
    out
}

fn cascade_causes(run: &Run) -> Vec<String> {
    run.events
        .iter()
        .filter_map(|e| match &e.what {
            EventKind::GeneratorTripped {
                generator,
                element,
                cascade: true,
            } => Some(format!("{generator} by {element} at {:.2} s", e.at_s)),
            _ => None,
        })
        .collect()
}

fn cascades(run: &Run) -> Vec<String> {
    run.events
        .iter()
        .filter_map(|e| match &e.what {
            EventKind::GeneratorTripped {
                generator,
                cascade: true,
                ..
            } => Some(generator.clone()),
            _ => None,
        })
        .collect()
}
