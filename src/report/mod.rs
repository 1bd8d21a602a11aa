//! Output formats: SVG plots and atomic file writing (tables, CSV, JSON and HTML join here as they land).
//!
//! `report` formats results only: it computes no physics and decides no pass or fail. Every file it
//! writes goes through [`write::write_atomic`], so an interrupted run never leaves a truncated file.

pub mod svg;
pub mod write;
