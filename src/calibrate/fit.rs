//! The bounded nonlinear least-squares fit: the parameters that bring the model's frequency
//! closest to the record, every evaluation a replay of the case; then each value's confidence
//! interval and the correlation between the estimates.
//!
//! Owns the one use of the `levenberg-marquardt` crate (MINPACK's Levenberg–Marquardt:
//! J. J. Moré, "The Levenberg–Marquardt algorithm: implementation and theory", in Numerical Analysis,
//! Springer LNM 630, 1978). Bounds by the sine transform p = lo + (hi − lo)(1 + sin u)/2 of
//! F. James, MINUIT Reference Manual (CERN Program Library D506), "parameter limits": the
//! optimiser works on an unbounded u, and every p it tries lies within the bounds.
//! Confidence from the Jacobian at the solution, in the parameters' own units:
//! cov = s²(JᵀJ)⁻¹, s² = SSR/(n − p) (Seber & Wild, Nonlinear Regression, Wiley 1989, §2.1;
//! NIST/SEMATECH e-Handbook of Statistical Methods §4.1.4.2), interval = value ± t(0.975, n − p)·se.

use super::params::{self, Parameter};
use super::{replay_at, Recorded, Setup};
use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, Owned};
use rayon::prelude::*;
use std::cell::RefCell;

/// |correlation| above which two estimates are reported as not separable by the record. Common
/// practice, no source: at 0.95 the joint confidence region is a thin ellipse and a change in one
/// parameter is almost undone by the other.
pub const STRONG_CORRELATION: f64 = 0.95;
/// Finite-difference step for the Jacobian, as a fraction of each parameter's bound width: well
/// above the simulator's own tolerance (rtol 1e-6), so that the difference is signal, not
/// integration noise.
pub const FD_STEP: f64 = 1e-3;
/// The optimiser stops after this many evaluations per parameter (plus one): MINPACK's default
/// patience (`maxfev = 100·(n + 1)` in lmder), which bounds the fit's time.
pub const PATIENCE: usize = 100;

/// One fitted value.
#[derive(Debug, Clone, PartialEq)]
pub struct Fitted {
    pub name: String,
    pub unit: &'static str,
    pub initial: f64,
    pub value: f64,
    /// Standard error; `None` when the record cannot tell this parameter at all (JᵀJ singular).
    pub std_error: Option<f64>,
    /// 95 % confidence interval.
    pub low: Option<f64>,
    pub high: Option<f64>,
    /// The value sits within 0.1 % of the bound width from a bound: the record asks for a value
    /// beyond it, and the interval does not describe that.
    pub at_bound: bool,
}

/// The fit's result.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    pub fitted: Vec<Fitted>,
    /// Correlation matrix of the estimates (empty when JᵀJ is singular).
    pub correlation: Vec<Vec<f64>>,
    /// Pairs (i, j, corr) with |corr| > [`STRONG_CORRELATION`].
    pub strongly_correlated: Vec<(usize, usize, f64)>,
    pub rms_before_hz: f64,
    pub rms_after_hz: f64,
    /// Residual samples and degrees of freedom (samples − parameters).
    pub samples: usize,
    pub dof: usize,
    /// Replays the fit used (optimiser, Jacobians and the intervals).
    pub replays: usize,
    /// Why the optimiser stopped, in words.
    pub stop: String,
    pub converged: bool,
}

/// The fit problem as the optimiser sees it.
struct Problem<'a> {
    setup: &'a Setup<'a>,
    record: &'a Recorded,
    params: &'a [Parameter],
    u: DVector<f64>,
    /// Residuals at the last parameters asked for, kept for the Jacobian.
    cache: RefCell<Option<(Vec<f64>, Vec<f64>)>>,
    replays: RefCell<usize>,
}

impl Problem<'_> {
    fn external(&self, u: &DVector<f64>) -> Vec<f64> {
        self.params
            .iter()
            .zip(u.iter())
            .map(|(p, &u)| to_external(p, u))
            .collect()
    }

    /// Residuals (model − record, Hz) at external values `x`.
    fn residuals_at(&self, x: &[f64]) -> Option<Vec<f64>> {
        if let Some((cx, r)) = self.cache.borrow().as_ref() {
            if cx == x {
                return Some(r.clone());
            }
        }
        *self.replays.borrow_mut() += 1;
        let r = residuals(self.setup, self.record, self.params, x)?;
        *self.cache.borrow_mut() = Some((x.to_vec(), r.clone()));
        Some(r)
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, u: &DVector<f64>) {
        self.u.copy_from(u);
    }

    fn params(&self) -> DVector<f64> {
        self.u.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        let r = self.residuals_at(&self.external(&self.u))?;
        Some(DVector::from_vec(r))
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        let x = self.external(&self.u);
        let base = self.residuals_at(&x)?;
        let (jx, n) = jacobian_external(self.setup, self.record, self.params, &x, &base)?;
        *self.replays.borrow_mut() += n;
        // Chain rule through the transform: dr/du = dr/dx · dx/du.
        let mut j = jx;
        for (c, p) in self.params.iter().enumerate() {
            let d = (p.upper - p.lower) / 2.0 * self.u[c].cos();
            j.column_mut(c).scale_mut(d);
        }
        Some(j)
    }
}

/// Fits `params` (each starting from its value in the setup's plant, clamped into its bounds).
pub fn fit(setup: &Setup, record: &Recorded, params: &[Parameter]) -> Option<FitResult> {
    let start: Vec<f64> = params
        .iter()
        .map(|p| p.initial.clamp(p.lower, p.upper))
        .collect();
    let before = residuals(setup, record, params, &start)?;
    let u0 = DVector::from_iterator(
        params.len(),
        params.iter().zip(&start).map(|(p, &x)| to_internal(p, x)),
    );
    let problem = Problem {
        setup,
        record,
        params,
        u: u0,
        cache: RefCell::new(Some((start.clone(), before.clone()))),
        replays: RefCell::new(1),
    };
    let (problem, report) = LevenbergMarquardt::new()
        .with_patience(PATIENCE)
        .minimize(problem);
    let x = problem.external(&problem.u);
    let after = problem.residuals_at(&x)?;
    let mut replays = *problem.replays.borrow();
    let (j, n) = jacobian_external(setup, record, params, &x, &after)?;
    replays += n;
    let samples = after.len();
    let dof = samples.saturating_sub(params.len());
    let ssr: f64 = after.iter().map(|r| r * r).sum();
    let s2 = if dof > 0 { ssr / dof as f64 } else { f64::NAN };
    let jtj = j.transpose() * &j;
    let cov = jtj.clone().try_inverse().filter(|_| {
        // Numerically singular: the record cannot tell some combination of the parameters.
        let eig = jtj.clone().symmetric_eigen().eigenvalues;
        let max = eig.iter().cloned().fold(0.0, f64::max);
        let min = eig.iter().cloned().fold(f64::INFINITY, f64::min);
        max > 0.0 && min > max * 1e-12
    });
    let t = t_quantile_975(dof.max(1) as f64);
    let mut fitted = Vec::new();
    for (i, p) in params.iter().enumerate() {
        let se = cov.as_ref().map(|c| (s2 * c[(i, i)]).max(0.0).sqrt());
        let width = p.upper - p.lower;
        fitted.push(Fitted {
            name: p.name.clone(),
            unit: p.kind.unit(),
            initial: p.initial,
            value: x[i],
            std_error: se,
            low: se.map(|s| x[i] - t * s),
            high: se.map(|s| x[i] + t * s),
            at_bound: (x[i] - p.lower).abs() <= 1e-3 * width
                || (p.upper - x[i]).abs() <= 1e-3 * width,
        });
    }
    let mut correlation = Vec::new();
    let mut strongly = Vec::new();
    if let Some(c) = &cov {
        for i in 0..params.len() {
            let mut row = Vec::new();
            for k in 0..params.len() {
                let d = (c[(i, i)] * c[(k, k)]).sqrt();
                row.push(if d > 0.0 { c[(i, k)] / d } else { 0.0 });
            }
            correlation.push(row);
        }
        for i in 0..params.len() {
            for k in 0..i {
                if correlation[i][k].abs() > STRONG_CORRELATION {
                    strongly.push((k, i, correlation[i][k]));
                }
            }
        }
    }
    let converged = report.termination.was_successful();
    Some(FitResult {
        fitted,
        correlation,
        strongly_correlated: strongly,
        rms_before_hz: rms(&before),
        rms_after_hz: rms(&after),
        samples,
        dof,
        replays,
        stop: stop_words(&report.termination),
        converged,
    })
}

/// Residuals model − record (Hz) at the record's samples, with the parameters at `x`.
pub fn residuals(
    setup: &Setup,
    record: &Recorded,
    params: &[Parameter],
    x: &[f64],
) -> Option<Vec<f64>> {
    let mut plant = setup.plant.clone();
    for (p, &v) in params.iter().zip(x) {
        params::apply(&mut plant, p, v);
    }
    let model = replay_at(setup, &plant, &record.t_s).ok()?;
    Some(model.iter().zip(&record.hz).map(|(m, r)| m - r).collect())
}

/// Forward-difference Jacobian in the parameters' own units (columns in parallel, each its own
/// replay, collected in order); a step goes towards the inside of the bounds. Returns the matrix
/// and the replays it took.
fn jacobian_external(
    setup: &Setup,
    record: &Recorded,
    params: &[Parameter],
    x: &[f64],
    base: &[f64],
) -> Option<(DMatrix<f64>, usize)> {
    let columns: Vec<Option<Vec<f64>>> = (0..params.len())
        .into_par_iter()
        .map(|c| {
            let p = &params[c];
            let mut h = FD_STEP * (p.upper - p.lower);
            if x[c] + h > p.upper {
                h = -h;
            }
            let mut xs = x.to_vec();
            xs[c] += h;
            let r = residuals(setup, record, params, &xs)?;
            Some(r.iter().zip(base).map(|(a, b)| (a - b) / h).collect())
        })
        .collect();
    let mut j = DMatrix::zeros(base.len(), params.len());
    for (c, col) in columns.into_iter().enumerate() {
        let col = col?;
        for (k, v) in col.into_iter().enumerate() {
            j[(k, c)] = v;
        }
    }
    Some((j, params.len()))
}

fn to_external(p: &Parameter, u: f64) -> f64 {
    (p.lower + (p.upper - p.lower) * (1.0 + u.sin()) / 2.0).clamp(p.lower, p.upper)
}

fn to_internal(p: &Parameter, x: f64) -> f64 {
    let s = (2.0 * (x - p.lower) / (p.upper - p.lower) - 1.0).clamp(-1.0, 1.0);
    // A start exactly on a bound has zero slope through the transform; start just inside.
    s.asin().clamp(-1.5, 1.5)
}

fn rms(r: &[f64]) -> f64 {
    if r.is_empty() {
        return 0.0;
    }
    (r.iter().map(|v| v * v).sum::<f64>() / r.len() as f64).sqrt()
}

fn stop_words(t: &levenberg_marquardt::TerminationReason) -> String {
    use levenberg_marquardt::TerminationReason as T;
    match t {
        T::Converged { .. } => "converged (the step and the residual stopped changing)".into(),
        T::Orthogonal => {
            "converged (the residual is orthogonal to every parameter's effect)".into()
        }
        T::ResidualsZero => "converged (zero residual)".into(),
        T::LostPatience => {
            format!("NOT converged: stopped after {PATIENCE} evaluations per parameter")
        }
        T::User(_) => "NOT converged: a replay did not run to its end".into(),
        T::Numerical(what) => format!("NOT converged: a non-finite {what}"),
        T::NoImprovementPossible(what) => {
            format!("stopped: no further improvement possible ({what})")
        }
        other => format!("NOT converged: {other:?}"),
    }
}

/// The 0.975 quantile of Student's t with `nu` degrees of freedom, by the Cornish–Fisher
/// expansion of Abramowitz & Stegun, Handbook of Mathematical Functions (1964), 26.7.5, about
/// the normal quantile 1.959964; within 1e-3 of the exact value for nu ≥ 5.
pub fn t_quantile_975(nu: f64) -> f64 {
    let x: f64 = 1.959_963_984_540_054;
    let g1 = (x.powi(3) + x) / 4.0;
    let g2 = (5.0 * x.powi(5) + 16.0 * x.powi(3) + 3.0 * x) / 96.0;
    let g3 = (3.0 * x.powi(7) + 19.0 * x.powi(5) + 17.0 * x.powi(3) - 15.0 * x) / 384.0;
    let g4 = (79.0 * x.powi(9) + 776.0 * x.powi(7) + 1482.0 * x.powi(5)
        - 1920.0 * x.powi(3)
        - 945.0 * x)
        / 92160.0;
    x + g1 / nu + g2 / nu.powi(2) + g3 / nu.powi(3) + g4 / nu.powi(4)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// t(0.975) from scipy.stats.t.ppf(0.975, nu) (values recalled from standard t tables,
    /// e.g. NIST/SEMATECH e-Handbook §1.3.6.7.2): nu 5 → 2.571, 10 → 2.228, 30 → 2.042,
    /// 100 → 1.984.
    #[test]
    fn t_quantiles_match_the_table() {
        for (nu, t) in [(5.0, 2.571), (10.0, 2.228), (30.0, 2.042), (100.0, 1.984)] {
            assert!(
                (t_quantile_975(nu) - t).abs() < 2e-3,
                "{nu}: {}",
                t_quantile_975(nu)
            );
        }
    }

    #[test]
    fn the_transform_keeps_values_inside_the_bounds_and_inverts() {
        let p = Parameter {
            name: "x".into(),
            kind: params::Kind::FreqExp,
            targets: vec![0],
            lower: 1.0,
            upper: 3.0,
            initial: 2.0,
        };
        for u in [-10.0, -1.0, 0.0, 0.7, 4.0, 100.0] {
            let x = to_external(&p, u);
            assert!((1.0..=3.0).contains(&x));
        }
        assert!((to_external(&p, to_internal(&p, 2.5)) - 2.5).abs() < 1e-12);
    }
}
