//! Plausibility warnings and notes: a channel apart from errors. A warning says that a value is
//! allowed but looks like a slip (a rating in kVA, a droop written as a fraction); a note shows a
//! figure nadir worked out for the user (the import that balances an operating point).
//!
//! Owns the warning codes, their wording on the terminal, and the acknowledgement comment: a
//! warning is acknowledged when the line of the value it concerns, or a comment-only line right
//! above it, carries `# nadir-ok: CODE` (several codes separated by commas; any text after the
//! codes is the reason, kept for the report). Which values draw a warning is decided by
//! [`super::validate`]; this file must not look at values.

use std::fmt;

/// What a warning is about. Each has a fixed kebab-case name, used in messages, in the
/// acknowledgement comment and in machine-readable output.
#[derive(
    Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize, schemars::JsonSchema,
)]
#[serde(rename_all = "kebab-case")]
pub enum Code {
    /// A machine rating far above the plant's whole load (likely kVA written as MVA).
    RatingVsLoad,
    /// A load larger than all generation plus import (likely kW written as MW).
    LoadVsSupply,
    /// A droop below 1 % (likely a fraction written where a percentage is expected).
    LowDroop,
    /// An inertia constant outside the typical range of its prime mover.
    InertiaRange,
    /// A frequency setting nearer the other nominal frequency (a 50 Hz habit on a 60 Hz plant or
    /// the reverse).
    OtherNominal,
    /// A time constant so short that the run treats it as instantaneous.
    ShortLag,
    /// Not a warning: a figure nadir computed, such as the import of `import_mw: balance`.
    Computed,
}

impl Code {
    /// Every code that a `nadir-ok` comment may name.
    pub const WARNINGS: [Code; 6] = [
        Code::RatingVsLoad,
        Code::LoadVsSupply,
        Code::LowDroop,
        Code::InertiaRange,
        Code::OtherNominal,
        Code::ShortLag,
    ];

    /// The name written in messages and in `# nadir-ok: NAME`.
    pub fn name(self) -> &'static str {
        match self {
            Code::RatingVsLoad => "rating-vs-load",
            Code::LoadVsSupply => "load-vs-supply",
            Code::LowDroop => "low-droop",
            Code::InertiaRange => "inertia-range",
            Code::OtherNominal => "other-nominal",
            Code::ShortLag => "short-lag",
            Code::Computed => "computed",
        }
    }

    /// A note informs; it is never denied and needs no acknowledgement.
    pub fn is_note(self) -> bool {
        self == Code::Computed
    }

    fn from_name(name: &str) -> Option<Code> {
        Code::WARNINGS.into_iter().find(|c| c.name() == name)
    }
}

/// One plausibility warning (or note) in an input file.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, schemars::JsonSchema)]
pub struct Warning {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line of the value, when known.
    pub line: Option<usize>,
    /// 1-based column of the value, when known.
    pub column: Option<usize>,
    /// Field path such as `generators[2].governor.droop_pct`.
    pub path: String,
    pub code: Code,
    /// The value as the message shows it, with its unit (`25000 MVA`).
    pub value: String,
    /// Why it looks wrong (lower case, no full stop).
    pub message: String,
    /// The likely fix.
    pub help: String,
    /// The reason written after the code when a `nadir-ok` comment acknowledges it (empty when
    /// none is given); none while the warning is open.
    pub acknowledged: Option<String>,
}

impl Warning {
    /// A warning that counts: not a note and not acknowledged in the file.
    pub fn is_open(&self) -> bool {
        !self.code.is_note() && self.acknowledged.is_none()
    }

    /// `file:line:col` or as much of it as is known.
    pub fn place(&self) -> String {
        let mut s = self.file.clone();
        if let Some(line) = self.line {
            s.push_str(&format!(":{line}"));
            if let Some(col) = self.column {
                s.push_str(&format!(":{col}"));
            }
        }
        s
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.code.is_note() {
            write!(
                f,
                "{}: note: {} = {}: {}",
                self.place(),
                self.path,
                self.value,
                self.message
            )?;
            if !self.help.is_empty() {
                write!(f, "\n    {}", self.help)?;
            }
            return Ok(());
        }
        write!(
            f,
            "{}: warning[{}]: {} = {}: {}\n    help: {}",
            self.place(),
            self.code.name(),
            self.path,
            self.value,
            self.message,
            self.help
        )?;
        match (&self.acknowledged, self.line) {
            (Some(reason), _) if reason.is_empty() => write!(f, "\n    acknowledged in the file"),
            (Some(reason), _) => write!(f, "\n    acknowledged in the file: {reason}"),
            (None, Some(line)) => write!(
                f,
                "\n    if the value is right, end line {line} with `# nadir-ok: {}`",
                self.code.name()
            ),
            (None, None) => Ok(()),
        }
    }
}

/// The `nadir-ok` comments of a file, by line.
#[derive(Debug, Clone, Default)]
pub(crate) struct Acknowledgements {
    /// (1-based line, the line holds nothing but the comment, codes, reason).
    lines: Vec<(usize, bool, Vec<Code>, String)>,
}

/// A `nadir-ok` comment naming a code that does not exist.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct UnknownCode {
    pub line: usize,
    pub column: usize,
    pub name: String,
}

/// The marker that starts an acknowledgement inside a comment.
pub const MARKER: &str = "nadir-ok:";

impl Acknowledgements {
    /// Reads every `# nadir-ok: …` comment of `text`; unknown code names are returned apart.
    pub(crate) fn scan(text: &str) -> (Acknowledgements, Vec<UnknownCode>) {
        let mut acks = Acknowledgements::default();
        let mut unknown = Vec::new();
        for (i, line) in text.lines().enumerate() {
            let Some(hash) = comment_start(line) else {
                continue;
            };
            let comment = &line[hash + 1..];
            let Some(at) = comment.find(MARKER) else {
                continue;
            };
            let rest_start = hash + 1 + at + MARKER.len();
            let mut codes = Vec::new();
            let mut pos = rest_start;
            let bytes = line.as_bytes();
            loop {
                while pos < bytes.len() && bytes[pos] == b' ' {
                    pos += 1;
                }
                let start = pos;
                while pos < bytes.len()
                    && (bytes[pos].is_ascii_alphanumeric()
                        || bytes[pos] == b'-'
                        || bytes[pos] == b'_')
                {
                    pos += 1;
                }
                let word = &line[start..pos];
                if word.is_empty() {
                    break;
                }
                match Code::from_name(word) {
                    Some(c) => codes.push(c),
                    None => unknown.push(UnknownCode {
                        line: i + 1,
                        column: line[..start].chars().count() + 1,
                        name: word.to_string(),
                    }),
                }
                let mut look = pos;
                while look < bytes.len() && bytes[look] == b' ' {
                    look += 1;
                }
                if look < bytes.len() && bytes[look] == b',' {
                    pos = look + 1;
                } else {
                    break;
                }
            }
            let reason = line[pos..]
                .trim()
                .trim_start_matches(['-', '—', ':', '('])
                .trim_end_matches(')')
                .trim()
                .to_string();
            let alone = line[..hash].trim().is_empty();
            acks.lines.push((i + 1, alone, codes, reason));
        }
        (acks, unknown)
    }

    /// The reason given for `code` on `line` or on a comment-only line right above it.
    pub(crate) fn find(&self, code: Code, line: usize) -> Option<String> {
        self.lines
            .iter()
            .find(|(l, alone, codes, _)| {
                codes.contains(&code) && (*l == line || (*alone && *l + 1 == line))
            })
            .map(|(_, _, _, reason)| reason.clone())
    }
}

/// Byte offset of the `#` that starts a YAML comment on this line, if any: at the line start or
/// after white space, outside quotes.
fn comment_start(line: &str) -> Option<usize> {
    let mut quote: Option<char> = None;
    let mut prev = ' ';
    for (i, c) in line.char_indices() {
        match quote {
            Some(q) if c == q => quote = None,
            Some(_) => {}
            None if c == '#' && (prev == ' ' || prev == '\t' || i == 0) => return Some(i),
            None if (c == '"' || c == '\'')
                && (prev == ' '
                    || prev == ':'
                    || prev == '['
                    || prev == '{'
                    || prev == ','
                    || i == 0) =>
            {
                quote = Some(c)
            }
            None => {}
        }
        prev = c;
    }
    None
}

/// Every code with its name, for the "known codes" of a message.
pub fn code_names() -> Vec<&'static str> {
    Code::WARNINGS.iter().map(|c| c.name()).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_comment_on_the_line_or_alone_above_acknowledges() {
        let text = "a:\n  droop_pct: 0.5   # nadir-ok: low-droop, inertia-range trim droop per maker\n  # nadir-ok: rating-vs-load\n  rating_mva: 900\n  name: \"x # nadir-ok: short-lag\"\n";
        let (acks, unknown) = Acknowledgements::scan(text);
        assert!(unknown.is_empty());
        assert_eq!(
            acks.find(Code::LowDroop, 2).as_deref(),
            Some("trim droop per maker")
        );
        assert!(acks.find(Code::InertiaRange, 2).is_some());
        assert!(acks.find(Code::RatingVsLoad, 4).is_some());
        assert!(acks.find(Code::RatingVsLoad, 3).is_some());
        // A comment after a value acknowledges its own line only, not the next one.
        assert!(acks.find(Code::LowDroop, 3).is_none());
        // Inside quotes it is text, not a comment.
        assert!(acks.find(Code::ShortLag, 5).is_none());
    }

    #[test]
    fn machine_readable_names_are_the_comment_names() {
        for c in Code::WARNINGS {
            assert_eq!(
                serde_json::to_value(c).unwrap(),
                serde_json::Value::String(c.name().to_string())
            );
        }
    }

    #[test]
    fn an_unknown_code_is_reported_with_its_column() {
        let (_, unknown) = Acknowledgements::scan("x: 1  # nadir-ok: low-drop\n");
        assert_eq!(
            unknown,
            vec![UnknownCode {
                line: 1,
                column: 19,
                name: "low-drop".into()
            }]
        );
    }
}
