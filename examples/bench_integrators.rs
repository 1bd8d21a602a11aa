//! Integrator comparison on the demo (a benchmark, not a test): every segment that the demo's
//! runs integrate (every case × operating point of examples/biorefinery, the same equations,
//! start state, end time, step cap and first step the run used) replayed through
//!
//! 1. nadir's own Dormand–Prince 5(4) stepper (`nadir::sim::dopri`, what runs use),
//! 2. ode_solvers 0.6 `Dopri5` with its continuous output, on the state padded to 16/32/64
//!    entries as nadir used it before,
//! 3. the `differential-equations` crate's DOPRI5 (`ExplicitRungeKutta::dopri5`, which also
//!    offers event location with Brent's method), default step control, every step kept,
//!
//! all at the run's tolerances for an RMS norm over the ODE states. Prints µs per demo run
//! (integration only), accepted and rejected steps, derivative evaluations, and the agreement of
//! each segment's end state with a tight reference (the same crate's DOP853 at rtol 1e-12,
//! atol 1e-14): largest |Δf| in Hz of any section's speed. The scipy agreement of whole runs
//! is `bench_vs_scipy`'s. Needs the optional crate:
//! `cargo run --release --features compare-integrators --example bench_integrators [-- REPEATS]`.

use differential_equations::prelude::*;
use nadir::input::{load_cases, load_plant, load_scheme};
use nadir::sim::dopri::{Control, Stepper};
use nadir::sim::integrate::capture::{segments_of, SegmentProblem};
use nadir::sim::rhs::{speed_index, SegmentEquations};
use nadir::sim::{simulate, SimConfig};
use ode_solvers::continuous_output_model::ContinuousOutputModel;
use ode_solvers::dop_shared::{OutputType, System};
use ode_solvers::{Dopri5, SVector};
use std::hint::black_box;
use std::path::Path;
use std::time::Instant;

/// Counts and end state of one replay.
struct Outcome {
    accepted: usize,
    rejected: usize,
    evaluations: usize,
    end: Vec<f64>,
}

/// Tolerance scale that turns an RMS norm over `width` entries into one over the `n_ode` states.
fn scale(n_ode: usize, width: usize) -> f64 {
    if width > n_ode && n_ode > 0 {
        (n_ode as f64 / width as f64).sqrt()
    } else {
        1.0
    }
}

#[inline(never)]
fn own(p: &SegmentProblem) -> Outcome {
    let n = p.y0.len();
    // The norm as runs form it: over the width ode_solvers padded the state to.
    let width = match n {
        0..=16 => 16,
        17..=32 => 32,
        33..=64 => 64,
        65..=128 => 128,
        _ => n,
    };
    let s = scale(p.n_ode, width);
    let ctl = Control {
        rtol: p.rtol * s,
        atol: p.atol * s,
        norm_width: width,
        h_max: p.h_max,
        first_step: p.first_step,
        max_attempts: 1_000_000,
    };
    let mut dy0 = vec![0.0; n];
    p.eq.derivatives(&p.y0, &mut dy0);
    // Keep every accepted state, as a segment does.
    let mut kept: Vec<f64> = Vec::with_capacity(64 * n);
    let mut stepper = Stepper::new(n);
    let mut f = |y: &[f64], dy: &mut [f64]| p.eq.derivatives(y, dy);
    let c = stepper
        .integrate(&mut f, p.t0, &p.y0, &dy0, p.t_end, &ctl, &mut |st| {
            kept.extend_from_slice(st.y1);
            false
        })
        .expect("own stepper");
    let end = kept[kept.len() - n..].to_vec();
    Outcome {
        accepted: c.accepted,
        rejected: c.rejected,
        evaluations: c.evaluations + 1,
        end,
    }
}

struct OdeSolversPlant<'a>(&'a SegmentEquations, usize);

macro_rules! ode_solvers_for {
    ($name:ident, $w:literal) => {
        impl System<f64, SVector<f64, $w>> for OdeSolversPlant<'_> {
            fn system(&self, _t: f64, y: &SVector<f64, $w>, dy: &mut SVector<f64, $w>) {
                let n = self.1;
                self.0
                    .derivatives(&y.as_slice()[..n], &mut dy.as_mut_slice()[..n]);
            }
        }
        fn $name(p: &SegmentProblem) -> Outcome {
            let n = p.y0.len();
            let s = scale(p.n_ode, $w);
            let mut y = SVector::<f64, $w>::zeros();
            y.as_mut_slice()[..n].copy_from_slice(&p.y0);
            let mut solver = Dopri5::from_param(
                OdeSolversPlant(&p.eq, n),
                p.t0,
                p.t_end,
                p.h_max,
                y,
                p.rtol * s,
                p.atol * s,
                0.9,
                0.04,
                0.2,
                10.0,
                p.h_max,
                p.first_step,
                1_000_000,
                u32::MAX,
                OutputType::Continuous,
            );
            let mut dense = ContinuousOutputModel::new();
            let st = solver
                .integrate_with_continuous_output_model(&mut dense)
                .expect("ode_solvers");
            let end = solver.y_out().last().expect("a step").as_slice()[..n].to_vec();
            black_box(&dense);
            Outcome {
                accepted: st.accepted_steps as usize,
                rejected: st.rejected_steps as usize,
                evaluations: st.num_eval as usize,
                end,
            }
        }
    };
}
ode_solvers_for!(ode_solvers_16, 16);
ode_solvers_for!(ode_solvers_32, 32);
ode_solvers_for!(ode_solvers_64, 64);

#[inline(never)]
fn ode_solvers(p: &SegmentProblem) -> Outcome {
    match p.y0.len() {
        0..=16 => ode_solvers_16(p),
        17..=32 => ode_solvers_32(p),
        33..=64 => ode_solvers_64(p),
        n => panic!("{n} states: the comparison covers plants up to 64"),
    }
}

struct CratePlant<'a>(&'a SegmentEquations, usize);

impl<const W: usize> ODE<f64, [f64; W]> for CratePlant<'_> {
    fn diff(&self, _t: f64, y: &[f64; W], dy: &mut [f64; W]) {
        let n = self.1;
        self.0.derivatives(&y[..n], &mut dy[..n]);
    }
}

/// The crate's DOPRI5 (`tight` false) or its DOP853 at rtol 1e-12, atol 1e-14 (`tight` true).
fn crate_solve<const W: usize>(p: &SegmentProblem, tight: bool) -> Outcome {
    let n = p.y0.len();
    let s = scale(p.n_ode, W);
    let mut y0 = [0.0; W];
    y0[..n].copy_from_slice(&p.y0);
    let sys = CratePlant(&p.eq, n);
    let ivp = IVP::ode(&sys, p.t0, p.t_end, y0);
    let sol = if tight {
        ivp.method(
            ExplicitRungeKutta::dop853()
                .rtol(1e-12)
                .atol(1e-14)
                .h_max(p.h_max)
                .max_steps(10_000_000),
        )
        .solve()
    } else {
        let mut m = ExplicitRungeKutta::dopri5()
            .rtol(p.rtol * s)
            .atol(p.atol * s)
            .h_max(p.h_max)
            .max_steps(1_000_000);
        if p.first_step > 0.0 {
            m = m.h0(p.first_step);
        }
        ivp.method(m).solve()
    }
    .expect("differential-equations");
    Outcome {
        accepted: sol.steps.accepted,
        rejected: sol.steps.rejected,
        evaluations: sol.evals.function,
        end: sol.y.last().expect("a step")[..n].to_vec(),
    }
}

fn with_crate(p: &SegmentProblem, tight: bool) -> Outcome {
    match p.y0.len() {
        0..=16 => crate_solve::<16>(p, tight),
        17..=32 => crate_solve::<32>(p, tight),
        33..=64 => crate_solve::<64>(p, tight),
        n => panic!("{n} states: the comparison covers plants up to 64"),
    }
}

/// The crate's DOPRI5 at the run's tolerances (a function of its own for instruction counts).
#[inline(never)]
fn crate_dopri5(p: &SegmentProblem) -> Outcome {
    with_crate(p, false)
}

/// The tight reference, DOP853 at rtol 1e-12, atol 1e-14.
#[inline(never)]
fn crate_dop853_reference(p: &SegmentProblem) -> Outcome {
    with_crate(p, true)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let plant = load_plant(&root.join("examples/biorefinery/plant.yaml"))?;
    let cases = load_cases(&root.join("examples/biorefinery/cases.yaml"), &plant)?;
    let scheme = load_scheme(&root.join("schemes/biorefinery.yaml"), &plant)?;
    let repeats: usize = match std::env::args().nth(1) {
        Some(s) => s.parse()?,
        None => 50,
    };
    let cfg = SimConfig::default();
    let mut problems: Vec<SegmentProblem> = Vec::new();
    let mut runs = 0usize;
    for (c, case) in cases.cases.iter().enumerate() {
        for &op in &case.applies_to {
            let (_, segs) = segments_of(|| simulate(&plant, &cases.cases[c], op, &scheme, &cfg));
            problems.extend(segs);
            runs += 1;
        }
    }
    let n_sections = plant.sections.len();
    let f0 = plant.nominal_hz;
    println!(
        "demo: {runs} runs, {} segments, {} states; each integrator replays them {repeats}×",
        problems.len(),
        problems.first().map_or(0, |p| p.y0.len())
    );
    let reference: Vec<Outcome> = problems.iter().map(crate_dop853_reference).collect();
    let kinds: [(&str, fn(&SegmentProblem) -> Outcome); 3] = [
        ("own Dormand–Prince 5(4)", own),
        ("ode_solvers 0.6 Dopri5", ode_solvers),
        ("differential-equations DOPRI5", crate_dopri5),
    ];
    println!(
        "{:<31} {:>10} {:>9} {:>9} {:>11} {:>12} {:>11}",
        "integrator", "µs/run", "×own", "accepted", "rejected", "evaluations", "|Δf| Hz"
    );
    let mut own_us = 0.0;
    let mut own_ends: Vec<Vec<f64>> = Vec::new();
    for (k, (name, solve)) in kinds.iter().enumerate() {
        // One warm-up pass, then the timed repeats.
        let outcomes: Vec<Outcome> = problems.iter().map(solve).collect();
        let t = Instant::now();
        for _ in 0..repeats {
            for p in &problems {
                black_box(solve(black_box(p)));
            }
        }
        let us = 1e6 * t.elapsed().as_secs_f64() / (repeats * runs) as f64;
        if k == 0 {
            own_us = us;
            own_ends = outcomes.iter().map(|o| o.end.clone()).collect();
        }
        let sum = |f: fn(&Outcome) -> usize| outcomes.iter().map(f).sum::<usize>();
        let mut worst = 0.0_f64;
        for (o, r) in outcomes.iter().zip(&reference) {
            for s in 0..n_sections {
                let i = speed_index(s);
                worst = worst.max(f0 * (o.end[i] - r.end[i]).abs());
            }
        }
        println!(
            "{name:<31} {us:>10.1} {:>9.2} {:>9} {:>11} {:>12} {:>11.2e}",
            us / own_us,
            sum(|o| o.accepted),
            sum(|o| o.rejected),
            sum(|o| o.evaluations),
            worst
        );
        if k == 1 {
            let same = outcomes.iter().zip(&own_ends).all(|(o, e)| o.end == *e);
            println!("  ode_solvers' end states bit-identical to the own stepper's: {same}");
        }
    }
    let taken: usize = problems.iter().map(|p| p.accepted).sum();
    let evals: usize = problems.iter().map(|p| p.evaluations).sum();
    println!(
        "the runs themselves (guards, measurement and storage included): {taken} accepted steps, \
         {evals} derivative evaluations"
    );
    Ok(())
}
