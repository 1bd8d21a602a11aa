//! Prime movers, governors, loads and the swing equation (filled by the simulator work).
