//! Property tests of the input reader: valid files mutated at random (bytes and lines deleted or
//! swapped, numbers replaced by extreme values, keys renamed) never make parsing or validation
//! panic, and every refusal comes with at least one diagnostic, each with a message.
//!
//! The seeds are the small valid files of tests/bad_input/ (a plant, a cases file, a scheme) and
//! the demo plant of examples/biorefinery/.
//! Failures found by proptest are kept in proptest-regressions/ and replayed first.

use nadir::input::{parse_cases, parse_plant, parse_scheme, Diagnostic};
use nadir::model::Plant;
use proptest::prelude::*;
use std::path::PathBuf;
use std::sync::OnceLock;

fn read(name: &str) -> String {
    let p = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/bad_input")
        .join(name);
    std::fs::read_to_string(p).unwrap()
}

fn plant_text() -> &'static str {
    static T: OnceLock<String> = OnceLock::new();
    T.get_or_init(|| read("base_plant.yaml"))
}

fn base_plant() -> &'static Plant {
    static P: OnceLock<Plant> = OnceLock::new();
    P.get_or_init(|| parse_plant(plant_text(), "p.yaml").unwrap())
}

/// Extreme replacements for numbers: non-finite, huge, tiny, negative zero, huge integers, and
/// yaml spellings of them.
const EXTREMES: &[&str] = &[
    ".nan",
    ".NaN",
    ".inf",
    "-.inf",
    "+.inf",
    "1e308",
    "-1e308",
    "1e309",
    "-0",
    "-0.0",
    "0",
    "5e-324",
    "18446744073709551616",
    "-9223372036854775809",
    "4294967296",
    "99999999999999999999999",
    "0x7fffffff",
    "1_000",
    "~",
    "null",
    "true",
    "\"5\"",
    "[]",
    "{}",
];

const KEYS: &[&str] = &[
    "id",
    "section",
    "p_mw",
    "rank",
    "rating_mva",
    "inertia_s",
    "output_mw",
    "governor",
    "model",
    "droop_pct",
    "between",
    "events",
    "at_s",
    "open",
    "trip",
    "sheds",
    "pickup_hz",
    "delay_s",
    "duration_s",
    "only_at",
    "utility",
    "criteria",
    "min_hz",
    "xyz",
    "",
];

#[derive(Debug, Clone)]
enum Mutation {
    DeleteByte(usize),
    InsertByte(usize, u8),
    DeleteLine(usize),
    SwapLines(usize, usize),
    DuplicateLine(usize),
    ReplaceNumber(usize, usize),
    RenameKey(usize, usize),
    Truncate(usize),
}

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        any::<usize>().prop_map(Mutation::DeleteByte),
        (
            any::<usize>(),
            prop::sample::select(b"[]{}:,-#&*!|>'\"\t\n %@`".to_vec())
        )
            .prop_map(|(i, b)| Mutation::InsertByte(i, b)),
        any::<usize>().prop_map(Mutation::DeleteLine),
        (any::<usize>(), any::<usize>()).prop_map(|(a, b)| Mutation::SwapLines(a, b)),
        any::<usize>().prop_map(Mutation::DuplicateLine),
        (any::<usize>(), 0..EXTREMES.len()).prop_map(|(i, e)| Mutation::ReplaceNumber(i, e)),
        (any::<usize>(), 0..KEYS.len()).prop_map(|(i, k)| Mutation::RenameKey(i, k)),
        any::<usize>().prop_map(Mutation::Truncate),
    ]
}

/// Byte offsets of number-like tokens (a digit run, with sign and decimals).
fn numbers(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while i < b.len() {
        if b[i].is_ascii_digit()
            && (i == 0 || !b[i - 1].is_ascii_alphanumeric() && b[i - 1] != b'-' || b[i - 1] == b' ')
        {
            let start = i;
            while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
                i += 1;
            }
            out.push((start, i));
        } else {
            i += 1;
        }
    }
    out
}

/// Byte ranges of mapping keys (`name:` followed by a space or line end).
fn keys(text: &str) -> Vec<(usize, usize)> {
    let b = text.as_bytes();
    let mut out = Vec::new();
    for (i, &c) in b.iter().enumerate() {
        if c == b':' && matches!(b.get(i + 1), None | Some(b' ' | b'\n')) {
            let mut s = i;
            while s > 0 && (b[s - 1].is_ascii_alphanumeric() || b[s - 1] == b'_') {
                s -= 1;
            }
            if s < i {
                out.push((s, i));
            }
        }
    }
    out
}

fn apply(text: &str, m: &Mutation) -> String {
    let mut lines: Vec<&str> = text.split('\n').collect();
    let n_lines = lines.len().max(1);
    match m {
        Mutation::DeleteByte(i) => {
            let mut b = text.as_bytes().to_vec();
            if !b.is_empty() {
                b.remove(i % b.len());
            }
            String::from_utf8_lossy(&b).into_owned()
        }
        Mutation::InsertByte(i, c) => {
            let mut b = text.as_bytes().to_vec();
            b.insert(i % (b.len() + 1), *c);
            String::from_utf8_lossy(&b).into_owned()
        }
        Mutation::DeleteLine(i) => {
            lines.remove(i % n_lines);
            lines.join("\n")
        }
        Mutation::SwapLines(a, b) => {
            lines.swap(a % n_lines, b % n_lines);
            lines.join("\n")
        }
        Mutation::DuplicateLine(i) => {
            let l = lines[i % n_lines];
            lines.insert(i % n_lines, l);
            lines.join("\n")
        }
        Mutation::ReplaceNumber(i, e) => {
            let nums = numbers(text);
            if nums.is_empty() {
                return text.to_string();
            }
            let (s, t) = nums[i % nums.len()];
            format!("{}{}{}", &text[..s], EXTREMES[*e], &text[t..])
        }
        Mutation::RenameKey(i, k) => {
            let ks = keys(text);
            if ks.is_empty() {
                return text.to_string();
            }
            let (s, t) = ks[i % ks.len()];
            format!("{}{}{}", &text[..s], KEYS[*k], &text[t..])
        }
        Mutation::Truncate(i) => {
            let mut cut = i % (text.len() + 1);
            while !text.is_char_boundary(cut) {
                cut -= 1;
            }
            text[..cut].to_string()
        }
    }
}

fn assert_well_formed<T>(r: Result<T, Vec<Diagnostic>>) -> Result<(), TestCaseError> {
    if let Err(d) = r {
        prop_assert!(!d.is_empty(), "refused without a diagnostic");
        for x in &d {
            prop_assert!(!x.message.is_empty(), "empty message: {x:?}");
            prop_assert!(
                x.line.is_some() || x.column.is_none(),
                "column without line: {x:?}"
            );
        }
    }
    Ok(())
}

fn mutated(seed: &str, ms: &[Mutation]) -> String {
    ms.iter().fold(seed.to_string(), |t, m| apply(&t, m))
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn mutated_plant_never_panics(ms in prop::collection::vec(mutation(), 1..4)) {
        let text = mutated(plant_text(), &ms);
        assert_well_formed(parse_plant(&text, "p.yaml"))?;
    }

    #[test]
    fn mutated_cases_never_panic(ms in prop::collection::vec(mutation(), 1..4)) {
        static T: OnceLock<String> = OnceLock::new();
        let seed = T.get_or_init(|| read("cases_ok.yaml"));
        let text = mutated(seed, &ms);
        assert_well_formed(parse_cases(&text, "c.yaml", base_plant()))?;
    }

    #[test]
    fn mutated_scheme_never_panics(ms in prop::collection::vec(mutation(), 1..4)) {
        static T: OnceLock<String> = OnceLock::new();
        let seed = T.get_or_init(|| read("scheme_ok.yaml"));
        let text = mutated(seed, &ms);
        assert_well_formed(parse_scheme(&text, "s.yaml", base_plant()))?;
    }

    #[test]
    fn mutated_demo_plant_never_panics(ms in prop::collection::vec(mutation(), 1..4)) {
        static T: OnceLock<String> = OnceLock::new();
        let seed = T.get_or_init(|| {
            let p = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("examples/biorefinery/plant.yaml");
            std::fs::read_to_string(p).unwrap()
        });
        let text = mutated(seed, &ms);
        assert_well_formed(parse_plant(&text, "demo.yaml"))?;
    }

    #[test]
    fn arbitrary_text_never_panics(text in "\\PC{0,300}") {
        assert_well_formed(parse_plant(&text, "p.yaml"))?;
        assert_well_formed(parse_cases(&text, "c.yaml", base_plant()))?;
        assert_well_formed(parse_scheme(&text, "s.yaml", base_plant()))?;
    }

    /// Every number of the plant replaced, one at a time, by a non-finite value: the plant is
    /// refused (no model may carry a NaN or an infinity) and a diagnostic says "finite" or names
    /// the value as not allowed.
    #[test]
    fn non_finite_numbers_are_refused(i in any::<usize>(), e in 0..5usize) {
        let nums = numbers(plant_text());
        let (s, t) = nums[i % nums.len()];
        let text = format!("{}{}{}", &plant_text()[..s], EXTREMES[e], &plant_text()[t..]);
        match parse_plant(&text, "p.yaml") {
            Ok(p) => prop_assert!(false, "accepted {} at byte {s}: {p:?}", EXTREMES[e]),
            Err(d) => prop_assert!(
                d.iter().any(|x| x.message.contains("finite") || x.message.contains("NaN")
                    || x.message.contains("inf") || x.message.contains("expected")),
                "{} at byte {s}: {d:?}", EXTREMES[e]
            ),
        }
    }
}

#[test]
fn numbers_and_keys_are_found_in_the_seed() {
    // The mutators must have something to work on, or the properties above test nothing.
    assert!(numbers(plant_text()).len() > 20);
    assert!(keys(plant_text()).len() > 10);
}
