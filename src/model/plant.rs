//! The plant: sections, ties, the utility connection, generators, loads, operating points and the
//! acceptance criteria. Indices (`section`, load and generator positions) refer to this plant's own
//! vectors and are valid by construction.

/// A validated plant.
#[derive(Debug, Clone, PartialEq)]
pub struct Plant {
    pub name: String,
    /// 50 or 60.
    pub nominal_hz: f64,
    pub sections: Vec<Section>,
    pub ties: Vec<Tie>,
    pub utility: Option<Utility>,
    pub generators: Vec<Generator>,
    pub loads: Vec<Load>,
    /// At least one; a plant file without any gets one called `normal` with the file's own values.
    pub operating_points: Vec<OperatingPoint>,
    pub criteria: Criteria,
    /// Limits for `nadir design`.
    pub design: super::DesignLimits,
}

/// A bus section.
#[derive(Debug, Clone, PartialEq)]
pub struct Section {
    pub id: String,
}

/// A bus-tie breaker between two sections.
#[derive(Debug, Clone, PartialEq)]
pub struct Tie {
    pub id: String,
    pub between: [usize; 2],
    /// An open tie stays open in every operating point unless a point closes it.
    pub normally_open: bool,
}

/// The connection to the public grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Utility {
    /// The breaker's id as cases and event-armed stages name it (default `utility`).
    pub breaker_id: String,
    pub section: usize,
    /// As written (positive: the plant imports; 0 when written as `balance`). Use each operating
    /// point's `import_mw`, which is the figure that balances that point.
    pub import_mw: f64,
    /// Interface protection that opens the utility breaker.
    pub interface_trips: Vec<FrequencyTrip>,
}

/// A frequency or ROCOF protection element with a definite time delay.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FrequencyTrip {
    /// Operates when measured frequency stays below `hz` for `after_s`.
    Under { hz: f64, after_s: f64 },
    /// Operates when measured frequency stays above `hz` for `after_s`.
    Over { hz: f64, after_s: f64 },
    /// Operates when |df/dt| stays above `hz_per_s` for `after_s`.
    Rocof { hz_per_s: f64, after_s: f64 },
}

/// An undervoltage element: operates when the section voltage stays below `below_pu` for `after_s`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UndervoltageTrip {
    pub below_pu: f64,
    pub after_s: f64,
}

/// A synchronous generator with its prime mover, governor and own protection.
#[derive(Debug, Clone, PartialEq)]
pub struct Generator {
    pub id: String,
    pub section: usize,
    pub rating_mva: f64,
    /// Inertia constant H on the machine's own rating, MW·s/MVA.
    pub inertia_s: f64,
    /// Dispatch in the plant file; operating points may override it.
    pub output_mw: f64,
    pub min_mw: f64,
    pub max_mw: f64,
    pub governor: Governor,
    pub trips: Vec<FrequencyTrip>,
    /// Voltage ride-through limits: the machine trips when a dip is deeper and longer than any of these.
    pub undervoltage_trips: Vec<UndervoltageTrip>,
    /// Time the machine may spend in abnormal frequency bands; empty means the default bands.
    pub off_frequency_limits: Vec<OffFrequencyLimit>,
}

/// Time a machine may spend with frequency in [low_hz, high_hz).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct OffFrequencyLimit {
    pub low_hz: f64,
    pub high_hz: f64,
    pub max_s: f64,
}

/// Shortest lag the simulator integrates, seconds (10 ms). A governor, turbine or relay
/// measurement lag shorter than this is below the integrator's reach at the step sizes a
/// frequency study needs (an explicit method must step at about a third of the shortest time
/// constant, so run time and memory would grow as 1/τ): it is treated as instantaneous, output
/// equal to its (limited) input, except the engine's fuel-rack lag, whose rise is ramp limited
/// and which is held at this value instead (docs/models.md, "Lags shorter than 10 ms"). Every
/// published governor and turbine time constant is well above it. Validation's plausibility
/// warning for such a lag reads this constant.
pub const INSTANT_LAG_S: f64 = 0.01;

/// Speed governing common to every prime mover.
#[derive(Debug, Clone, PartialEq)]
pub struct Governor {
    /// Permanent droop on the machine's own rating, percent (ignored in isochronous mode).
    pub droop_pct: f64,
    /// Total width of the dead band is 2·`deadband_hz`; the governor sees no error inside ±deadband.
    pub deadband_hz: f64,
    /// Integral (isochronous) speed control; at most one such machine per island.
    pub isochronous: bool,
    pub prime_mover: PrimeMover,
    /// Process-steam pressure control while the island is on the utility (steam machines only).
    pub pressure_control: Option<PressureControl>,
}

/// A steam turbine held on process-steam pressure control while its island is on the utility:
/// constant output, no frequency response. When its island loses the utility (the utility
/// breaker or a tie opening) it transfers to speed control (the governor's droop or isochronous
/// setting) `transfer_s` later; from then the steam headers give at most `extra_mw` above the
/// operating point's dispatch, rising from the transfer at no more than `extra_mw_per_s`. A
/// machine whose island is off the utility when a case starts is in speed control from t = 0,
/// with the headers' whole `extra_mw` available. docs/models.md states the model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PressureControl {
    pub transfer_s: f64,
    pub extra_mw: f64,
    pub extra_mw_per_s: f64,
}

/// The prime-mover and governor model with its own parameters. Equations and sources are in
/// docs/models.md and in the dynamics module of each model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PrimeMover {
    /// Non-reheat steam turbine: governor lag and steam-chest lag.
    Steam { governor_s: f64, turbine_s: f64 },
    /// Reheat steam turbine, reheat form of the low-order frequency response model
    /// (Anderson & Mirheydar 1990).
    SteamReheat {
        governor_s: f64,
        reheat_s: f64,
        hp_fraction: f64,
    },
    /// Hydro turbine with water starting time and transient droop.
    Hydro {
        governor_s: f64,
        water_start_s: f64,
        transient_droop_pct: f64,
        reset_s: f64,
    },
    /// Gas turbine with a temperature/load limit.
    GasTurbine {
        governor_s: f64,
        turbine_s: f64,
        load_limit_mw: f64,
    },
    /// Reciprocating engine with a load-acceptance ramp limit.
    Engine { governor_s: f64, ramp_mw_per_s: f64 },
    /// Fixed mechanical output (no governor action).
    Fixed,
}

/// A plant load.
#[derive(Debug, Clone, PartialEq)]
pub struct Load {
    pub id: String,
    pub description: String,
    pub section: usize,
    /// Demand at nominal frequency and voltage in the plant file; operating points scale it.
    pub p_mw: f64,
    /// Importance: rank 1 is shed first; higher ranks later.
    pub rank: u32,
    pub never_shed: bool,
    /// P = P0·(f/f0)^k.
    pub freq_exp: f64,
    /// Inertia constant of the motor and its driven load, on the load's MW; 0 when not declared.
    pub inertia_s: f64,
    pub undervoltage: Option<UndervoltageTrip>,
}

/// A plant mode, resolved to per-machine and per-load values.
#[derive(Debug, Clone, PartialEq)]
pub struct OperatingPoint {
    pub id: String,
    pub description: String,
    /// Demand of each load (by load index), 0 for loads switched off in this mode.
    pub load_mw: Vec<f64>,
    /// Whether each generator (by index) runs.
    pub online: Vec<bool>,
    /// Dispatch of each generator (by index); 0 when offline.
    pub output_mw: Vec<f64>,
    /// Import from the utility (positive) or export (negative): load − generation of the utility's
    /// island at this point (validation checks a written figure against it and keeps this one);
    /// 0 when there is no utility.
    pub import_mw: f64,
    /// Ties (by index) that are open in this mode before any event.
    pub ties_open: Vec<bool>,
}

/// What every case must satisfy. Defaults and their sources are in docs/files.md.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Criteria {
    pub min_hz: f64,
    pub max_hz: f64,
    pub recover_above_hz: f64,
    pub recover_within_s: f64,
    pub max_rocof_hz_per_s: f64,
    /// The window over which ROCOF is judged.
    pub rocof_window_s: f64,
    /// From `settle_within_s` after the disturbance starts to the end of the run, frequency stays
    /// inside [settle_low_hz, settle_high_hz].
    pub settle_within_s: f64,
    pub settle_low_hz: f64,
    pub settle_high_hz: f64,
    /// Every case must hold with its disturbance grown by this factor (1.0: no requirement).
    pub required_disturbance_factor: f64,
    /// Every case must hold with inertia and load damping this many percent lower (0: none).
    pub required_model_error_pct: f64,
    /// The plant file itself writes a required margin that asks for something (a factor above
    /// 1 or an error above 0); `false` when the margins above are the defaults (or written as
    /// none). A run may skip margins only when this is `false`, and then says they were not judged.
    pub margins_written: bool,
    /// Audit: frequency stages closer than this in pickup and `min_spacing_s` in delay clash.
    pub min_spacing_hz: f64,
    pub min_spacing_s: f64,
    /// Audit: no stage may pick up above this.
    pub normal_low_hz: f64,
}

/// A criterion is judged over at least this much of a run, s: the settling band from its start
/// to the end, and the recovery level from its deadline to the end (our choice, no source: long
/// enough to see a governed frequency stay put, short enough for the default 30 s run).
pub const MIN_JUDGED_S: f64 = 5.0;

/// Default required disturbance margin: every case holds with its lost import, generation or
/// load step 20 % larger (common practice, no source; docs/files.md). A plant may write 1.0.
pub const DEFAULT_DISTURBANCE_FACTOR: f64 = 1.2;
/// Default required model-error margin, %: every case holds with inertia constants and load
/// frequency exponents 10 % lower (common practice, no source; docs/files.md). A plant may write 0.
pub const DEFAULT_MODEL_ERROR_PCT: f64 = 10.0;
/// Default coordination spacing between frequency stages, Hz: the 0.2 Hz steps of published
/// under-frequency plans (docs/files.md gives the examples).
pub const DEFAULT_MIN_SPACING_HZ: f64 = 0.2;

impl Criteria {
    /// The plant asks for a disturbance or model-error margin, so a verification without the
    /// margin searches would not judge every criterion.
    pub fn margins_required(&self) -> bool {
        self.required_disturbance_factor > 1.0 || self.required_model_error_pct > 0.0
    }

    /// Defaults scaled from nominal frequency; docs/files.md gives each one's source.
    pub fn defaults(nominal_hz: f64) -> Criteria {
        Criteria {
            min_hz: 0.95 * nominal_hz,
            max_hz: 1.03 * nominal_hz,
            recover_above_hz: 0.99 * nominal_hz,
            recover_within_s: 10.0,
            max_rocof_hz_per_s: 2.0,
            rocof_window_s: 0.5,
            settle_within_s: 20.0,
            settle_low_hz: 0.99 * nominal_hz,
            settle_high_hz: 1.01 * nominal_hz,
            required_disturbance_factor: DEFAULT_DISTURBANCE_FACTOR,
            required_model_error_pct: DEFAULT_MODEL_ERROR_PCT,
            margins_written: false,
            min_spacing_hz: DEFAULT_MIN_SPACING_HZ,
            min_spacing_s: 0.1,
            normal_low_hz: 0.99 * nominal_hz,
        }
    }
}

impl Generator {
    /// Highest output the machine can reach from the operating point's dispatch `dispatch_mw`:
    /// `max_mw`, and for a pressure-controlled machine no more than the dispatch plus the steam
    /// headers' `extra_mw`. The one rule for screening's headroom and the simulator's limit.
    pub fn upper_mw(&self, dispatch_mw: f64) -> f64 {
        match self.governor.pressure_control {
            Some(pc) => self.max_mw.min(dispatch_mw + pc.extra_mw).max(dispatch_mw),
            None => self.max_mw,
        }
    }
}

impl Plant {
    /// Position of a section by id.
    pub fn section_index(&self, id: &str) -> Option<usize> {
        self.sections.iter().position(|s| s.id == id)
    }
    /// Position of a load by id.
    pub fn load_index(&self, id: &str) -> Option<usize> {
        self.loads.iter().position(|l| l.id == id)
    }
    /// Position of a generator by id.
    pub fn generator_index(&self, id: &str) -> Option<usize> {
        self.generators.iter().position(|g| g.id == id)
    }
    /// Position of an operating point by id.
    pub fn operating_point_index(&self, id: &str) -> Option<usize> {
        self.operating_points.iter().position(|o| o.id == id)
    }
}
