//! Fixed mechanical output: no governor action, `P_m = P_ref` (a machine on base load or with
//! its governor blocked; Kundur 1994 §11.1, "governor blocked").

use super::{Limits, PrimeMoverDynamics};

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fixed;

impl PrimeMoverDynamics for Fixed {
    fn n_states(&self) -> usize {
        0
    }
    fn init(&self, _c: f64, _lim: &Limits, _x: &mut [f64]) {}
    fn derivatives(&self, _c: f64, _lim: &Limits, _x: &[f64], _dx: &mut [f64]) {}
    /// The governor gives a fixed machine a zero gain, so the command is its set-point.
    fn power_mw(&self, c: f64, _lim: &Limits, _x: &[f64]) -> f64 {
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn output_is_constant() {
        let lim = Limits {
            min_mw: 0.0,
            max_mw: 10.0,
        };
        let mut x: [f64; 0] = [];
        Fixed.init(6.0, &lim, &mut x);
        assert_eq!(Fixed.power_mw(6.0, &lim, &x), 6.0);
        assert_eq!(Fixed.n_states(), 0);
    }
}
