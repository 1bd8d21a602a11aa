//! Verification: the plant's own shedding rules ([`audit`]), and (as the simulator lands) the
//! case × operating-point matrix, criteria and margins.
//!
//! A failed criterion or a broken rule is a value in the result, never an error.

pub mod audit;
pub mod compare;
pub mod criteria;
pub mod diff;
pub mod margins;
pub mod matrix;
pub mod offnominal;
