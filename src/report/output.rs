//! Machine-readable output: the versioned JSON documents of `verify` and `compare` (their JSON
//! Schemas come from these types, so the published shape and the written one cannot drift), and
//! CSV cells that a spreadsheet will not run.
//!
//! Each document names itself (`document`) and its shape's version (`format_version`, raised on
//! any change that could break a reader: a field removed, renamed or given a new meaning; a new
//! field does not raise it), carries the nadir version that wrote it, the overall verdict, the
//! criteria used (numbers and exact words), and figures as numbers with `null` for "none"
//! (never rose, never went below, not searched). Owns shapes and conversions only: it decides
//! no pass or fail.

use super::figures::criteria_words;
use crate::input::Warning;
use crate::model::{Allowance, Criteria, Plant, Scheme, Sizing, StageTrigger};
use crate::verify::audit::breaker_name;
use crate::verify::compare::{Change, Comparison};
use crate::verify::margins::Margin;
use crate::verify::matrix::{Matrix, Row};
use schemars::JsonSchema;
use serde::Serialize;

/// The version of the verify and compare JSON shapes.
pub const FORMAT_VERSION: u32 = 1;

/// `nadir verify --format json`.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct VerifyDocument {
    /// Always `nadir-verify`.
    pub document: String,
    /// The shape's version ([`FORMAT_VERSION`]).
    pub format_version: u32,
    /// The nadir version that wrote it.
    pub tool_version: String,
    pub plant: String,
    pub scheme: String,
    pub verdict: Verdict,
    pub criteria: CriteriaOut,
    /// Whether the margin searches ran (`--no-margins` skips them when the plant requires none).
    pub margins_searched: bool,
    /// One per case × operating point, cases in file order.
    pub runs: Vec<RunOut>,
    /// Plausibility warnings and notes of the input files, in reading order; `acknowledged` is
    /// null for a warning the file does not acknowledge.
    pub input_warnings: Vec<Warning>,
}

/// The overall verdict of a verification.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct Verdict {
    /// Every run holds every criterion (and its required margins).
    pub holds: bool,
    pub runs: usize,
    pub failed: usize,
}

/// The criteria every run was judged on.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct CriteriaOut {
    pub min_hz: f64,
    pub max_hz: f64,
    pub max_rocof_hz_per_s: f64,
    /// The window the ROCOF is averaged over, s.
    pub rocof_window_s: f64,
    pub recover_above_hz: f64,
    /// Counted from the last event.
    pub recover_within_s: f64,
    pub settle_low_hz: f64,
    pub settle_high_hz: f64,
    /// Counted from the disturbance start.
    pub settle_within_s: f64,
    /// 1 when none is required.
    pub required_disturbance_factor: f64,
    /// 0 when none is required.
    pub required_model_error_pct: f64,
    /// Each criterion in exact words.
    pub words: Vec<CriterionOut>,
}

/// One criterion in words.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct CriterionOut {
    /// `min_hz`, `max_hz`, `rocof`, `recover`, `settle`, `run` or `margin`.
    pub key: String,
    pub words: String,
}

/// One case at one operating point.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct RunOut {
    pub case: String,
    pub operating_point: String,
    pub pass: bool,
    /// Why the run stopped early (collapse, over-speed, blackout, a numerical stop); null for a
    /// run that went to its end time. When set, every figure of the run is null (no number
    /// from a broken run) and `failures` holds this status alone.
    pub status: Option<String>,
    /// Lowest frequency of any island, Hz, and when, s; null when the run stopped early.
    pub nadir_hz: Option<f64>,
    pub nadir_at_s: Option<f64>,
    /// Highest frequency after the disturbance starts, never the value held at that instant;
    /// null when frequency never rose.
    pub peak_hz: Option<f64>,
    pub peak_at_s: Option<f64>,
    /// Largest |df/dt| averaged over `criteria.rocof_window_s`, Hz/s; null when the run stopped
    /// early.
    pub max_rocof_hz_per_s: Option<f64>,
    /// Frequency went below `criteria.recover_above_hz` at some time; null when the run stopped
    /// early.
    pub went_below_recover_level: Option<bool>,
    /// When frequency came back above the recovery level to stay, s; null when it never went
    /// below or never came back (see `went_below_recover_level`).
    pub recovered_at_s: Option<f64>,
    /// `recovered_at_s` measured from the event before it, s; null as `recovered_at_s`.
    pub recovery_s: Option<f64>,
    /// Lowest final frequency of the islands alive at the end, Hz; null when the run stopped
    /// early.
    pub final_hz: Option<f64>,
    /// Load opened by stages, MW.
    pub shed_mw: f64,
    /// Load dropped by its own undervoltage release, MW (not in `shed_mw`).
    pub uv_dropped_mw: f64,
    /// `shed_mw` as a percentage of the plant's load at this point.
    pub shed_pct: f64,
    /// Stage ids in the order they opened their loads.
    pub stages_operated: Vec<String>,
    /// Generators tripped by their own protection.
    pub cascades: Vec<String>,
    /// Null when the margins were not searched.
    pub margins: Option<MarginsOut>,
    pub failures: Vec<FailureOut>,
    /// Time each running generator spent in each abnormal frequency band (bands with no time
    /// left out).
    pub off_nominal: Vec<BandTimeOut>,
}

/// Time one generator spent in one abnormal frequency band.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct BandTimeOut {
    pub generator: String,
    /// The band, Hz; null for an open end.
    pub low_hz: Option<f64>,
    pub high_hz: Option<f64>,
    pub time_s: f64,
    /// The longest the machine may spend there, s.
    pub max_s: f64,
}

/// Both margins of a run.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct MarginsOut {
    /// Factor on the case's lost import, lost generation or load step.
    pub disturbance_factor: MarginOut,
    /// Percent by which every inertia constant and load frequency exponent may be lower.
    pub model_error_pct: MarginOut,
}

/// A margin: its kind and, where it has one, its number.
#[derive(Debug, Clone, Copy, Serialize, JsonSchema)]
pub struct MarginOut {
    /// `found` (the largest value that holds, within the search resolution), `at_least` (still
    /// holds at the end of the searched range), `not_applicable` (nothing to scale) or
    /// `fails_as_written`.
    pub kind: &'static str,
    /// Null for `not_applicable` and `fails_as_written`.
    pub value: Option<f64>,
}

impl From<Margin> for MarginOut {
    fn from(m: Margin) -> Self {
        match m {
            Margin::Found(v) => MarginOut {
                kind: "found",
                value: Some(v),
            },
            Margin::AtLeast(v) => MarginOut {
                kind: "at_least",
                value: Some(v),
            },
            Margin::NotApplicable => MarginOut {
                kind: "not_applicable",
                value: None,
            },
            Margin::FailsAsIs => MarginOut {
                kind: "fails_as_written",
                value: None,
            },
        }
    }
}

/// One criterion that did not hold.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct FailureOut {
    /// `min_hz`, `max_hz`, `rocof`, `recover`, `settle`, `run`, `margin` or `off_nominal`.
    pub criterion: String,
    pub message: String,
    /// How far past the limit in the criterion's unit; null when unbounded (never recovered).
    pub excess: Option<f64>,
}

/// `nadir compare --format json`.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct CompareDocument {
    /// Always `nadir-compare`.
    pub document: String,
    pub format_version: u32,
    pub tool_version: String,
    pub plant: String,
    /// True when the new table fails no case the old one held.
    pub holds: bool,
    /// Runs the old table held and the new one fails.
    pub regressions: usize,
    pub criteria: CriteriaOut,
    pub old_scheme: SchemeOut,
    pub new_scheme: SchemeOut,
    /// What differs, stage by stage, in words (the numbers are in the two schemes).
    pub changes: Vec<ChangeOut>,
    pub runs: Vec<ComparedRun>,
    /// As in the verify document.
    pub input_warnings: Vec<Warning>,
}

/// A shedding table with its settings as numbers.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct SchemeOut {
    pub name: String,
    /// Frequency measurement lag, s.
    pub frequency_lag_s: f64,
    /// df/dt measurement window, s.
    pub rocof_window_s: f64,
    pub stages: Vec<StageOut>,
}

/// One stage's settings.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct StageOut {
    pub id: String,
    /// Pickup, Hz; null for a stage armed by a breaker.
    pub pickup_hz: Option<f64>,
    /// df/dt supervision, Hz/s (the stage acts only while frequency falls at least this fast);
    /// null when unsupervised or armed.
    pub min_rocof_hz_per_s: Option<f64>,
    /// The breaker whose opening arms the stage; null for a frequency stage.
    pub armed_by: Option<String>,
    pub delay_s: f64,
    pub breaker_s: f64,
    /// Load ids the stage opens; for a stage sized from the pre-event flow, the loads it may open.
    pub loads: Vec<String>,
    /// An armed stage that opens, in rank order, the fewest of its loads covering the flow
    /// through its breaker just before it opened, less its allowance.
    pub sized_from_flow: bool,
    /// Allowance of a flow-sized stage, MW (null otherwise, or when given as a percentage).
    pub allowance_mw: Option<f64>,
    /// Allowance of a flow-sized stage, percent of spinning reserve (null otherwise).
    pub allowance_reserve_pct: Option<f64>,
    /// In service at the operating points in no setting group.
    pub in_service: bool,
    /// The stage's settings in each setting group that changes them.
    pub groups: Vec<GroupSettingsOut>,
}

/// A stage's settings in one setting group.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct GroupSettingsOut {
    pub group: String,
    /// The operating points at which the group is in force.
    pub operating_points: Vec<String>,
    pub in_service: bool,
    pub pickup_hz: Option<f64>,
    pub min_rocof_hz_per_s: Option<f64>,
    pub delay_s: f64,
    pub allowance_mw: Option<f64>,
    pub allowance_reserve_pct: Option<f64>,
}

/// One line of the settings difference.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ChangeOut {
    pub stage: String,
    /// `measurement`, `added`, `removed`, `trigger`, `delay_s`, `breaker_s` or `loads`.
    pub what: String,
    pub old: String,
    pub new: String,
}

/// One case at one operating point under both tables.
#[derive(Debug, Clone, Serialize, JsonSchema)]
pub struct ComparedRun {
    /// `still_holds`, `still_fails`, `now_fails` or `now_holds`.
    pub change: &'static str,
    pub old: RunOut,
    pub new: RunOut,
}

/// The verify document of a matrix.
pub fn verify_document(
    m: &Matrix,
    plant: &Plant,
    scheme: &Scheme,
    tool_version: &str,
    warnings: &[Warning],
) -> VerifyDocument {
    let failed = m.rows.iter().filter(|r| !r.pass).count();
    VerifyDocument {
        document: "nadir-verify".into(),
        format_version: FORMAT_VERSION,
        tool_version: tool_version.into(),
        plant: plant.name.clone(),
        scheme: scheme.name.clone(),
        verdict: Verdict {
            holds: failed == 0,
            runs: m.rows.len(),
            failed,
        },
        criteria: criteria_out(&plant.criteria),
        margins_searched: m.rows.iter().any(|r| r.margins.is_some()),
        runs: m.rows.iter().map(run_out).collect(),
        input_warnings: warnings.to_vec(),
    }
}

/// The compare document of a comparison.
pub fn compare_document(
    c: &Comparison,
    plant: &Plant,
    old: &Scheme,
    new: &Scheme,
    tool_version: &str,
    warnings: &[Warning],
) -> CompareDocument {
    let runs: Vec<ComparedRun> = c
        .pairs()
        .map(|(o, n, change)| ComparedRun {
            change: match change {
                Change::StillHolds => "still_holds",
                Change::StillFails => "still_fails",
                Change::NowFails => "now_fails",
                Change::NowHolds => "now_holds",
            },
            old: run_out(o),
            new: run_out(n),
        })
        .collect();
    let regressions = runs.iter().filter(|r| r.change == "now_fails").count();
    CompareDocument {
        document: "nadir-compare".into(),
        format_version: FORMAT_VERSION,
        tool_version: tool_version.into(),
        plant: plant.name.clone(),
        holds: regressions == 0,
        regressions,
        criteria: criteria_out(&plant.criteria),
        old_scheme: scheme_out(plant, old),
        new_scheme: scheme_out(plant, new),
        changes: c
            .settings
            .iter()
            .map(|s| ChangeOut {
                stage: s.stage.clone(),
                what: s.what.into(),
                old: s.old.clone(),
                new: s.new.clone(),
            })
            .collect(),
        runs,
        input_warnings: warnings.to_vec(),
    }
}

fn criteria_out(c: &Criteria) -> CriteriaOut {
    CriteriaOut {
        min_hz: c.min_hz,
        max_hz: c.max_hz,
        max_rocof_hz_per_s: c.max_rocof_hz_per_s,
        rocof_window_s: c.rocof_window_s,
        recover_above_hz: c.recover_above_hz,
        recover_within_s: c.recover_within_s,
        settle_low_hz: c.settle_low_hz,
        settle_high_hz: c.settle_high_hz,
        settle_within_s: c.settle_within_s,
        required_disturbance_factor: c.required_disturbance_factor,
        required_model_error_pct: c.required_model_error_pct,
        words: criteria_words(c)
            .into_iter()
            .map(|w| CriterionOut {
                key: w.key.into(),
                words: w.words,
            })
            .collect(),
    }
}

/// A flow-sized stage's allowance as (MW, percent of reserve), one of them set.
fn allowance_out(sizing: Sizing) -> (Option<f64>, Option<f64>) {
    match sizing {
        Sizing::All => (None, None),
        Sizing::Flow(Allowance::Mw(mw)) => (Some(mw), None),
        Sizing::Flow(Allowance::ReservePct(pct)) => (None, Some(pct)),
    }
}

fn scheme_out(plant: &Plant, s: &Scheme) -> SchemeOut {
    SchemeOut {
        name: s.name.clone(),
        frequency_lag_s: s.measurement.frequency_lag_s,
        rocof_window_s: s.measurement.rocof_window_s,
        stages: s
            .stages
            .iter()
            .map(|st| {
                let (pickup_hz, min_rocof_hz_per_s, armed_by) = match &st.trigger {
                    StageTrigger::Frequency {
                        pickup_hz,
                        min_rocof_hz_per_s,
                    } => (Some(*pickup_hz), *min_rocof_hz_per_s, None),
                    StageTrigger::Breaker(b) => (None, None, Some(breaker_name(plant, *b))),
                };
                let (allowance_mw, allowance_reserve_pct) = allowance_out(st.sizing);
                StageOut {
                    id: st.id.clone(),
                    pickup_hz,
                    min_rocof_hz_per_s,
                    armed_by,
                    delay_s: st.delay_s,
                    breaker_s: st.breaker_s,
                    loads: st
                        .sheds
                        .iter()
                        .map(|&l| plant.loads[l].id.clone())
                        .collect(),
                    sized_from_flow: matches!(st.sizing, Sizing::Flow(_)),
                    allowance_mw,
                    allowance_reserve_pct,
                    in_service: st.in_service,
                    groups: st
                        .groups
                        .iter()
                        .filter_map(|g| {
                            let group = s.groups.get(g.group)?;
                            let (pickup_hz, min_rocof_hz_per_s) = match g.trigger {
                                StageTrigger::Frequency {
                                    pickup_hz,
                                    min_rocof_hz_per_s,
                                } => (Some(pickup_hz), min_rocof_hz_per_s),
                                StageTrigger::Breaker(_) => (None, None),
                            };
                            let (allowance_mw, allowance_reserve_pct) = allowance_out(g.sizing);
                            Some(GroupSettingsOut {
                                group: group.id.clone(),
                                operating_points: group
                                    .operating_points
                                    .iter()
                                    .filter_map(|&op| {
                                        plant.operating_points.get(op).map(|o| o.id.clone())
                                    })
                                    .collect(),
                                in_service: g.in_service,
                                pickup_hz,
                                min_rocof_hz_per_s,
                                delay_s: g.delay_s,
                                allowance_mw,
                                allowance_reserve_pct,
                            })
                        })
                        .collect(),
                }
            })
            .collect(),
    }
}

/// One row as the documents write it.
pub fn run_out(r: &Row) -> RunOut {
    let o = &r.observed;
    // No number from a broken run: every figure null, the status instead.
    let fig = |v: f64| r.status.is_none().then_some(v);
    let opt = |v: Option<f64>| v.filter(|_| r.status.is_none());
    RunOut {
        case: r.case.clone(),
        operating_point: r.operating_point.clone(),
        pass: r.pass,
        status: r.status.clone(),
        nadir_hz: fig(o.nadir_hz),
        nadir_at_s: fig(o.nadir_at_s),
        peak_hz: opt(o.peak_hz),
        peak_at_s: opt(o.peak_at_s),
        max_rocof_hz_per_s: fig(o.max_rocof_hz_per_s),
        went_below_recover_level: r.status.is_none().then_some(o.went_below_recover_level),
        recovered_at_s: opt(o.recovered_at_s),
        recovery_s: opt(o.recovery_s),
        final_hz: fig(r.final_hz),
        shed_mw: r.shed_mw,
        uv_dropped_mw: r.dropped_mw,
        shed_pct: r.shed_pct,
        stages_operated: r.stages_operated.clone(),
        cascades: r.cascades.clone(),
        margins: r.margins.map(|m| MarginsOut {
            disturbance_factor: m.disturbance_factor.into(),
            model_error_pct: m.model_error_pct.into(),
        }),
        failures: r
            .failures
            .iter()
            .map(|f| FailureOut {
                criterion: f.criterion.into(),
                message: f.message.clone(),
                excess: f.excess.is_finite().then_some(f.excess),
            })
            .collect(),
        off_nominal: r
            .off_nominal
            .iter()
            .map(|b| BandTimeOut {
                generator: b.generator.clone(),
                low_hz: (b.band.low_hz > 0.0).then_some(b.band.low_hz),
                high_hz: b.band.high_hz.is_finite().then_some(b.band.high_hz),
                time_s: b.time_s,
                max_s: b.band.max_s,
            })
            .collect(),
    }
}

/// The JSON Schemas of the output documents: file name and schema.
pub fn schemas() -> Vec<(&'static str, schemars::Schema)> {
    vec![
        (
            "verify-output.schema.json",
            schemars::schema_for!(VerifyDocument),
        ),
        (
            "compare-output.schema.json",
            schemars::schema_for!(CompareDocument),
        ),
    ]
}

/// A text cell for CSV that a spreadsheet will show as text: a cell starting with `=`, `+`, `-`,
/// `−` (U+2212), `@`, a tab or a carriage return is prefixed with an apostrophe, the
/// neutralisation OWASP recommends against CSV injection (OWASP, "CSV Injection"). Numbers that
/// nadir formats itself are not passed through here, so a negative number stays a number.
pub fn csv_cell(text: &str) -> String {
    match text.chars().next() {
        Some('=' | '+' | '-' | '\u{2212}' | '@' | '\t' | '\r') => format!("'{text}"),
        _ => text.to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_a_spreadsheet_would_run_are_neutralised() {
        assert_eq!(csv_cell("=HYPERLINK(\"x\")"), "'=HYPERLINK(\"x\")");
        assert_eq!(csv_cell("+1"), "'+1");
        assert_eq!(csv_cell("-2+3"), "'-2+3");
        assert_eq!(csv_cell("\u{2212}2"), "'\u{2212}2");
        assert_eq!(csv_cell("@SUM(A1)"), "'@SUM(A1)");
        assert_eq!(csv_cell("\tx"), "'\tx");
        assert_eq!(csv_cell("uf-1"), "uf-1");
        assert_eq!(csv_cell(""), "");
    }

    #[test]
    fn margins_carry_their_kind() {
        let m = MarginOut::from(Margin::AtLeast(2.0));
        assert_eq!((m.kind, m.value), ("at_least", Some(2.0)));
        let m = MarginOut::from(Margin::NotApplicable);
        assert_eq!((m.kind, m.value), ("not_applicable", None));
        let m = MarginOut::from(Margin::FailsAsIs);
        assert_eq!((m.kind, m.value), ("fails_as_written", None));
    }
}
