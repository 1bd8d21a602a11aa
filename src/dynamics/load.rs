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
//! few units in the last place. Any other exponent with `|k| ≤` [`MAX_SERIES_EXPONENT`] (Kundur's
//! 2.9 for fans, say) near nominal speed (`|r − 1| ≤` [`SERIES_RADIUS`], 3.125 Hz at 50 Hz) is
//! summed from the binomial series `(1 + x)^k = Σ_n C(k, n)·x^n` to [`SERIES_TERMS`] terms
//! (coefficients worked out once per segment). For `|k| ≤ 4`, `|C(k, n)| ≤ C(n + 3, 3)`, so the
//! tail after the last term (`n ≥ 18`) is below `C(21, 3)·16^−18·1.1 ≈ 4e-19`, while the value
//! itself is at least `(17/16)^−4 ≈ 0.78`: the series is exact to rounding (about 1e-16). Farther
//! from nominal, and for other exponents, `powf`.

/// Largest |k| computed by multiplication and a square root instead of `powf`.
pub const MAX_SHORT_EXPONENT: f64 = 16.0;

/// Largest `|r − 1|` at which other exponents are summed from the binomial series.
pub const SERIES_RADIUS: f64 = 1.0 / 16.0;

/// Largest |k| summed from the binomial series (the tail bound of the module doc holds to it).
pub const MAX_SERIES_EXPONENT: f64 = 4.0;

/// Terms of the binomial series summed (powers 0 to `SERIES_TERMS − 1`).
pub const SERIES_TERMS: usize = 18;

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
    /// Any other exponent within ±[`MAX_SERIES_EXPONENT`]: its binomial coefficients
    /// `C(k, n)`, summed near nominal speed, `powf` elsewhere.
    Series {
        k: f64,
        coef: [f64; SERIES_TERMS],
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
        } else if k.abs() <= MAX_SERIES_EXPONENT {
            let mut coef = [0.0; SERIES_TERMS];
            coef[0] = 1.0;
            for n in 1..SERIES_TERMS {
                coef[n] = coef[n - 1] * (k - (n - 1) as f64) / n as f64;
            }
            Exponent::Series { k, coef }
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
            Exponent::Series { k, coef } => {
                let x = ratio - 1.0;
                if x.abs() <= SERIES_RADIUS {
                    coef.iter().rev().fold(0.0, |acc, &c| acc * x + c)
                } else {
                    ratio.powf(k)
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
    fn other_exponents_near_nominal_agree_with_the_power_function() {
        // The binomial series against `powf` (r^k = exp(k·ln r)) over the series' range and
        // past it (where `powf` itself is used): Kundur Table 7.1's 2.9 and others.
        for &k in &[2.9, 0.7, 1.3, -0.8, 3.99, -3.99, 4.2, 15.9, -15.9] {
            for i in -80..=80 {
                let r = 1.0 + i as f64 * (0.08 / 80.0);
                let (a, b) = (frequency_factor(r, k), f64::powf(r, k));
                assert!(((a - b) / b).abs() < 1e-14, "k {k}, r {r}: {a} against {b}");
            }
        }
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
