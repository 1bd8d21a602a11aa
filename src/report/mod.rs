//! Output formats: the plots, the HTML sign-off report, the relay setting sheet, trace thinning,
//! PNG rendering and atomic file writing.
//!
//! `report` formats results only: it computes no physics and decides no pass or fail. Every file it
//! writes goes through [`write`] (outputs checked against the inputs before any work, then written
//! atomically and race-free), so an interrupted run never leaves a truncated file.

/// What a table shows in the nadir cell of a run that stopped early (collapse, over-speed,
/// blackout, a numerical stop): it has no figures, and its status is given as its failure.
pub const STOPPED: &str = "stopped";
/// What a table shows in any other figure cell of such a run.
pub const NO_FIGURE: &str = "—";

pub mod figures;
pub mod html;
pub mod load_list;
pub mod output;
pub mod plot;
pub mod png;
pub mod record;
pub mod sheet;
pub mod thin;
pub mod write;
