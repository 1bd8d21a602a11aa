//! A plant file with some numbers changed: every other character of the file kept (comments,
//! order, layout, `# nadir-ok` acknowledgements), each changed value noted in a comment line just
//! above it. Used for a calibrated plant file.
//!
//! Owns the text edit only: it finds each field with the file's own line/column map
//! ([`super::locate`]), replaces the plain number written there, or adds the key where the item
//! leaves it to its default, and reads the result back through the plant reader. It must not
//! decide which values change; the caller gives them.

use super::locate::{FieldPath, Locator};
use super::Diagnostic;

/// One number to write into the plant file.
#[derive(Debug, Clone, PartialEq)]
pub struct ValueEdit {
    /// The top-level list holding the item: `generators` or `loads`.
    pub list: &'static str,
    /// The item's position in that list (the model's index).
    pub index: usize,
    /// Keys below the item, e.g. `["inertia_s"]` or `["governor", "droop_pct"]`.
    pub keys: Vec<&'static str>,
    pub value: f64,
    /// Written as a comment line above the value (without the `#`).
    pub note: String,
}

/// `text` (the plant file named `file`) with every edit made, `header` (comment lines, without
/// `#`) put at the top, read back through the plant reader. Errors name the field that cannot be
/// rewritten and why.
pub fn plant_with_values(
    text: &str,
    file: &str,
    header: &[String],
    edits: &[ValueEdit],
) -> Result<String, Vec<Diagnostic>> {
    let locator = Locator::new(text);
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    // Replacements and additions, each at (line index, char column), with its note.
    let mut changes: Vec<Change> = Vec::new();
    let mut problems = Vec::new();
    for e in edits {
        let item = FieldPath::root().key(e.list).index(e.index);
        let mut path = item.clone();
        for k in &e.keys {
            path = path.key(k);
        }
        let fail = |message: String| Diagnostic {
            file: file.to_string(),
            line: locator.value(&path).map(|p| p.0),
            column: None,
            path: path.to_string(),
            message,
            help: Some(
                "write the value as a plain number on the item's own line in the plant file, \
                 then run the calibration again"
                    .into(),
            ),
        };
        let value = number(e.value);
        if locator.exists(&path) {
            let Some((line, col)) = locator.value(&path) else {
                problems.push(fail("the field's place in the file is not known".into()));
                continue;
            };
            let Some(l) = lines.get(line - 1) else {
                problems.push(fail("the field's line is past the end of the file".into()));
                continue;
            };
            let chars: Vec<char> = l.chars().collect();
            let start = col - 1;
            let mut end = start;
            while end < chars.len() && !matches!(chars[end], ',' | '}' | ']' | '#' | ' ' | '\t') {
                end += 1;
            }
            let token: String = chars.get(start..end).unwrap_or(&[]).iter().collect();
            if token.parse::<f64>().is_err() {
                problems.push(fail(format!(
                    "the value written there (`{token}`) is not a plain number"
                )));
                continue;
            }
            changes.push(Change {
                line: line - 1,
                col: start,
                remove: end - start,
                insert: value,
                note: e.note.clone(),
            });
        } else {
            // The key is absent (its default applies): add it to the mapping that should hold it.
            let mut parent = item.clone();
            for k in &e.keys[..e.keys.len() - 1] {
                parent = parent.key(k);
            }
            let key = e.keys[e.keys.len() - 1];
            if !locator.exists(&parent) {
                problems.push(fail(format!(
                    "`{}` is not written in the file, so `{key}` cannot be added",
                    parent
                )));
                continue;
            }
            let Some((line, col)) = locator.value(&parent) else {
                problems.push(fail("the item's place in the file is not known".into()));
                continue;
            };
            let chars: Vec<char> = lines[line - 1].chars().collect();
            if chars.get(col - 1) == Some(&'{') {
                // A flow mapping: the key goes before its closing brace, on the same line.
                let Some(close) = closing_brace(&chars, col - 1) else {
                    problems.push(fail(
                        "the item's braces do not close on its own line".into(),
                    ));
                    continue;
                };
                let mut at = close;
                while at > 0 && chars[at - 1] == ' ' {
                    at -= 1;
                }
                changes.push(Change {
                    line: line - 1,
                    col: at,
                    remove: 0,
                    insert: format!(", {key}: {value}"),
                    note: e.note.clone(),
                });
            } else {
                // A block mapping: a new line at the indentation of its first key.
                changes.push(Change {
                    line: line - 1,
                    col: usize::MAX,
                    remove: 0,
                    insert: format!("{}{key}: {value}", " ".repeat(col - 1)),
                    note: e.note.clone(),
                });
            }
        }
    }
    if !problems.is_empty() {
        return Err(problems);
    }
    // Last line first, rightmost first, so that earlier places stay valid.
    changes.sort_by(|a, b| (b.line, b.col).cmp(&(a.line, a.col)));
    let mut notes: Vec<(usize, String)> = Vec::new();
    for c in &changes {
        let indent: String = lines[c.line].chars().take_while(|ch| *ch == ' ').collect();
        if c.col == usize::MAX {
            lines.insert(c.line + 1, c.insert.clone());
            // The new key's own line carries its note above it.
            notes.push((
                c.line + 1,
                format!("{}# {}", " ".repeat(leading(&c.insert)), c.note),
            ));
            continue;
        }
        let mut chars: Vec<char> = lines[c.line].chars().collect();
        chars.splice(c.col..c.col + c.remove, c.insert.chars());
        lines[c.line] = chars.into_iter().collect();
        notes.push((c.line, format!("{indent}# {}", c.note)));
    }
    // Notes above their lines, again from the bottom up; the order of notes on one line is the
    // order of the edits.
    notes.sort_by(|a, b| b.0.cmp(&a.0));
    let mut k = 0;
    while k < notes.len() {
        let line = notes[k].0;
        let mut same: Vec<String> = Vec::new();
        while k < notes.len() && notes[k].0 == line {
            same.push(notes[k].1.clone());
            k += 1;
        }
        same.reverse();
        for (j, n) in same.into_iter().enumerate() {
            lines.insert(line + j, n);
        }
    }
    let mut out = String::new();
    for h in header {
        out.push_str("# ");
        out.push_str(h);
        out.push('\n');
    }
    if !header.is_empty() {
        out.push_str("#\n");
    }
    for l in &lines {
        out.push_str(l);
        out.push('\n');
    }
    super::parse_plant(&out, file)?;
    Ok(out)
}

struct Change {
    line: usize,
    /// Char column; `usize::MAX` for a new line after `line`.
    col: usize,
    remove: usize,
    insert: String,
    note: String,
}

fn leading(s: &str) -> usize {
    s.chars().take_while(|c| *c == ' ').count()
}

/// The index of the `}` that closes the brace at `open`, on the same line (quotes respected).
fn closing_brace(chars: &[char], open: usize) -> Option<usize> {
    let mut depth = 0usize;
    let mut quote: Option<char> = None;
    for (i, &c) in chars.iter().enumerate().skip(open) {
        match (quote, c) {
            (Some(q), c) if c == q => quote = None,
            (Some(_), _) => {}
            (None, '"') | (None, '\'') => quote = Some(c),
            (None, '#') if i > 0 && chars[i - 1] == ' ' => return None,
            (None, '{') => depth += 1,
            (None, '}') => {
                depth -= 1;
                if depth == 0 {
                    return Some(i);
                }
            }
            _ => {}
        }
    }
    None
}

/// A fitted number as written into the file: four decimals at most, trailing zeros dropped.
pub fn number(v: f64) -> String {
    let s = format!("{v:.4}");
    let s = if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const PLANT: &str = "plant: { name: t, nominal_hz: 50 }\nsections: [a]\ngenerators:\n  # the main set\n  - id: g1\n    section: a\n    rating_mva: 10\n    inertia_s: 4.5   # nadir-ok: inertia-range\n    output_mw: 5\n    min_mw: 1\n    max_mw: 9\n    governor: { model: steam, droop_pct: 4, governor_s: 0.3, turbine_s: 0.5 }\nloads:\n  - { id: l1, section: a, p_mw: 4.9, rank: 1, freq_exp: 2.5 }\n  - { id: l2, section: a, p_mw: 0.1, rank: 2 }\noperating_points:\n  - id: op\n";

    fn edit(list: &'static str, index: usize, keys: Vec<&'static str>, value: f64) -> ValueEdit {
        ValueEdit {
            list,
            index,
            keys,
            value,
            note: format!("fitted {value}"),
        }
    }

    #[test]
    fn values_are_replaced_in_place_with_comments_and_acknowledgements_kept() {
        let out = plant_with_values(
            PLANT,
            "p.yaml",
            &["calibrated".into()],
            &[
                edit("generators", 0, vec!["inertia_s"], 3.25),
                edit("generators", 0, vec!["governor", "turbine_s"], 0.8),
                edit("loads", 0, vec!["freq_exp"], 1.75),
                edit("loads", 1, vec!["inertia_s"], 0.5),
            ],
        )
        .unwrap();
        assert!(out.starts_with("# calibrated\n#\nplant:"));
        assert!(out.contains("  # the main set\n"));
        assert!(
            out.contains("    # fitted 3.25\n    inertia_s: 3.25   # nadir-ok: inertia-range\n")
        );
        assert!(out.contains("turbine_s: 0.8 }"));
        assert!(out.contains(
            "  # fitted 1.75\n  - { id: l1, section: a, p_mw: 4.9, rank: 1, freq_exp: 1.75 }"
        ));
        assert!(out.contains("- { id: l2, section: a, p_mw: 0.1, rank: 2, inertia_s: 0.5 }"));
        let plant = super::super::parse_plant(&out, "p.yaml").unwrap();
        assert_eq!(plant.generators[0].inertia_s, 3.25);
        assert_eq!(plant.loads[0].freq_exp, 1.75);
        assert_eq!(plant.loads[1].inertia_s, 0.5);
    }

    #[test]
    fn numbers_are_short() {
        assert_eq!(number(4.0), "4");
        assert_eq!(number(0.123456), "0.1235");
        assert_eq!(number(-0.00001), "0");
    }
}
