//! The simulation: replay one case at one operating point with a shedding scheme.
//!
//! Owns the run loop, the closed [`event::Event`] set, the integration seam and the [`Run`]
//! record. Same inputs give the same `Run`, bit for bit (no global state, no threads, fixed
//! iteration orders). Physics lives in [`crate::dynamics`], relay logic in [`crate::relay`];
//! this module composes them ([`rhs`]) and owns time.

pub mod dopri;
mod engine;
pub mod event;
pub mod integrate;
mod record;
pub mod rhs;
mod trajectory;

pub use trajectory::Trajectory;

use crate::model::{Case, Plant, Scheme};
use serde::Serialize;

/// Options of a run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SimConfig {
    /// Largest integration step while anything is pending, seconds (0.02): a relay picked up or
    /// timing, a watched level near, or frequency changing fast. It is also held below half the
    /// shortest relay delay or breaker time of the run.
    pub max_step_s: f64,
    /// Largest integration step while nothing is pending, seconds (0.5). Set it equal to
    /// `max_step_s` for a fixed cap throughout.
    pub quiet_max_step_s: f64,
    pub rtol: f64,
    pub atol: f64,
    /// Keep sampled frequencies in [`Run::trace`].
    pub record_trace: bool,
    /// Sample spacing for the trace and the windowed ROCOF, seconds (0.01).
    pub sample_interval_s: f64,
    /// An island whose frequency falls below this fraction of nominal has collapsed (0.85); one
    /// that rises as far above nominal (1.15 of nominal, [`SimConfig::overspeed_pu`]) is over
    /// speed. Either island is frozen and fails its run: past these levels the machines'
    /// own protection has long acted and the models no longer hold.
    pub collapse_fraction: f64,
    /// Window of the reported ROCOF (|f(t) − f(t − W)|/W on the samples), seconds (0.5).
    pub rocof_window_s: f64,
    /// A separated island whose frequency falls below this level (Hz) is stopped there as
    /// collapsed, like one below the collapse floor (`None`: no such level). A search that asks
    /// only whether a run holds sets it to the criteria's minimum frequency: a run that goes
    /// below it fails whatever follows, so the rest need not be simulated.
    pub stop_below_hz: Option<f64>,
    /// Limits the run stops at, with [`StopReason::CertainFailure`], as soon as it is certain to
    /// break one of them whatever follows (`None`: run to the end). For a search that asks only
    /// whether a run holds; the run's path up to the stop is the one it would have had anyway
    /// (the check reads the recorded path after each integrated segment, it does not split one).
    pub stop_when_failing: Option<FailLimits>,
    /// Level for [`Run::recovered_above_at_s`]; `None` means 0.99 of nominal.
    pub recover_above_hz: Option<f64>,
    /// Crossing-location tolerance, seconds (1e-6).
    pub locate_tol_s: f64,
    /// Discrete events after which a run stops as an event storm (1000, plus the case's own).
    pub max_events: usize,
    /// State values a run may keep (accepted steps × state entries, plus each step's quartic of
    /// every section's speed kept for the relay measurement; 5 million, about half a
    /// gigabyte with the dense output and the recorder's knots; a one-hour case of the demo
    /// plant with every lag at the 10 ms floor keeps about 1.2 million): the run's memory
    /// ceiling. A run that needs more stops
    /// with `NumericalFault` saying so, instead of growing without bound.
    pub max_kept_values: usize,
}

/// Limits of [`SimConfig::stop_when_failing`]: a run that is certain to break one fails its
/// criteria whatever follows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FailLimits {
    /// Largest |f(t) − f(t − W)|/W (W = [`SimConfig::rocof_window_s`]) on the sample grid,
    /// Hz/s: certain to be broken once one grid point already recorded exceeds it, since the
    /// reported ROCOF is the largest over all of them.
    pub max_rocof_hz_per_s: f64,
    /// Time by which the frequency must be back above the recovery level
    /// ([`SimConfig::recover_above_hz`]) to stay, seconds: certain to be missed once any section
    /// is below the level at a step end after it (its return, if any, comes later still; a
    /// section that never returns, or whose island stops, fails the run too).
    pub recovered_by_s: f64,
}

impl SimConfig {
    /// The over-speed level as a per-unit speed deviation: as far above nominal as the collapse
    /// floor is below it.
    pub fn overspeed_pu(&self) -> f64 {
        1.0 - self.collapse_fraction
    }

    /// The lowest speed deviation (pu) a separated island may reach before it is stopped: the
    /// collapse floor, or [`SimConfig::stop_below_hz`] when that is higher.
    pub fn floor_pu(&self, nominal_hz: f64) -> f64 {
        let collapse = self.collapse_fraction - 1.0;
        match self.stop_below_hz {
            Some(hz) if nominal_hz > 0.0 && (hz - nominal_hz) / nominal_hz > collapse => {
                (hz - nominal_hz) / nominal_hz
            }
            _ => collapse,
        }
    }
}

impl Default for SimConfig {
    fn default() -> Self {
        SimConfig {
            max_step_s: 0.02,
            quiet_max_step_s: 0.5,
            rtol: 1e-6,
            atol: 1e-9,
            record_trace: false,
            sample_interval_s: 0.01,
            collapse_fraction: 0.85,
            rocof_window_s: 0.5,
            recover_above_hz: None,
            stop_below_hz: None,
            stop_when_failing: None,
            locate_tol_s: 1e-6,
            max_events: 1000,
            max_kept_values: 5_000_000,
        }
    }
}

/// Why a run ended (or, for collapse and blackout, what went wrong first; the other islands
/// are still simulated to the end time).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum StopReason {
    EndTime,
    Collapse {
        island: usize,
        at_s: f64,
    },
    /// An island rose above the over-speed level ([`SimConfig::overspeed_pu`]).
    Overspeed {
        island: usize,
        at_s: f64,
    },
    Blackout {
        island: usize,
        at_s: f64,
    },
    NumericalFault {
        at_s: f64,
        detail: String,
    },
    /// Stopped at a limit of [`SimConfig::stop_when_failing`] once certain to break it
    /// (`rocof` or `recover`): the run fails whatever follows, so the rest was not simulated.
    CertainFailure {
        at_s: f64,
        criterion: &'static str,
    },
}

impl StopReason {
    /// Whether the run went to its end time with every island's figures meaningful. Otherwise
    /// every verb and format shows [`StopReason::status`] instead of the run's figures: after a
    /// collapse, an over-speed, a blackout or a numerical stop, the nadir, peak, final frequency
    /// and recovery describe a model that no longer holds or a run that did not finish.
    pub fn is_complete(&self) -> bool {
        matches!(self, StopReason::EndTime)
    }

    /// What stopped the run, in words (the one wording every verb and format uses); `None` for a
    /// run that went to its end time.
    pub fn status(&self) -> Option<String> {
        match self {
            StopReason::EndTime => None,
            StopReason::Collapse { island, at_s } => Some(format!(
                "island {} collapsed at {:.2} s (below the collapse floor)",
                island + 1,
                at_s
            )),
            StopReason::Overspeed { island, at_s } => Some(format!(
                "island {} over speed at {:.2} s (above the over-speed level)",
                island + 1,
                at_s
            )),
            StopReason::Blackout { island, at_s } => Some(format!(
                "island {} lost its last generator at {:.2} s (blackout)",
                island + 1,
                at_s
            )),
            StopReason::NumericalFault { at_s, detail } => {
                Some(format!("the simulation stopped at {at_s:.3} s: {detail}"))
            }
            StopReason::CertainFailure { at_s, criterion } => Some(format!(
                "stopped at {at_s:.2} s, certain to fail its {criterion} criterion whatever follows"
            )),
        }
    }
}

/// The result of one replay.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Run {
    pub stop: StopReason,
    pub islands: Vec<IslandSummary>,
    /// Lowest frequency of any island, and when.
    pub nadir_hz: f64,
    pub nadir_at_s: f64,
    /// Highest frequency of any island after the disturbance starts, never the value held at
    /// that instant: see [`IslandSummary::peak_hz`]. `None` when no island's frequency rose.
    pub peak_hz: Option<f64>,
    pub peak_at_s: Option<f64>,
    /// Max |f(t) − f(t − W)|/W over sections and samples, W = `SimConfig.rocof_window_s`.
    pub max_rocof_hz_per_s: f64,
    /// Lowest final frequency of the islands still alive at the end.
    pub final_hz: f64,
    pub recovered_above_at_s: Option<f64>,
    /// Some section was below the recovery level at some time (when not, the run counts as
    /// recovered from the start and there is no recovery time to show).
    pub went_below_recover_level: bool,
    pub events: Vec<LoggedEvent>,
    /// Load opened by stages, MW at nominal frequency.
    pub shed_mw: f64,
    /// Load dropped by its own undervoltage release during a dip, MW at nominal frequency.
    pub dropped_mw: f64,
    /// The sampled trace, kept when [`SimConfig::record_trace`] asks for it.
    pub trace: Option<Trace>,
    /// The run's path (knots and dense output): criteria read the sample grid from it without
    /// the trace, and [`Run::sampled_trace`] builds the trace from it on request.
    #[serde(skip)]
    pub trajectory: Trajectory,
}

impl Run {
    /// The sampled trace: the one kept by the run, or built now from its trajectory (same
    /// values).
    pub fn sampled_trace(&self) -> std::borrow::Cow<'_, Trace> {
        match &self.trace {
            Some(t) => std::borrow::Cow::Borrowed(t),
            None => std::borrow::Cow::Owned(self.trajectory.trace()),
        }
    }
}

/// One island over its lifetime (an island is new whenever its sections or its utility
/// connection change).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct IslandSummary {
    /// Creation order.
    pub index: usize,
    pub sections: Vec<String>,
    pub on_utility: bool,
    pub from_s: f64,
    pub to_s: f64,
    pub nadir_hz: f64,
    pub nadir_at_s: f64,
    /// Highest frequency after the disturbance starts while this island existed: ignoring the
    /// fall from the disturbance instant, the highest value from the first rise on (a rebound
    /// after the nadir, an over-frequency after a load loss). `None` when it never rose.
    pub peak_hz: Option<f64>,
    pub peak_at_s: Option<f64>,
    pub final_hz: f64,
    pub max_rocof_hz_per_s: f64,
    /// Load MW opened by stages while the load was in this island.
    pub shed_mw: f64,
    /// Load MW dropped by undervoltage while the load was in this island.
    pub dropped_mw: f64,
    pub end: IslandEnd,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum IslandEnd {
    /// Still there at the end of the run.
    Running,
    /// Replaced by other islands (split or utility connection changed).
    Changed,
    Collapsed,
    /// Rose above the over-speed level.
    Overspeed,
    Blackout,
}

/// A logged discrete change.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoggedEvent {
    pub at_s: f64,
    pub what: EventKind,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum EventKind {
    InitialDeficit {
        island: usize,
        mw: f64,
    },
    BreakerOpened {
        breaker: String,
        cause: Cause,
    },
    LoadStep {
        section: String,
        mw: f64,
    },
    VoltageDip {
        section: String,
        remaining_pu: f64,
        duration_s: f64,
    },
    VoltageRestored {
        section: String,
    },
    StagePickup {
        stage: String,
    },
    StageReset {
        stage: String,
    },
    StageTripCommand {
        stage: String,
    },
    /// A stage sized from the pre-event flow took the flow through its breaker just before it
    /// opened (MW into the side that lost it; negative when the plant exported or the machine
    /// motored) and chose its loads (none when the flow less the allowance was not positive).
    StageSized {
        stage: String,
        flow_mw: f64,
        allowance_mw: f64,
        loads: Vec<String>,
    },
    LoadsOpened {
        stage: String,
        loads: Vec<String>,
        mw: f64,
    },
    LoadDroppedOut {
        load: String,
        mw: f64,
    },
    ProtectionPickup {
        element: String,
    },
    ProtectionReset {
        element: String,
    },
    GeneratorTripped {
        generator: String,
        element: String,
        cascade: bool,
    },
    IslandFormed {
        island: usize,
        sections: Vec<String>,
        on_utility: bool,
    },
    Collapse {
        island: usize,
    },
    Overspeed {
        island: usize,
    },
    Blackout {
        island: usize,
    },
    /// A pressure-controlled steam machine transferred to speed control (its island lost the
    /// utility `transfer_s` before).
    SpeedControl {
        generator: String,
    },
    /// An over-frequency stage lowered a generator's output reference by `mw`.
    RunBack {
        stage: String,
        generator: String,
        mw: f64,
    },
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub enum Cause {
    Case,
    Protection {
        element: String,
    },
    /// An over-frequency stage of the scheme.
    Stage {
        stage: String,
    },
}

/// Sampled frequencies.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Trace {
    pub t_s: Vec<f64>,
    /// By section: frequency of the island holding it.
    pub section_hz: Vec<Vec<f64>>,
    pub shed_mw: Vec<f64>,
}

/// Replay `case` at `operating_point` (index) with `scheme`.
pub fn simulate(
    plant: &Plant,
    case: &Case,
    operating_point: usize,
    scheme: &Scheme,
    config: &SimConfig,
) -> Run {
    engine::run(plant, case, operating_point, scheme, config)
}

/// Machine outputs (MW, by generator; 0 when offline) that a replay of `case` at
/// `operating_point` starts from: the operating point's dispatch, and for an island separated at
/// t = 0 its imbalance taken up as [`crate::screening`] does (isochronous machines first, then
/// droop machines in proportion to S/R, each within its limits).
pub fn initial_dispatch_mw(plant: &Plant, case: &Case, operating_point: usize) -> Vec<f64> {
    engine::initial_outputs(plant, case, operating_point)
}
