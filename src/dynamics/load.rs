//! Static load response to frequency and (during a dip) voltage.
//!
//! `P = P0·(f/f0)^k·v²` where `v²` is 1 except during a voltage dip on the load's section (the
//! load behaves as constant impedance during the dip). Exponential load model: Kundur, *Power
//! System Stability and Control*, 1994, §7.1.1 eq. 7.4 (frequency term as in eq. 7.9); typical k
//! in Kundur Table 7.1 (0 resistive, 1 fluorescent, 2.5 industrial motors, 2.9 fans).

/// Load demand in MW at speed deviation `delta_omega_pu` and squared voltage `v_sq`.
pub fn power_mw(p0_mw: f64, freq_exp: f64, delta_omega_pu: f64, v_sq: f64) -> f64 {
    let ratio = (1.0 + delta_omega_pu).max(0.0);
    let fr = if freq_exp == 0.0 {
        1.0
    } else if freq_exp == 1.0 {
        ratio
    } else if freq_exp == 2.0 {
        ratio * ratio
    } else {
        ratio.powf(freq_exp)
    };
    p0_mw * fr * v_sq
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exponential_load_at_49_hz() {
        // REFERENCES check 11: 0.98^2.5 = 0.950747 (exponential load model, Kundur §7.1).
        let p = power_mw(1.0, 2.5, crate::model::base::hz_to_pu(49.0, 50.0), 1.0);
        assert!((p - 0.950747).abs() < 1e-6);
    }
}
