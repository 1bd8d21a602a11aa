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
    Exponent::of(freq_exp).factor(ratio)
}

/// A frequency exponent sorted once by how its power is computed (per segment, not per call).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Exponent {
    /// k = 0, 1 or 2.
    Zero,
    One,
    Two,
    /// An integer or half-integer within ±[`MAX_SHORT_EXPONENT`]: `r^whole`, times `√r` (half
    /// 1), divided by it (half −1) or neither (half 0).
    Short {
        whole: i32,
        half: i8,
    },
    /// Any other exponent: `powf`.
    General(f64),
}

impl Exponent {
    pub fn of(k: f64) -> Exponent {
        if k == 0.0 {
            Exponent::Zero
        } else if k == 1.0 {
            Exponent::One
        } else if k == 2.0 {
            Exponent::Two
        } else if (2.0 * k).fract() == 0.0 && k.abs() <= MAX_SHORT_EXPONENT {
            let whole = k.trunc();
            let half = if k == whole {
                0
            } else if k > 0.0 {
                1
            } else {
                -1
            };
            Exponent::Short {
                whole: whole as i32,
                half,
            }
        } else {
            Exponent::General(k)
        }
    }

    /// `ratio^k`.
    pub fn factor(self, ratio: f64) -> f64 {
        match self {
            Exponent::Zero => 1.0,
            Exponent::One => ratio,
            Exponent::Two => ratio * ratio,
            Exponent::Short { whole, half } => {
                let v = ratio.powi(whole);
                match half {
                    0 => v,
                    1 => v * ratio.sqrt(),
                    _ => v / ratio.sqrt(),
                }
            }
            Exponent::General(k) => ratio.powf(k),
        }
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
