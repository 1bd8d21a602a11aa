//! Every default that input validation fills in for an omitted field, in one place, so that the
//! documentation (docs/files.md) can state them and a change shows in one diff.
//!
//! Owns constants only; it must not hold logic. The criteria defaults live in
//! [`crate::model::Criteria::defaults`] and the relay measurement defaults in
//! [`crate::model::Measurement`]'s `Default`; they are not repeated here.
//!
//! Prime-mover time constants are typical values of the kind found in the literature for each type
//! of machine (e.g. Kundur, *Power System Stability and Control*, 1994, §9.1–9.3 and Table 9.1 for
//! steam and hydro; IEEE PES-TR1, *Dynamic Models for Turbine-Governors in Power System Studies*,
//! 2013, for gas turbines and engines). They are stated from memory of those ranges, not copied
//! from a table: common practice, to be replaced by the manufacturer's figures in any real study.

/// Section id of a plant file that lists no `sections`.
pub const SECTION_ID: &str = "main";
/// Operating point id of a plant file that lists no `operating_points`.
pub const OPERATING_POINT_ID: &str = "normal";
/// Id of the utility breaker when `utility.breaker` is omitted.
pub const UTILITY_BREAKER_ID: &str = "utility";

/// Load frequency exponent k in P = P0·(f/f0)^k: constant-current-like behaviour, a common
/// planning assumption for mixed industrial load (common practice, no source).
pub const LOAD_FREQ_EXP: f64 = 1.0;
/// Operating point factor on every load's p_mw.
pub const LOAD_SCALE: f64 = 1.0;

/// Governor dead band, ± Hz.
pub const DEADBAND_HZ: f64 = 0.0;
/// Droop recorded for an isochronous machine that gives none; unused in isochronous mode.
pub const ISOCHRONOUS_DROOP_PCT: f64 = 0.0;

/// Non-reheat steam: governor (valve) time constant, s.
pub const STEAM_GOVERNOR_S: f64 = 0.2;
/// Non-reheat steam: steam-chest time constant, s.
pub const STEAM_TURBINE_S: f64 = 0.3;

/// Reheat steam: governor time constant, s.
pub const REHEAT_GOVERNOR_S: f64 = 0.2;
/// Reheat steam: reheater time constant, s.
pub const REHEAT_REHEAT_S: f64 = 7.0;
/// Reheat steam: fraction of power from the high-pressure turbine.
pub const REHEAT_HP_FRACTION: f64 = 0.3;

/// Hydro: governor time constant, s.
pub const HYDRO_GOVERNOR_S: f64 = 0.5;
/// Hydro: water starting time Tw, s.
pub const HYDRO_WATER_START_S: f64 = 1.5;
/// Hydro: transient droop, percent.
pub const HYDRO_TRANSIENT_DROOP_PCT: f64 = 30.0;
/// Hydro: transient droop reset time, s.
pub const HYDRO_RESET_S: f64 = 5.0;

/// Gas turbine: governor (fuel valve) time constant, s.
pub const GAS_TURBINE_GOVERNOR_S: f64 = 0.4;
/// Gas turbine: combustor/turbine time constant, s.
pub const GAS_TURBINE_TURBINE_S: f64 = 0.5;
// Gas turbine load limit: the machine's max_mw (not a constant).

/// Engine: governor (fuel rack) time constant, s.
pub const ENGINE_GOVERNOR_S: f64 = 0.3;
/// Engine: load-acceptance ramp as a fraction of the rating (MVA taken as MW) per second.
pub const ENGINE_RAMP_PU_PER_S: f64 = 0.2;

/// Case simulated time, s.
pub const CASE_DURATION_S: f64 = 30.0;
/// Case weight in the design objective.
pub const CASE_WEIGHT: f64 = 1.0;

/// Load breaker opening time of a stage, s (about four cycles at 50 Hz; common practice, no source).
pub const BREAKER_S: f64 = 0.08;
