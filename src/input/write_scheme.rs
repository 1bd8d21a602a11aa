//! A validated [`Scheme`] back to scheme-file text, laid out like the hand-written demo tables:
//! one flow mapping per stage, with a trailing comment giving the ranks it sheds and their MW at
//! the plant's first operating point.
//!
//! Owns the writing side of the scheme format. The text it returns must read back, through
//! [`super::parse_scheme`] with the same plant, to a scheme equal to the one written: numbers use
//! Rust's shortest round-trip formatting, and every id or name that is not plainly safe YAML is
//! double-quoted with escapes. It never writes a file itself (the caller does) and never panics: a
//! scheme that names a load or breaker its plant does not have is written with a placeholder the
//! reader refuses with a diagnostic.

use crate::model::{Allowance, BreakerRef, OverAction, Plant, Scheme, Sizing, Stage, StageTrigger};
use std::borrow::Cow;
use std::fmt::Write as _;

/// Scheme-file text for `scheme`, whose ids refer to `plant`. Each `header` entry becomes one or
/// more `# ` comment lines at the top (one per line break in it).
pub fn scheme_yaml(plant: &Plant, scheme: &Scheme, header: &[String]) -> String {
    let mut out = String::new();
    for entry in header {
        let entry = entry.replace("\r\n", "\n");
        for line in entry.split(['\n', '\r', '\u{85}', '\u{2028}', '\u{2029}']) {
            push_comment(&mut out, line);
        }
    }
    if !header.is_empty() {
        out.push('\n');
    }
    let _ = writeln!(out, "name: {}", scalar(&scheme.name));
    out.push('\n');
    out.push_str("measurement:\n");
    let m = &scheme.measurement;
    let _ = writeln!(out, "  frequency_lag_s: {}", number(m.frequency_lag_s));
    let _ = writeln!(out, "  rocof_window_s: {}", number(m.rocof_window_s));
    out.push('\n');
    if !scheme.groups.is_empty() {
        out.push_str("setting_groups:\n");
        for g in &scheme.groups {
            let points: Vec<String> = g
                .operating_points
                .iter()
                .map(|&op| {
                    scalar(
                        plant
                            .operating_points
                            .get(op)
                            .map_or("?", |o| o.id.as_str()),
                    )
                    .into_owned()
                })
                .collect();
            let _ = writeln!(
                out,
                "  - {{ id: {}, operating_points: [{}] }}",
                scalar(&g.id),
                points.join(", ")
            );
        }
        out.push('\n');
    }
    if let Some(point) = plant.operating_points.first() {
        push_comment(
            &mut out,
            &format!(
                "After each stage: the ranks it sheds and their MW at operating point {}.",
                point.id
            ),
        );
    }
    out.push_str("stages:\n");
    let group_ids: Vec<String> = scheme.groups.iter().map(|g| g.id.clone()).collect();
    let stages: Vec<(Vec<String>, String)> = scheme
        .stages
        .iter()
        .map(|s| (stage_lines(plant, s, &group_ids), shed_summary(plant, s)))
        .collect();
    // Comments start in one column, as in the demo tables, unless a line is too long for it.
    let column = stages
        .iter()
        .filter_map(|(lines, _)| lines.last().map(|l| l.chars().count()))
        .filter(|&w| w <= COMMENT_COLUMN_MAX)
        .max()
        .unwrap_or(0);
    for (lines, summary) in &stages {
        let (last, first) = lines.split_last().expect("a stage has at least one line");
        for line in first {
            out.push_str(line);
            out.push('\n');
        }
        out.push_str(last);
        let pad = column.saturating_sub(last.chars().count()) + 2;
        out.extend(std::iter::repeat(' ').take(pad));
        out.push_str("# ");
        out.push_str(&comment_text(summary));
        out.push('\n');
    }
    if !scheme.over_frequency.is_empty() {
        out.push_str("\nover_frequency:\n");
        for o in &scheme.over_frequency {
            let _ = write!(
                out,
                "  - {{ id: {}, above_hz: {}, delay_s: {}, breaker_s: {}, ",
                scalar(&o.id),
                number(o.pickup_hz),
                number(o.delay_s),
                number(o.breaker_s)
            );
            let _ = match o.action {
                OverAction::Trip { generator } => writeln!(
                    out,
                    "trips: {} }}",
                    scalar(&breaker_id(plant, BreakerRef::Generator(generator)))
                ),
                OverAction::RunBack { generator, mw } => writeln!(
                    out,
                    "runs_back: {{ generator: {}, mw: {} }} }}",
                    scalar(&breaker_id(plant, BreakerRef::Generator(generator))),
                    number(mw)
                ),
            };
        }
    }
    out
}

/// Lines of a stage's `sheds` list are broken before they pass this many characters.
const LINE_WIDTH: usize = 100;
/// Trailing comments line up in one column only while the stage lines are at most this wide.
const COMMENT_COLUMN_MAX: usize = 88;

/// The stage as a flow mapping: triggers and times on the first line, loads on the next ones.
fn stage_lines(plant: &Plant, stage: &Stage, groups: &[String]) -> Vec<String> {
    let mut head = format!("  - {{ id: {}", scalar(&stage.id));
    match stage.trigger {
        StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } => {
            let _ = write!(head, ", pickup_hz: {}", number(pickup_hz));
            if let Some(r) = min_rocof_hz_per_s {
                let _ = write!(head, ", min_rocof_hz_per_s: {}", number(r));
            }
        }
        StageTrigger::Breaker(b) => {
            let _ = write!(head, ", armed_by: {}", scalar(&breaker_id(plant, b)));
        }
    }
    let _ = write!(
        head,
        ", delay_s: {}, breaker_s: {},",
        number(stage.delay_s),
        number(stage.breaker_s)
    );
    if let Sizing::Flow(a) = stage.sizing {
        let _ = write!(head, " sizing: flow, {},", allowance(a));
    }
    if !stage.in_service {
        head.push_str(" in_service: false,");
    }
    let mut lines = vec![head];
    let items: Vec<String> = stage
        .sheds
        .iter()
        .map(|&l| scalar(&load_id(plant, l)).into_owned())
        .collect();
    let first = "      sheds: [";
    let indent = " ".repeat(first.len());
    let mut line = first.to_string();
    let mut fresh = true;
    for (k, item) in items.iter().enumerate() {
        let sep = if k + 1 < items.len() { "," } else { "" };
        if !fresh {
            if line.chars().count() + 1 + item.chars().count() + sep.len() > LINE_WIDTH {
                lines.push(std::mem::replace(&mut line, indent.clone()));
            } else {
                line.push(' ');
            }
        }
        line.push_str(item);
        line.push_str(sep);
        fresh = false;
    }
    if stage.groups.is_empty() {
        line.push_str("] }");
        lines.push(line);
        return lines;
    }
    line.push_str("],");
    lines.push(line);
    lines.push("      groups: [".to_string());
    for (k, g) in stage.groups.iter().enumerate() {
        let name = scheme_group(g.group, groups);
        let mut entry = format!(
            "        {{ group: {}, in_service: {}",
            scalar(&name),
            g.in_service
        );
        if let StageTrigger::Frequency {
            pickup_hz,
            min_rocof_hz_per_s,
        } = g.trigger
        {
            let _ = write!(entry, ", pickup_hz: {}", number(pickup_hz));
            if let Some(r) = min_rocof_hz_per_s {
                let _ = write!(entry, ", min_rocof_hz_per_s: {}", number(r));
            }
        }
        let _ = write!(entry, ", delay_s: {}", number(g.delay_s));
        if let Sizing::Flow(a) = g.sizing {
            let _ = write!(entry, ", {}", allowance(a));
        }
        entry.push_str(if k + 1 < stage.groups.len() {
            " },"
        } else {
            " }"
        });
        lines.push(entry);
    }
    lines.push("      ] }".to_string());
    lines
}

/// A flow-sized stage's allowance as its field.
fn allowance(a: Allowance) -> String {
    match a {
        Allowance::Mw(mw) => format!("allowance_mw: {}", number(mw)),
        Allowance::ReservePct(pct) => format!("allowance_reserve_pct: {}", number(pct)),
    }
}

/// A setting group's id, or a placeholder the reader refuses.
fn scheme_group(group: usize, groups: &[String]) -> String {
    groups
        .get(group)
        .cloned()
        .unwrap_or_else(|| format!("<setting group {group}>"))
}

/// Ranks and MW the stage sheds at the plant's first operating point, e.g. `ranks 1–3, 1.65 MW`.
fn shed_summary(plant: &Plant, stage: &Stage) -> String {
    let mut ranks: Vec<u32> = stage
        .sheds
        .iter()
        .filter_map(|&l| plant.loads.get(l).map(|load| load.rank))
        .collect();
    ranks.sort_unstable();
    ranks.dedup();
    let mw: f64 = match plant.operating_points.first() {
        Some(point) => stage
            .sheds
            .iter()
            .filter_map(|&l| point.load_mw.get(l))
            .sum(),
        None => stage
            .sheds
            .iter()
            .filter_map(|&l| plant.loads.get(l).map(|load| load.p_mw))
            .sum(),
    };
    let ranks = match ranks.as_slice() {
        [] => "no load".to_string(),
        [one] => format!("rank {one}"),
        _ => format!("ranks {}", rank_runs(&ranks)),
    };
    format!("{ranks}, {mw:.2} MW")
}

/// Sorted, distinct ranks as runs: `1–3`, `2 and 5`, `1–3, 5 and 7–8`.
fn rank_runs(ranks: &[u32]) -> String {
    let mut runs: Vec<String> = Vec::new();
    let mut start = 0;
    for i in 1..=ranks.len() {
        if i == ranks.len() || ranks[i] != ranks[i - 1] + 1 {
            runs.push(if i - 1 == start {
                ranks[start].to_string()
            } else {
                format!("{}–{}", ranks[start], ranks[i - 1])
            });
            start = i;
        }
    }
    match runs.split_last() {
        Some((last, rest)) if !rest.is_empty() => format!("{} and {last}", rest.join(", ")),
        _ => runs.concat(),
    }
}

/// The id the reader resolves to this breaker.
fn breaker_id(plant: &Plant, b: BreakerRef) -> String {
    let id = match b {
        BreakerRef::Utility => plant.utility.as_ref().map(|u| u.breaker_id.clone()),
        BreakerRef::Tie(i) => plant.ties.get(i).map(|t| t.id.clone()),
        BreakerRef::Generator(i) => plant.generators.get(i).map(|g| g.id.clone()),
    };
    id.unwrap_or_else(|| format!("{b:?} (not in plant {})", plant.name))
}

fn load_id(plant: &Plant, l: usize) -> String {
    match plant.loads.get(l) {
        Some(load) => load.id.clone(),
        None => format!("load #{l} (not in plant {})", plant.name),
    }
}

/// Shortest text that reads back as the same `f64`. Debug keeps a `.0` on whole numbers and uses
/// an exponent only for very large or small ones (`1e-7`), both of which the reader takes as floats.
fn number(x: f64) -> String {
    if x.is_nan() {
        ".nan".to_string()
    } else if x.is_infinite() {
        if x > 0.0 { ".inf" } else { "-.inf" }.to_string()
    } else {
        format!("{x:?}")
    }
}

/// A string as a YAML scalar that is safe in block and flow context alike: plain when it is made
/// of letters, digits, spaces and `-_./()` only, starts with a letter, is no word that some YAML
/// reader takes for a boolean or null, and reads back as itself; double-quoted otherwise.
fn scalar(s: &str) -> Cow<'_, str> {
    if is_plain(s) {
        Cow::Borrowed(s)
    } else {
        Cow::Owned(double_quoted(s))
    }
}

fn is_plain(s: &str) -> bool {
    const WORDS: [&str; 9] = ["true", "false", "null", "yes", "no", "on", "off", "y", "n"];
    let mut chars = s.chars();
    let Some(first) = chars.next() else {
        return false;
    };
    first.is_ascii_alphabetic()
        && chars.all(|c| c.is_ascii_alphanumeric() || " -_./()".contains(c))
        && !s.ends_with(' ')
        && !s.contains("  ")
        && !WORDS.contains(&s.to_ascii_lowercase().as_str())
        // The reader is serde_yaml: make sure it takes the plain text for this very string.
        && serde_yaml::from_str::<serde_yaml::Value>(s).ok()
            == Some(serde_yaml::Value::String(s.to_string()))
}

/// A double-quoted YAML scalar. Characters YAML does not allow in a file, or would read as a line
/// break, are written as escapes.
fn double_quoted(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 2);
    out.push('"');
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            '\n' => out.push_str("\\n"),
            '\t' => out.push_str("\\t"),
            '\r' => out.push_str("\\r"),
            c if printable(c) => out.push(c),
            c if (c as u32) <= 0xFF => {
                let _ = write!(out, "\\x{:02X}", c as u32);
            }
            c if (c as u32) <= 0xFFFF => {
                let _ = write!(out, "\\u{:04X}", c as u32);
            }
            c => {
                let _ = write!(out, "\\U{:08X}", c as u32);
            }
        }
    }
    out.push('"');
    out
}

/// YAML 1.2's printable set (§5.1) less the characters it counts as line breaks or byte-order
/// marks, so that a character written raw is read back as itself.
fn printable(c: char) -> bool {
    matches!(c as u32,
        0x20..=0x7E | 0xA0..=0xD7FF | 0xE000..=0xFEFE | 0xFF00..=0xFFFD | 0x10000..=0x10FFFF)
        && !matches!(c, '\u{2028}' | '\u{2029}')
}

/// Comment text on one line: anything that is not printable becomes U+FFFD.
fn comment_text(text: &str) -> String {
    text.chars()
        .map(|c| if printable(c) { c } else { '\u{FFFD}' })
        .collect()
}

fn push_comment(out: &mut String, text: &str) {
    let text = comment_text(text);
    let text = text.trim_end();
    if text.is_empty() {
        out.push_str("#\n");
    } else {
        out.push_str("# ");
        out.push_str(text);
        out.push('\n');
    }
}

#[cfg(test)]
mod tests {
    //! Internal-consistency tests of the helpers; the round trips through the reader are in
    //! tests/write_scheme.rs.
    use super::*;

    #[test]
    fn plain_ids_stay_plain_and_awkward_ones_are_quoted() {
        for s in [
            "uf-1",
            "armed-utility",
            "Marsh Hollow first table (fictional)",
            "tg_1.a/b",
        ] {
            assert_eq!(scalar(s), s);
        }
        for s in [
            "", "true", "No", "null", "~", "1", "49.0", "-x", "- x", "a: b", "a #b", "#a", "a,b",
            "[a]", "{a}", "'a'", "\"a\"", "a ", " a", "a  b", "?x", "*x", "&x", "!x", "|", ">",
            "%x", "@x", "`x", ".inf", "0x10", "é", "a\nb",
        ] {
            assert!(scalar(s).starts_with('"'), "{s:?} should be quoted");
        }
    }

    #[test]
    fn escapes_cover_breaks_controls_and_byte_order_marks() {
        assert_eq!(double_quoted("a\"\\\n\t\r"), "\"a\\\"\\\\\\n\\t\\r\"");
        assert_eq!(double_quoted("\u{0}\u{7f}\u{85}"), "\"\\x00\\x7F\\x85\"");
        assert_eq!(
            double_quoted("\u{2028}\u{2029}\u{FEFF}\u{FFFE}"),
            "\"\\u2028\\u2029\\uFEFF\\uFFFE\""
        );
        assert_eq!(double_quoted("–é😀"), "\"–é😀\"");
    }

    #[test]
    fn rank_runs_group_consecutive_ranks() {
        assert_eq!(rank_runs(&[1, 2, 3]), "1–3");
        assert_eq!(rank_runs(&[2, 5]), "2 and 5");
        assert_eq!(rank_runs(&[1, 2, 3, 5, 7, 8]), "1–3, 5 and 7–8");
    }

    #[test]
    fn numbers_keep_their_shortest_form() {
        assert_eq!(number(49.0), "49.0");
        assert_eq!(number(0.1), "0.1");
        assert_eq!(number(1e-7), "1e-7");
        assert_eq!(number(f64::NEG_INFINITY), "-.inf");
    }
}
