//! Gas turbine, simplified low-order form: governor (fuel) lag and turbine lag with the output
//! held below a load limit.
//!
//! `T_g·dx_f/dt = c − x_f` with a non-windup limit to `[min_mw, min(max_mw, load_limit_mw)]`,
//! `T_t·dP_m/dt = x_f − P_m`. A much simplified reading of Rowen, "Simplified mathematical
//! representations of heavy-duty gas turbines", ASME J. Eng. Power 105(4), 1983: the fuel-system
//! and turbine lags are kept, the temperature and acceleration controls are reduced to a fixed
//! MW limit, and the speed-dependence of the compressor is not modelled.
//! Typical ranges: T_g 0.05–0.5 s, T_t 0.1–0.5 s. States: `[x_f, P_m]` in MW.

use super::{steam::Steam, Limits, PrimeMoverDynamics};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GasTurbine {
    pub governor_s: f64,
    pub turbine_s: f64,
    /// Applied to the limits when the governor is built (see `Governor::new`).
    pub load_limit_mw: f64,
}

impl GasTurbine {
    fn lags(&self) -> Steam {
        Steam {
            governor_s: self.governor_s,
            turbine_s: self.turbine_s,
        }
    }
}

impl PrimeMoverDynamics for GasTurbine {
    fn n_states(&self) -> usize {
        2
    }
    fn init(&self, c: f64, lim: &Limits, x: &mut [f64]) {
        self.lags().init(c, lim, x)
    }
    fn derivatives(&self, c: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        self.lags().derivatives(c, lim, x, dx)
    }
    fn power_mw(&self, c: f64, lim: &Limits, x: &[f64]) -> f64 {
        self.lags().power_mw(c, lim, x)
    }
}

#[cfg(test)]
mod tests {
    use super::super::{command_step_response, Governor};
    use crate::model::{Generator, Governor as GovSpec, PrimeMover};

    #[test]
    fn load_limit_caps_output() {
        // A command above the load limit settles at the limit (definition of the limit).
        let gen = Generator {
            id: "g".into(),
            section: 0,
            rating_mva: 10.0,
            inertia_s: 3.0,
            output_mw: 7.0,
            min_mw: 0.0,
            max_mw: 10.0,
            governor: GovSpec {
                droop_pct: 5.0,
                deadband_hz: 0.0,
                isochronous: false,
                prime_mover: PrimeMover::GasTurbine {
                    governor_s: 0.1,
                    turbine_s: 0.3,
                    load_limit_mw: 8.0,
                },
                pressure_control: None,
            },
            trips: vec![],
            undervoltage_trips: vec![],
            off_frequency_limits: vec![],
        };
        let g = Governor::new(&gen, 7.0, 7.0, 50.0);
        let Model::GasTurbine(m) = g.model else {
            panic!("model")
        };
        let got = command_step_response(&m, &g.limits, 7.0, 12.0, &[30.0]);
        assert!((got[0] - 8.0).abs() < 1e-9);
    }
    use super::super::Model;
}
