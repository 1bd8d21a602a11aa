//! Prime movers, governors, loads and the swing equation: the continuous physics.
//!
//! Owns equations only: no time events, no relays, no islands from breakers (those come from
//! [`crate::topology`] through [`crate::sim`]). Everything here is a pure function of its inputs.

pub mod governor;
pub mod load;
pub mod swing;
