//! The file formats as written by hand: serde types that mirror the YAML one to one.
//!
//! Only this module derives `Deserialize`. Doc comments here are the field reference: they become
//! the descriptions in `nadir schema` and must agree with docs/files.md. Units are in field names.
//! Nothing here is checked beyond its type; `input::validate` turns these into [`crate::model`].

use schemars::JsonSchema;
use serde::Deserialize;
use std::collections::BTreeMap;

// ---------------------------------------------------------------- plant file

/// A plant file: what the plant is.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PlantFile {
    /// Name and nominal frequency.
    pub plant: PlantHeader,
    /// Bus section ids. When omitted the plant has one section called `main`.
    #[serde(default)]
    pub sections: Vec<String>,
    /// Bus-tie breakers between sections.
    #[serde(default)]
    pub ties: Vec<RawTie>,
    /// The utility connection, if the plant has one.
    #[serde(default)]
    pub utility: Option<RawUtility>,
    /// Synchronous generators.
    pub generators: Vec<RawGenerator>,
    /// Plant loads.
    pub loads: Vec<RawLoad>,
    /// Plant modes. When omitted there is one, `normal`, with the values written above.
    #[serde(default)]
    pub operating_points: Vec<RawOperatingPoint>,
    /// Acceptance criteria; each omitted value takes its documented default.
    #[serde(default)]
    pub criteria: RawCriteria,
    /// Limits within which `nadir design` may propose a shedding table; each omitted value takes its documented default.
    #[serde(default)]
    pub design: Option<RawDesign>,
}

/// Plant header.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PlantHeader {
    /// Free text shown in reports.
    pub name: String,
    /// Nominal frequency: 50 or 60.
    pub nominal_hz: f64,
}

/// A bus-tie breaker.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawTie {
    /// Breaker id, unique among all breakers (ties, generators and the utility breaker).
    pub id: String,
    /// The two section ids this breaker joins.
    pub between: Vec<String>,
    /// The tie is open in normal operation (default false).
    #[serde(default)]
    pub normally_open: bool,
}

/// The utility connection.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawUtility {
    /// Id of the utility breaker as cases and armed stages name it (default `utility`).
    #[serde(default)]
    pub breaker: Option<String>,
    /// Section the utility feeds.
    pub section: String,
    /// Import from the grid in MW (negative: export), or `balance` for whatever balances each
    /// operating point (load − generation of the utility's island). Operating points may override it.
    pub import_mw: RawImport,
    /// Interface protection that opens the utility breaker.
    #[serde(default)]
    pub interface_trips: Vec<RawFrequencyTrip>,
}

/// An import in MW, or the word `balance`: the import is whatever balances the operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RawImport {
    Mw(f64),
    Balance,
}

impl<'de> Deserialize<'de> for RawImport {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct Visit;
        impl serde::de::Visitor<'_> for Visit {
            type Value = RawImport;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number of MW or `balance`")
            }
            fn visit_f64<E: serde::de::Error>(self, v: f64) -> Result<RawImport, E> {
                Ok(RawImport::Mw(v))
            }
            fn visit_i64<E: serde::de::Error>(self, v: i64) -> Result<RawImport, E> {
                Ok(RawImport::Mw(v as f64))
            }
            fn visit_u64<E: serde::de::Error>(self, v: u64) -> Result<RawImport, E> {
                Ok(RawImport::Mw(v as f64))
            }
            fn visit_str<E: serde::de::Error>(self, v: &str) -> Result<RawImport, E> {
                if v == "balance" {
                    Ok(RawImport::Balance)
                } else {
                    Err(E::invalid_value(serde::de::Unexpected::Str(v), &self))
                }
            }
        }
        d.deserialize_any(Visit)
    }
}

impl JsonSchema for RawImport {
    fn schema_name() -> std::borrow::Cow<'static, str> {
        "Import".into()
    }
    fn json_schema(_: &mut schemars::SchemaGenerator) -> schemars::Schema {
        schemars::json_schema!({
            "description": "MW (negative: export), or `balance` for the import that balances the operating point",
            "anyOf": [{ "type": "number" }, { "const": "balance" }]
        })
    }
}

/// A frequency protection element: exactly one of `below_hz`, `above_hz`, `rocof_hz_per_s`, plus `after_s`.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawFrequencyTrip {
    /// Under-frequency setting, Hz.
    #[serde(default)]
    pub below_hz: Option<f64>,
    /// Over-frequency setting, Hz.
    #[serde(default)]
    pub above_hz: Option<f64>,
    /// Rate-of-change-of-frequency setting (magnitude), Hz/s.
    #[serde(default)]
    pub rocof_hz_per_s: Option<f64>,
    /// Definite time delay, s.
    pub after_s: f64,
}

/// An undervoltage element.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawUndervoltage {
    /// Operates when the section voltage is below this, per unit of nominal.
    pub below_pu: f64,
    /// ... for longer than this, s.
    pub after_s: f64,
}

/// A synchronous generator.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawGenerator {
    /// Generator (and its breaker's) id.
    pub id: String,
    /// Section the machine is connected to.
    pub section: String,
    /// Rating, MVA.
    pub rating_mva: f64,
    /// Inertia constant H of turbine and generator on the machine's own rating, s (MW·s/MVA).
    pub inertia_s: f64,
    /// Dispatch, MW. Operating points may override it.
    pub output_mw: f64,
    /// Lowest stable output, MW (default 0).
    #[serde(default)]
    pub min_mw: f64,
    /// Highest output, MW (default: the rating in MVA).
    #[serde(default)]
    pub max_mw: Option<f64>,
    /// Prime mover and governor.
    pub governor: RawGovernor,
    /// The machine's own frequency and ROCOF protection.
    #[serde(default)]
    pub trips: Vec<RawFrequencyTrip>,
    /// Voltage ride-through: the machine trips when the voltage stays below `below_pu` longer than `after_s`.
    #[serde(default)]
    pub undervoltage_trips: Vec<RawUndervoltage>,
    /// Time the machine may spend in abnormal frequency bands (default: the bands of docs/files.md).
    #[serde(default)]
    pub off_frequency_limits: Vec<RawOffFrequencyLimit>,
}

/// Time a machine may spend with frequency in [low_hz, high_hz).
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawOffFrequencyLimit {
    /// Lower edge of the band, Hz.
    pub low_hz: f64,
    /// Upper edge of the band, Hz.
    pub high_hz: f64,
    /// Cumulative time allowed in the band, s (0: none).
    pub max_s: f64,
}

/// Prime-mover model name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "kebab-case")]
pub enum RawPrimeMover {
    /// Non-reheat steam turbine (parameters: governor_s, turbine_s).
    Steam,
    /// Reheat steam turbine (governor_s, reheat_s, hp_fraction).
    SteamReheat,
    /// Hydro turbine (governor_s, water_start_s, transient_droop_pct, reset_s).
    Hydro,
    /// Gas turbine (governor_s, turbine_s, load_limit_mw).
    GasTurbine,
    /// Reciprocating engine (governor_s, ramp_mw_per_s).
    Engine,
    /// Fixed mechanical output, no governor action.
    Fixed,
}

/// Prime mover and governor. Which parameters apply depends on `model`; the others are refused.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawGovernor {
    /// steam, steam-reheat, hydro, gas-turbine, engine or fixed.
    pub model: RawPrimeMover,
    /// Permanent droop on the machine's rating, percent (required except for `fixed` and isochronous machines).
    #[serde(default)]
    pub droop_pct: Option<f64>,
    /// Governor dead band, ± Hz around nominal (default 0).
    #[serde(default)]
    pub deadband_hz: Option<f64>,
    /// Integral speed control (at most one machine per island; default false).
    #[serde(default)]
    pub isochronous: Option<bool>,
    /// Governor (valve or fuel actuator) time constant, s.
    #[serde(default)]
    pub governor_s: Option<f64>,
    /// Turbine (steam chest or combustor) time constant, s.
    #[serde(default)]
    pub turbine_s: Option<f64>,
    /// Reheater time constant, s.
    #[serde(default)]
    pub reheat_s: Option<f64>,
    /// Fraction of power from the high-pressure turbine, 0–1.
    #[serde(default)]
    pub hp_fraction: Option<f64>,
    /// Water starting time Tw, s.
    #[serde(default)]
    pub water_start_s: Option<f64>,
    /// Transient droop, percent.
    #[serde(default)]
    pub transient_droop_pct: Option<f64>,
    /// Transient droop reset time, s.
    #[serde(default)]
    pub reset_s: Option<f64>,
    /// Gas turbine load (temperature) limit, MW.
    #[serde(default)]
    pub load_limit_mw: Option<f64>,
    /// Engine load-acceptance ramp limit, MW/s.
    #[serde(default)]
    pub ramp_mw_per_s: Option<f64>,
    /// Steam machines: process-steam pressure control while on the utility, speed control after
    /// the island loses it.
    #[serde(default)]
    pub pressure_control: Option<RawPressureControl>,
}

/// Process-steam pressure control of a steam machine: constant output while its island is on the
/// utility; speed control (droop or isochronous, as set above) `transfer_s` after the island loses
/// the utility, with at most `extra_mw` more than the dispatch, rising at most `extra_mw_per_s`.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawPressureControl {
    /// Time from the island losing the utility to speed control, s (0 to 60).
    pub transfer_s: f64,
    /// Extra output the steam headers can give above the operating point's dispatch, MW (0: none).
    pub extra_mw: f64,
    /// Fastest rise of that extra output, MW/s.
    pub extra_mw_per_s: f64,
}

/// A plant load.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawLoad {
    /// Load (feeder breaker) id.
    pub id: String,
    /// Free text, e.g. the process it serves.
    #[serde(default)]
    pub description: Option<String>,
    /// Section the load is fed from.
    pub section: String,
    /// Demand at nominal frequency and voltage, MW.
    pub p_mw: f64,
    /// Importance rank, a whole number from 1: rank 1 is shed first, higher ranks later.
    pub rank: u32,
    /// The load must never be in a shedding stage (default false).
    #[serde(default)]
    pub never_shed: bool,
    /// Frequency exponent k in P = P0·(f/f0)^k (default 1.0).
    #[serde(default)]
    pub freq_exp: Option<f64>,
    /// Inertia constant of the motor and driven load on the load's MW, s (default: none).
    #[serde(default)]
    pub inertia_s: Option<f64>,
    /// Undervoltage drop-out of the load's contactors or drives.
    #[serde(default)]
    pub undervoltage: Option<RawUndervoltage>,
}

/// A plant mode.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawOperatingPoint {
    /// Operating point id.
    pub id: String,
    /// Free text.
    #[serde(default)]
    pub description: Option<String>,
    /// Factor applied to every load's p_mw (default 1.0).
    #[serde(default)]
    pub load_scale: Option<f64>,
    /// Per-load factor, replacing load_scale for the loads named.
    #[serde(default)]
    pub load_factors: BTreeMap<String, f64>,
    /// Loads switched off in this mode.
    #[serde(default)]
    pub loads_off: Vec<String>,
    /// Generator dispatch in MW, replacing output_mw for the machines named.
    #[serde(default)]
    pub dispatch: BTreeMap<String, f64>,
    /// Generators not running in this mode.
    #[serde(default)]
    pub offline: Vec<String>,
    /// Import from the utility in this mode, MW, or `balance` for load − generation of the
    /// utility's island (default: the utility's import_mw).
    #[serde(default)]
    pub import_mw: Option<RawImport>,
    /// Ties open in this mode (in addition to normally open ones).
    #[serde(default)]
    pub ties_open: Vec<String>,
    /// Normally open ties closed in this mode.
    #[serde(default)]
    pub ties_closed: Vec<String>,
}

/// Acceptance criteria.
#[derive(Debug, Clone, Default, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCriteria {
    /// Lowest frequency allowed at any time, Hz (default 0.95·f0).
    #[serde(default)]
    pub min_hz: Option<f64>,
    /// Highest frequency allowed at any time, Hz (default 1.03·f0).
    #[serde(default)]
    pub max_hz: Option<f64>,
    /// Frequency must recover above a level within a time.
    #[serde(default)]
    pub recover: Option<RawRecover>,
    /// Largest |df/dt| allowed, measured over rocof_window_s, Hz/s (default 2.0).
    #[serde(default)]
    pub max_rocof_hz_per_s: Option<f64>,
    /// Window for the ROCOF criterion, s (default 0.5).
    #[serde(default)]
    pub rocof_window_s: Option<f64>,
    /// Frequency must stay in a band from a time on.
    #[serde(default)]
    pub settle: Option<RawSettle>,
    /// Margins every case must have (default: none required).
    #[serde(default)]
    pub required_margin: Option<RawRequiredMargin>,
    /// The plant's own coordination rules that `nadir audit` checks.
    #[serde(default)]
    pub coordination: Option<RawCoordination>,
}

/// Margins every case must have.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawRequiredMargin {
    /// Each case must hold with its lost import, generation or load step grown by this factor (1.0–2.0; default 1.0).
    #[serde(default)]
    pub disturbance_factor: Option<f64>,
    /// Each case must hold with every inertia constant and load frequency exponent this many percent lower (0–50; default 0).
    #[serde(default)]
    pub model_error_pct: Option<f64>,
}

/// Coordination rules for the audit.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCoordination {
    /// Two frequency stages closer than this in pickup, Hz ... (default 0.1).
    #[serde(default)]
    pub min_spacing_hz: Option<f64>,
    /// ... and closer than this in delay, s, are not coordinated (default 0.1).
    #[serde(default)]
    pub min_spacing_s: Option<f64>,
    /// No stage may pick up above this: the lower edge of the plant's normal operating band, Hz (default 0.99·f0).
    #[serde(default)]
    pub normal_low_hz: Option<f64>,
}

/// Recovery criterion.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawRecover {
    /// Level to recover above, Hz (default 0.99·f0).
    pub above_hz: f64,
    /// Time after the first event by which it must be reached and held, s (default 10).
    pub within_s: f64,
}

/// Settling criterion.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSettle {
    /// From this time after the first event on... s (default 30).
    pub within_s: f64,
    /// ... frequency stays above this, Hz (default 0.99·f0) ...
    pub low_hz: f64,
    /// ... and below this, Hz (default 1.01·f0).
    pub high_hz: f64,
}

/// Limits within which `nadir design` may propose a shedding table.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDesign {
    /// Fewest and most under-frequency stages, armed stages not counted (default 1 to 6).
    #[serde(default)]
    pub stages: Option<RawStageCount>,
    /// Band and grid of the stages' pickups (default 0.98·f0 down to 0.96·f0 in steps of 0.002·f0).
    #[serde(default)]
    pub pickup_hz: Option<RawPickupGrid>,
    /// Grid of the stages' intentional delays (default 0.1 s to 0.5 s in steps of 0.05 s).
    #[serde(default)]
    pub delay_s: Option<RawDelayGrid>,
    /// Load breaker opening time of every proposed stage, s (default 0.08).
    #[serde(default)]
    pub breaker_s: Option<f64>,
    /// Breakers whose opening may arm a stage: the utility breaker, a tie or a generator, by id; `[]` for none (default: every breaker — the utility's, every tie, every generator).
    #[serde(default)]
    pub armed_by: Option<Vec<String>>,
    /// df/dt threshold with which the design may supervise a stage, Hz/s (default: no df/dt-supervised stage).
    #[serde(default)]
    pub rocof_supervision_hz_per_s: Option<f64>,
    /// Objective weight per MW shed of a rank, as `rank: weight` (default: a rank not listed weighs its own number).
    #[serde(default)]
    pub rank_weights: BTreeMap<u32, f64>,
    /// Assign every sheddable load that no studied case needs to a backstop at the lowest pickup (default true).
    #[serde(default)]
    pub backstop: Option<bool>,
    /// A long-delay stage the design may add, for a frequency that hangs below the recovery level: its pickup and delay grids (default: none; `{}` for the default grid).
    #[serde(default)]
    pub long_delay: Option<RawLongDelay>,
}

/// Grid of the long-delay stage: pickups near the recovery level, delays of seconds.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawLongDelay {
    /// Band and grid of its pickup, Hz (default 0.988·f0 down to 0.984·f0 in steps of 0.002·f0).
    #[serde(default)]
    pub pickup_hz: Option<RawPickupGrid>,
    /// Grid of its delay, s (default 2 s to 8 s in steps of 2 s).
    #[serde(default)]
    pub delay_s: Option<RawDelayGrid>,
}

/// How many under-frequency stages a proposal may have.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawStageCount {
    /// Fewest stages, 1–20 (default 1).
    #[serde(default)]
    pub min: Option<u32>,
    /// Most stages, 1–20 (default 6).
    #[serde(default)]
    pub max: Option<u32>,
}

/// Pickups are chosen from `highest` down to `lowest` in steps of `step`.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawPickupGrid {
    /// Highest pickup, the first stage's, Hz (default 0.98·f0).
    #[serde(default)]
    pub highest: Option<f64>,
    /// Lowest pickup, the last stage's, Hz (default 0.96·f0).
    #[serde(default)]
    pub lowest: Option<f64>,
    /// Grid step, Hz (default 0.002·f0).
    #[serde(default)]
    pub step: Option<f64>,
}

/// Delays are chosen from `min` up to `max` in steps of `step`.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawDelayGrid {
    /// Shortest intentional delay, s (default 0.1).
    #[serde(default)]
    pub min: Option<f64>,
    /// Longest intentional delay, s (default 0.5).
    #[serde(default)]
    pub max: Option<f64>,
    /// Grid step, s (default 0.05).
    #[serde(default)]
    pub step: Option<f64>,
}

// ---------------------------------------------------------------- cases file

/// A cases file: what must be survived.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CasesFile {
    /// The disturbance cases.
    pub cases: Vec<RawCase>,
}

/// How a case starts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, JsonSchema)]
#[serde(rename_all = "kebab-case")]
pub enum RawStart {
    /// Joined to the utility (default).
    #[default]
    Connected,
    /// Utility breaker already open; the machines carry the whole plant load.
    Islanded,
}

/// Whether a case's shedding is wanted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize, JsonSchema)]
#[serde(rename_all = "kebab-case")]
pub enum RawShedding {
    /// Shedding is a cost to keep small (default).
    #[default]
    Unwanted,
    /// Shedding is the response asked for (e.g. the grid operator requires the plant's loads in
    /// a grid-wide under-frequency event): design does not count it as cost.
    Intended,
}

/// One disturbance scenario.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawCase {
    /// Case id.
    pub id: String,
    /// Free text.
    #[serde(default)]
    pub description: Option<String>,
    /// connected (default) or islanded.
    #[serde(default)]
    pub start: RawStart,
    /// Operating points this case applies to (default, when omitted: all; an empty list is an
    /// error).
    #[serde(default)]
    pub only_at: Option<Vec<String>>,
    /// Simulated time, s (default 30).
    #[serde(default)]
    pub duration_s: Option<f64>,
    /// Weight of this case's shed in the design objective (default 1).
    #[serde(default)]
    pub weight: Option<f64>,
    /// Whether shedding is the response this case asks for: unwanted (default) or intended.
    #[serde(default)]
    pub shedding: RawShedding,
    /// Timed actions.
    pub events: Vec<RawEvent>,
    /// Utility frequency while connected, for a grid-wide event: points joined by straight lines.
    #[serde(default)]
    pub utility_hz: Vec<RawProfilePoint>,
}

/// A point of the utility frequency profile.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawProfilePoint {
    /// Time, s.
    pub at_s: f64,
    /// Frequency, Hz.
    pub hz: f64,
}

/// A timed action: `at_s` plus exactly one of `open`, `trip`, `load_step`, `voltage_dip`.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawEvent {
    /// Time of the action, s.
    pub at_s: f64,
    /// Open a breaker: the utility breaker or a bus tie, by id.
    #[serde(default)]
    pub open: Option<String>,
    /// Trip a generator, by id.
    #[serde(default)]
    pub trip: Option<String>,
    /// Add (or with negative MW remove) constant-power demand on a section.
    #[serde(default)]
    pub load_step: Option<RawLoadStep>,
    /// A voltage dip on a section.
    #[serde(default)]
    pub voltage_dip: Option<RawVoltageDip>,
}

/// A load step.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawLoadStep {
    /// Section id.
    pub section: String,
    /// Added demand, MW.
    pub mw: f64,
}

/// A voltage dip.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawVoltageDip {
    /// Section id.
    pub section: String,
    /// Remaining voltage during the dip, per unit (0 for a close-in three-phase fault).
    pub remaining_pu: f64,
    /// Duration, s.
    pub duration_s: f64,
}

// ---------------------------------------------------------------- scheme file

/// A scheme file: the shedding table.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct SchemeFile {
    /// Name shown in reports.
    #[serde(default)]
    pub name: Option<String>,
    /// Relay measurement (defaults: 0.04 s frequency lag, 0.1 s ROCOF window).
    #[serde(default)]
    pub measurement: Option<RawMeasurement>,
    /// The stages.
    pub stages: Vec<RawStage>,
    /// Over-frequency stages that trip or run back a named generator (default none).
    #[serde(default)]
    pub over_frequency: Vec<RawOverStage>,
    /// Setting groups: each names the operating points at which the relays use it; a stage's
    /// `groups` entries give its settings there. A point in no group uses the settings written on
    /// each stage.
    #[serde(default)]
    pub setting_groups: Vec<RawSettingGroup>,
}

/// An over-frequency stage: above `above_hz` for `delay_s`, it `trips` a generator or `runs_back`
/// its output, `breaker_s` after the command. It measures at its generator's section.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawOverStage {
    /// Stage id (unique among all the scheme's stages).
    pub id: String,
    /// Over-frequency pickup, Hz: above nominal.
    pub above_hz: f64,
    /// Intentional delay, s.
    pub delay_s: f64,
    /// Time from the command to the generator's breaker opening or its run-back taking effect, s
    /// (default 0.08).
    #[serde(default)]
    pub breaker_s: Option<f64>,
    /// Generator id whose breaker the stage opens.
    #[serde(default)]
    pub trips: Option<String>,
    /// Generator whose output reference the stage lowers, and by how much.
    #[serde(default)]
    pub runs_back: Option<RawRunBack>,
}

/// A run-back: the generator's output reference is lowered by `mw` (not below its `min_mw`).
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawRunBack {
    /// Generator id.
    pub generator: String,
    /// Reduction of the output reference, MW.
    pub mw: f64,
}

/// A setting group: its id and the operating points it is in force at.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawSettingGroup {
    /// Group id, as stages name it in their `groups` entries.
    pub id: String,
    /// Operating point ids (of the plant file) at which the relays use this group; each point in
    /// at most one group.
    pub operating_points: Vec<String>,
}

/// A stage's settings in one setting group; a field left out keeps the stage's own value.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawGroupSettings {
    /// The setting group's id (from `setting_groups`).
    pub group: String,
    /// Whether the stage is in service in this group.
    #[serde(default)]
    pub in_service: Option<bool>,
    /// Under-frequency pickup in this group, Hz (frequency stages).
    #[serde(default)]
    pub pickup_hz: Option<f64>,
    /// df/dt supervision in this group, Hz/s (frequency stages).
    #[serde(default)]
    pub min_rocof_hz_per_s: Option<f64>,
    /// Intentional delay in this group, s.
    #[serde(default)]
    pub delay_s: Option<f64>,
    /// Allowance of a flow-sized stage in this group, MW.
    #[serde(default)]
    pub allowance_mw: Option<f64>,
    /// Allowance of a flow-sized stage in this group, percent of the spinning reserve.
    #[serde(default)]
    pub allowance_reserve_pct: Option<f64>,
}

/// Relay measurement.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawMeasurement {
    /// First-order lag of the frequency estimate, s.
    #[serde(default)]
    pub frequency_lag_s: Option<f64>,
    /// ROCOF measuring window, s.
    #[serde(default)]
    pub rocof_window_s: Option<f64>,
}

/// A stage: either `pickup_hz` (under-frequency) or `armed_by` (event-armed), not both.
#[derive(Debug, Clone, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RawStage {
    /// Stage id.
    pub id: String,
    /// Under-frequency pickup, Hz.
    #[serde(default)]
    pub pickup_hz: Option<f64>,
    /// df/dt supervision: the stage operates only while frequency falls at least this fast, Hz/s.
    #[serde(default)]
    pub min_rocof_hz_per_s: Option<f64>,
    /// Event-armed stage: the breaker (utility, tie or generator id) whose opening starts it.
    #[serde(default)]
    pub armed_by: Option<String>,
    /// Intentional delay, s.
    pub delay_s: f64,
    /// Load breaker opening time, s (default 0.08).
    #[serde(default)]
    pub breaker_s: Option<f64>,
    /// Load ids this stage opens; with `sizing: flow`, the loads it may open, in rank order.
    pub sheds: Vec<String>,
    /// What an armed stage opens: `all` its loads (default), or `flow`: in rank order, the fewest
    /// of its loads whose MW covers the flow through the `armed_by` breaker just before it opened
    /// (import for the utility breaker, output for a generator, the flow into the side of the
    /// stage's loads for a tie), less the allowance; nothing when the flow was the other way.
    #[serde(default)]
    pub sizing: Option<RawSizing>,
    /// Allowance of a `sizing: flow` stage, MW: the part of the flow left to the machines.
    #[serde(default)]
    pub allowance_mw: Option<f64>,
    /// Allowance of a `sizing: flow` stage as a percent of the spinning reserve (maximum less
    /// output of the running machines) of the island that lost the flow.
    #[serde(default)]
    pub allowance_reserve_pct: Option<f64>,
    /// In service at the operating points in no setting group (default true).
    #[serde(default)]
    pub in_service: Option<bool>,
    /// This stage's settings in setting groups, one entry per group that changes them.
    #[serde(default)]
    pub groups: Vec<RawGroupSettings>,
}

/// What an armed stage opens.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize, JsonSchema)]
#[serde(rename_all = "kebab-case")]
pub enum RawSizing {
    /// Every listed load.
    All,
    /// The rank-order run of listed loads that covers the pre-event flow less the allowance.
    Flow,
}
