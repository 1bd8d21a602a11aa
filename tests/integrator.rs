//! The Dormand–Prince 5(4) stepper (src/sim/dopri.rs) against closed-form solutions and against
//! an independent implementation of the same published method and step control, ode_solvers
//! 0.6.2's `Dopri5` (Dormand & Prince 1980; Hairer, Nørsett & Wanner, Solving ODEs I, §II.4–II.6).

use nadir::sim::dopri::{dense_value, Control, Failure, Stepper};
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::{OutputType, System};
use ode_solvers::{Dopri5, SVector};

const OMEGA: f64 = 2.0;

/// Harmonic oscillator y1' = y2, y2' = −ω²·y1; closed form y1 = cos ωt, y2 = −ω sin ωt from (1, 0).
fn oscillator(y: &[f64], dy: &mut [f64]) {
    dy[0] = y[1];
    dy[1] = -OMEGA * OMEGA * y[0];
}

/// Every accepted step: end time, step size, end state, and the dense output at θ = 0.37.
struct Taken {
    t: Vec<f64>,
    y: Vec<[f64; 2]>,
    mid: Vec<(f64, [f64; 2])>,
}

fn own(ctl: &Control, t_end: f64) -> Taken {
    let mut taken = Taken {
        t: vec![],
        y: vec![],
        mid: vec![],
    };
    let y0 = [1.0, 0.0];
    let mut dy0 = [0.0; 2];
    oscillator(&y0, &mut dy0);
    let mut prev = (0.0, y0);
    let mut stepper = Stepper::new(2);
    stepper
        .integrate(&mut oscillator, 0.0, &y0, &dy0, t_end, ctl, &mut |st| {
            let th = 0.37;
            let m = [0, 1].map(|i| {
                dense_value(
                    th,
                    prev.1[i],
                    st.y1[i],
                    st.dense[0][i],
                    st.dense[1][i],
                    st.dense[2][i],
                )
            });
            taken.mid.push((prev.0 + th * st.h, m));
            let y = [st.y1[0], st.y1[1]];
            taken.t.push(st.t1);
            taken.y.push(y);
            prev = (st.t1, y);
            false
        })
        .expect("the oscillator integrates");
    taken
}

struct Osc;
impl System<f64, SVector<f64, 2>> for Osc {
    fn system(&self, _t: f64, y: &SVector<f64, 2>, dy: &mut SVector<f64, 2>) {
        oscillator(y.as_slice(), dy.as_mut_slice());
    }
}

fn control(first_step: f64) -> Control {
    Control {
        rtol: 1e-6,
        atol: 1e-9,
        norm_width: 2,
        h_max: 0.5,
        first_step,
        max_attempts: 100_000,
    }
}

/// Same problem, tolerances, safety factor 0.9, β 0.04, factor limits 0.2/10 and h_max through
/// ode_solvers: the accepted steps, end states and dense output must be the same numbers.
#[test]
fn same_steps_as_ode_solvers_dopri5() {
    for first in [0.0, 0.013] {
        let ctl = control(first);
        let mine = own(&ctl, 10.0);
        let mut solver = Dopri5::from_param(
            Osc,
            0.0,
            10.0,
            0.5,
            SVector::<f64, 2>::new(1.0, 0.0),
            1e-6,
            1e-9,
            0.9,
            0.04,
            0.2,
            10.0,
            0.5,
            first,
            100_000,
            u32::MAX,
            OutputType::Continuous,
        );
        let mut dense = ContinuousOutputModel::new();
        solver
            .integrate_with_continuous_output_model(&mut dense)
            .expect("ode_solvers integrates");
        let (t_ref, y_ref) = (solver.x_out(), solver.y_out());
        // With continuous output ode_solvers lists the accepted step ends only.
        assert_eq!(mine.t.len(), t_ref.len(), "first step {first}");
        assert!(mine.t.len() > 20, "a nontrivial number of steps");
        for (k, (t, y)) in mine.t.iter().zip(&mine.y).enumerate() {
            assert_eq!(*t, t_ref[k], "step {k} end time");
            assert_eq!(y[..], y_ref[k].as_slice()[..], "step {k} state");
        }
        for (t, m) in &mine.mid {
            let r = dense.evaluate(*t).expect("inside the run");
            // The same nested form of the continuous extension; ode_solvers recovers θ from the
            // time t (rounded at |t| ≤ 10, about 2e-15 s), so equal up to |y'|·2e-15 ≤ 1e-14.
            for i in 0..2 {
                assert!(
                    (m[i] - r[i]).abs() <= 1e-13,
                    "dense at {t}: {} vs {}",
                    m[i],
                    r[i]
                );
            }
        }
    }
}

/// Closed form: the global error at rtol 1e-6 stays of the order of the tolerance over five
/// periods, and the continuous extension inside steps is as accurate as the step ends
/// (4th-order dense output, HNW I §II.6). Bounds: 100× the tolerance, common practice for a
/// non-stiff problem at these tolerances (no source).
#[test]
fn oscillator_matches_its_closed_form() {
    let ctl = control(0.0);
    let taken = own(&ctl, 5.0 * std::f64::consts::PI);
    let err = |t: f64, y: &[f64; 2]| {
        let (c, s) = ((OMEGA * t).cos(), (OMEGA * t).sin());
        (y[0] - c).abs().max((y[1] + OMEGA * s).abs() / OMEGA)
    };
    let end_err = taken
        .t
        .iter()
        .zip(&taken.y)
        .map(|(t, y)| err(*t, y))
        .fold(0.0, f64::max);
    let mid_err = taken
        .mid
        .iter()
        .map(|(t, y)| err(*t, y))
        .fold(0.0, f64::max);
    assert!(end_err < 1e-4, "largest error at step ends {end_err:e}");
    assert!(mid_err < 1e-4, "largest error inside steps {mid_err:e}");
    assert!(
        (taken.t.last().unwrap() - 5.0 * std::f64::consts::PI).abs() < 1e-12,
        "ends exactly at t_end"
    );
    // Tighter tolerance, smaller error: the method converges.
    let tight = own(
        &Control {
            rtol: 1e-10,
            atol: 1e-13,
            ..ctl
        },
        5.0 * std::f64::consts::PI,
    );
    let tight_err = tight
        .t
        .iter()
        .zip(&tight.y)
        .map(|(t, y)| err(*t, y))
        .fold(0.0, f64::max);
    assert!(tight_err < end_err / 100.0, "{tight_err:e} vs {end_err:e}");
}

/// A step budget bounds the work whatever the equations: a fast oscillation with a tiny budget.
#[test]
fn step_budget_is_kept() {
    let mut f = |y: &[f64], dy: &mut [f64]| {
        dy[0] = 1e4 * y[1];
        dy[1] = -1e4 * y[0];
    };
    let ctl = Control {
        max_attempts: 50,
        norm_width: 2,
        ..control(0.0)
    };
    let mut stepper = Stepper::new(2);
    let mut calls = 0;
    let r = stepper.integrate(
        &mut f,
        0.0,
        &[1.0, 0.0],
        &[0.0, -1e4],
        100.0,
        &ctl,
        &mut |_| {
            calls += 1;
            false
        },
    );
    assert!(
        matches!(r, Err(Failure::Budget { attempts: 51, .. })),
        "{r:?}"
    );
    assert!(calls <= 51);
}
