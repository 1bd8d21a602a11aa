//! Comparing two shedding tables for one plant: the settings difference and both verifications
//! row by row, with the rows whose outcome changed.

use super::diff::{diff, SettingChange};
use super::matrix::{verify, Matrix, Row, VerifyConfig};
use crate::model::{CaseSet, Plant, Scheme};
use serde::Serialize;

/// Two verifications side by side.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    pub settings: Vec<SettingChange>,
    pub old: Matrix,
    pub new: Matrix,
}

/// How one row's outcome changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Change {
    /// Held before and holds now.
    StillHolds,
    /// Failed before and fails now.
    StillFails,
    /// Held before, fails now: a regression.
    NowFails,
    /// Failed before, holds now.
    NowHolds,
}

impl Comparison {
    /// Row pairs in matrix order (both matrices replay the same cases at the same points).
    pub fn pairs(&self) -> impl Iterator<Item = (&Row, &Row, Change)> {
        self.old
            .rows
            .iter()
            .zip(&self.new.rows)
            .map(|(o, n)| (o, n, change(o, n)))
    }

    /// The new table fails a case the old one held.
    pub fn has_regression(&self) -> bool {
        self.pairs().any(|(_, _, c)| c == Change::NowFails)
    }
}

fn change(old: &Row, new: &Row) -> Change {
    match (old.pass, new.pass) {
        (true, true) => Change::StillHolds,
        (false, false) => Change::StillFails,
        (true, false) => Change::NowFails,
        (false, true) => Change::NowHolds,
    }
}

/// Verify both tables against the same cases and put the results side by side.
pub fn compare(
    plant: &Plant,
    cases: &CaseSet,
    old: &Scheme,
    new: &Scheme,
    config: &VerifyConfig,
    progress: &(dyn Fn() + Sync),
) -> Comparison {
    Comparison {
        settings: diff(plant, old, new),
        old: verify(plant, cases, old, config, progress),
        new: verify(plant, cases, new, config, progress),
    }
}
