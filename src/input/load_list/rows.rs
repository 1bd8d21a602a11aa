//! A load list's CSV text → typed rows, with every bad cell reported as file:row:column.
//!
//! This file decides only what a cell must look like to be read (a number, a whole number, yes or
//! no, a known load type); whether the value is allowed (a rank of 0, a negative MW, an unknown
//! section) is the plant reader's rule, applied to the plant file the rows become (see
//! [`super::splice`]). Reading is bounded: at most `max_loads` rows are kept, and at most
//! [`limits::MAX_DIAGNOSTICS`] mistakes.

use super::columns::{self, Field, COLUMNS};
use super::types::{self, LoadType};
use crate::input::limits::{self, Limits};
use crate::input::Diagnostic;
use std::collections::BTreeMap;

/// One load as the list gives it, with where each value came from.
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    /// 1-based line of the row in the CSV file.
    pub line: usize,
    pub id: String,
    pub section: String,
    pub p_mw: f64,
    pub rank: u32,
    pub never_shed: bool,
    /// The exponent, and the load type it was taken from when it came from the type column.
    pub freq_exp: Option<f64>,
    pub load_type: Option<&'static LoadType>,
    pub inertia_s: Option<f64>,
    /// `(below_pu, after_s)`.
    pub undervoltage: Option<(f64, f64)>,
    pub description: Option<String>,
}

/// The header row: which column (1-based) holds each field, and its heading as written.
#[derive(Debug, Clone, Default)]
pub struct Header {
    pub columns: BTreeMap<Field, (usize, String)>,
}

impl Header {
    /// `MW (column C)`: a cell's place as a message names it.
    pub fn place(&self, field: Field) -> String {
        match self.columns.get(&field) {
            Some((col, heading)) => {
                format!("{} (column {})", heading.trim(), columns::letter(*col))
            }
            None => field.name().to_string(),
        }
    }

    /// The 1-based column of a field, if the list has it.
    pub fn column(&self, field: Field) -> Option<usize> {
        self.columns.get(&field).map(|c| c.0)
    }
}

/// What a list read to: its header and rows, or every mistake.
pub struct Read {
    pub header: Header,
    pub rows: Vec<Row>,
}

/// Mistakes collected while reading, capped at [`limits::MAX_DIAGNOSTICS`].
pub struct Mistakes {
    file: String,
    pub list: Vec<Diagnostic>,
    pub suppressed: usize,
}

impl Mistakes {
    pub fn new(file: &str) -> Mistakes {
        Mistakes {
            file: file.to_string(),
            list: Vec::new(),
            suppressed: 0,
        }
    }

    pub fn is_empty(&self) -> bool {
        self.list.is_empty() && self.suppressed == 0
    }

    pub fn push(&mut self, d: Diagnostic) {
        if self.list.len() < limits::MAX_DIAGNOSTICS {
            self.list.push(d);
        } else {
            self.suppressed += 1;
        }
    }

    fn at(
        &mut self,
        line: Option<usize>,
        column: Option<usize>,
        path: String,
        message: String,
        help: impl Into<Option<String>>,
    ) {
        let file = self.file.clone();
        self.push(Diagnostic {
            file,
            line,
            column,
            path,
            message,
            help: help.into(),
        });
    }

    /// The list, with one closing entry for the mistakes past the cap.
    pub fn finish(mut self) -> Vec<Diagnostic> {
        if self.suppressed > 0 {
            let file = self.file.clone();
            self.list.push(Diagnostic {
                file,
                line: None,
                column: None,
                path: String::new(),
                message: format!(
                    "{} more mistake(s) not shown; only the first {} are listed",
                    self.suppressed,
                    limits::MAX_DIAGNOSTICS
                ),
                help: Some(
                    "fix the mistakes shown (or check that this is the intended file) and run again"
                        .to_string(),
                ),
            });
        }
        self.list
    }
}

/// The delimiter of a list: whichever of comma, semicolon and tab the first line holds most of
/// (a comma when none), so a list saved where the decimal separator is a comma (semicolons
/// between cells) reads as well.
pub fn delimiter(text: &str) -> u8 {
    let first = text.lines().next().unwrap_or("");
    let count = |c: char| first.chars().filter(|&x| x == c).count();
    let (comma, semi, tab) = (count(','), count(';'), count('\t'));
    if semi > comma && semi >= tab {
        b';'
    } else if tab > comma && tab > semi {
        b'\t'
    } else {
        b','
    }
}

/// Reads a load list. `text` may start with a byte-order mark (spreadsheets write one). With a
/// header that reads, returns the rows whose cells read and the mistakes of the others (so that
/// the plant reader can still judge the good rows); without one, every mistake.
pub fn read(text: &str, file: &str, limits: &Limits) -> Result<(Read, Mistakes), Vec<Diagnostic>> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut m = Mistakes::new(file);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter(text))
        .from_reader(text.as_bytes());
    let mut records = reader.records();
    let max_loads = limits.get(limits::LOADS);

    // The header: the first row with a non-empty cell.
    let mut header = None;
    for rec in records.by_ref() {
        match rec {
            Ok(rec) if rec.iter().all(|c| c.trim().is_empty()) => continue,
            Ok(rec) => {
                header = Some(rec);
                break;
            }
            Err(e) => {
                m.at(
                    line_of(&e),
                    None,
                    String::new(),
                    format!("cannot read the file as CSV: {e}"),
                    csv_help(),
                );
                return Err(m.finish());
            }
        }
    }
    let Some(header_rec) = header else {
        m.at(
            None,
            None,
            String::new(),
            "the load list is empty".to_string(),
            format!(
                "the first row names the columns (at least {}), and each row after it is one load",
                required_names()
            ),
        );
        return Err(m.finish());
    };
    let header_line = header_rec.position().map(|p| p.line() as usize);
    let header = read_header(&header_rec, header_line, &mut m);

    let mut rows = Vec::new();
    let mut count: u64 = 0;
    for rec in records {
        let rec = match rec {
            Ok(rec) => rec,
            Err(e) => {
                m.at(
                    line_of(&e),
                    None,
                    String::new(),
                    format!("cannot read the file as CSV: {e}"),
                    csv_help(),
                );
                break;
            }
        };
        if rec.iter().all(|c| c.trim().is_empty()) {
            continue;
        }
        count += 1;
        if count > max_loads {
            m.at(
                rec.position().map(|p| p.line() as usize),
                None,
                String::new(),
                format!(
                    "the load list has more than {max_loads} loads, above the limit {} = {max_loads}",
                    limits::LOADS.name
                ),
                limits::over_limit_help(limits::LOADS, max_loads + 1),
            );
            return Err(m.finish());
        }
        let Some(header) = &header else { continue };
        if let Some(row) = read_row(&rec, header, &mut m) {
            rows.push(row);
        }
    }
    let Some(header) = header else {
        return Err(m.finish());
    };
    if rows.is_empty() && m.list.is_empty() {
        m.at(
            header_line,
            None,
            String::new(),
            "the load list has a header row but no loads".to_string(),
            "add one row per load below the header".to_string(),
        );
        return Err(m.finish());
    }
    Ok((Read { header, rows }, m))
}

fn line_of(e: &csv::Error) -> Option<usize> {
    e.position().map(|p| p.line() as usize)
}

fn csv_help() -> String {
    "save the sheet as CSV (comma or semicolon separated), UTF-8".to_string()
}

fn required_names() -> String {
    COLUMNS
        .iter()
        .filter(|c| c.required)
        .map(|c| format!("`{}`", c.names[0]))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Matches the header row to fields; `None` when it has a mistake (each is reported).
fn read_header(rec: &csv::StringRecord, line: Option<usize>, m: &mut Mistakes) -> Option<Header> {
    let before = m.list.len() + m.suppressed;
    let mut header = Header::default();
    if rec.len() == 1 && delimiter_hint(&rec[0]).is_some() {
        m.at(
            line,
            Some(1),
            String::new(),
            format!("the header row is one cell, `{}`", clip(&rec[0])),
            delimiter_hint(&rec[0]),
        );
        return None;
    }
    for (i, heading) in rec.iter().enumerate() {
        let col = i + 1;
        let place = format!("{} (column {})", heading.trim(), columns::letter(col));
        if heading.trim().is_empty() {
            m.at(
                line,
                Some(col),
                format!("column {}", columns::letter(col)),
                "the column has no heading".to_string(),
                "name the column, or delete it if it is empty".to_string(),
            );
            continue;
        }
        match columns::field_of(heading) {
            None => m.at(
                line,
                Some(col),
                place,
                format!("`{}` is not a column nadir reads", clip(heading)),
                columns::unknown_header_help(heading),
            ),
            Some(field) => {
                if let Some((first, first_heading)) = header.columns.get(&field) {
                    m.at(
                        line,
                        Some(col),
                        place,
                        format!(
                            "`{}` means the same as `{}` in column {}",
                            clip(heading),
                            first_heading.trim(),
                            columns::letter(*first)
                        ),
                        "keep one of the two columns".to_string(),
                    );
                } else {
                    header.columns.insert(field, (col, heading.to_string()));
                }
            }
        }
    }
    for c in COLUMNS.iter().filter(|c| c.required) {
        if !header.columns.contains_key(&c.field) {
            m.at(
                line,
                None,
                String::new(),
                format!("the header row has no `{}` column", c.names[0]),
                format!(
                    "add it (any of {} is read as it, in any case)",
                    c.names
                        .iter()
                        .map(|n| format!("`{n}`"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            );
        }
    }
    let has = |f: Field| header.columns.contains_key(&f);
    if has(Field::UvBelowPu) != has(Field::UvAfterS) {
        m.at(
            line,
            None,
            String::new(),
            "the undervoltage drop-out needs both `uv_below_pu` and `uv_after_s` columns"
                .to_string(),
            "add the missing one, or delete the other".to_string(),
        );
    }
    (m.list.len() + m.suppressed == before).then_some(header)
}

/// When a single heading holds another separator, the list was saved with one nadir did not pick.
pub fn delimiter_hint(cell: &str) -> Option<String> {
    [',', ';', '\t', '|'].iter().find(|&&c| cell.contains(c)).map(|c| {
        format!(
            "nadir found no separator it reads between the headings (it looked for comma, semicolon \
             and tab; this row holds `{}`): save the sheet as CSV with commas or semicolons",
            c.escape_default()
        )
    })
}

fn clip(s: &str) -> String {
    let s = s.trim();
    if s.chars().count() > 40 {
        format!("{}…", s.chars().take(40).collect::<String>())
    } else {
        s.to_string()
    }
}

/// A text cell as exported: a leading apostrophe that `nadir loads export` put before `=`, `+`,
/// `-`, `−`, `@` (so a spreadsheet shows it as text, see `report::output::csv_cell`) is removed.
fn text_cell(cell: &str) -> String {
    match cell.strip_prefix('\'') {
        Some(rest) if rest.starts_with(['=', '+', '-', '\u{2212}', '@', '\t', '\r']) => {
            rest.to_string()
        }
        _ => cell.to_string(),
    }
}

/// Reads one row; `None` when a cell is bad (each is reported).
fn read_row(rec: &csv::StringRecord, header: &Header, m: &mut Mistakes) -> Option<Row> {
    let line = rec.position().map(|p| p.line() as usize).unwrap_or(0);
    let before = m.list.len() + m.suppressed;
    let width = header.columns.values().map(|c| c.0).max().unwrap_or(0);
    if rec.len() > width && rec.iter().skip(width).any(|c| !c.trim().is_empty()) {
        m.at(
            Some(line),
            Some(width + 1),
            String::new(),
            format!(
                "the row has {} cells but the header names {width} columns",
                rec.len()
            ),
            "a cell holds the separator: put quotes around text that contains a comma or \
             semicolon, or delete the extra cells"
                .to_string(),
        );
    }
    let cell = |f: Field| -> Option<&str> {
        let col = header.column(f)?;
        rec.get(col - 1).map(str::trim).filter(|c| !c.is_empty())
    };
    let mut bad = |f: Field, message: String, help: String| {
        m.at(Some(line), header.column(f), header.place(f), message, help);
    };

    let text = |f: Field, bad: &mut dyn FnMut(Field, String, String)| -> Option<String> {
        match cell(f) {
            Some(c) => Some(text_cell(c)),
            None => {
                bad(
                    f,
                    "the cell is empty".to_string(),
                    format!("every load needs its {}", what(f)),
                );
                None
            }
        }
    };
    let id = text(Field::Id, &mut bad);
    let section = text(Field::Section, &mut bad);
    let p_mw = match cell(Field::PMw) {
        None => {
            bad(
                Field::PMw,
                "the cell is empty".to_string(),
                "every load needs its demand in MW".to_string(),
            );
            None
        }
        Some(c) => number(c, Field::PMw, &mut bad),
    };
    let rank = match cell(Field::Rank) {
        None => {
            bad(
                Field::Rank,
                "the cell is empty".to_string(),
                "every load needs a rank: 1 is shed first, higher ranks later".to_string(),
            );
            None
        }
        Some(c) => whole(c, &mut bad),
    };
    let never_shed = match cell(Field::NeverShed) {
        None => Some(false),
        Some(c) => match c.to_lowercase().as_str() {
            "true" | "yes" | "y" | "1" | "x" => Some(true),
            "false" | "no" | "n" | "0" => Some(false),
            _ => {
                bad(
                    Field::NeverShed,
                    format!("`{}` is not yes or no", clip(c)),
                    "write yes (or true, 1, x) for a load that must never be shed, and no (or \
                     false, 0, or nothing) otherwise"
                        .to_string(),
                );
                None
            }
        },
    };
    let load_type = match cell(Field::LoadType) {
        None => Some(None),
        Some(c) => match types::find(c) {
            Some(t) => Some(Some(t)),
            None => {
                bad(
                    Field::LoadType,
                    format!("`{}` is not a load type nadir knows", clip(c)),
                    format!(
                        "use one of {} (docs/files.md gives each exponent and its source), or \
                         leave the cell empty and give the exponent in a `freq_exp` column",
                        types::names()
                    ),
                );
                None
            }
        },
    };
    let freq_exp = optional(cell(Field::FreqExp), Field::FreqExp, &mut bad);
    let inertia_s = optional(cell(Field::InertiaS), Field::InertiaS, &mut bad);
    let uv_below = optional(cell(Field::UvBelowPu), Field::UvBelowPu, &mut bad);
    let uv_after = optional(cell(Field::UvAfterS), Field::UvAfterS, &mut bad);
    let undervoltage = match (uv_below, uv_after) {
        (Some(Some(b)), Some(Some(a))) => Some(Some((b, a))),
        (Some(None), Some(None)) => Some(None),
        (Some(Some(_)), Some(None)) => {
            bad(
                Field::UvAfterS,
                "the cell is empty while `uv_below_pu` is given".to_string(),
                "give the drop-out time in s, or empty both undervoltage cells".to_string(),
            );
            None
        }
        (Some(None), Some(Some(_))) => {
            bad(
                Field::UvBelowPu,
                "the cell is empty while `uv_after_s` is given".to_string(),
                "give the drop-out voltage in per unit, or empty both undervoltage cells"
                    .to_string(),
            );
            None
        }
        _ => None,
    };
    // The exponent: from the type, from the number, or both when they agree.
    let (freq_exp, load_type) = match (freq_exp, load_type) {
        (Some(k), Some(t)) => match (k, t) {
            (Some(k), Some(t)) if k != t.freq_exp => {
                bad(
                    Field::FreqExp,
                    format!(
                        "the exponent {k} disagrees with load type `{}` in the same row, whose \
                         exponent is {} ({})",
                        t.name, t.freq_exp, t.source
                    ),
                    "empty one of the two cells: the type's exponent, or your own figure"
                        .to_string(),
                );
                (None, None)
            }
            (Some(k), t) => (Some(Some(k)), Some(t)),
            (None, Some(t)) => (Some(Some(t.freq_exp)), Some(Some(t))),
            (None, None) => (Some(None), Some(None)),
        },
        _ => (None, None),
    };
    let description = cell(Field::Description).map(text_cell);
    if m.list.len() + m.suppressed != before {
        return None;
    }
    Some(Row {
        line,
        id: id?,
        section: section?,
        p_mw: p_mw?,
        rank: rank?,
        never_shed: never_shed?,
        freq_exp: freq_exp?,
        load_type: load_type?,
        inertia_s: inertia_s?,
        undervoltage: undervoltage?,
        description,
    })
}

fn what(f: Field) -> &'static str {
    match f {
        Field::Id => "id (its feeder breaker)",
        Field::Section => "section (the bus section that feeds it, as the plant file names it)",
        _ => "value",
    }
}

/// An optional number cell: `Some(None)` when empty, `None` when bad.
fn optional(
    cell: Option<&str>,
    f: Field,
    bad: &mut dyn FnMut(Field, String, String),
) -> Option<Option<f64>> {
    match cell {
        None => Some(None),
        Some(c) => number(c, f, bad).map(Some),
    }
}

/// A finite number written with a point; a decimal comma is refused with its fix rather than
/// guessed (in `1,200` it could be a thousands separator).
fn number(cell: &str, f: Field, bad: &mut dyn FnMut(Field, String, String)) -> Option<f64> {
    let unit = match f {
        Field::PMw => " (MW)",
        Field::InertiaS | Field::UvAfterS => " (s)",
        Field::UvBelowPu => " (per unit)",
        _ => "",
    };
    match cell.parse::<f64>() {
        Ok(v) if v.is_finite() => Some(v),
        _ => {
            let help = decimal_comma_help(cell)
                .unwrap_or_else(|| format!("write a plain number{unit}, without units or text"));
            bad(f, format!("`{}` is not a number", clip(cell)), help);
            None
        }
    }
}

/// The fix for a cell that would be a number with a point in place of its comma, if it is one:
/// a decimal comma is refused rather than guessed (in `1,200` it could be a thousands separator).
/// The one statement of this rule for every CSV nadir reads (load lists and records).
pub fn decimal_comma_help(cell: &str) -> Option<String> {
    (cell.contains(',') && cell.replace(',', ".").parse::<f64>().is_ok()).then(|| {
        format!(
            "write the number with a decimal point, `{}`, or save the sheet with a point as \
             decimal separator (a comma could also be a thousands separator, so nadir does not \
             guess)",
            cell.replace(',', ".")
        )
    })
}

/// A whole number from 0 to 4294967295 (the plant reader says why 0 is not a rank).
fn whole(cell: &str, bad: &mut dyn FnMut(Field, String, String)) -> Option<u32> {
    match cell.parse::<f64>() {
        Ok(v) if v.fract() == 0.0 && (0.0..=u32::MAX as f64).contains(&v) => Some(v as u32),
        _ => {
            bad(
                Field::Rank,
                format!("`{}` is not a whole number from 1", clip(cell)),
                "write the rank as a whole number: 1 is shed first, higher ranks later".to_string(),
            );
            None
        }
    }
}
