//! Reheat steam turbine: governor lag plus the reheat block of the low-order system frequency
//! response model.
//!
//! `T_g·dx_g/dt = c − x_g` (non-windup limited; `T_g = 0` makes `x_g = clamp(c)` algebraic),
//! `T_R·dx_r/dt = x_g − x_r`, `P_m = F_H·x_g + (1 − F_H)·x_r`, which is
//! `(1 + F_H·T_R·s)/(1 + T_R·s)` from valve to shaft. With `T_g = 0` and the droop gain `S/R`
//! this is exactly Anderson & Mirheydar, "A low-order system frequency response model", IEEE
//! Trans. Power Systems 5(3), 1990, TF2 = K_m(1 + F_H T_R s)/(R(1 + T_R s)) (K_m is the governed
//! share of the rating; see docs/models.md). Also Kundur 1994, §9.1.2, Fig. 9.9 (tandem reheat).
//! Typical ranges: T_R 4–11 s, F_H 0.2–0.35, T_g 0–0.3 s. States: `[x_g, x_r]` in MW.

use super::{limited_lag, Limits, PrimeMoverDynamics, ALGEBRAIC_LAG_S};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SteamReheat {
    pub governor_s: f64,
    pub reheat_s: f64,
    pub hp_fraction: f64,
}

impl SteamReheat {
    fn valve(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        if self.governor_s < ALGEBRAIC_LAG_S {
            lim.clamp(c)
        } else {
            lim.clamp(x[0])
        }
    }
}

impl PrimeMoverDynamics for SteamReheat {
    fn n_states(&self) -> usize {
        2
    }
    fn init(&self, c: f64, lim: &Limits, x: &mut [f64]) {
        x[0] = lim.clamp(c);
        x[1] = x[0];
    }
    fn derivatives(&self, c: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        dx[0] = if self.governor_s < ALGEBRAIC_LAG_S {
            0.0
        } else {
            limited_lag(x[0], c, self.governor_s, lim)
        };
        let v = self.valve(c, lim, x);
        dx[1] = if self.reheat_s < ALGEBRAIC_LAG_S {
            0.0
        } else {
            (v - x[1]) / self.reheat_s
        };
    }
    fn power_mw(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        let v = self.valve(c, lim, x);
        if self.reheat_s < ALGEBRAIC_LAG_S {
            v
        } else {
            self.hp_fraction * v + (1.0 - self.hp_fraction) * x[1]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::command_step_response;
    use super::*;

    #[test]
    fn reheat_step_matches_closed_form() {
        // Unit step through (1 + F_H T_R s)/(1 + T_R s): y(t) = 1 − (1 − F_H) e^{−t/T_R}
        // (Anderson & Mirheydar 1990 reheat block, inverse Laplace by inspection).
        let m = SteamReheat {
            governor_s: 0.0,
            reheat_s: 8.0,
            hp_fraction: 0.3,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 100.0,
        };
        let ts = [0.001, 1.0, 8.0, 30.0];
        let got = command_step_response(&m, &lim, 40.0, 50.0, &ts);
        for (t, p) in ts.iter().zip(got) {
            let y = 1.0 - 0.7 * (-t / 8.0f64).exp();
            assert!((p - (40.0 + 10.0 * y)).abs() < 1e-8, "t={t} p={p}");
        }
    }
}
