//! Checked domain types: the plant, its operating points, the cases and the shedding scheme.
//!
//! Everything here has passed validation in [`crate::input`]: ids are resolved to indices into the
//! plant's vectors, units are converted once, and no `Option` remains that validation could have
//! settled. Code downstream never looks an id up by string and never re-checks a range.

pub mod base;
mod case;
mod design;
mod plant;
mod scheme;

pub use case::{disturbance_span, Action, Case, CaseEvent, CaseSet, Start};
pub use design::{
    axis_points as design_axis_points, DesignLimits, LongDelayGrid, GRID_POINTS_CEILING,
    MAX_LONG_DELAY_POINTS,
};
pub use plant::{
    Criteria, FrequencyTrip, Generator, Governor, Load, OffFrequencyLimit, OperatingPoint, Plant,
    PressureControl, PrimeMover, Section, Tie, UndervoltageTrip, Utility, INSTANT_LAG_S,
    MIN_JUDGED_S,
};
pub use scheme::{
    Allowance, BreakerRef, Candidate, GroupSettings, Measurement, OverAction, OverStage, Scheme,
    SettingGroup, Sizing, Stage, StageTrigger,
};
