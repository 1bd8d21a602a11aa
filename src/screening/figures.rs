//! The screening result types: per operating point, island, case, state, stage, and the governed
//! units a steady state is worked out from. Serialized as they are by `nadir check --json`.

use serde::Serialize;

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
    /// A surplus that governors lowering output and load relief cannot take up before the
    /// over-speed level (as far above nominal as the collapse floor is below it): frequency
    /// rises past it.
    RisesPast {
        ceiling_hz: f64,
        /// Governor lowering room plus load relief at the over-speed level, MW.
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
    /// What the table's figures do not show, in words: a stage sized from the pre-event flow (its
    /// MW is the most it opens), a stage's settings in each setting group, and each over-frequency
    /// stage with what it does to its generator.
    pub notes: Vec<String>,
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
