//! Static load response to frequency and (during a dip) voltage.
//!
//! `P = P0·(f/f0)^k·v²` where `v²` is 1 except during a voltage dip on the load's section (the
//! load behaves as constant impedance during the dip). Exponential load model: Kundur, *Power
//! System Stability and Control*, 1994, §7.1.1 eq. 7.4 (frequency term as in eq. 7.9); typical k
//! in Kundur Table 7.1 (0 resistive, 1 fluorescent, 2.5 industrial motors, 2.9 fans).
//!
//! `(f/f0)^k` is computed without the general power function when `k` is an integer or a
//! half-integer of magnitude at most [`MAX_SHORT_EXPONENT`] (the common cases 1, 2, 2.5):
//! `r^k = r^n·√r` (`n` the integer part of `k`) by repeated multiplication and one square root, equal to `powf` within a
//! few units in the last place.

/// Largest |k| computed by multiplication and a square root instead of `powf`.
pub const MAX_SHORT_EXPONENT: f64 = 16.0;

/// Load demand in MW at speed deviation `delta_omega_pu` and squared voltage `v_sq`.
pub fn power_mw(p0_mw: f64, freq_exp: f64, delta_omega_pu: f64, v_sq: f64) -> f64 {
    let ratio = (1.0 + delta_omega_pu).max(0.0);
    p0_mw * frequency_factor(ratio, freq_exp) * v_sq
}

/// `(f/f0)^k` for a speed ratio `ratio = f/f0 ≥ 0`.
pub fn frequency_factor(ratio: f64, freq_exp: f64) -> f64 {
    if freq_exp == 0.0 {
        1.0
    } else if freq_exp == 1.0 {
        ratio
    } else if freq_exp == 2.0 {
        ratio * ratio
    } else if (2.0 * freq_exp).fract() == 0.0 && freq_exp.abs() <= MAX_SHORT_EXPONENT {
        let whole = freq_exp.trunc();
        let v = ratio.powi(whole as i32);
        if freq_exp == whole {
            v
        } else if freq_exp > 0.0 {
            v * ratio.sqrt()
        } else {
            v / ratio.sqrt()
        }
    } else {
        ratio.powf(freq_exp)
    }
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

    #[test]
    fn short_exponents_agree_with_the_power_function() {
        // The shortcut against `powf` (the general definition r^k = exp(k·ln r)).
        for &k in &[-2.5, -1.0, 0.5, 1.5, 2.5, 3.0, 3.5, 7.5, 16.0] {
            for &r in &[0.0, 0.5, 0.85, 0.98, 1.0, 1.02, 1.15] {
                let (a, b) = (frequency_factor(r, k), f64::powf(r, k));
                assert!(
                    a == b || ((a - b) / b).abs() < 1e-14,
                    "k {k}, r {r}: {a} against {b}"
                );
            }
        }
    }
}
