//! Reciprocating engine: governor/fuel-rack lag with a load-acceptance ramp limit.
//!
//! `dP_m/dt = min((c − P_m)/T_g, ramp)` with a non-windup limit to [min, max]; load rejection is
//! not rate limited. A low-order representation in the spirit of ISO 8528-5 load-acceptance
//! behaviour (the ramp stands for turbocharger lag); no published block diagram is reproduced, so
//! treat the parameters as fitted to the manufacturer's load-step test.
//! Typical ranges: T_g 0.05–0.5 s, ramp 2–20 %·rating per second. States: `[P_m]` in MW.

use super::{non_windup, Limits, PrimeMoverDynamics, ALGEBRAIC_LAG_S};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Engine {
    pub governor_s: f64,
    pub ramp_mw_per_s: f64,
}

impl PrimeMoverDynamics for Engine {
    fn n_states(&self) -> usize {
        1
    }
    fn init(&self, c: f64, lim: &Limits, x: &mut [f64]) {
        x[0] = lim.clamp(c);
    }
    fn derivatives(&self, c: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        let t = self.governor_s.max(ALGEBRAIC_LAG_S);
        let mut d = (c - x[0]) / t;
        if self.ramp_mw_per_s > 0.0 {
            d = d.min(self.ramp_mw_per_s);
        }
        dx[0] = non_windup(x[0], d, lim.min_mw, lim.max_mw);
    }
    fn power_mw(&self, _c: f64, lim: &Limits, x: &[f64]) -> f64 {
        lim.clamp(x[0])
    }
}

#[cfg(test)]
mod tests {
    use super::super::command_step_response;
    use super::*;

    #[test]
    fn ramp_then_lag() {
        // Closed form: ramp at r until (c − P)/T_g = r, i.e. P = c − r·T_g, then exponential lag.
        // c = 10, P0 = 5, r = 1 MW/s, T_g = 0.5 s: ramp ends at P = 9.5 after 4.5 s; then
        // P(t) = 10 − 0.5 e^{−(t−4.5)/0.5}.
        let m = Engine {
            governor_s: 0.5,
            ramp_mw_per_s: 1.0,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 20.0,
        };
        let ts = [2.0, 4.5, 5.5];
        let got = command_step_response(&m, &lim, 5.0, 10.0, &ts);
        assert!((got[0] - 7.0).abs() < 1e-6);
        assert!((got[1] - 9.5).abs() < 1e-4);
        assert!((got[2] - (10.0 - 0.5 * (-2.0f64).exp())).abs() < 1e-4);
    }
}
