//! The aggregated swing equation of one island, in MW on the island's own stored energy.
//!
//! `2·E·dΔω/dt = ΣP_m − ΣP_load(f, v) − ΣP_step`, with `E = Σ H_i·S_i + Σ H_l·P0_l` (MW·s) over
//! the island's running machines and connected motor loads that declare an inertia constant.
//! Kundur, *Power System Stability and Control*, 1994, §3.9 (eq. 3.214) and §11.1 (aggregated
//! form); see [`crate::model::base`]. Electrical losses and damper-winding damping are not
//! modelled: damping comes only from the frequency dependence of the loads.

/// Speed-deviation derivative of an island, pu/s. `stored_energy_mws` must be positive.
pub fn acceleration_pu_per_s(
    mechanical_mw: f64,
    electrical_mw: f64,
    stored_energy_mws: f64,
) -> f64 {
    (mechanical_mw - electrical_mw) / (2.0 * stored_energy_mws)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn initial_rocof_worked_number() {
        // REFERENCES §3 [D]: 1000 MVA, H = 5 s, loss of 100 MW → −0.50 Hz/s at 50 Hz.
        let a = acceleration_pu_per_s(900.0, 1000.0, 5.0 * 1000.0);
        assert!((a * 50.0 + 0.5).abs() < 1e-12);
    }
}
