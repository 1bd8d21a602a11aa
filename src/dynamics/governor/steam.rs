//! Non-reheat steam turbine with its governor: two cascaded first-order lags.
//!
//! `T_g·dx_g/dt = c − x_g` (governor / valve, non-windup limited to [min, max]),
//! `T_t·dP_m/dt = x_g − P_m` (steam chest). Source: Kundur, *Power System Stability and
//! Control*, 1994, §9.1 and §11.1 (Fig. 11.10 non-reheat block); Saadat, *Power System Analysis*,
//! 1999, §12.2 (governor 1/(1+τ_g s), turbine 1/(1+τ_T s)).
//! Typical ranges: T_g 0.1–0.3 s, T_t 0.2–0.5 s. States: `[x_g, P_m]` in MW.

use super::{limited_lag, Limits, PrimeMoverDynamics, ALGEBRAIC_LAG_S};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Steam {
    pub governor_s: f64,
    pub turbine_s: f64,
}

impl PrimeMoverDynamics for Steam {
    fn n_states(&self) -> usize {
        2
    }
    fn init(&self, c: f64, lim: &Limits, x: &mut [f64]) {
        x[0] = lim.clamp(c);
        x[1] = x[0];
    }
    fn derivatives(&self, c: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        let valve = if self.governor_s < ALGEBRAIC_LAG_S {
            dx[0] = 0.0;
            lim.clamp(c)
        } else {
            dx[0] = limited_lag(x[0], c, self.governor_s, lim);
            lim.clamp(x[0])
        };
        dx[1] = if self.turbine_s < ALGEBRAIC_LAG_S {
            0.0
        } else {
            (valve - x[1]) / self.turbine_s
        };
    }
    fn power_mw(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        if self.turbine_s < ALGEBRAIC_LAG_S {
            if self.governor_s < ALGEBRAIC_LAG_S {
                lim.clamp(c)
            } else {
                lim.clamp(x[0])
            }
        } else {
            x[1]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::command_step_response;
    use super::*;

    #[test]
    fn two_lag_step_matches_closed_form() {
        // Unit step through 1/((1+T_g s)(1+T_t s)):
        // y(t) = 1 − (T_g e^{−t/T_g} − T_t e^{−t/T_t})/(T_g − T_t) (standard partial fractions).
        let m = Steam {
            governor_s: 0.2,
            turbine_s: 0.5,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 100.0,
        };
        let ts = [0.1, 0.5, 1.0, 3.0];
        let got = command_step_response(&m, &lim, 50.0, 60.0, &ts);
        for (t, p) in ts.iter().zip(got) {
            let y = 1.0 - (0.2 * (-t / 0.2f64).exp() - 0.5 * (-t / 0.5f64).exp()) / (0.2 - 0.5);
            assert!((p - (50.0 + 10.0 * y)).abs() < 1e-8, "t={t} p={p}");
        }
    }

    #[test]
    fn limit_holds_valve() {
        let m = Steam {
            governor_s: 0.2,
            turbine_s: 0.5,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 55.0,
        };
        let got = command_step_response(&m, &lim, 50.0, 80.0, &[20.0]);
        assert!((got[0] - 55.0).abs() < 1e-9);
    }
}
