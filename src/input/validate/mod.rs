//! Raw types to model types: every check of meaning (ranges, ids, cross references, islands) and
//! every default, collecting all diagnostics of a file before giving up.
//!
//! Owns the wording of validation messages. It must not read text or know YAML positions beyond
//! asking the [`Reader`] to place a field path or whether one is written. A model value is built
//! only when the file is structurally whole; checks that need the whole plant (islands,
//! isochronous machines) run only then, so that one broken item never causes a cascade of
//! follow-on messages.
//!
//! This file holds the helpers every file format shares (number ranges, id registries, "did you
//! mean" hints, island helpers); one submodule per file format holds its checks, and `design`
//! those of the plant file's `design` block.

mod cases;
mod design;
mod plant;
mod scheme;

pub use cases::cases;
pub use plant::plant;
use plant::{other_nominal, short_lag, SHORT_LAG_S};
pub use scheme::scheme;

use super::defaults as d;
use super::limits;
use super::locate::{FieldPath, Seg};
use super::raw::*;
use super::read::{quoted_list, Reader, Slot};
use super::warn::Code;
use crate::model::*;
use crate::topology::{self, BreakerState, Island};
use serde_yaml::Mapping;
use std::collections::{BTreeMap, HashMap};

// ---------------------------------------------------------------- shared helpers

#[derive(Debug, Clone, Copy)]
enum Lo {
    Any,
    Above(f64),
    AtLeast(f64),
}

#[derive(Debug, Clone, Copy)]
enum Hi {
    Any,
    Below(f64),
    AtMost(f64),
}

/// Of a set of alternatives exactly one of which must be written: how many are, and their names
/// as a message says them ("none", "below_hz and above_hz").
fn written(options: &[(&'static str, bool)]) -> (usize, String) {
    let given: Vec<&str> = options
        .iter()
        .filter(|(_, set)| *set)
        .map(|(name, _)| *name)
        .collect();
    let said = if given.is_empty() {
        "none".to_string()
    } else {
        given.join(" and ")
    };
    (given.len(), said)
}

/// A value of any unit in a range message: at most 6 significant digits and no trailing zeros, so
/// 5.712000000000001 reads 5.712, while a tiny time constant such as 1e-12 s is still shown (MW
/// figures that nadir computes use [`mw`]); very large and very small magnitudes in exponent form.
fn shown(x: f64) -> String {
    if !x.is_finite() {
        return format!("{x}");
    }
    if x == 0.0 {
        return "0".to_string();
    }
    let magnitude = x.abs().log10().floor() as i32;
    if !(-6..15).contains(&magnitude) {
        let text = format!("{x:.5e}");
        let (mantissa, exponent) = text.split_once('e').unwrap_or((&text, "0"));
        let mantissa = mantissa.trim_end_matches('0').trim_end_matches('.');
        return format!("{mantissa}e{exponent}");
    }
    let decimals = (5 - magnitude).max(0) as usize;
    let text = format!("{x:.decimals$}");
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    if text == "-0" {
        "0".to_string()
    } else {
        text
    }
}

fn field_name(path: &FieldPath) -> String {
    match path.0.last() {
        Some(Seg::Key(k)) => k.clone(),
        _ => path.to_string(),
    }
}

fn range_text(name: &str, lo: Lo, hi: Hi, unit: &str) -> String {
    let lo_text = match lo {
        Lo::Any => None,
        Lo::Above(a) => Some((a, "<", ">")),
        Lo::AtLeast(a) => Some((a, "≤", "≥")),
    };
    let hi_text = match hi {
        Hi::Any => None,
        Hi::Below(b) => Some((b, "<")),
        Hi::AtMost(b) => Some((b, "≤")),
    };
    match (lo_text, hi_text) {
        (None, None) => format!("any finite {name}"),
        (Some((a, _, rev)), None) => format!("{name} {rev} {}{unit}", shown(a)),
        (None, Some((b, op))) => format!("{name} {op} {}{unit}", shown(b)),
        (Some((a, op_lo, _)), Some((b, op_hi))) => {
            format!("{} {op_lo} {name} {op_hi} {}{unit}", shown(a), shown(b))
        }
    }
}

/// Checks one number against its allowed range; `unit` is written after values (" s", " Hz").
/// Zero or negative values where a positive one is needed, values below a plausible floor and
/// implausibly high values each get their own wording.
fn num(r: &mut Reader, path: &FieldPath, v: f64, lo: Lo, hi: Hi, unit: &str) -> bool {
    let name = field_name(path);
    let allowed = format!("allowed: {}", range_text(&name, lo, hi, unit));
    if !v.is_finite() {
        r.error(
            path,
            format!("{name} is {v}, expected a finite number"),
            allowed,
        );
        return false;
    }
    let low_bad = match lo {
        Lo::Any => false,
        Lo::Above(a) => v <= a,
        Lo::AtLeast(a) => v < a,
    };
    if low_bad {
        let msg = match lo {
            Lo::Above(0.0) => format!("{name} must be greater than 0, got {}{unit}", shown(v)),
            Lo::AtLeast(0.0) => format!("{name} must not be negative, got {}{unit}", shown(v)),
            _ => format!("{name} {}{unit} is implausibly low", shown(v)),
        };
        r.error(path, msg, allowed);
        return false;
    }
    let high_bad = match hi {
        Hi::Any => false,
        Hi::Below(b) => v >= b,
        Hi::AtMost(b) => v > b,
    };
    if high_bad {
        r.error(
            path,
            format!("{name} {}{unit} is implausibly high", shown(v)),
            allowed,
        );
        return false;
    }
    true
}

/// MW (or any figure) as a message shows it: at most three decimals, no trailing zeros.
pub(in crate::input) fn mw(v: f64) -> String {
    if v.abs() >= 1e9 {
        // A slip of many orders of magnitude: keep the message short.
        return format!("{v:e}");
    }
    let s = format!("{v:.3}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" {
        "0".to_string()
    } else {
        s.to_string()
    }
}

/// Time delays and time constants: (0, 60] s unless said otherwise.
fn time_constant(r: &mut Reader, path: &FieldPath, v: f64) -> bool {
    num(r, path, v, Lo::Above(0.0), Hi::AtMost(60.0), " s")
}

/// Definite time delays, which may be zero (instantaneous).
fn delay(r: &mut Reader, path: &FieldPath, v: f64) -> bool {
    num(r, path, v, Lo::AtLeast(0.0), Hi::AtMost(60.0), " s")
}

/// Names close to `name`, closest first, at most three: for "did you mean" hints. A name longer
/// than [`limits::MAX_SUGGEST_CHARS`] gets none (the edit distance costs the product of the
/// lengths), and a candidate whose length alone puts it out of reach is not compared.
pub fn near_matches<'a>(name: &str, candidates: impl Iterator<Item = &'a str>) -> Vec<&'a str> {
    let name_chars = name.chars().count();
    if name_chars > limits::MAX_SUGGEST_CHARS {
        return Vec::new();
    }
    let lower = name.to_lowercase();
    let mut scored: Vec<(usize, &str)> = candidates
        .filter_map(|c| {
            let c_chars = c.chars().count();
            if c_chars > limits::MAX_SUGGEST_CHARS {
                return None;
            }
            let cl = c.to_lowercase();
            let limit = (name_chars.max(c_chars) / 3).max(1);
            let contains = lower.len() >= 2 && (cl.contains(&lower) || lower.contains(&cl));
            if contains {
                return Some((edit_distance(&lower, &cl), c));
            }
            // The distance is at least the difference in length.
            if name_chars.abs_diff(c_chars) > limit {
                return None;
            }
            let dist = edit_distance(&lower, &cl);
            (dist <= limit).then_some((dist, c))
        })
        .collect();
    scored.sort();
    scored.into_iter().take(3).map(|(_, c)| c).collect()
}

fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.iter().enumerate() {
        let mut cur = vec![i + 1; b.len() + 1];
        for (j, cb) in b.iter().enumerate() {
            let cost = usize::from(ca != cb);
            cur[j + 1] = (prev[j] + cost).min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        prev = cur;
    }
    prev[b.len()]
}

/// Ids of one kind (or one namespace, such as breakers) with where each was first defined.
struct Ids {
    kind: &'static str,
    entries: HashMap<String, (usize, FieldPath, &'static str)>,
    order: Vec<String>,
}

impl Ids {
    fn new(kind: &'static str) -> Ids {
        Ids {
            kind,
            entries: HashMap::new(),
            order: Vec::new(),
        }
    }

    /// Registers an id; reports a duplicate naming the first place. `what` is the item's own kind
    /// (for a shared namespace such as breakers).
    fn add(
        &mut self,
        r: &mut Reader,
        id: &str,
        index: usize,
        path: &FieldPath,
        what: &'static str,
    ) {
        if let Some((message, help)) = id_problem(what, id) {
            r.error(path, message, help);
        }
        if let Some((_, first, first_what)) = self.entries.get(id) {
            let line = r
                .line_of(first)
                .map(|l| format!(" (line {l})"))
                .unwrap_or_default();
            let msg = if *first_what == what {
                format!("duplicate {what} id `{id}`, first defined at {first}{line}")
            } else {
                format!(
                    "duplicate {} id `{id}`: the {first_what} at {first}{line} already uses it",
                    self.kind
                )
            };
            let kind = if *first_what == what { what } else { self.kind };
            r.error(path, msg, format!("give each {kind} its own id"));
            return;
        }
        self.entries
            .insert(id.to_string(), (index, path.clone(), what));
        self.order.push(id.to_string());
    }

    /// Registers an id whose duplicates another registry (the breakers) already reports.
    fn add_quiet(&mut self, id: &str, index: usize, path: &FieldPath, what: &'static str) {
        if !self.entries.contains_key(id) {
            self.entries
                .insert(id.to_string(), (index, path.clone(), what));
            self.order.push(id.to_string());
        }
    }

    fn get(&self, id: &str) -> Option<(usize, &'static str)> {
        self.entries.get(id).map(|(i, _, w)| (*i, *w))
    }

    fn known(&self) -> Vec<&str> {
        self.order.iter().map(String::as_str).collect()
    }
}

/// An id or name as a message quotes it: shortened past [`limits::MAX_QUOTED_CHARS`]
/// characters, with its length, so that a huge id does not make a huge message.
pub fn shown_id(id: &str) -> String {
    let n = id.chars().count();
    if n <= limits::MAX_QUOTED_CHARS {
        return id.to_string();
    }
    let head: String = id.chars().take(limits::MAX_QUOTED_CHARS).collect();
    format!("{head}… ({n} characters)")
}

/// What is wrong with an id as written, if anything: empty, spaces before or after it (two ids
/// that differ only there would look the same), or an invisible, control or bidirectional
/// formatting character (which make different ids look alike, or one id look like another).
fn id_problem(what: &str, id: &str) -> Option<(String, String)> {
    if id.is_empty() {
        return Some((
            format!("the {what} id is empty"),
            format!("give the {what} a short name such as `pump-1`"),
        ));
    }
    if id.trim() != id {
        return Some((
            format!(
                "the {what} id \"{}\" has spaces before or after it",
                escaped_id(id)
            ),
            format!(
                "write it as `{}`: ids must match exactly where they are used",
                id.trim()
            ),
        ));
    }
    if let Some(c) = id.chars().find(|&c| invisible(c)) {
        let kind = if bidirectional(c) {
            "the bidirectional control character"
        } else if c.is_control() {
            "the control character"
        } else {
            "the invisible character"
        };
        return Some((
            format!(
                "the {what} id `{}` contains {kind} U+{:04X}",
                escaped_id(id),
                c as u32
            ),
            "retype the id with visible characters only; such characters make different ids look the same".to_string(),
        ));
    }
    None
}

/// Unicode's bidirectional formatting characters (Unicode Standard Annex #9, table 2, and the
/// marks U+200E, U+200F and U+061C).
fn bidirectional(c: char) -> bool {
    matches!(c, '\u{061C}' | '\u{200E}' | '\u{200F}' | '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}')
}

/// Characters that print as nothing or as a plain space: control characters, bidirectional
/// formatting, zero-width and joiner characters, the byte-order mark, soft hyphen, variation
/// selectors, tag characters, and every space other than the ordinary one.
fn invisible(c: char) -> bool {
    c.is_control()
        || bidirectional(c)
        || (c.is_whitespace() && c != ' ')
        || matches!(c,
            '\u{00AD}' | '\u{034F}' | '\u{115F}' | '\u{1160}' | '\u{17B4}' | '\u{17B5}'
            | '\u{180B}'..='\u{180F}' | '\u{200B}'..='\u{200D}' | '\u{2060}'..='\u{2064}'
            | '\u{206A}'..='\u{206F}' | '\u{3164}' | '\u{FE00}'..='\u{FE0F}' | '\u{FEFF}'
            | '\u{FFA0}' | '\u{E0000}'..='\u{E007F}' | '\u{E0100}'..='\u{E01EF}')
}

/// An id for a message: invisible characters written as `\u{…}` so the reader sees them.
fn escaped_id(id: &str) -> String {
    id.chars()
        .map(|c| {
            if invisible(c) {
                format!("\\u{{{:04X}}}", c as u32)
            } else {
                c.to_string()
            }
        })
        .collect()
}

/// The kinds of input file, by their top-level fields, to recognise one given in the wrong place.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FileKind {
    Plant,
    Cases,
    Scheme,
}

impl FileKind {
    fn name(self) -> &'static str {
        match self {
            FileKind::Plant => "plant",
            FileKind::Cases => "cases",
            FileKind::Scheme => "scheme",
        }
    }

    fn keys(self) -> &'static [&'static str] {
        match self {
            FileKind::Plant => plant::PLANT_KEYS,
            FileKind::Cases => cases::CASES_KEYS,
            FileKind::Scheme => scheme::SCHEME_KEYS,
        }
    }
}

/// A file whose top-level fields are none of the expected kind's and all of another kind's is
/// reported once, as that kind given in the wrong place, instead of one diagnostic per field.
/// Returns whether it was.
pub fn wrong_kind(r: &mut Reader, map: &Mapping, expected: FileKind) -> bool {
    let keys: Vec<&str> = map.keys().filter_map(|k| k.as_str()).collect();
    if keys.is_empty()
        || keys.len() != map.len()
        || keys.iter().any(|k| expected.keys().contains(k))
    {
        return false;
    }
    let Some(kind) = [FileKind::Plant, FileKind::Cases, FileKind::Scheme]
        .into_iter()
        .filter(|&k| k != expected)
        .find(|k| keys.iter().all(|key| k.keys().contains(key)))
    else {
        return false;
    };
    r.error(
        &FieldPath::root(),
        format!(
            "this looks like a {} file (top-level {}), not a {} file",
            kind.name(),
            quoted_list(&keys),
            expected.name()
        ),
        format!(
            "the files may be in the wrong order: give the {} file here; every verb takes the plant file first, then the scheme file, and the cases file after --cases (`nadir <verb> --help`)",
            expected.name()
        ),
    );
    true
}

/// Reports an id that names nothing of its kind.
fn unknown_id(r: &mut Reader, path: &FieldPath, kind: &str, id: &str, known: &[&str]) {
    if r.full() {
        // The message would not be kept; skip the edit distances over every known id.
        r.error(path, String::new(), None);
        return;
    }
    let near = near_matches(id, known.iter().copied());
    let id = &shown_id(id);
    let msg = if known.is_empty() {
        format!("unknown {kind} `{id}`; the plant has no {kind}s")
    } else if known.len() <= 8 {
        format!(
            "unknown {kind} `{id}`; known {kind}s: {}",
            quoted_list(known)
        )
    } else if !near.is_empty() {
        format!(
            "unknown {kind} `{id}`; did you mean {}?",
            quoted_list(&near)
        )
    } else {
        format!(
            "unknown {kind} `{id}`; none of the {} {kind}s has a similar id",
            known.len()
        )
    };
    let help = match near.first() {
        Some(m) => format!("did you mean `{m}`? ids are case sensitive"),
        None if kind == "setting group" => {
            "use the id of a group in the scheme's `setting_groups` list".to_string()
        }
        None => format!("use the id of a {kind} defined in the plant file"),
    };
    r.error(path, msg, help);
}

fn resolve(r: &mut Reader, ids: &Ids, path: &FieldPath, id: &str) -> Option<usize> {
    match ids.get(id) {
        Some((i, _)) => Some(i),
        None => {
            unknown_id(r, path, ids.kind, id, &ids.known());
            None
        }
    }
}

// ---------------------------------------------------------------- shared by cases and scheme

/// An island without supply at an operating point: its load in MW and its first load's index.
fn dead_island(plant: &Plant, op: usize, island: &Island) -> Option<(f64, usize)> {
    if island.on_utility {
        return None;
    }
    let o = &plant.operating_points[op];
    let has_gen = plant
        .generators
        .iter()
        .enumerate()
        .any(|(g, gen)| o.online[g] && island.contains(gen.section));
    if has_gen {
        return None;
    }
    let mut load = 0.0;
    let mut first = None;
    for (i, l) in plant.loads.iter().enumerate() {
        if island.contains(l.section) && o.load_mw[i] > 0.0 {
            load += o.load_mw[i];
            first.get_or_insert(i);
        }
    }
    first.map(|f| (load, f))
}

fn section_list(plant: &Plant, island: &Island) -> String {
    let ids: Vec<&str> = island
        .sections
        .iter()
        .map(|&s| plant.sections[s].id.as_str())
        .collect();
    quoted_list(&ids)
}

/// Ids of a plant's things, for checking references from the cases and scheme files.
struct PlantIds<'a> {
    sections: Vec<&'a str>,
    loads: Vec<&'a str>,
    generators: Vec<&'a str>,
    ties: Vec<&'a str>,
    operating_points: Vec<&'a str>,
}

fn plant_ids(plant: &Plant) -> PlantIds<'_> {
    PlantIds {
        sections: plant.sections.iter().map(|s| s.id.as_str()).collect(),
        loads: plant.loads.iter().map(|s| s.id.as_str()).collect(),
        generators: plant.generators.iter().map(|s| s.id.as_str()).collect(),
        ties: plant.ties.iter().map(|s| s.id.as_str()).collect(),
        operating_points: plant
            .operating_points
            .iter()
            .map(|s| s.id.as_str())
            .collect(),
    }
}

/// Every breaker id of a plant (utility breaker, ties, generators), for "known breakers" hints.
fn breaker_list(plant: &Plant) -> Vec<&str> {
    let mut breakers: Vec<&str> = plant
        .utility
        .iter()
        .map(|u| u.breaker_id.as_str())
        .collect();
    breakers.extend(plant.ties.iter().map(|t| t.id.as_str()));
    breakers.extend(plant.generators.iter().map(|g| g.id.as_str()));
    breakers
}

/// What a breaker id names in the plant.
enum Named {
    Breaker(BreakerRef),
    Load,
    Section,
    Nothing,
}

fn what_is(plant: &Plant, id: &str) -> Named {
    if let Some(u) = &plant.utility {
        if u.breaker_id == id {
            return Named::Breaker(BreakerRef::Utility);
        }
    }
    if let Some(i) = plant.ties.iter().position(|t| t.id == id) {
        return Named::Breaker(BreakerRef::Tie(i));
    }
    if let Some(i) = plant.generator_index(id) {
        return Named::Breaker(BreakerRef::Generator(i));
    }
    if plant.load_index(id).is_some() {
        return Named::Load;
    }
    if plant.section_index(id).is_some() {
        return Named::Section;
    }
    Named::Nothing
}
fn not_a_breaker(
    r: &mut Reader,
    path: &FieldPath,
    id: &str,
    named: Named,
    known: &[&str],
    takes: &str,
) {
    match named {
        Named::Load => r.error(
            path,
            format!("`{id}` is a load, not a breaker; {takes}"),
            "a load is shed by a stage's sheds list, not opened by name here".to_string(),
        ),
        Named::Section => r.error(
            path,
            format!("`{id}` is a section, not a breaker; {takes}"),
            "name the breaker instead".to_string(),
        ),
        _ => unknown_id(r, path, "breaker", id, known),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn near_matches_finds_typos_first() {
        let c = ["steam-tg", "gas-engine", "steam-tg-2"];
        assert_eq!(near_matches("stean-tg", c.iter().copied())[0], "steam-tg");
        assert!(near_matches("pump", c.iter().copied()).is_empty());
    }

    #[test]
    fn numbers_are_shown_with_six_significant_digits_at_most() {
        assert_eq!(shown(5.712000000000001), "5.712");
        assert_eq!(shown(0.1 + 0.2), "0.3");
        assert_eq!(shown(23.1), "23.1");
        assert_eq!(shown(1250.0), "1250");
        assert_eq!(shown(-0.35), "-0.35");
        assert_eq!(shown(0.0), "0");
        assert_eq!(shown(-1e-9), "-1e-9");
        assert_eq!(shown(1e300), "1e300");
        assert_eq!(shown(123456789.0), "123456789");
        assert_eq!(shown(f64::NAN), "NaN");
    }

    #[test]
    fn edit_distance_counts_single_changes() {
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "ab"), 2);
    }
}
