//! The relay measurement: a first-order lag on frequency and a lag-averaged derivative of it.
//!
//! `T_f·dm/dt = f − m` (a numerical relay's frequency estimate over a few cycles modelled as a
//! first-order lag with `T_f = Measurement.frequency_lag_s`; `T_f = 0` makes `m = f`), and
//! `T_w·dr/dt = dm/dt − r`, i.e. df/dt is the derivative of the measured frequency passed through
//! a first-order lag with time constant `T_w = Measurement.rocof_window_s` (floored at
//! [`MIN_ROCOF_WINDOW_S`] to keep the equations non-stiff). The loop integrates these alongside
//! the physics; relays read `m` and `r`.

/// Shortest ROCOF averaging time constant used, seconds: the simulator's shortest lag
/// ([`crate::model::INSTANT_LAG_S`]).
pub const MIN_ROCOF_WINDOW_S: f64 = crate::model::INSTANT_LAG_S;

/// Below this a lag is algebraic ([`crate::model::INSTANT_LAG_S`]).
pub const MIN_LAG_S: f64 = crate::model::INSTANT_LAG_S;

/// `dm/dt` of the measured frequency (any unit) given the true value and its own derivative.
pub fn measured_derivative(
    true_value: f64,
    true_derivative: f64,
    measured: f64,
    lag_s: f64,
) -> f64 {
    if lag_s < MIN_LAG_S {
        true_derivative
    } else {
        (true_value - measured) / lag_s
    }
}

/// `dr/dt` of the measured ROCOF given `dm/dt`.
pub fn rocof_derivative(measured_derivative: f64, rocof: f64, window_s: f64) -> f64 {
    (measured_derivative - rocof) / window_s.max(MIN_ROCOF_WINDOW_S)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lag_of_a_ramp_lags_by_its_time_constant() {
        // A first-order lag of a ramp a·t settles to a·(t − T) (standard result).
        let (a, t_f) = (-1.0, 0.04);
        let h = 1e-5;
        let mut m = 0.0;
        let mut t = 0.0;
        while t < 1.0 {
            m += h * measured_derivative(a * t, a, m, t_f);
            t += h;
        }
        assert!((m - a * (t - t_f)).abs() < 1e-4);
    }
}
