//! Output formats: the plots, the HTML sign-off report, the relay setting sheet, trace thinning,
//! PNG rendering and atomic file writing.
//!
//! `report` formats results only: it computes no physics and decides no pass or fail. Every file it
//! writes goes through [`write`] (outputs checked against the inputs before any work, then written
//! atomically and race-free), so an interrupted run never leaves a truncated file.

pub mod figures;
pub mod html;
pub mod output;
pub mod plot;
pub mod png;
pub mod sheet;
pub mod thin;
pub mod write;
