//! The settings difference between two shedding tables for one plant: stages added and removed, and
//! for each stage kept (matched by id) its changed trigger, delay, breaker time, loads, and its
//! sizing, service and setting groups; and over-frequency stages added, removed or changed.

use crate::model::{OverAction, OverStage, Plant, Scheme, Stage, StageTrigger};
use serde::Serialize;

/// One line of the settings difference.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SettingChange {
    pub stage: String,
    /// `measurement`, `added`, `removed`, `trigger`, `delay_s`, `breaker_s`, `loads`,
    /// `sizing and groups`, `over-frequency`.
    pub what: &'static str,
    pub old: String,
    pub new: String,
}

/// Every change from `old` to `new`, stages in the new table's order, then removed stages.
pub fn diff(plant: &Plant, old: &Scheme, new: &Scheme) -> Vec<SettingChange> {
    let mut out = Vec::new();
    if old.measurement != new.measurement {
        let m = |s: &Scheme| {
            format!(
                "lag {:.3} s, df/dt window {:.3} s",
                s.measurement.frequency_lag_s, s.measurement.rocof_window_s
            )
        };
        out.push(SettingChange {
            stage: "(all)".into(),
            what: "measurement",
            old: m(old),
            new: m(new),
        });
    }
    for stage in &new.stages {
        match old.stages.iter().find(|s| s.id == stage.id) {
            None => out.push(SettingChange {
                stage: stage.id.clone(),
                what: "added",
                old: String::new(),
                new: summary(plant, stage),
            }),
            Some(before) => {
                compare_stage(plant, before, stage, &mut out);
                // Sizing, service and setting groups, in the words of the audit's table.
                let (o, n) = (
                    beyond_trigger(plant, old, before),
                    beyond_trigger(plant, new, stage),
                );
                if o != n {
                    out.push(SettingChange {
                        stage: stage.id.clone(),
                        what: "sizing and groups",
                        old: o,
                        new: n,
                    });
                }
            }
        }
    }
    for stage in &old.stages {
        if !new.stages.iter().any(|s| s.id == stage.id) {
            out.push(SettingChange {
                stage: stage.id.clone(),
                what: "removed",
                old: summary(plant, stage),
                new: String::new(),
            });
        }
    }
    for o in &new.over_frequency {
        let before = old.over_frequency.iter().find(|b| b.id == o.id);
        let (was, now) = (
            before.map(|b| over_summary(plant, b)),
            over_summary(plant, o),
        );
        match was {
            None => out.push(SettingChange {
                stage: o.id.clone(),
                what: "added",
                old: String::new(),
                new: now,
            }),
            Some(was) if was != now => out.push(SettingChange {
                stage: o.id.clone(),
                what: "over-frequency",
                old: was,
                new: now,
            }),
            Some(_) => {}
        }
    }
    for o in &old.over_frequency {
        if !new.over_frequency.iter().any(|n| n.id == o.id) {
            out.push(SettingChange {
                stage: o.id.clone(),
                what: "removed",
                old: over_summary(plant, o),
                new: String::new(),
            });
        }
    }
    out
}

/// An over-frequency stage in words: "above 61.20 Hz, 0.200 s, breaker 0.080 s, trips tg-3".
fn over_summary(plant: &Plant, o: &OverStage) -> String {
    let what = match o.action {
        OverAction::Trip { generator } => format!("trips {}", plant.generators[generator].id),
        OverAction::RunBack { generator, mw } => {
            format!("runs {} back {mw:.2} MW", plant.generators[generator].id)
        }
    };
    format!(
        "above {:.2} Hz, {:.3} s, breaker {:.3} s, {what}",
        o.pickup_hz, o.delay_s, o.breaker_s
    )
}

fn compare_stage(plant: &Plant, old: &Stage, new: &Stage, out: &mut Vec<SettingChange>) {
    let mut push = |what: &'static str, o: String, n: String| {
        out.push(SettingChange {
            stage: new.id.clone(),
            what,
            old: o,
            new: n,
        });
    };
    let (ot, nt) = (trigger(plant, &old.trigger), trigger(plant, &new.trigger));
    if ot != nt {
        push("trigger", ot, nt);
    }
    if old.delay_s != new.delay_s {
        push(
            "delay_s",
            format!("{:.3}", old.delay_s),
            format!("{:.3}", new.delay_s),
        );
    }
    if old.breaker_s != new.breaker_s {
        push(
            "breaker_s",
            format!("{:.3}", old.breaker_s),
            format!("{:.3}", new.breaker_s),
        );
    }
    let removed: Vec<&str> = old
        .sheds
        .iter()
        .filter(|l| !new.sheds.contains(l))
        .map(|&l| plant.loads[l].id.as_str())
        .collect();
    let added: Vec<&str> = new
        .sheds
        .iter()
        .filter(|l| !old.sheds.contains(l))
        .map(|&l| plant.loads[l].id.as_str())
        .collect();
    if !removed.is_empty() || !added.is_empty() {
        let o = if removed.is_empty() {
            String::new()
        } else {
            format!("−{}", removed.join(", −"))
        };
        let n = if added.is_empty() {
            String::new()
        } else {
            format!("+{}", added.join(", +"))
        };
        push("loads", o, n);
    }
}

/// What the audit's words for a stage say beyond its trigger: sizing, service, setting groups.
fn beyond_trigger(plant: &Plant, scheme: &Scheme, stage: &Stage) -> String {
    let all = super::audit::describe_stage(plant, scheme, stage);
    let head = trigger(plant, &stage.trigger);
    let rest = all.strip_prefix(&head).unwrap_or(&all);
    rest.trim_start_matches([',', ';', ' ']).to_string()
}

fn trigger(plant: &Plant, t: &StageTrigger) -> String {
    super::audit::describe_trigger(plant, t)
}

fn summary(plant: &Plant, s: &Stage) -> String {
    let loads: Vec<&str> = s
        .sheds
        .iter()
        .map(|&l| plant.loads[l].id.as_str())
        .collect();
    format!(
        "{}, {:.2} s + {:.2} s: {}",
        trigger(plant, &s.trigger),
        s.delay_s,
        s.breaker_s,
        loads.join(", ")
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Criteria, Load, Measurement, Section};

    fn plant() -> Plant {
        let load = |id: &str| Load {
            id: id.into(),
            description: String::new(),
            section: 0,
            p_mw: 1.0,
            rank: 1,
            never_shed: false,
            freq_exp: 1.0,
            inertia_s: 0.0,
            undervoltage: None,
        };
        Plant {
            name: "diff test".into(),
            nominal_hz: 50.0,
            sections: vec![Section { id: "main".into() }],
            ties: vec![],
            utility: None,
            generators: vec![],
            loads: vec![load("a"), load("b"), load("c")],
            operating_points: vec![],
            criteria: Criteria::defaults(50.0),
            design: crate::model::DesignLimits::defaults(50.0, false),
        }
    }

    fn stage(id: &str, pickup_hz: f64, sheds: Vec<usize>) -> Stage {
        Stage {
            sizing: crate::model::Sizing::All,
            in_service: true,
            groups: Vec::new(),
            id: id.into(),
            trigger: StageTrigger::Frequency {
                pickup_hz,
                min_rocof_hz_per_s: None,
            },
            delay_s: 0.2,
            breaker_s: 0.08,
            sheds,
        }
    }

    #[test]
    fn reports_each_kind_of_change() {
        let p = plant();
        let old = Scheme {
            groups: Vec::new(),
            name: "old".into(),
            measurement: Measurement::default(),
            stages: vec![
                stage("uf-1", 49.0, vec![0, 1]),
                stage("uf-2", 48.8, vec![2]),
            ],
            over_frequency: Vec::new(),
        };
        let mut kept = stage("uf-1", 49.1, vec![0, 2]);
        kept.delay_s = 0.3;
        let new = Scheme {
            groups: Vec::new(),
            name: "new".into(),
            measurement: Measurement::default(),
            stages: vec![kept, stage("uf-3", 48.5, vec![1])],
            over_frequency: Vec::new(),
        };
        let d = diff(&p, &old, &new);
        let kinds: Vec<(&str, &str)> = d.iter().map(|c| (c.stage.as_str(), c.what)).collect();
        assert_eq!(
            kinds,
            vec![
                ("uf-1", "trigger"),
                ("uf-1", "delay_s"),
                ("uf-1", "loads"),
                ("uf-3", "added"),
                ("uf-2", "removed")
            ]
        );
        assert_eq!(d[0].old, "49.00 Hz");
        assert_eq!(d[0].new, "49.10 Hz");
        assert_eq!((d[2].old.as_str(), d[2].new.as_str()), ("−b", "+c"));
    }

    #[test]
    fn identical_tables_have_no_difference() {
        let p = plant();
        let s = Scheme {
            groups: Vec::new(),
            name: "s".into(),
            measurement: Measurement::default(),
            stages: vec![stage("uf-1", 49.0, vec![0])],
            over_frequency: Vec::new(),
        };
        assert!(diff(&p, &s, &s).is_empty());
    }
}
