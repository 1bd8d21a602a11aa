//! Rows → the plant file's `loads:` block, put in place of the plant file's own, and the plant
//! reader's verdict on the result mapped back to the list's rows and columns.
//!
//! Only the `loads:` block is replaced: every other line of the plant file (comments included)
//! is kept byte for byte. The block runs from the line that starts with `loads:` to the next line
//! that starts a top-level key, less the blank and comment lines right above that key (they belong
//! to it).

use super::columns::Field;
use super::rows::{Header, Row};
use crate::input::Diagnostic;

/// Where the `loads:` block is in a plant file's lines: `start` its first line, `end` one past its
/// last (0-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Block {
    pub start: usize,
    pub end: usize,
}

/// The `loads:` block of a plant file's text, if it has one at the top level.
pub fn find_block(lines: &[&str]) -> Option<Block> {
    let is_key = |l: &str| l.starts_with(|c: char| !c.is_whitespace() && c != '#' && c != '-');
    let start = lines.iter().position(|l| {
        l.strip_prefix("loads")
            .and_then(|r| r.trim_start().strip_prefix(':'))
            .is_some_and(|r| r.is_empty() || r.starts_with([' ', '\t']))
    })?;
    let mut end = lines[start + 1..]
        .iter()
        .position(|l| is_key(l))
        .map_or(lines.len(), |p| start + 1 + p);
    if end < lines.len() {
        while end > start + 1 && {
            let l = lines[end - 1];
            l.trim().is_empty() || l.starts_with('#')
        } {
            end -= 1;
        }
    }
    Some(Block { start, end })
}

/// A YAML scalar for an id or section: plain when it reads back as the same text, else quoted.
fn scalar(text: &str) -> String {
    let plain = !text.is_empty()
        && text
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.' | '/'))
        && text.starts_with(|c: char| c.is_ascii_alphanumeric())
        && text.parse::<f64>().is_err()
        && !matches!(
            text.to_ascii_lowercase().as_str(),
            "true" | "false" | "yes" | "no" | "on" | "off" | "null" | "y" | "n" | "inf" | "nan"
        )
        && !text.starts_with("0x")
        && !text.starts_with("0o");
    if plain {
        text.to_string()
    } else {
        quoted(text)
    }
}

/// A double-quoted YAML string (JSON's escapes are YAML's).
fn quoted(text: &str) -> String {
    serde_json::to_string(text).unwrap_or_else(|_| "\"\"".to_string())
}

/// A number as the plant file reads it back exactly (Rust prints the shortest text that parses
/// to the same f64).
fn num(v: f64) -> String {
    let s = format!("{v}");
    if s.contains('.') || s.contains('e') || s.contains("inf") || s.contains("NaN") {
        s
    } else {
        format!("{s}.0")
    }
}

/// The `loads:` block for `rows`, one load per line in flow style, the exponent's source as a
/// comment where it came from a load type; `source` names the list in the block's first comment.
pub fn block_text(rows: &[Row], source: &str) -> Vec<String> {
    let mut out = vec![
        format!(
            "# Loads imported from {} by `nadir loads import`; where an exponent came from a load \
             type, its source is noted on the line.",
            source.replace('\n', " ")
        ),
        "loads:".to_string(),
    ];
    for r in rows {
        let mut s = format!(
            "  - {{ id: {}, section: {}, p_mw: {}, rank: {}",
            scalar(&r.id),
            scalar(&r.section),
            num(r.p_mw),
            r.rank
        );
        if r.never_shed {
            s.push_str(", never_shed: true");
        }
        if let Some(k) = r.freq_exp {
            s.push_str(&format!(", freq_exp: {}", num(k)));
        }
        if let Some(h) = r.inertia_s {
            s.push_str(&format!(", inertia_s: {}", num(h)));
        }
        if let Some((b, a)) = r.undervoltage {
            s.push_str(&format!(
                ", undervoltage: {{ below_pu: {}, after_s: {} }}",
                num(b),
                num(a)
            ));
        }
        if let Some(d) = &r.description {
            s.push_str(&format!(", description: {}", quoted(d)));
        }
        s.push_str(" }");
        if let Some(t) = r.load_type {
            s.push_str(&format!(
                "  # {}: k = {}, {}",
                t.name,
                num(t.freq_exp),
                t.source
            ));
        }
        out.push(s);
    }
    out
}

/// How lines of the spliced text map back to the list and the plant file.
pub struct Map<'a> {
    pub block: Block,
    /// 0-based line of the first load in the spliced text.
    pub first_load: usize,
    pub new_len: usize,
    pub rows: &'a [Row],
    pub header: &'a Header,
    pub list_file: &'a str,
}

impl Map<'_> {
    /// A diagnostic of the spliced plant text as the user can act on it: about a load, placed at
    /// its row and column in the list; about anything else, placed in the plant file as written.
    pub fn place(
        &self,
        line: Option<usize>,
        path: &str,
        plant_file: &str,
    ) -> (String, Option<usize>, Option<usize>, String) {
        let by_path = load_index(path).filter(|&i| i < self.rows.len());
        let by_line = line.and_then(|l| {
            let l0 = l.checked_sub(1)?;
            (l0 >= self.first_load && l0 < self.first_load + self.rows.len())
                .then(|| l0 - self.first_load)
        });
        if let Some(i) = by_path.or(by_line) {
            let row = &self.rows[i];
            let field = field_of_path(path, row);
            let (column, place) = match field {
                Some(f) => (self.header.column(f), self.header.place(f)),
                None => (None, format!("load `{}`", row.id)),
            };
            return (self.list_file.to_string(), Some(row.line), column, place);
        }
        // Outside the block: back to the plant file's own line numbers.
        let line = line.map(|l| {
            let new_end = self.block.start + self.new_len; // 0-based, one past
            if l > new_end {
                l - self.new_len + (self.block.end - self.block.start)
            } else {
                l.min(self.block.start + 1)
            }
        });
        (plant_file.to_string(), line, None, path.to_string())
    }
}

/// `loads[12].p_mw` → 12.
fn load_index(path: &str) -> Option<usize> {
    let rest = path.strip_prefix("loads[")?;
    let end = rest.find(']')?;
    rest[..end].parse().ok()
}

/// The list column a plant-file field of a load came from.
fn field_of_path(path: &str, row: &Row) -> Option<Field> {
    let rest = &path[path.find(']')? + 1..];
    let key = rest.trim_start_matches('.');
    Some(match key.split('.').next().unwrap_or("") {
        "id" => Field::Id,
        "section" => Field::Section,
        "p_mw" => Field::PMw,
        "rank" => Field::Rank,
        "never_shed" => Field::NeverShed,
        "freq_exp" if row.load_type.is_some() && row_freq_from_type(row) => Field::LoadType,
        "freq_exp" => Field::FreqExp,
        "inertia_s" => Field::InertiaS,
        "undervoltage" if key.ends_with("after_s") => Field::UvAfterS,
        "undervoltage" => Field::UvBelowPu,
        "description" => Field::Description,
        _ => return None,
    })
}

fn row_freq_from_type(row: &Row) -> bool {
    row.load_type
        .is_some_and(|t| row.freq_exp == Some(t.freq_exp))
}

/// Re-places a diagnostic through `map`.
pub fn remap(d: Diagnostic, map: &Map, plant_file: &str) -> Diagnostic {
    let (file, line, column, path) = map.place(d.line, &d.path, plant_file);
    let column = if file == plant_file {
        d.column.filter(|_| line.is_some())
    } else {
        column
    };
    Diagnostic {
        file,
        line,
        column,
        path,
        ..d
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_block_ends_before_the_next_key_and_its_comments() {
        let text = "plant: x\n# the loads\nloads:\n  - a\n# between\n  - b\n\n# points\noperating_points: []\n";
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(find_block(&lines), Some(Block { start: 2, end: 6 }));
        let lines = ["loads: []", "criteria: {}"];
        assert_eq!(find_block(&lines), Some(Block { start: 0, end: 1 }));
        assert_eq!(find_block(&["loadsx: 1"]), None);
        assert_eq!(find_block(&["  loads: 1"]), None);
    }

    #[test]
    fn scalars_read_back_as_text() {
        assert_eq!(scalar("pump-1"), "pump-1");
        assert_eq!(scalar("1"), "\"1\"");
        assert_eq!(scalar("yes"), "\"yes\"");
        assert_eq!(scalar("a: b"), "\"a: b\"");
        assert_eq!(scalar("#x"), "\"#x\"");
        assert_eq!(num(1.0), "1.0");
        assert_eq!(num(0.35), "0.35");
        assert_eq!(num(-1.0), "-1.0");
    }
}
