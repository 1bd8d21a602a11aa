//! The audit of a shedding table against the plant's own rules, without any simulation: the
//! shedding order, every violation of rank order (judged per event and per island, [`rank`]),
//! never-shed loads, coordination spacing and the normal operating band, and notes that are not
//! violations (a stage whose loads are all switched off at an operating point, a load listed in
//! several stages).
//!
//! One function computes the findings, [`audit_cases`]; `nadir audit`, the report and `nadir
//! design` all call it, so they agree on every plant.

mod events;
pub mod rank;
pub mod timing;

use crate::model::{
    Allowance, BreakerRef, CaseSet, FrequencyTrip, OverAction, Plant, Scheme, Sizing, Stage,
    StageTrigger,
};
use serde::Serialize;

/// The rules a table is held to. Defaults are common practice, no source; the plant sets its own.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AuditRules {
    /// Two frequency stages closer than this in pickup...
    pub min_spacing_hz: f64,
    /// ...and closer than this in delay are not coordinated.
    pub min_spacing_s: f64,
    /// No stage may pick up above this: the lower edge of the plant's normal operating band.
    pub normal_low_hz: f64,
}

impl AuditRules {
    /// The rules the plant file sets in `criteria.coordination` (or their defaults).
    pub fn for_plant(plant: &Plant) -> AuditRules {
        let c = &plant.criteria;
        AuditRules {
            min_spacing_hz: c.min_spacing_hz,
            min_spacing_s: c.min_spacing_s,
            normal_low_hz: c.normal_low_hz,
        }
    }

    /// Defaults: 0.1 Hz and 0.1 s spacing (relay accuracy plus margin; common practice, no source)
    /// and the normal band's lower edge at 0.99·f0 (the default settling band of docs/files.md).
    pub fn defaults(nominal_hz: f64) -> AuditRules {
        AuditRules {
            min_spacing_hz: 0.1,
            min_spacing_s: 0.1,
            normal_low_hz: 0.99 * nominal_hz,
        }
    }

    /// The rules in one sentence, as `nadir audit` and the report state them.
    pub fn statement(&self) -> String {
        format!(
            "rank order in every event and island (no lower-ranked load of the same island left \
connected while a stage opens a higher-ranked one); no never-shed load in a stage; frequency stages \
at least {:.2} Hz or {:.2} s apart; no pickup above {:.2} Hz",
            self.min_spacing_hz, self.min_spacing_s, self.normal_low_hz
        )
    }
}

/// A stage in operating order with its loads and megawatts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OrderedStage {
    /// Index into the scheme's stages.
    pub stage: usize,
    pub id: String,
    /// "49.00 Hz", "49.20 Hz, df/dt ≥ 0.50 Hz/s" or "utility opens".
    pub trigger: String,
    pub delay_s: f64,
    pub breaker_s: f64,
    /// (load id, rank) in the order the scheme lists them.
    pub loads: Vec<(String, u32)>,
    /// MW this stage opens at each operating point (by index) when it operates first: every
    /// load it lists.
    pub mw: Vec<f64>,
    /// Cumulative MW up to and including this stage at each operating point, each load counted
    /// once however many stages list it.
    pub cumulative_mw: Vec<f64>,
}

/// One finding: a broken rule (a violation) or a note.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// A short stable name. Violations: `rank-order`, `unassigned-lower-rank`, `never-shed`,
    /// `spacing`, `above-normal-band`, `over-frequency-above-max`, `over-frequency-after-protection`.
    /// Notes: `empty-at-point`, `several-stages`, `measured-elsewhere`, `df/dt-supervised`,
    /// `flow-sized` (what a stage sized from the pre-event flow opens), `never-armed` (an armed
    /// stage no case exercises), `over-frequency` (what an over-frequency stage does).
    pub rule: &'static str,
    /// The finding in words, naming stages, loads, events and values.
    pub message: String,
}

/// A broken rule.
pub type Violation = Finding;

/// The audit result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Audit {
    pub operating_points: Vec<String>,
    pub order: Vec<OrderedStage>,
    /// Which events rank order was judged in, in words.
    pub rank_order_judged_in: String,
    /// Broken rules: any one makes the audit fail (exit 1).
    pub violations: Vec<Finding>,
    /// Worth a reviewer's eye, but not a broken rule.
    pub notes: Vec<Finding>,
}

/// Audit a scheme against the plant's rules, each breaker taken as opening alone (no cases).
pub fn audit(plant: &Plant, scheme: &Scheme, rules: &AuditRules) -> Audit {
    audit_cases(plant, scheme, None, rules)
}

/// Audit a scheme against the plant's rules, judging rank order in each event of the cases (or,
/// without cases, each breaker opening alone). The one function that computes findings.
pub fn audit_cases(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
    rules: &AuditRules,
) -> Audit {
    let order_idx = scheme.operating_order();
    let n_ops = plant.operating_points.len();
    let mut cumulative = vec![0.0; n_ops];
    // Whether each load (by point) is counted already.
    let mut counted = vec![vec![false; plant.loads.len()]; n_ops];
    let mut order = Vec::new();
    for &si in &order_idx {
        let stage = &scheme.stages[si];
        let serves: Vec<bool> = (0..n_ops)
            .map(|op| stage.in_group(scheme.group_at(op)).is_some())
            .collect();
        let mw: Vec<f64> = (0..n_ops)
            .map(|op| {
                if !serves[op] {
                    return 0.0;
                }
                stage
                    .sheds
                    .iter()
                    .map(|&l| plant.operating_points[op].load_mw[l])
                    .sum()
            })
            .collect();
        for &l in &stage.sheds {
            for (op, c) in cumulative.iter_mut().enumerate() {
                if serves[op] && !counted[op][l] {
                    counted[op][l] = true;
                    *c += plant.operating_points[op].load_mw[l];
                }
            }
        }
        order.push(OrderedStage {
            stage: si,
            id: stage.id.clone(),
            trigger: describe_stage(plant, scheme, stage),
            delay_s: stage.delay_s,
            breaker_s: stage.breaker_s,
            loads: stage
                .sheds
                .iter()
                .map(|&l| (plant.loads[l].id.clone(), plant.loads[l].rank))
                .collect(),
            mw,
            cumulative_mw: cumulative.clone(),
        });
    }
    let mut violations = Vec::new();
    let mut notes = Vec::new();
    let mut judged_in = String::new();
    // Each setting group judged with its own settings at its own points; without groups, the
    // one table at every point.
    for (group, points) in scheme.points_by_group(n_ops) {
        if points.is_empty() {
            continue;
        }
        let held = scheme.at_point(points[0]);
        let (mut found, mut noted, basis) = rank::rank_order(plant, &held, cases, &points);
        let mut own = Vec::new();
        spacing(&held, &held.operating_order(), rules, &mut own);
        normal_band(&held, rules, &mut own);
        found.extend(own);
        if !scheme.groups.is_empty() {
            let names: Vec<&str> = points
                .iter()
                .map(|&op| plant.operating_points[op].id.as_str())
                .collect();
            let label = match group {
                Some(g) => format!(
                    "setting group {} ({})",
                    scheme.groups[g].id,
                    names.join(", ")
                ),
                None => format!("the stages' own settings ({})", names.join(", ")),
            };
            for f in found.iter_mut().chain(noted.iter_mut()) {
                f.message = format!("in {label}: {}", f.message);
            }
        }
        violations.extend(found);
        notes.extend(noted);
        judged_in = basis;
    }
    never_shed(plant, scheme, &mut violations);
    several_stages(plant, scheme, &order_idx, &mut notes);
    empty_at_points(plant, scheme, &order_idx, &mut notes);
    unarmed(plant, scheme, cases, &order_idx, &mut notes);
    over_frequency(plant, scheme, &mut violations, &mut notes);
    Audit {
        operating_points: plant
            .operating_points
            .iter()
            .map(|o| o.id.clone())
            .collect(),
        order,
        rank_order_judged_in: judged_in,
        violations,
        notes,
    }
}

/// Stage indices in the order they would operate on a falling frequency (the scheme's own
/// [`Scheme::operating_order`]).
pub fn operating_order(scheme: &Scheme) -> Vec<usize> {
    scheme.operating_order()
}

/// A stage's trigger in words: "49.00 Hz", "49.20 Hz, df/dt ≤ −1.00 Hz/s", "utility opens".
pub fn describe_trigger(plant: &Plant, trigger: &StageTrigger) -> String {
    match *trigger {
        StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s: None,
        } => format!("{pickup_hz:.2} Hz"),
        StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s: Some(r),
        } => {
            format!("{pickup_hz:.2} Hz, df/dt ≤ −{r:.2} Hz/s")
        }
        StageTrigger::Breaker(b) => format!("{} opens", breaker_name(plant, b)),
    }
}

/// A stage's trigger, sizing and setting groups in words: "49.00 Hz", "utility opens, sized to
/// the import less 2.00 MW", "49.00 Hz; in group island (island-a): 49.20 Hz, 0.10 s; in group
/// tied (normal): out of service".
pub fn describe_stage(plant: &Plant, scheme: &Scheme, stage: &Stage) -> String {
    let mut out = describe_trigger(plant, &stage.trigger) + &describe_sizing(stage.sizing);
    if !stage.in_service {
        out.push_str(", out of service");
    }
    for g in &stage.groups {
        let Some(group) = scheme.groups.get(g.group) else {
            continue;
        };
        let points: Vec<&str> = group
            .operating_points
            .iter()
            .filter_map(|&op| plant.operating_points.get(op).map(|o| o.id.as_str()))
            .collect();
        let settings = if g.in_service {
            format!(
                "{}{}, {:.2} s",
                describe_trigger(plant, &g.trigger),
                describe_sizing(g.sizing),
                g.delay_s
            )
        } else {
            "out of service".to_string()
        };
        out.push_str(&format!(
            "; in group {} ({}): {settings}",
            group.id,
            points.join(", ")
        ));
    }
    out
}

/// ", sized to the flow less 2.00 MW" for a flow-sized stage, nothing otherwise.
fn describe_sizing(sizing: Sizing) -> String {
    match sizing {
        Sizing::All => String::new(),
        Sizing::Flow(Allowance::Mw(mw)) => format!(", sized to the flow less {mw:.2} MW"),
        Sizing::Flow(Allowance::ReservePct(pct)) => {
            format!(", sized to the flow less {pct:.1} % of spinning reserve")
        }
    }
}

/// The id of a breaker as the files name it.
pub fn breaker_name(plant: &Plant, breaker: BreakerRef) -> String {
    match breaker {
        BreakerRef::Utility => plant
            .utility
            .as_ref()
            .map(|u| u.breaker_id.clone())
            .unwrap_or_else(|| "utility".into()),
        BreakerRef::Tie(t) => plant.ties[t].id.clone(),
        BreakerRef::Generator(g) => plant.generators[g].id.clone(),
    }
}

/// A breaker-armed stage whose breaker no case opens is never exercised by `nadir verify`.
fn unarmed(
    plant: &Plant,
    scheme: &Scheme,
    cases: Option<&CaseSet>,
    order: &[usize],
    out: &mut Vec<Finding>,
) {
    let Some(set) = cases else {
        return;
    };
    for &i in order {
        let StageTrigger::Breaker(b) = scheme.stages[i].trigger else {
            continue;
        };
        let opened = set.cases.iter().any(|c| {
            c.events
                .iter()
                .any(|e| e.action == crate::model::Action::Open(b))
        });
        if !opened {
            out.push(Finding {
                rule: "never-armed",
                message: format!(
                    "stage {} is armed by {}, which no case opens: no run exercises it; add a case that opens {}",
                    scheme.stages[i].id,
                    breaker_name(plant, b),
                    breaker_name(plant, b)
                ),
            });
        }
    }
}

fn never_shed(plant: &Plant, scheme: &Scheme, out: &mut Vec<Finding>) {
    for stage in &scheme.stages {
        for &l in &stage.sheds {
            if plant.loads[l].never_shed {
                out.push(Finding {
                    rule: "never-shed",
                    message: format!(
                        "{} is marked never_shed but stage {} sheds it",
                        plant.loads[l].id, stage.id
                    ),
                });
            }
        }
    }
}

fn several_stages(plant: &Plant, scheme: &Scheme, order: &[usize], out: &mut Vec<Finding>) {
    for (l, load) in plant.loads.iter().enumerate() {
        let stages: Vec<&str> = order
            .iter()
            .filter(|&&i| scheme.stages[i].sheds.contains(&l))
            .map(|&i| scheme.stages[i].id.as_str())
            .collect();
        if stages.len() > 1 {
            out.push(Finding {
                rule: "several-stages",
                message: format!(
                    "{} is in stages {}: whichever operates first opens it; it is shed and counted once",
                    load.id,
                    stages.join(", ")
                ),
            });
        }
    }
}

fn empty_at_points(plant: &Plant, scheme: &Scheme, order: &[usize], out: &mut Vec<Finding>) {
    for &i in order {
        let stage = &scheme.stages[i];
        let off: Vec<&str> = plant
            .operating_points
            .iter()
            .filter(|op| stage.sheds.iter().all(|&l| op.load_mw[l] <= 0.0))
            .map(|op| op.id.as_str())
            .collect();
        if !off.is_empty() {
            out.push(Finding {
                rule: "empty-at-point",
                message: format!(
                    "stage {} opens nothing at {}: all its loads are switched off there",
                    stage.id,
                    off.join(", ")
                ),
            });
        }
    }
}

fn spacing(scheme: &Scheme, order: &[usize], rules: &AuditRules, out: &mut Vec<Finding>) {
    let mut freq: Vec<(usize, f64, f64)> = order
        .iter()
        .filter_map(|&i| match scheme.stages[i].trigger {
            StageTrigger::Frequency { pickup_hz, .. } => {
                Some((i, pickup_hz, scheme.stages[i].delay_s))
            }
            StageTrigger::Breaker(_) => None,
        })
        .collect();
    // Stages with identical settings (one per bus section, say) act together as one step: there
    // is nothing to coordinate between them.
    freq.dedup_by(|b, a| scheme.stages[a.0].trigger == scheme.stages[b.0].trigger && a.2 == b.2);
    for pair in freq.windows(2) {
        let (a, fa, da) = pair[0];
        let (b, fb, db) = pair[1];
        let df = (fa - fb).abs();
        let dt = (da - db).abs();
        // Either separation coordinates the pair: apart in frequency, or apart in time.
        if df + 1e-9 < rules.min_spacing_hz && dt + 1e-9 < rules.min_spacing_s {
            out.push(Finding {
                rule: "spacing",
                message: format!(
                    "stages {} and {} are {:.2} Hz and {:.2} s apart; they need at least {:.2} Hz or {:.2} s",
                    scheme.stages[a].id, scheme.stages[b].id, df, dt, rules.min_spacing_hz, rules.min_spacing_s
                ),
            });
        }
    }
}

/// Over-frequency stages: each is stated as a note (it sheds no load, so rank order does not
/// concern it); one that picks up at or above the maximum-frequency criterion cannot keep
/// frequency within it, and one with a generator's own over-frequency protection set at or below
/// its pickup leaves that protection to act first (common practice, no source: protection
/// coordination puts the scheme's action before the machines' own trips).
fn over_frequency(
    plant: &Plant,
    scheme: &Scheme,
    violations: &mut Vec<Finding>,
    notes: &mut Vec<Finding>,
) {
    let max_hz = plant.criteria.max_hz;
    for o in &scheme.over_frequency {
        let target = &plant.generators[o.action.generator()].id;
        let what = match o.action {
            OverAction::Trip { .. } => format!("trips generator {target}"),
            OverAction::RunBack { mw, .. } => format!("runs generator {target} back by {mw:.2} MW"),
        };
        notes.push(Finding {
            rule: "over-frequency",
            message: format!(
                "stage {} {what} when above {:.2} Hz for {:.2} s (breaker {:.2} s); it sheds no load and is not part of the rank order",
                o.id, o.pickup_hz, o.delay_s, o.breaker_s
            ),
        });
        if o.pickup_hz >= max_hz - 1e-9 {
            violations.push(Finding {
                rule: "over-frequency-above-max",
                message: format!(
                    "stage {} picks up at {:.2} Hz, at or above the {:.2} Hz maximum-frequency criterion it should keep frequency below",
                    o.id, o.pickup_hz, max_hz
                ),
            });
        }
        for gen in &plant.generators {
            for trip in &gen.trips {
                if let FrequencyTrip::Over { hz, after_s } = *trip {
                    if hz <= o.pickup_hz + 1e-9 {
                        violations.push(Finding {
                            rule: "over-frequency-after-protection",
                            message: format!(
                                "generator {}'s own over-frequency trip (above {:.2} Hz after {:.2} s) picks up at or below stage {}'s {:.2} Hz; the machine's protection, not the stage, would act first",
                                gen.id, hz, after_s, o.id, o.pickup_hz
                            ),
                        });
                    }
                }
            }
        }
    }
}

fn normal_band(scheme: &Scheme, rules: &AuditRules, out: &mut Vec<Finding>) {
    for stage in &scheme.stages {
        if let StageTrigger::Frequency { pickup_hz, .. } = stage.trigger {
            if pickup_hz > rules.normal_low_hz + 1e-9 {
                out.push(Finding {
                    rule: "above-normal-band",
                    message: format!(
                        "stage {} picks up at {:.2} Hz, inside the normal operating band (above {:.2} Hz)",
                        stage.id, pickup_hz, rules.normal_low_hz
                    ),
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Criteria, Load, Measurement, OperatingPoint, Section, Stage};

    fn load(id: &str, rank: u32, mw: f64) -> Load {
        Load {
            id: id.into(),
            description: String::new(),
            section: 0,
            p_mw: mw,
            rank,
            never_shed: false,
            freq_exp: 1.0,
            inertia_s: 0.0,
            undervoltage: None,
        }
    }

    fn plant(loads: Vec<Load>, off_in_second_point: &[usize]) -> Plant {
        let full: Vec<f64> = loads.iter().map(|l| l.p_mw).collect();
        let mut reduced = full.clone();
        for &i in off_in_second_point {
            reduced[i] = 0.0;
        }
        let point = |id: &str, load_mw: Vec<f64>| OperatingPoint {
            id: id.into(),
            description: String::new(),
            load_mw,
            online: vec![],
            output_mw: vec![],
            import_mw: 0.0,
            ties_open: vec![],
        };
        Plant {
            name: "audit test".into(),
            nominal_hz: 50.0,
            sections: vec![Section { id: "main".into() }],
            ties: vec![],
            utility: None,
            generators: vec![],
            loads,
            operating_points: vec![point("full", full), point("reduced", reduced)],
            criteria: Criteria::defaults(50.0),
            design: crate::model::DesignLimits::defaults(50.0, false),
        }
    }

    fn stage(id: &str, pickup_hz: f64, delay_s: f64, sheds: Vec<usize>) -> Stage {
        Stage {
            sizing: crate::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: id.into(),
            trigger: StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: None,
            },
            delay_s,
            breaker_s: 0.08,
            sheds,
        }
    }

    fn scheme(stages: Vec<Stage>) -> Scheme {
        Scheme {
            groups: Vec::new(),
            name: "t".into(),
            measurement: Measurement::default(),
            stages,
            over_frequency: Vec::new(),
        }
    }

    fn rules_hit(a: &Audit) -> Vec<&'static str> {
        a.violations.iter().map(|v| v.rule).collect()
    }

    #[test]
    fn a_clean_table_has_no_violation_and_cumulative_mw_adds_up() {
        let p = plant(
            vec![load("a", 1, 1.0), load("b", 2, 2.0), load("c", 3, 3.0)],
            &[],
        );
        let s = scheme(vec![
            stage("uf-2", 48.8, 0.2, vec![1, 2]),
            stage("uf-1", 49.0, 0.2, vec![0]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert!(a.violations.is_empty(), "{:?}", a.violations);
        assert_eq!(a.order[0].id, "uf-1", "higher pickup operates first");
        assert_eq!(a.order[1].cumulative_mw, vec![6.0, 6.0]);
    }

    #[test]
    fn a_higher_rank_shed_before_a_lower_rank_is_caught() {
        let p = plant(vec![load("a", 1, 1.0), load("b", 5, 2.0)], &[]);
        let s = scheme(vec![
            stage("uf-1", 49.0, 0.2, vec![1]),
            stage("uf-2", 48.8, 0.2, vec![0]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert_eq!(rules_hit(&a), vec!["rank-order"]);
        assert_eq!(
            a.violations[0].message,
            "stage uf-1 opens b (rank 5) while lower-ranked a (rank 1) of the same island is \
still connected (any disturbance, at full, reduced)"
        );
    }

    #[test]
    fn a_lower_rank_left_out_of_every_stage_is_caught() {
        let p = plant(vec![load("a", 1, 1.0), load("b", 2, 2.0)], &[]);
        let s = scheme(vec![stage("uf-1", 49.0, 0.2, vec![1])]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert_eq!(rules_hit(&a), vec!["unassigned-lower-rank"]);
        assert!(a.violations[0]
            .message
            .contains("a (rank 1) of the same island is connected and in no stage"));
    }

    #[test]
    fn a_stage_whose_loads_are_switched_off_at_a_point_is_a_note_not_a_violation() {
        let p = plant(vec![load("a", 1, 1.0), load("b", 2, 2.0)], &[0]);
        let s = scheme(vec![
            stage("uf-1", 49.0, 0.2, vec![0]),
            stage("uf-2", 48.8, 0.2, vec![1]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert!(a.violations.is_empty(), "{:?}", a.violations);
        assert_eq!(a.notes.len(), 1);
        assert_eq!(a.notes[0].rule, "empty-at-point");
        assert_eq!(
            a.notes[0].message,
            "stage uf-1 opens nothing at reduced: all its loads are switched off there"
        );
    }

    #[test]
    fn a_load_switched_off_at_a_point_is_not_counted_as_left_connected() {
        // At "reduced" the rank-1 load is off: uf-1 opening rank 5 there leaves nothing lower on,
        // so the rank-order finding names "full" only.
        let p = plant(vec![load("a", 1, 1.0), load("b", 5, 2.0)], &[0]);
        let s = scheme(vec![
            stage("uf-1", 49.0, 0.2, vec![1]),
            stage("uf-2", 48.8, 0.2, vec![0]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert_eq!(rules_hit(&a), vec!["rank-order"]);
        assert!(a.violations[0]
            .message
            .ends_with("(any disturbance, at full)"));
    }

    #[test]
    fn a_load_in_two_stages_is_counted_once_and_noted() {
        let p = plant(vec![load("a", 1, 1.0), load("b", 2, 2.0)], &[]);
        let s = scheme(vec![
            stage("uf-1", 49.0, 0.2, vec![0]),
            stage("uf-2", 48.8, 0.2, vec![0, 1]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert!(a.violations.is_empty(), "{:?}", a.violations);
        assert_eq!(a.order[1].mw, vec![3.0, 3.0], "the stage lists both loads");
        assert_eq!(a.order[1].cumulative_mw, vec![3.0, 3.0], "a counted once");
        assert_eq!(a.notes.len(), 1);
        assert_eq!(a.notes[0].rule, "several-stages");
        assert!(a.notes[0].message.starts_with("a is in stages uf-1, uf-2"));
    }

    #[test]
    fn stages_with_identical_settings_act_together_and_need_no_spacing() {
        let p = plant(vec![load("a", 1, 1.0), load("b", 1, 2.0)], &[]);
        let s = scheme(vec![
            stage("uf-1-a", 49.0, 0.2, vec![0]),
            stage("uf-1-b", 49.0, 0.2, vec![1]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert!(a.violations.is_empty(), "{:?}", a.violations);
    }

    #[test]
    fn stages_too_close_in_both_frequency_and_time_are_caught() {
        let p = plant(
            vec![load("a", 1, 1.0), load("b", 2, 2.0), load("c", 3, 1.0)],
            &[],
        );
        // uf-1/uf-2 are 0.05 Hz and 0 s apart: not coordinated. uf-2/uf-3 share a pickup but are
        // 0.3 s apart in delay: coordinated in time.
        let s = scheme(vec![
            stage("uf-1", 49.0, 0.2, vec![0]),
            stage("uf-2", 48.95, 0.2, vec![1]),
            stage("uf-3", 48.95, 0.5, vec![2]),
        ]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert_eq!(rules_hit(&a), vec!["spacing"]);
        assert!(a.violations[0].message.contains("uf-1 and uf-2"));
    }

    #[test]
    fn a_stage_inside_the_normal_band_is_caught() {
        let p = plant(vec![load("a", 1, 1.0)], &[]);
        let s = scheme(vec![stage("uf-1", 49.7, 0.2, vec![0])]);
        let a = audit(&p, &s, &AuditRules::defaults(50.0));
        assert_eq!(rules_hit(&a), vec!["above-normal-band"]);
    }

    #[test]
    fn a_never_shed_load_in_a_stage_is_caught() {
        let mut loads = vec![load("ups", 9, 0.5)];
        loads[0].never_shed = true;
        let p = plant(loads, &[]);
        let s = scheme(vec![stage("uf-1", 49.0, 0.2, vec![0])]);
        assert_eq!(
            rules_hit(&audit(&p, &s, &AuditRules::defaults(50.0))),
            vec!["never-shed"]
        );
    }
}
