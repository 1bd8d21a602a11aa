//! Margins: how far a case is from failing. Two searches by bisection, each assuming that a
//! larger disturbance or a larger model error never helps (checked only at the points visited):
//!
//! * the **disturbance factor**: the lost import, lost generation or load step of the case grown
//!   by a factor k (1.0 … 2.0), modelled as an extra constant-power load step of (k − 1)·ΔP at the
//!   same instant and section;
//! * the **model error**: a uniform error, as a percentage, by which every inertia constant
//!   (machines and motor loads) and every load frequency exponent is lower than written.
//!
//! Voltage dips and bus-tie openings have no single ΔP; their disturbance margin is not applicable.
//!
//! The searches start from the row's own run. A probe stops as soon as it is certain to fail
//! whatever follows (a separated island below the minimum frequency, a recorded windowed ROCOF
//! above the limit, a section below the recovery level after the recovery deadline; see
//! `probe_config`), so a failing probe is not simulated to its end.

use super::matrix::passes;
use crate::model::{Action, BreakerRef, Case, CaseEvent, Criteria, Plant, Scheme};
use crate::sim::{self, FailLimits, Run, SimConfig};
use serde::Serialize;

/// Largest disturbance factor searched.
pub const MAX_DISTURBANCE_FACTOR: f64 = 2.0;
/// Largest model error searched, percent.
pub const MAX_MODEL_ERROR_PCT: f64 = 50.0;
const FACTOR_RESOLUTION: f64 = 0.01;
const ERROR_RESOLUTION_PCT: f64 = 1.0;

/// The outcome of one margin search.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub enum Margin {
    /// The case has nothing to scale.
    NotApplicable,
    /// The case fails as written.
    FailsAsIs,
    /// Still holds at the end of the searched range.
    AtLeast(f64),
    /// The largest value that still holds, within the search resolution.
    Found(f64),
}

impl Margin {
    /// The margin as a number for comparisons: the value found, the range end, or 0 when failing.
    pub fn value(&self) -> Option<f64> {
        match *self {
            Margin::NotApplicable => None,
            Margin::FailsAsIs => Some(0.0),
            Margin::AtLeast(v) | Margin::Found(v) => Some(v),
        }
    }
}

/// Both margins of a row.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Margins {
    /// Factor on the case's disturbance (1.0 = as written).
    pub disturbance_factor: Margin,
    /// Percent by which inertia and load damping may be lower than written.
    pub model_error_pct: Margin,
}

/// Search both margins of a case at an operating point.
pub fn search(
    plant: &Plant,
    case: &Case,
    op: usize,
    scheme: &Scheme,
    config: &SimConfig,
) -> Margins {
    let base = sim::simulate(plant, case, op, scheme, config);
    search_from(plant, case, op, scheme, config, &base)
}

/// [`search`] starting from the case's own run as written, `base`, simulated with the same
/// `config` (verify has it already, so the search does not run it again).
pub fn search_from(
    plant: &Plant,
    case: &Case,
    op: usize,
    scheme: &Scheme,
    config: &SimConfig,
    base: &Run,
) -> Margins {
    let holds_as_is = passes(plant, case, base);
    if !holds_as_is {
        let scalable = has_scalable_event(case);
        return Margins {
            disturbance_factor: if scalable {
                Margin::FailsAsIs
            } else {
                Margin::NotApplicable
            },
            model_error_pct: Margin::FailsAsIs,
        };
    }
    let disturbance_factor = if has_scalable_event(case) {
        bisect(1.0, MAX_DISTURBANCE_FACTOR, FACTOR_RESOLUTION, |k| {
            let grown = grow_disturbance(plant, case, op, k);
            let probe = probe_config(plant, &grown, config);
            passes(
                plant,
                &grown,
                &sim::simulate(plant, &grown, op, scheme, &probe),
            )
        })
    } else {
        Margin::NotApplicable
    };
    let model_error_pct = bisect(0.0, MAX_MODEL_ERROR_PCT, ERROR_RESOLUTION_PCT, |pct| {
        let weaker = weaken_model(plant, pct);
        let probe = probe_config(&weaker, case, config);
        passes(
            &weaker,
            case,
            &sim::simulate(&weaker, case, op, scheme, &probe),
        )
    });
    Margins {
        disturbance_factor,
        model_error_pct,
    }
}

/// The settings of a probe of `case` on `plant`, of which only pass or fail is asked: it stops as
/// soon as it is certain to fail whatever follows, i.e. when a separated island falls below the
/// minimum frequency ([`SimConfig::stop_below_hz`]), when a recorded grid point's windowed ROCOF
/// exceeds the limit, or when a section is below the recovery level after the recovery deadline
/// ([`SimConfig::stop_when_failing`]). Each of these makes [`passes`] false on the full run as
/// well, so a probe's verdict is the one the full run would get.
fn probe_config(plant: &Plant, case: &Case, config: &SimConfig) -> SimConfig {
    let c = &plant.criteria;
    let (_, last_event_s) = case.disturbance_span();
    SimConfig {
        stop_below_hz: Some(c.min_hz),
        stop_when_failing: Some(FailLimits {
            max_rocof_hz_per_s: c.max_rocof_hz_per_s,
            // The deadline `judge` holds the recovery to.
            recovered_by_s: last_event_s + c.recover_within_s,
        }),
        ..*config
    }
}

/// Failures for margins below the criteria's required values.
pub fn judge_required(m: &Margins, c: &Criteria) -> Vec<super::criteria::Failure> {
    let mut out = Vec::new();
    if let Some(v) = m.disturbance_factor.value() {
        if c.required_disturbance_factor > 1.0
            && v > 0.0
            && v + 1e-9 < c.required_disturbance_factor
        {
            out.push(super::criteria::Failure {
                criterion: "margin",
                message: format!(
                    "holds only up to {v:.2}× its disturbance; {:.2}× is required",
                    c.required_disturbance_factor
                ),
                excess: c.required_disturbance_factor - v,
            });
        }
    }
    if let Some(v) = m.model_error_pct.value() {
        if c.required_model_error_pct > 0.0 && v > 0.0 && v + 1e-9 < c.required_model_error_pct {
            out.push(super::criteria::Failure {
                criterion: "margin",
                message: format!(
                    "holds only with inertia and damping at most {v:.0} % low; {:.0} % is required",
                    c.required_model_error_pct
                ),
                excess: c.required_model_error_pct - v,
            });
        }
    }
    out
}

/// The case with its disturbance grown by `factor`.
pub fn grow_disturbance(plant: &Plant, case: &Case, op: usize, factor: f64) -> Case {
    let point = &plant.operating_points[op];
    let mut grown = case.clone();
    grown.events.clear();
    for event in &case.events {
        grown.events.push(event.clone());
        let extra = match event.action {
            Action::Open(BreakerRef::Utility) => {
                plant.utility.as_ref().map(|u| (u.section, point.import_mw))
            }
            Action::Open(BreakerRef::Generator(g)) => Some((
                plant.generators[g].section,
                if point.online[g] {
                    point.output_mw[g]
                } else {
                    0.0
                },
            )),
            Action::LoadStep { section, mw } => Some((section, mw)),
            Action::Open(BreakerRef::Tie(_)) | Action::VoltageDip { .. } => None,
        };
        if let Some((section, mw)) = extra {
            if mw != 0.0 {
                grown.events.push(CaseEvent {
                    at_s: event.at_s,
                    action: Action::LoadStep {
                        section,
                        mw: (factor - 1.0) * mw,
                    },
                });
            }
        }
    }
    grown
}

/// The plant with every inertia constant and load frequency exponent lowered by `pct` percent.
pub fn weaken_model(plant: &Plant, pct: f64) -> Plant {
    let keep = 1.0 - pct / 100.0;
    let mut p = plant.clone();
    for g in &mut p.generators {
        g.inertia_s *= keep;
    }
    for l in &mut p.loads {
        l.inertia_s *= keep;
        l.freq_exp *= keep;
    }
    p
}

pub fn has_scalable_event(case: &Case) -> bool {
    case.events.iter().any(|e| {
        matches!(
            e.action,
            Action::Open(BreakerRef::Utility | BreakerRef::Generator(_)) | Action::LoadStep { .. }
        )
    })
}

/// Largest x in [lo, hi] with `holds(x)`, given `holds(lo)`; resolution `step`.
fn bisect(lo: f64, hi: f64, step: f64, mut holds: impl FnMut(f64) -> bool) -> Margin {
    if holds(hi) {
        return Margin::AtLeast(hi);
    }
    let (mut good, mut bad) = (lo, hi);
    while bad - good > step {
        let mid = 0.5 * (good + bad);
        if holds(mid) {
            good = mid;
        } else {
            bad = mid;
        }
    }
    Margin::Found(good)
}

/// Whether the margin search of [`search`] would find at least `required` (between `lo` and
/// `hi`), walking the same bisection path but stopping as soon as the answer is known: a value
/// at or above `required` that holds, or one below it that fails. One run when the row holds at
/// the end of the range, a few only near the boundary; never a different answer.
fn meets(lo: f64, hi: f64, step: f64, required: f64, mut holds: impl FnMut(f64) -> bool) -> bool {
    if holds(hi) {
        return true;
    }
    let (mut good, mut bad) = (lo, hi);
    while bad - good > step {
        let mid = 0.5 * (good + bad);
        let ok = holds(mid);
        if ok && mid + 1e-9 >= required {
            return true;
        }
        if !ok && mid + 1e-9 < required {
            return false;
        }
        if ok {
            good = mid;
        } else {
            bad = mid;
        }
    }
    good + 1e-9 >= required
}

/// Whether the disturbance-factor search would find at least `required` (see [`meets`]).
pub fn meets_disturbance(required: f64, holds: impl FnMut(f64) -> bool) -> bool {
    meets(
        1.0,
        MAX_DISTURBANCE_FACTOR,
        FACTOR_RESOLUTION,
        required,
        holds,
    )
}

/// Whether the model-error search would find at least `required` % (see [`meets`]).
pub fn meets_model_error(required: f64, holds: impl FnMut(f64) -> bool) -> bool {
    meets(
        0.0,
        MAX_MODEL_ERROR_PCT,
        ERROR_RESOLUTION_PCT,
        required,
        holds,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_early_stopping_walk_agrees_with_the_search() {
        // Thresholds, monotone and not (a band that fails inside the range), against required
        // values: `meets` must answer what `bisect` finds, with fewer or as many calls.
        let shapes: Vec<Box<dyn Fn(f64) -> bool>> = vec![
            Box::new(|k| k <= 1.437),
            Box::new(|k| k <= 1.05),
            Box::new(|_| true),
            Box::new(|k| !(1.05..1.3).contains(&k)),
            Box::new(|k| !(1.4..1.6).contains(&k) && k < 1.9),
            Box::new(|k| k < 1.22 || (1.5..1.7).contains(&k)),
        ];
        for f in &shapes {
            for required in [1.05, 1.1, 1.2, 1.25, 1.5, 1.99] {
                let found = bisect(1.0, 2.0, 0.01, f).value().unwrap();
                let (mut walk, mut full) = (0, 0);
                let met = meets(1.0, 2.0, 0.01, required, |k| {
                    walk += 1;
                    f(k)
                });
                bisect(1.0, 2.0, 0.01, |k| {
                    full += 1;
                    f(k)
                });
                assert_eq!(
                    met,
                    found + 1e-9 >= required,
                    "required {required}, found {found}"
                );
                assert!(walk <= full);
            }
        }
    }

    #[test]
    fn bisection_finds_a_threshold_within_its_resolution() {
        let m = bisect(1.0, 2.0, 0.01, |k| k <= 1.437);
        let Margin::Found(v) = m else { panic!("{m:?}") };
        assert!(v <= 1.437 && 1.437 - v <= 0.01, "{v}");
        assert_eq!(bisect(1.0, 2.0, 0.01, |_| true), Margin::AtLeast(2.0));
    }
}
