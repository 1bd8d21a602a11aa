//! The simulation loop (filled by the simulator work).
