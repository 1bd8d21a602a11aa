//! Relays: measurement, stages, generator and interface protection (filled by the simulator work).
