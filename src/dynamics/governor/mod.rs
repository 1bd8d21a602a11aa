//! Prime movers and their speed governors: one file per published model, dispatched by [`Model`].
//!
//! Owns the governor equations only. It does not know islands, relays or time events; the swing
//! equation in [`crate::dynamics::swing`] feeds each machine its island's speed deviation and reads
//! back mechanical power in MW.
//!
//! Common to every model (docs/models.md §3):
//! * speed error after the dead band, `e = Δω − clamp(Δω, −db, +db)` (a no-jump dead band: the
//!   governor sees nothing inside ±db and the error grows from zero at the band edge);
//! * command `c = P_ref + z − K·e` in MW, with `K = S/R` MW per pu (droop on own rating) and `z`
//!   the isochronous integral (`dz/dt = −K·e/T_i`, `T_i` = [`ISOCHRONOUS_RESET_S`], `z` held in
//!   `[min − P_ref, max − P_ref]` by a non-windup limiter), `z ≡ 0` for a droop machine;
//! * the model's first lag after the command is a non-windup limiter to `[min_mw, max_mw]`
//!   (its derivative is zeroed when it sits at a limit and is pushed further, and its output is
//!   clamped to the limits).
//!
//! Process-steam pressure control ([`Pressure`], docs/models.md "Pressure-controlled steam
//! turbines", common practice, no published model): before the transfer the command is held at
//! `P_ref` (no speed error, no integral); after it the speed path above acts, with the upper limit
//! `min(max, P_dispatch + a)`, where the headers' available extra `a` rises from 0 at
//! `extra_mw_per_s` to `extra_mw` (`da/dt = rate` while `a < extra`, one more state, the last).
//!
//! Adding a model is one file with the [`PrimeMoverDynamics`] impl and one arm in [`Model`].

pub mod engine;
pub mod fixed;
pub mod gas_turbine;
pub mod hydro;
pub mod steam;
pub mod steam_reheat;

use crate::model::{base, Generator, PrimeMover};

/// Reset (integral) time of the isochronous integral, seconds.
pub const ISOCHRONOUS_RESET_S: f64 = 5.0;

/// A lag shorter than this is treated as algebraic (output = its clamped input); the engine's
/// ramp-limited lag is held at this value instead ([`crate::model::INSTANT_LAG_S`]).
pub const ALGEBRAIC_LAG_S: f64 = crate::model::INSTANT_LAG_S;

/// The equations of one prime-mover model, around a command in MW.
pub trait PrimeMoverDynamics {
    /// Number of states this model needs (fixed at build).
    fn n_states(&self) -> usize;
    /// Steady state for a constant command.
    fn init(&self, command_mw: f64, lim: &Limits, x: &mut [f64]);
    /// State derivatives.
    fn derivatives(&self, command_mw: f64, lim: &Limits, x: &[f64], dx: &mut [f64]);
    /// Mechanical power delivered to the shaft, MW.
    fn power_mw(&self, command_mw: f64, lim: &Limits, x: &[f64]) -> f64;
}

/// Output limits of a machine, MW.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Limits {
    pub min_mw: f64,
    pub max_mw: f64,
}

impl Limits {
    pub fn clamp(&self, v: f64) -> f64 {
        v.max(self.min_mw).min(self.max_mw)
    }
}

/// One arm per model, each calling the same method of its [`PrimeMoverDynamics`] impl.
macro_rules! dispatch {
    ($model:expr, $m:ident => $call:expr) => {
        match $model {
            Model::Steam($m) => $call,
            Model::SteamReheat($m) => $call,
            Model::Hydro($m) => $call,
            Model::GasTurbine($m) => $call,
            Model::Engine($m) => $call,
            Model::Fixed($m) => $call,
        }
    };
}

/// The enum over every model (closed set; one arm per file).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Model {
    Steam(steam::Steam),
    SteamReheat(steam_reheat::SteamReheat),
    Hydro(hydro::Hydro),
    GasTurbine(gas_turbine::GasTurbine),
    Engine(engine::Engine),
    Fixed(fixed::Fixed),
}

impl Model {
    pub fn from_prime_mover(pm: &PrimeMover, rating_mva: f64, droop_pct: f64) -> Model {
        match *pm {
            PrimeMover::Steam {
                governor_s,
                turbine_s,
            } => Model::Steam(steam::Steam {
                governor_s,
                turbine_s,
            }),
            PrimeMover::SteamReheat {
                governor_s,
                reheat_s,
                hp_fraction,
            } => Model::SteamReheat(steam_reheat::SteamReheat {
                governor_s,
                reheat_s,
                hp_fraction,
            }),
            PrimeMover::Hydro {
                governor_s,
                water_start_s,
                transient_droop_pct,
                reset_s,
            } => Model::Hydro(hydro::Hydro {
                governor_s,
                water_start_s,
                // The transient-droop filter's lag is (R_T/R_P)·T_R (Kundur 1994, eq. 9.27).
                transient_ratio: if droop_pct > 0.0 {
                    transient_droop_pct / droop_pct
                } else {
                    1.0
                },
                reset_s,
            }),
            PrimeMover::GasTurbine {
                governor_s,
                turbine_s,
                load_limit_mw,
            } => Model::GasTurbine(gas_turbine::GasTurbine {
                governor_s,
                turbine_s,
                load_limit_mw,
            }),
            PrimeMover::Engine {
                governor_s,
                ramp_mw_per_s,
            } => Model::Engine(engine::Engine {
                governor_s,
                ramp_mw_per_s,
            }),
            PrimeMover::Fixed => {
                let _ = rating_mva;
                Model::Fixed(fixed::Fixed)
            }
        }
    }

    /// Number of states of the prime-mover model (static dispatch: one `match`, no trait object,
    /// so the model's equations inline into the derivative function).
    fn n_model_states(&self) -> usize {
        dispatch!(self, m => m.n_states())
    }

    fn init(&self, command_mw: f64, lim: &Limits, x: &mut [f64]) {
        dispatch!(self, m => m.init(command_mw, lim, x))
    }

    fn derivatives(&self, command_mw: f64, lim: &Limits, x: &[f64], dx: &mut [f64]) {
        dispatch!(self, m => m.derivatives(command_mw, lim, x, dx))
    }

    fn power_mw(&self, command_mw: f64, lim: &Limits, x: &[f64]) -> f64 {
        dispatch!(self, m => m.power_mw(command_mw, lim, x))
    }

    pub fn is_governed(&self) -> bool {
        !matches!(self, Model::Fixed(_))
    }
}

/// One machine's complete governor: common speed path plus its prime-mover model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Governor {
    pub model: Model,
    /// K = S/R, MW per pu speed deviation.
    pub gain_mw_per_pu: f64,
    pub deadband_pu: f64,
    pub p_ref_mw: f64,
    pub limits: Limits,
    pub isochronous: bool,
    /// Process-steam pressure control, for a machine that has it.
    pub pressure: Option<Pressure>,
}

/// A pressure-controlled steam machine's header limit and its state of control.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Pressure {
    /// Transferred to speed control (set by the simulator for each segment); before, the command
    /// is held at `P_ref`.
    pub speed_control: bool,
    /// The operating point's dispatch the headers' extra is counted from, MW.
    pub dispatch_mw: f64,
    pub extra_mw: f64,
    pub extra_mw_per_s: f64,
}

impl Governor {
    /// The governor of a generator dispatched at `p_ref_mw`.
    /// `dispatch_mw` is the operating point's dispatch (the headers' extra of a pressure-controlled
    /// machine is counted from it); `p_ref_mw` may differ when a case starts islanded.
    pub fn new(gen: &Generator, p_ref_mw: f64, dispatch_mw: f64, nominal_hz: f64) -> Governor {
        let model = Model::from_prime_mover(
            &gen.governor.prime_mover,
            gen.rating_mva,
            gen.governor.droop_pct,
        );
        let gain = if model.is_governed() && gen.governor.droop_pct > 0.0 {
            base::droop_gain_mw_per_pu(gen.rating_mva, gen.governor.droop_pct)
        } else {
            0.0
        };
        let mut limits = Limits {
            min_mw: gen.min_mw.min(p_ref_mw),
            max_mw: gen.upper_mw(dispatch_mw).max(p_ref_mw),
        };
        if let Model::GasTurbine(g) = model {
            limits.max_mw = limits.max_mw.min(g.load_limit_mw.max(p_ref_mw));
        }
        Governor {
            model,
            gain_mw_per_pu: gain,
            deadband_pu: gen.governor.deadband_hz.max(0.0) / nominal_hz,
            p_ref_mw,
            limits,
            isochronous: gen.governor.isochronous && model.is_governed(),
            pressure: gen
                .governor
                .pressure_control
                .filter(|_| model.is_governed())
                .map(|pc| Pressure {
                    speed_control: false,
                    dispatch_mw,
                    extra_mw: pc.extra_mw,
                    extra_mw_per_s: pc.extra_mw_per_s,
                }),
        }
    }

    /// Total states: the model's, then one isochronous integral when isochronous, then the
    /// headers' available extra when pressure controlled.
    pub fn n_states(&self) -> usize {
        self.model.n_model_states()
            + usize::from(self.isochronous)
            + usize::from(self.pressure.is_some())
    }

    /// Whether the machine answers speed now: always, except a pressure-controlled machine
    /// before its transfer.
    pub fn in_speed_control(&self) -> bool {
        self.pressure.is_none_or(|p| p.speed_control)
    }

    /// The limits in force at state `x`: a transferred pressure-controlled machine's upper limit
    /// is the dispatch plus what the headers give so far.
    fn limits_at(&self, x: &[f64]) -> Limits {
        match self.pressure {
            Some(p) if p.speed_control => {
                let a = x[x.len() - 1].clamp(0.0, p.extra_mw);
                Limits {
                    min_mw: self.limits.min_mw,
                    max_mw: self
                        .limits
                        .max_mw
                        .min(p.dispatch_mw + a)
                        .max(self.limits.min_mw),
                }
            }
            _ => self.limits,
        }
    }

    /// Speed error seen through the dead band, pu.
    pub fn speed_error_pu(&self, delta_omega_pu: f64) -> f64 {
        deadband(delta_omega_pu, self.deadband_pu)
    }

    fn command(&self, delta_omega_pu: f64, x: &[f64], lim: &Limits) -> f64 {
        if !self.in_speed_control() {
            return self.p_ref_mw;
        }
        let z = if self.isochronous {
            self.integral(x, lim)
        } else {
            0.0
        };
        self.p_ref_mw + z - self.gain_mw_per_pu * self.speed_error_pu(delta_omega_pu)
    }

    fn integral(&self, x: &[f64], lim: &Limits) -> f64 {
        let z = x[self.model.n_model_states()];
        z.max(lim.min_mw - self.p_ref_mw)
            .min(lim.max_mw - self.p_ref_mw)
    }

    fn model_states<'a>(&self, x: &'a [f64]) -> &'a [f64] {
        &x[..self.model.n_model_states()]
    }

    /// Steady state at a constant speed deviation with a zero integral.
    /// A pressure-controlled machine starts in pressure control with no header extra taken,
    /// or, when `speed_control` (its island is off the utility at t = 0), in speed control with
    /// the headers' whole extra available.
    pub fn init(&self, delta_omega_pu: f64, x: &mut [f64]) {
        x.iter_mut().for_each(|v| *v = 0.0);
        if let Some(p) = self.pressure {
            if p.speed_control {
                x[x.len() - 1] = p.extra_mw;
            }
        }
        let lim = self.limits_at(x);
        let c = if self.in_speed_control() {
            self.p_ref_mw - self.gain_mw_per_pu * self.speed_error_pu(delta_omega_pu)
        } else {
            self.p_ref_mw
        };
        let n = self.model.n_model_states();
        self.model.init(c, &lim, &mut x[..n]);
    }

    pub fn derivatives(&self, delta_omega_pu: f64, x: &[f64], dx: &mut [f64]) {
        let lim = self.limits_at(x);
        let c = self.command(delta_omega_pu, x, &lim);
        let n = self.model.n_model_states();
        self.model.derivatives(c, &lim, &x[..n], &mut dx[..n]);
        self.tail_derivatives(delta_omega_pu, x, dx, &lim, n);
    }

    /// Derivatives of the isochronous integral and the headers' extra (the states after the
    /// model's own `n`).
    fn tail_derivatives(
        &self,
        delta_omega_pu: f64,
        x: &[f64],
        dx: &mut [f64],
        lim: &Limits,
        n: usize,
    ) {
        if self.isochronous {
            let z = x[n];
            let d = if self.in_speed_control() {
                -self.gain_mw_per_pu * self.speed_error_pu(delta_omega_pu) / ISOCHRONOUS_RESET_S
            } else {
                0.0
            };
            dx[n] = non_windup(z, d, lim.min_mw - self.p_ref_mw, lim.max_mw - self.p_ref_mw);
        }
        if let Some(p) = self.pressure {
            let k = x.len() - 1;
            let rate = if p.speed_control {
                p.extra_mw_per_s
            } else {
                0.0
            };
            dx[k] = non_windup(x[k], rate, 0.0, p.extra_mw);
        }
    }

    pub fn power_mw(&self, delta_omega_pu: f64, x: &[f64]) -> f64 {
        let lim = self.limits_at(x);
        let c = self.command(delta_omega_pu, x, &lim);
        self.model.power_mw(c, &lim, self.model_states(x))
    }

    /// [`Governor::derivatives`] and [`Governor::power_mw`] in one call (the limits and the
    /// command are worked out once); same values as the two calls.
    pub fn derivatives_and_power(&self, delta_omega_pu: f64, x: &[f64], dx: &mut [f64]) -> f64 {
        let lim = self.limits_at(x);
        let c = self.command(delta_omega_pu, x, &lim);
        let n = self.model.n_model_states();
        self.model.derivatives(c, &lim, &x[..n], &mut dx[..n]);
        self.tail_derivatives(delta_omega_pu, x, dx, &lim, n);
        self.model.power_mw(c, &lim, &x[..n])
    }
}

/// No-jump dead band: zero inside ±db, linear from the band edge outside.
pub fn deadband(v: f64, db: f64) -> f64 {
    if v > db {
        v - db
    } else if v < -db {
        v + db
    } else {
        0.0
    }
}

/// Non-windup limiter on a state: the derivative is zeroed at a limit when it pushes outward.
pub fn non_windup(x: f64, dx: f64, lo: f64, hi: f64) -> f64 {
    if (x >= hi && dx > 0.0) || (x <= lo && dx < 0.0) {
        0.0
    } else {
        dx
    }
}

/// A first-order lag `T·dx/dt = u − x` with a non-windup limiter on `x`; `T` below
/// [`ALGEBRAIC_LAG_S`] is the caller's business (treat the lag as algebraic).
pub fn limited_lag(x: f64, u: f64, t_s: f64, lim: &Limits) -> f64 {
    non_windup(x, (u - x) / t_s, lim.min_mw, lim.max_mw)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn deadband_is_no_jump() {
        assert_eq!(deadband(0.0004, 0.0005), 0.0);
        assert!((deadband(-0.0015, 0.0005) + 0.001).abs() < 1e-15);
        assert!((deadband(0.0015, 0.0005) - 0.001).abs() < 1e-15);
    }

    #[test]
    fn non_windup_holds_at_limit() {
        assert_eq!(non_windup(10.0, 1.0, 0.0, 10.0), 0.0);
        assert_eq!(non_windup(10.0, -1.0, 0.0, 10.0), -1.0);
        assert_eq!(non_windup(0.0, -1.0, 0.0, 10.0), 0.0);
    }
}

/// Fixed-step RK4 of one model under a constant command, for the per-model closed-form tests.
#[cfg(test)]
pub(crate) fn command_step_response(
    m: &dyn PrimeMoverDynamics,
    lim: &Limits,
    p0_mw: f64,
    command_mw: f64,
    times_s: &[f64],
) -> Vec<f64> {
    let n = m.n_states();
    let mut x = vec![0.0; n];
    m.init(p0_mw, lim, &mut x);
    let h: f64 = 1e-4;
    let mut t = 0.0;
    let mut out = Vec::new();
    let f = |x: &[f64]| {
        let mut d = vec![0.0; n];
        m.derivatives(command_mw, lim, x, &mut d);
        d
    };
    for &target in times_s {
        while t < target - 1e-12 {
            let hh = h.min(target - t);
            let k1 = f(&x);
            let x2: Vec<f64> = (0..n).map(|i| x[i] + 0.5 * hh * k1[i]).collect();
            let k2 = f(&x2);
            let x3: Vec<f64> = (0..n).map(|i| x[i] + 0.5 * hh * k2[i]).collect();
            let k3 = f(&x3);
            let x4: Vec<f64> = (0..n).map(|i| x[i] + hh * k3[i]).collect();
            let k4 = f(&x4);
            for i in 0..n {
                x[i] += hh / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]);
            }
            t += hh;
        }
        out.push(m.power_mw(command_mw, lim, &x));
    }
    out
}
