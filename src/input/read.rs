//! Text to raw types: YAML syntax, then every top-level field and every list item deserialized on
//! its own so that type errors in different items are all reported, not only the first.
//!
//! Owns the [`Reader`] (file name, locator and the growing list of diagnostics) and the wording of
//! serde's type errors. It must not check meaning (ranges, ids); that is [`super::validate`].

use super::limits::{self, Limit, Limits};
use super::locate::{FieldPath, Locator, Seg};
use super::warn::{code_names, Acknowledgements, Code, UnknownCode, Warning};
use super::Diagnostic;
use serde::de::DeserializeOwned;
use serde_yaml::{Mapping, Value};

/// A list item that either deserialized or did not; a broken one keeps its `id` when it had one,
/// so that references to it are not reported as unknown as well.
#[derive(Debug, Clone)]
pub enum Slot<T> {
    Ok(T),
    Broken(Option<String>),
}

/// Collects diagnostics for one file and knows where each field path is written.
pub struct Reader {
    file: String,
    locator: Locator,
    pub limits: Limits,
    pub diagnostics: Vec<Diagnostic>,
    /// Diagnostics past [`limits::MAX_DIAGNOSTICS`], counted but not kept.
    pub suppressed: usize,
    /// A list was refused for its length; its items were not read, so the validators stop
    /// before cross-checks that would report every reference to them as unknown.
    pub over_limit: bool,
    /// Plausibility warnings and notes, acknowledged ones included (marked).
    pub warnings: Vec<Warning>,
    acks: Acknowledgements,
    unknown_acks: Vec<UnknownCode>,
}

/// Whether a diagnostic points at a key (unknown or misplaced field) or at a value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum At {
    Key,
    Value,
}

impl Reader {
    /// Parses the YAML syntax; a syntax error (or a text above the size limit) is the one
    /// diagnostic of the file.
    pub fn open(
        text: &str,
        file: &str,
        limits: &Limits,
    ) -> Result<(Reader, Mapping), Vec<Diagnostic>> {
        let bytes = text.len() as u64;
        if limits.exceeded(limits::FILE_BYTES, bytes) {
            return Err(vec![size_diagnostic(file, limits, Some(bytes))]);
        }
        if let Some((line, column)) = flow_nesting_beyond(text, MAX_FLOW_DEPTH) {
            return Err(vec![Diagnostic {
                file: file.to_string(),
                line: Some(line),
                column: Some(column),
                path: String::new(),
                message: format!(
                    "the file nests deeper than the reader's limit (more than {MAX_FLOW_DEPTH} \
                     open brackets at line {line} column {column})"
                ),
                help: Some(syntax_help("recursion limit exceeded").to_string()),
            }]);
        }
        let mut value: Value = match serde_yaml::from_str(text) {
            Ok(v) => v,
            Err(e) => {
                let (line, column) = match e.location() {
                    Some(l) => (Some(l.line()), Some(l.column())),
                    None => (None, None),
                };
                let text = e.to_string();
                if let Some((path, digits)) = beyond_64_bits(&text) {
                    return Err(vec![Diagnostic {
                        file: file.to_string(),
                        line,
                        column,
                        path,
                        message: if digits.starts_with('-') {
                            format!(
                                "the whole number {digits} is too far below zero for this field"
                            )
                        } else {
                            format!(
                                "the whole number {digits} is too large for this field (no field \
                                 takes more than {})",
                                u64::MAX
                            )
                        },
                        help: Some(
                            "write a number within the field's range; `nadir schema` describes \
                             each field"
                                .to_string(),
                        ),
                    }]);
                }
                return Err(vec![Diagnostic {
                    file: file.to_string(),
                    line,
                    column,
                    path: String::new(),
                    message: syntax_message(&text),
                    help: Some(syntax_help(&text).to_string()),
                }]);
            }
        };
        let (acks, unknown_acks) = Acknowledgements::scan(text);
        let mut reader = Reader {
            file: file.to_string(),
            locator: Locator::new(text),
            limits: limits.clone(),
            diagnostics: Vec::new(),
            suppressed: 0,
            over_limit: false,
            warnings: Vec::new(),
            acks,
            unknown_acks,
        };
        if let Err((path, message)) = apply_merges(&mut value, &FieldPath::root()) {
            return Err(vec![reader.make(
                &path,
                At::Key,
                message,
                Some(
                    "write `<<: *name` where `&name` marks a mapping, or `<<: [*a, *b]` for several"
                        .to_string(),
                ),
            )]);
        }
        // Tags are refused, not dropped: a value must mean what it says without one.
        let mut tags = Vec::new();
        untag(&mut value, &FieldPath::root(), &mut tags);
        for (path, tag) in tags {
            reader.error(
                &path,
                format!("the tag `{tag}` is not supported; nadir's files hold plain values"),
                format!("remove `{tag}` and write the value alone"),
            );
        }
        match value {
            Value::Mapping(m) => Ok((reader, m)),
            Value::Null => Err(vec![reader.make(
                &FieldPath::root(),
                At::Value,
                "the file is empty".to_string(),
                Some("write the file's top-level fields; `nadir schema` lists them".to_string()),
            )]),
            other => Err(vec![reader.make(
                &FieldPath::root(),
                At::Value,
                format!(
                    "the file holds {}, expected a mapping of top-level fields",
                    describe(&other)
                ),
                Some("write the file's top-level fields as `name: value` lines".to_string()),
            )]),
        }
    }

    fn make(&self, path: &FieldPath, at: At, message: String, help: Option<String>) -> Diagnostic {
        let place = match at {
            At::Key => self.locator.key(path),
            At::Value => self.locator.value(path),
        };
        Diagnostic {
            file: self.file.clone(),
            line: place.map(|p| p.0),
            column: place.map(|p| p.1),
            path: path.to_string(),
            message,
            help,
        }
    }

    /// Whether the list of kept diagnostics is full; callers may skip costly hints then.
    pub fn full(&self) -> bool {
        self.diagnostics.len() >= limits::MAX_DIAGNOSTICS
    }

    /// Records a mistake in the value at `path`.
    pub fn error(&mut self, path: &FieldPath, message: String, help: impl Into<Option<String>>) {
        if self.full() {
            self.suppressed += 1;
            return;
        }
        let d = self.make(path, At::Value, message, help.into());
        self.diagnostics.push(d);
    }

    /// Records a mistake in the key that ends `path`.
    pub fn error_at_key(
        &mut self,
        path: &FieldPath,
        message: String,
        help: impl Into<Option<String>>,
    ) {
        if self.full() {
            self.suppressed += 1;
            return;
        }
        let d = self.make(path, At::Key, message, help.into());
        self.diagnostics.push(d);
    }

    /// Records a plausibility warning (or, for [`Code::Computed`], a note) on the value at `path`;
    /// a `nadir-ok` comment on its line marks it acknowledged.
    pub fn warn(
        &mut self,
        path: &FieldPath,
        code: Code,
        value: String,
        message: String,
        help: String,
    ) {
        if self.warnings.len() >= limits::MAX_DIAGNOSTICS {
            return;
        }
        let place = self.locator.value(path);
        let acknowledged = match (place, code.is_note()) {
            (Some((line, _)), false) => self.acks.find(code, line),
            _ => None,
        };
        self.warnings.push(Warning {
            file: self.file.clone(),
            line: place.map(|p| p.0),
            column: place.map(|p| p.1),
            path: path.to_string(),
            code,
            value,
            message,
            help,
            acknowledged,
        });
    }

    /// Errors for `nadir-ok` comments that name no warning code, once validation is done (so that
    /// a mistyped acknowledgement never hides the file's other messages).
    pub fn check_acknowledgements(&mut self) {
        for u in std::mem::take(&mut self.unknown_acks) {
            if self.full() {
                self.suppressed += 1;
                continue;
            }
            let known = code_names();
            let near = super::validate::near_matches(&u.name, known.iter().copied());
            self.diagnostics.push(Diagnostic {
                file: self.file.clone(),
                line: Some(u.line),
                column: Some(u.column),
                path: String::new(),
                message: format!(
                    "`{}` in a `nadir-ok` comment is not a warning code; known codes: {}",
                    u.name,
                    quoted_list(&known)
                ),
                help: Some(match near.first() {
                    Some(m) => format!("did you mean `{m}`?"),
                    None => "name the code shown in the warning, e.g. `# nadir-ok: low-droop`"
                        .to_string(),
                }),
            });
        }
    }

    /// The 1-based line where `path` is written, for messages that name a first place.
    pub fn line_of(&self, path: &FieldPath) -> Option<usize> {
        self.locator.value(path).map(|p| p.0)
    }

    /// Whether the field at `path` is written in the file (not only an ancestor of it).
    pub fn is_written(&self, path: &FieldPath) -> bool {
        self.locator.exists(path)
    }

    /// Refuses top-level keys that the file format does not have.
    pub fn check_top_keys(&mut self, map: &Mapping, allowed: &[&str]) {
        for key in map.keys() {
            match key.as_str() {
                Some(k) if allowed.contains(&k) => {}
                Some(k) => {
                    let path = FieldPath::root().key(k);
                    let msg = format!(
                        "unknown field `{k}`, expected one of {}",
                        quoted_list(allowed)
                    );
                    let help = unknown_field_help(k, allowed);
                    self.error_at_key(&path, msg, help);
                }
                None => self.error(
                    &FieldPath::root(),
                    format!(
                        "a top-level key must be a name, found {}; expected one of {}",
                        describe(key),
                        quoted_list(allowed)
                    ),
                    None,
                ),
            }
        }
    }

    /// A required top-level field, deserialized as a whole.
    pub fn required<T: DeserializeOwned>(&mut self, map: &Mapping, key: &str) -> Option<T> {
        match map.get(key) {
            Some(v) => self.value(v, &FieldPath::root().key(key)),
            None => {
                self.error(
                    &FieldPath::root().key(key),
                    format!("missing field `{key}`"),
                    format!("add the top-level field `{key}`"),
                );
                None
            }
        }
    }

    /// An optional top-level field; `None` both when absent and when broken (the latter reported).
    pub fn optional<T: DeserializeOwned>(&mut self, map: &Mapping, key: &str) -> Option<T> {
        match map.get(key) {
            None | Some(Value::Null) => None,
            Some(v) => self.value(v, &FieldPath::root().key(key)),
        }
    }

    /// A top-level list, each item on its own. `None` when absent (and reported if `required`),
    /// when the field is not a list at all, or when it has more items than `limit` allows (then
    /// no item is read, so that an oversized list costs one message and little time).
    pub fn list<T: DeserializeOwned>(
        &mut self,
        map: &Mapping,
        key: &str,
        required: bool,
        limit: Limit,
    ) -> Option<Vec<Slot<T>>> {
        let path = FieldPath::root().key(key);
        let seq = match map.get(key) {
            None | Some(Value::Null) => {
                if required {
                    self.error(
                        &path,
                        format!("missing field `{key}`"),
                        format!("add the top-level list `{key}`"),
                    );
                }
                return None;
            }
            Some(Value::Sequence(s)) => s,
            Some(other) => {
                self.error(
                    &path,
                    format!("`{key}` is {}, expected a list", describe(other)),
                    format!("write `{key}` as a list, one `- ` item per entry"),
                );
                return None;
            }
        };
        let n = seq.len() as u64;
        if self.limits.exceeded(limit, n) {
            let subject = format!("`{key}` lists");
            self.error(
                &path,
                limits::over_limit_message(&self.limits, limit, &subject, n),
                limits::over_limit_help(limit, n),
            );
            self.over_limit = true;
            return None;
        }
        let mut out = Vec::with_capacity(seq.len());
        for (i, item) in seq.iter().enumerate() {
            let item_path = path.index(i);
            match self.value::<T>(item, &item_path) {
                Some(t) => out.push(Slot::Ok(t)),
                None => {
                    let id = item
                        .as_mapping()
                        .and_then(|m| m.get("id"))
                        .and_then(|v| v.as_str())
                        .map(str::to_string);
                    let id = id.or_else(|| item.as_str().map(str::to_string));
                    out.push(Slot::Broken(id));
                }
            }
        }
        Some(out)
    }

    /// Deserializes one value, reporting serde's complaint with its full field path.
    pub fn value<T: DeserializeOwned>(&mut self, v: &Value, base: &FieldPath) -> Option<T> {
        match serde_path_to_error::deserialize::<_, T>(v.clone()) {
            Ok(t) => Some(t),
            Err(e) => {
                let mut path = base.clone();
                for seg in e.path().iter() {
                    match seg {
                        serde_path_to_error::Segment::Seq { index } => {
                            path.0.push(Seg::Index(*index))
                        }
                        serde_path_to_error::Segment::Map { key }
                        | serde_path_to_error::Segment::Enum { variant: key } => {
                            path.0.push(Seg::Key(key.clone()))
                        }
                        serde_path_to_error::Segment::Unknown => {}
                    }
                }
                let message = e.inner().to_string();
                self.type_error(path, message);
                None
            }
        }
    }

    fn type_error(&mut self, mut path: FieldPath, message: String) {
        if let Some(name) = between_backticks(&message, "unknown field `") {
            let allowed = backticked_after(&message, "expected one of ");
            let allowed = if allowed.is_empty() {
                backticked_after(&message, "expected ")
            } else {
                allowed
            };
            let allowed_refs: Vec<&str> = allowed.iter().map(String::as_str).collect();
            push_once(&mut path, &name);
            let help = unknown_field_help(&name, &allowed_refs);
            self.error_at_key(&path, message, help);
        } else if let Some(name) = between_backticks(&message, "missing field `") {
            push_once(&mut path, &name);
            self.error(&path, message, format!("add `{name}`; it has no default"));
        } else if let Some(rest) = message.strip_prefix("unknown variant ") {
            // serde's "variant" is the Rust word for one of a field's allowed values.
            self.error(
                &path,
                format!("unknown value {rest}"),
                "use one of the listed values, spelled exactly".to_string(),
            );
        } else if let Some((message, help)) = plain_type_error(&field_of(&path), &message) {
            self.error(&path, message, help);
        } else {
            self.error(&path, message, None);
        }
    }
}

/// Flow brackets (`[`, `{`) open at once beyond which a file is refused before parsing. The yaml
/// parser underneath (libyaml) takes time quadratic in flow nesting (measured: 20 000 levels, a
/// 40 kB file, take 1.5 s; 200 000 levels take over 3 minutes), so depth is counted first, in one
/// pass. serde_yaml refuses any nesting past 128 anyway; the margin covers brackets inside plain
/// block scalars, which this scan counts although yaml does not.
pub const MAX_FLOW_DEPTH: usize = 200;

/// The place (1-based line and column) where more than `max` flow brackets are open, skipping
/// quoted scalars and comments. A quote opens a quoted scalar only where a token can start, as in
/// yaml, so an apostrophe inside a word (`operator's`) does not hide the brackets after it.
fn flow_nesting_beyond(text: &str, max: usize) -> Option<(usize, usize)> {
    #[derive(PartialEq)]
    enum In {
        Plain,
        Single,
        Double,
        Comment,
    }
    let mut state = In::Plain;
    let mut depth: usize = 0;
    let (mut line, mut column) = (1usize, 0usize);
    // Whether the previous character lets a token (a quote, a comment) start here.
    let mut at_token_start = true;
    let mut escaped = false;
    for c in text.chars() {
        column += 1;
        if c == '\n' {
            line += 1;
            column = 0;
            if state == In::Comment {
                state = In::Plain;
            }
            at_token_start = true;
            continue;
        }
        match state {
            In::Comment => {}
            In::Single => {
                // `''` inside a single-quoted scalar closes and reopens: same net effect.
                if c == '\'' {
                    state = In::Plain;
                }
            }
            In::Double => {
                if escaped {
                    escaped = false;
                } else if c == '\\' {
                    escaped = true;
                } else if c == '"' {
                    state = In::Plain;
                }
            }
            In::Plain => {
                match c {
                    '#' if at_token_start => state = In::Comment,
                    '\'' if at_token_start => state = In::Single,
                    '"' if at_token_start => state = In::Double,
                    '[' | '{' => {
                        depth += 1;
                        if depth > max {
                            return Some((line, column));
                        }
                    }
                    ']' | '}' => depth = depth.saturating_sub(1),
                    _ => {}
                }
                at_token_start =
                    c.is_whitespace() || matches!(c, '[' | '{' | ',' | ':' | '-' | '?');
                continue;
            }
        }
        at_token_start = false;
    }
    None
}

/// A whole number past 64 bits, which the yaml reader cannot hold at all and refuses with
/// "invalid type: integer `N` as u128, expected any YAML value": its field path and digits.
fn beyond_64_bits(e: &str) -> Option<(String, String)> {
    let start = e.find("invalid type: integer `")?;
    let digits = ticked_in(&e[start + "invalid type: ".len()..], "integer ")?;
    if !(e.contains("` as u128") || e.contains("` as i128")) {
        return None;
    }
    let path = e[..start].trim_end().trim_end_matches(':').to_string();
    Some((path, digits))
}

/// What is wrong: a syntax error, or one of the reader's guards (alias expansion, nesting depth),
/// which refuse files that are valid yaml but far beyond any input.
fn syntax_message(e: &str) -> String {
    if e.contains("repetition limit exceeded") {
        format!("the file expands aliases beyond the reader's limit ({e})")
    } else if e.contains("recursion limit exceeded") {
        format!("the file nests deeper than the reader's limit ({e})")
    } else {
        format!("the file is not valid yaml: {e}")
    }
}

/// The fix for a syntax error, by what serde_yaml (libyaml) says; the reader's own guards against
/// alias bombs and deep nesting get their own words.
fn syntax_help(message: &str) -> &'static str {
    if message.contains("repetition limit exceeded") {
        "the file expands aliases (`*name`) into far more values than any input needs, as an \
         alias-expansion bomb does; write the values out or use fewer nested aliases"
    } else if message.contains("recursion limit exceeded") {
        "the file nests lists or mappings more than 128 levels deep; no input needs more than a \
         few levels, so check for a runaway bracket or indentation"
    } else if message.contains("more than one document") {
        "keep one document per file: remove the `---` line and everything after it, or split \
         the documents into separate files"
    } else if message.contains("duplicate entry with key") {
        "each key may appear once in a mapping; remove or rename the repeated key"
    } else if message.contains("tab character") {
        "indent with spaces; yaml does not allow tabs for indentation"
    } else {
        "fix the yaml syntax near the place shown; check indentation, colons, brackets and quotes"
    }
}

/// The one diagnostic of a text or file above the size limit; `bytes` is its size when known
/// (a file is read only up to one byte past the limit).
pub fn size_diagnostic(file: &str, limits: &Limits, bytes: Option<u64>) -> Diagnostic {
    let limit = limits::FILE_BYTES;
    let max = limits.get(limit);
    let has = match bytes {
        Some(n) => format!("; it has {n} bytes"),
        None => String::new(),
    };
    Diagnostic {
        file: file.to_string(),
        line: None,
        column: None,
        path: String::new(),
        message: format!(
            "the file is larger than the input size limit {} = {max} bytes ({:.1} MiB){has}",
            limit.name,
            max as f64 / (1024.0 * 1024.0),
        ),
        help: Some(limits::over_limit_help(limit, bytes.unwrap_or(max + 1))),
    }
}

/// serde_path_to_error already ends the path with an unknown field's name; a missing field's
/// name is not in the path. Appends the name only when it is not already there.
fn push_once(path: &mut FieldPath, name: &str) {
    if path.0.last() != Some(&Seg::Key(name.to_string())) {
        path.0.push(Seg::Key(name.to_string()));
    }
}

/// The last name in a field path, for messages (`rank`, `cases[2]`).
fn field_of(path: &FieldPath) -> String {
    match path.0.last() {
        Some(Seg::Key(k)) => format!("`{k}`"),
        Some(Seg::Index(_)) | None if path.0.is_empty() => "the value".to_string(),
        _ => format!("`{path}`"),
    }
}

/// serde's "invalid type: …, expected …" and "invalid value: …, expected …" in plain words, with
/// the fix: no Rust type names (`f64`, `u32`, `u128`), no "unit value".
fn plain_type_error(field: &str, message: &str) -> Option<(String, String)> {
    let rest = message
        .strip_prefix("invalid type: ")
        .or_else(|| message.strip_prefix("invalid value: "))?;
    let (found, want) = rest.rsplit_once(", expected ")?;
    let want = want.trim();
    let expected = plain_expected(want);
    // An integer that does not fit the field says so; so does a huge or negative whole number
    // that the parser could only read as a floating-point number.
    let whole = integer_in(found).or_else(|| {
        let x: f64 = ticked_in(found, "floating point ")?.parse().ok()?;
        (x.is_finite() && x.fract() == 0.0 && (x < 0.0 || x > u64::MAX as f64))
            .then(|| format!("{x:e}"))
    });
    if let (Some(max), Some(n)) = (whole_number_max(want), whole) {
        let message = if n.starts_with('-') {
            format!("{field} is {n}, but it cannot be negative: expected {expected}")
        } else {
            format!("{field} is {n}, too large for this field: expected {expected}")
        };
        return Some((message, format!("write a whole number from 0 to {max}")));
    }
    let message = format!("{field} is {}, expected {expected}", plain_found(found));
    Some((message, format!("write {expected}")))
}

/// The largest value of an unsigned integer field, by serde's type name.
fn whole_number_max(want: &str) -> Option<u64> {
    match want {
        "u8" => Some(u8::MAX as u64),
        "u16" => Some(u16::MAX as u64),
        "u32" => Some(u32::MAX as u64),
        "u64" | "usize" => Some(u64::MAX),
        _ => None,
    }
}

/// The digits of serde's "integer `N`" (also "integer `N` as u128").
fn integer_in(found: &str) -> Option<String> {
    ticked_in(found, "integer ")
}

/// The text between backticks after `prefix` in serde's description of a value.
fn ticked_in(found: &str, prefix: &str) -> Option<String> {
    let rest = found.strip_prefix(prefix)?.strip_prefix('`')?;
    let end = rest.find('`')?;
    Some(rest[..end].to_string())
}

/// What serde found, in words: "unit value" is an empty field.
fn plain_found(found: &str) -> String {
    let ticked = |prefix: &str| ticked_in(found, prefix);
    if found == "unit value" {
        "empty".to_string()
    } else if let Some(n) = ticked("integer ") {
        format!("the whole number {n}")
    } else if let Some(x) = ticked("floating point ") {
        format!("the number {x}")
    } else if let Some(b) = ticked("boolean ") {
        format!("the boolean {b}")
    } else if let Some(text) = found.strip_prefix("string ") {
        format!("the text {text}")
    } else if found == "map" {
        "a mapping".to_string()
    } else if found == "sequence" {
        "a list".to_string()
    } else {
        found.to_string()
    }
}

/// Makes serde's expectation readable for a user (`f64` → `a number`).
fn plain_expected(want: &str) -> String {
    if let Some(max) = whole_number_max(want) {
        return format!("a whole number from 0 to {max}");
    }
    match want {
        "f64" | "f32" => "a number, without units or quotes".to_string(),
        "i64" | "i32" => "a whole number".to_string(),
        "a boolean" => "true or false".to_string(),
        "a string" => "a name (quote it if it looks like a number)".to_string(),
        "a sequence" => "a list".to_string(),
        "a map" | "struct" => "a mapping of fields".to_string(),
        other if other.starts_with("struct ") => "a mapping of fields".to_string(),
        other if other.starts_with("a sequence") => "a list".to_string(),
        other if other.starts_with("a map") => "a mapping".to_string(),
        other => other.to_string(),
    }
}

/// The most merges (`<<`) one file may apply; past it the file is refused. Each merge copies one
/// mapping's keys, so this bounds the work merges can add to an already bounded file.
const MAX_MERGES: usize = 10_000;

/// Applies YAML merge keys (`<<: *defaults`, or `<<: [*a, *b]`; the merge key type of YAML 1.1,
/// yaml.org/type/merge.html): keys written beside `<<` win over merged ones, and of several merged
/// mappings the earlier wins. A merge of anything but a mapping or a list of mappings is refused
/// with its path and a message.
fn apply_merges(v: &mut Value, path: &FieldPath) -> Result<(), (FieldPath, String)> {
    let mut count = 0;
    merge_into(v, path, &mut count)
}

fn merge_into(
    v: &mut Value,
    path: &FieldPath,
    count: &mut usize,
) -> Result<(), (FieldPath, String)> {
    match v {
        Value::Mapping(map) => {
            let merge_key = Value::String("<<".to_string());
            if let Some(source) = map.remove(&merge_key) {
                let here = path.key("<<");
                let sources = match source {
                    Value::Mapping(_) => vec![source],
                    Value::Sequence(list) => list,
                    other => {
                        return Err((
                            here,
                            format!(
                            "a merge key `<<` takes a mapping (or a list of mappings), found {}",
                            describe(&other)
                        ),
                        ))
                    }
                };
                for mut source in sources {
                    *count += 1;
                    if *count > MAX_MERGES {
                        return Err((
                            here,
                            format!("the file applies more than {MAX_MERGES} merge keys `<<`"),
                        ));
                    }
                    merge_into(&mut source, &here, count)?;
                    let Value::Mapping(entries) = source else {
                        return Err((
                            here,
                            format!(
                                "a merge key `<<` takes a mapping (or a list of mappings), found {}",
                                describe(&source)
                            ),
                        ));
                    };
                    for (k, value) in entries {
                        if !map.contains_key(&k) {
                            map.insert(k, value);
                        }
                    }
                }
            }
            for (k, value) in map.iter_mut() {
                let child = match k.as_str() {
                    Some(name) => path.key(name),
                    None => path.clone(),
                };
                merge_into(value, &child, count)?;
            }
            Ok(())
        }
        Value::Sequence(items) => {
            for (i, item) in items.iter_mut().enumerate() {
                merge_into(item, &path.index(i), count)?;
            }
            Ok(())
        }
        Value::Tagged(t) => merge_into(&mut t.value, path, count),
        _ => Ok(()),
    }
}

/// Removes every tag, recording where each was (`!!str` and the other core tags are resolved by
/// the parser and never reach here).
fn untag(v: &mut Value, path: &FieldPath, found: &mut Vec<(FieldPath, String)>) {
    if let Value::Tagged(t) = v {
        found.push((path.clone(), t.tag.to_string()));
        let inner = std::mem::replace(&mut t.value, Value::Null);
        *v = inner;
        untag(v, path, found);
        return;
    }
    match v {
        Value::Mapping(map) => {
            for (k, value) in map.iter_mut() {
                let child = match k.as_str() {
                    Some(name) => path.key(name),
                    None => path.clone(),
                };
                untag(value, &child, found);
            }
        }
        Value::Sequence(items) => {
            for (i, item) in items.iter_mut().enumerate() {
                untag(item, &path.index(i), found);
            }
        }
        _ => {}
    }
}

/// A short description of a YAML value for messages.
pub fn describe(v: &Value) -> String {
    match v {
        Value::Null => "empty".to_string(),
        Value::Bool(b) => format!("the boolean {b}"),
        Value::Number(n) => format!("the number {n}"),
        Value::String(s) => format!("the text \"{s}\""),
        Value::Sequence(_) => "a list".to_string(),
        Value::Mapping(_) => "a mapping".to_string(),
        Value::Tagged(t) => format!("a value tagged {}", t.tag),
    }
}

fn between_backticks(message: &str, prefix: &str) -> Option<String> {
    let rest = message.strip_prefix(prefix)?;
    let end = rest.find('`')?;
    Some(rest[..end].to_string())
}

fn backticked_after(message: &str, marker: &str) -> Vec<String> {
    let Some(start) = message.find(marker) else {
        return Vec::new();
    };
    message[start + marker.len()..]
        .split('`')
        .skip(1)
        .step_by(2)
        .map(str::to_string)
        .collect()
}

/// `a`, `b`, `c` for messages.
pub fn quoted_list<S: AsRef<str>>(items: &[S]) -> String {
    items
        .iter()
        .map(|s| format!("`{}`", s.as_ref()))
        .collect::<Vec<_>>()
        .join(", ")
}

fn unknown_field_help(name: &str, allowed: &[&str]) -> String {
    match super::validate::near_matches(name, allowed.iter().copied()).first() {
        Some(m) => format!("did you mean `{m}`? otherwise remove `{name}`"),
        None => format!("remove `{name}` or check its indentation"),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn syntax_error_is_one_diagnostic_with_a_place() {
        let Err(d) = Reader::open("stages:\n  - id: \"open\n", "s.yaml", &Limits::defaults())
        else {
            panic!("expected a syntax error");
        };
        assert_eq!(d.len(), 1);
        assert!(d[0].line.is_some());
        assert!(d[0].message.starts_with("the file is not valid yaml"));
    }

    #[test]
    fn flow_nesting_scan_skips_quotes_and_comments() {
        assert_eq!(flow_nesting_beyond("a: [[[]]]", 3), None);
        assert_eq!(flow_nesting_beyond("a: [[[[]]]]", 3), Some((1, 7)));
        assert_eq!(
            flow_nesting_beyond("a: \"[[[[\"\nb: '{{{{' # [[[[\n", 3),
            None
        );
        // An apostrophe inside a word opens nothing, so the brackets after it still count.
        assert_eq!(flow_nesting_beyond("a: it's\nb: [[[[]]]]", 3), Some((2, 7)));
        // Closing brackets inside a string cannot cancel real ones.
        assert_eq!(
            flow_nesting_beyond("a: [ \"]]\", [ \"]]\", [ \"]]\", [ ] ] ] ]", 3),
            Some((1, 28))
        );
    }

    #[test]
    fn type_errors_in_two_items_are_both_reported() {
        let text = "stages:\n  - { id: a, delay_s: fast, sheds: [x] }\n  - { id: b, delay_s: 0.1, sheds: x }\n";
        let (mut r, map) = Reader::open(text, "s.yaml", &Limits::defaults()).unwrap();
        let items = r
            .list::<crate::input::raw::RawStage>(&map, "stages", true, limits::STAGES)
            .unwrap();
        assert_eq!(items.len(), 2);
        assert_eq!(r.diagnostics.len(), 2);
        assert_eq!(r.diagnostics[0].path, "stages[0].delay_s");
        assert_eq!(r.diagnostics[0].line, Some(2));
        assert_eq!(r.diagnostics[1].path, "stages[1].sheds");
        assert_eq!(r.diagnostics[1].line, Some(3));
    }

    #[test]
    fn unknown_field_points_at_the_key_and_suggests() {
        let text = "stages:\n  - id: a\n    dealy_s: 0.1\n    sheds: [x]\n";
        let (mut r, map) = Reader::open(text, "s.yaml", &Limits::defaults()).unwrap();
        r.list::<crate::input::raw::RawStage>(&map, "stages", true, limits::STAGES);
        let d = &r.diagnostics[0];
        assert_eq!(d.path, "stages[0].dealy_s");
        assert_eq!((d.line, d.column), (Some(3), Some(5)));
        assert!(d.message.contains("unknown field `dealy_s`"));
        assert!(d.message.contains("`delay_s`"));
        assert!(d
            .help
            .as_deref()
            .unwrap()
            .contains("did you mean `delay_s`"));
    }
}
