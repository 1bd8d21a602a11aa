//! Units and the per-unit base: the one place where percent, hertz and per-unit convert.
//!
//! nadir writes the swing equation in megawatts on the island's own stored energy:
//! `2·Σ(H_i·S_i) · dΔω/dt = ΣPm − ΣPload − ΣPloss` with Δω = Δf/f0 in per unit. That is the
//! aggregated swing equation on any common MVA base (Kundur, *Power System Stability and Control*,
//! 1994, §3.9 and §11.1), with the base cancelled, so no island needs a base of its own.

/// Per-unit speed deviation from a frequency in hertz.
pub fn hz_to_pu(hz: f64, nominal_hz: f64) -> f64 {
    (hz - nominal_hz) / nominal_hz
}

/// Frequency in hertz from a per-unit speed deviation.
pub fn pu_to_hz(delta_pu: f64, nominal_hz: f64) -> f64 {
    nominal_hz * (1.0 + delta_pu)
}

/// A percentage as a per-unit fraction.
pub fn pct_to_pu(pct: f64) -> f64 {
    pct / 100.0
}

/// A generator's governor gain in MW per per-unit speed deviation: `S / R` on the machine's own
/// rating, so that the plant-wide stiffness is Σ S_i/R_i on any common base.
pub fn droop_gain_mw_per_pu(rating_mva: f64, droop_pct: f64) -> f64 {
    rating_mva / pct_to_pu(droop_pct)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_hz() {
        assert!((pu_to_hz(hz_to_pu(49.3, 50.0), 50.0) - 49.3).abs() < 1e-12);
    }

    #[test]
    fn droop_gain_on_own_rating() {
        // Glover, Sarma, Overbye, Power System Analysis and Design, 5th ed., Example 12.3:
        // 500 MVA, R = 0.05, Δf = +0.01 Hz at 60 Hz gives ΔPm = −1.667 MW.
        let dp = -droop_gain_mw_per_pu(500.0, 5.0) * hz_to_pu(60.01, 60.0);
        assert!((dp + 1.6667).abs() < 1e-3);
    }
}
