//! Hydro turbine with a transient-droop compensated governor and the linearised turbine.
//!
//! Governor (Kundur, *Power System Stability and Control*, 1994, §9.2, Fig. 9.17 / eq. 9.27;
//! IEEE Working Group, "Hydraulic turbine and turbine control models for system dynamic
//! studies", IEEE Trans. PWRS 7(1), 1992): the droop command passes through the transient-droop
//! lead-lag `(1 + T_R s)/(1 + (R_T/R_P)·T_R s)` and then the gate servo `1/(1 + T_G s)`
//! (non-windup limited). Turbine: `(1 − T_w s)/(1 + 0.5·T_w s)` (Kundur eq. 9.14, ideal
//! lossless linearised turbine), applied to the gate in MW (unity steady-state gain).
//!
//! Realisation: lead-lag input `u = c − P_ref`, `b·dw/dt = u − w`, `y = w + (T_R/b)(u − w)` with
//! `b = (R_T/R_P)·T_R`; gate `T_G·dg/dt = P_ref + y − g`; turbine `0.5·T_w·dq/dt = g − q`,
//! `P_m = 3q − 2g`. Typical ranges: T_w 0.5–4 s, R_T 20–80 %, T_R 2–10 s, T_G 0.2–0.5 s.
//! States: `[w, g, q]` (w in MW deviation, g and q in MW). `P_ref` is carried as the centre of the
//! lead-lag (`init` records nothing else: the command in steady state equals the set-point).

use super::{limited_lag, Limits, PrimeMoverDynamics, ALGEBRAIC_LAG_S};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hydro {
    pub governor_s: f64,
    pub water_start_s: f64,
    /// R_T / R_P.
    pub transient_ratio: f64,
    pub reset_s: f64,
}

impl Hydro {
    fn lag_b(&self) -> f64 {
        self.transient_ratio * self.reset_s
    }
    /// Lead-lag output given its input `u` (command minus the steady gate `x[1]` at init is not
    /// available, so the lead-lag runs on the absolute command: unity DC gain keeps it exact).
    fn lead_lag(&self, c: f64, x: &[f64]) -> f64 {
        let b = self.lag_b();
        if b < ALGEBRAIC_LAG_S {
            c
        } else {
            x[0] + self.reset_s / b * (c - x[0])
        }
    }
}

impl PrimeMoverDynamics for Hydro {
    fn n_states(&self) -> usize {
        3
    }
    fn init(&self, c: f64, lim: &Limits, x: &mut [f64]) {
        x[0] = c;
        x[1] = lim.clamp(c);
        x[2] = x[1];
    }
    fn derivatives(&self, c: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        let b = self.lag_b();
        dx[0] = if b < ALGEBRAIC_LAG_S {
            0.0
        } else {
            (c - x[0]) / b
        };
        let y = self.lead_lag(c, x);
        dx[1] = if self.governor_s < ALGEBRAIC_LAG_S {
            0.0
        } else {
            limited_lag(x[1], y, self.governor_s, lim)
        };
        let g = self.gate(c, lim, x);
        dx[2] = if self.water_start_s < ALGEBRAIC_LAG_S {
            0.0
        } else {
            (g - x[2]) / (0.5 * self.water_start_s)
        };
    }
    fn power_mw(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        let g = self.gate(c, lim, x);
        if self.water_start_s < ALGEBRAIC_LAG_S {
            g
        } else {
            3.0 * x[2] - 2.0 * g
        }
    }
}

impl Hydro {
    fn gate(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        if self.governor_s < ALGEBRAIC_LAG_S {
            lim.clamp(self.lead_lag(c, x))
        } else {
            lim.clamp(x[1])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::super::command_step_response;
    use super::*;

    #[test]
    fn turbine_shows_initial_inverse_response() {
        // (1 − T_w s)/(1 + 0.5 T_w s) with an instantaneous gate step Δg: the initial value
        // theorem gives ΔP_m(0+) = −2·Δg and the final value theorem ΔP_m(∞) = Δg (Kundur 1994,
        // §9.1.1, Fig. 9.4); in between ΔP_m(t) = Δg·(1 − 3 e^{−2t/T_w}).
        let m = Hydro {
            governor_s: 0.0,
            water_start_s: 2.0,
            transient_ratio: 0.0,
            reset_s: 0.0,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 100.0,
        };
        let ts = [1e-9, 0.5, 2.0, 20.0];
        let got = command_step_response(&m, &lim, 50.0, 51.0, &ts);
        for (t, p) in ts.iter().zip(got) {
            let expect = 50.0 + 1.0 - 3.0 * (-2.0 * t / 2.0f64).exp();
            assert!((p - expect).abs() < 1e-7, "t={t} p={p} expect={expect}");
        }
    }

    #[test]
    fn transient_droop_lead_lag_closed_form() {
        // Step through (1 + T_R s)/(1 + b s), b = (R_T/R_P)T_R, with an ideal gate and turbine:
        // y(t) = 1 − (1 − T_R/b) e^{−t/b}; with T_w → 0 and T_G → 0 P_m follows y.
        let m = Hydro {
            governor_s: 0.0,
            water_start_s: 0.0,
            transient_ratio: 8.0,
            reset_s: 5.0,
        };
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 100.0,
        };
        let b = 40.0;
        let ts = [1e-9, 10.0, 40.0];
        let got = command_step_response(&m, &lim, 50.0, 60.0, &ts);
        for (t, p) in ts.iter().zip(got) {
            let y = 1.0 - (1.0 - 5.0 / b) * (-t / b).exp();
            assert!((p - (50.0 + 10.0 * y)).abs() < 1e-7, "t={t} p={p}");
        }
    }
}
