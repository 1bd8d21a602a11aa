//! nadir: under-frequency load-shedding verification and design for plants with their own generation.
//!
//! The pipeline, in five lines:
//! 1. [`input`] reads the plant, cases and scheme YAML files and validates them into [`model`] types,
//!    reporting every mistake in a file at once ([`input::Diagnostic`]).
//! 2. [`topology`] turns breaker states into islands; [`screening`] gives the closed-form figures
//!    (deficit, initial ROCOF, steady-state frequency) an engineer wants before any simulation.
//! 3. [`sim`] replays one case at one operating point with a scheme: swing equation per island,
//!    prime movers from [`dynamics`], relays and protection from [`relay`].
//! 4. [`verify`] judges replays against the criteria; [`design`] proposes a table (settings search,
//!    simulate–assign loop with a MILP, lower bound, baseline); [`report`] writes plots and HTML.
//! 5. The `nadir` binary is a thin front end over this library.
//!
//! Results from this library can inform protection settings; they must be reviewed by a qualified
//! protection engineer, coordinated with the grid operator, and conform to local codes.

pub mod calibrate;
pub mod design;
pub mod dynamics;
pub mod error;
pub mod input;
pub mod model;
pub mod recording;
pub mod relay;
pub mod report;
pub mod screening;
pub mod sim;
pub mod topology;
pub mod verify;

pub use error::Error;
