//! A CSV record: a time column, and a frequency column or one or more voltage waveform columns.
//!
//! Headings are compared as the load list's are (`input::load_list::columns::key`: case, spaces and
//! hyphens ignored) after a unit in brackets at their end is taken off (`Frequency [Hz]`,
//! `time (ms)`). The accepted names are in [`TIME`], [`FREQUENCY`] and [`is_voltage`] and in
//! docs/files.md (section "Records"); other columns (currents, breaker states) are skipped. The
//! time unit comes from the heading (`time_ms`, `t [s]`) or from the caller's
//! [`super::TimeUnit`], and is never guessed. Separators, the byte-order mark and the refusal of
//! decimal commas follow the load list (`input::load_list`), one place for each rule. Lines that
//! start with `#` are comments.

use super::{bytes, refuse, FrequencyRecord, ReadOptions, TimeUnit};
use crate::error::Error;
use crate::input::limits::{self, Limits};
use crate::input::load_list::{columns, decimal_comma_help, delimiter, delimiter_hint};
use crate::input::Diagnostic;
use std::path::Path;

/// Names of a time column; a unit may follow as `_s`, `_ms`, `_us` or in brackets.
pub const TIME: [&str; 2] = ["time", "t"];
/// Names of a frequency column (in Hz; a unit in brackets, if any, must be Hz).
pub const FREQUENCY: [&str; 7] = [
    "frequency",
    "freq",
    "f",
    "frequency_hz",
    "freq_hz",
    "f_hz",
    "hz",
];
/// Phase or line designations a voltage heading may carry after `v`, `u` or `voltage`.
const PHASES: [&str; 18] = [
    "a", "b", "c", "an", "bn", "cn", "ab", "bc", "ca", "1", "2", "3", "12", "23", "31", "l1", "l2",
    "l3",
];

/// What a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Time(Option<TimeUnit>),
    Frequency,
    Voltage,
    Other,
}

/// A heading split into its compared key and its bracketed unit, if any.
fn split_heading(heading: &str) -> (String, Option<String>) {
    let h = heading.trim();
    for (open, close) in [('[', ']'), ('(', ')')] {
        if let Some(body) = h.strip_suffix(close) {
            if let Some(at) = body.rfind(open) {
                let unit = body[at + 1..].trim().to_string();
                return (columns::key(&body[..at]), Some(unit));
            }
        }
    }
    (columns::key(h), None)
}

/// Whether a heading key names a voltage: `v`, `u` or `voltage`, optionally followed by a phase
/// or line (`va`, `u_l1`, `voltage_ab`), optionally ending in `_v` or `_kv`.
pub fn is_voltage(key: &str) -> bool {
    let base = key
        .strip_suffix("_kv")
        .or_else(|| key.strip_suffix("_v"))
        .unwrap_or(key);
    for stem in ["voltage", "v", "u"] {
        if let Some(rest) = base.strip_prefix(stem) {
            let rest = rest.strip_prefix('_').unwrap_or(rest);
            if rest.is_empty() || PHASES.contains(&rest) {
                return true;
            }
        }
    }
    false
}

fn unit_of(text: &str) -> Option<Option<TimeUnit>> {
    match text.trim().to_lowercase().as_str() {
        "s" | "sec" | "seconds" => Some(Some(TimeUnit::Seconds)),
        "ms" => Some(Some(TimeUnit::Milliseconds)),
        "us" | "µs" | "μs" => Some(Some(TimeUnit::Microseconds)),
        _ => None,
    }
}

fn kind(heading: &str) -> Result<Kind, String> {
    let (key, unit) = split_heading(heading);
    for name in TIME {
        let from_name = if key == name {
            Some(None)
        } else {
            key.strip_prefix(name)
                .and_then(|r| r.strip_prefix('_'))
                .and_then(unit_of)
        };
        let Some(from_name) = from_name else { continue };
        let from_bracket = match &unit {
            None => None,
            Some(u) => Some(unit_of(u).ok_or_else(|| {
                format!(
                    "the time column `{}` is in `{u}`, which nadir does not read; use s or ms",
                    heading.trim()
                )
            })?),
        };
        return match (from_name, from_bracket.flatten()) {
            (Some(a), Some(b)) if a != b => Err(format!(
                "the time column `{}` names two different units",
                heading.trim()
            )),
            (a, b) => Ok(Kind::Time(a.or(b))),
        };
    }
    if FREQUENCY.contains(&key.as_str()) {
        return match unit.as_deref().map(str::to_lowercase).as_deref() {
            None | Some("hz") => Ok(Kind::Frequency),
            Some(u) => Err(format!(
                "the frequency column `{}` is in `{u}`; nadir reads frequency in Hz",
                heading.trim()
            )),
        };
    }
    if is_voltage(&key) {
        return Ok(Kind::Voltage);
    }
    Ok(Kind::Other)
}

fn unit_name(u: TimeUnit) -> &'static str {
    match u {
        TimeUnit::Seconds => "s",
        TimeUnit::Milliseconds => "ms",
        TimeUnit::Microseconds => "µs",
    }
}

fn to_seconds(u: TimeUnit) -> f64 {
    match u {
        TimeUnit::Seconds => 1.0,
        TimeUnit::Milliseconds => 1e-3,
        TimeUnit::Microseconds => 1e-6,
    }
}

fn accepted_names() -> String {
    "a time column (`time_s`, `time_ms`, `time [s]`, `t (ms)`, …) and a frequency column \
     (`frequency`, `freq`, `f`, `hz`, with `[Hz]` if you like) or voltage columns (`va`, `vb`, \
     `vc`, `u_l1`, `vab`, `voltage`, …)"
        .to_string()
}

/// Reads a CSV record.
pub fn read(path: &Path, options: &ReadOptions, limits: &Limits) -> Result<FrequencyRecord, Error> {
    let file = path.display().to_string();
    let text = bytes::text(bytes::read(path, limits)?);
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .comment(Some(b'#'))
        .delimiter(delimiter(
            text.lines()
                .find(|l| !l.trim().is_empty() && !l.starts_with('#'))
                .unwrap_or(""),
        ))
        .from_reader(text.as_bytes());
    let mut records = reader.records();
    let line_of = |e: &csv::Error| e.position().map(|p| p.line() as usize);
    let csv_error = |e: csv::Error| {
        refuse(
            &file,
            line_of(&e),
            format!("cannot read the file as CSV: {e}"),
            "save the record as CSV (comma, semicolon or tab separated)".to_string(),
        )
    };

    // The header: the first row with a non-empty cell.
    let header = loop {
        match records.next() {
            None => {
                return Err(refuse(
                    &file,
                    None,
                    "the record is empty".to_string(),
                    format!("the first row names the columns: {}", accepted_names()),
                ))
            }
            Some(Err(e)) => return Err(csv_error(e)),
            Some(Ok(r)) if r.iter().all(|c| c.trim().is_empty()) => continue,
            Some(Ok(r)) => break r,
        }
    };
    let header_line = header.position().map(|p| p.line() as usize);
    if header.len() == 1 {
        if let Some(hint) = delimiter_hint(&header[0]) {
            return Err(refuse(
                &file,
                header_line,
                format!("the header row is one cell, `{}`", clip(&header[0])),
                hint,
            ));
        }
    }
    let (time_col, time_unit, channel_col, channel_kind) =
        choose_columns(&file, header_line, &header, options)?;
    let channel = header[channel_col].trim().to_string();

    let max_rows = limits.get(limits::RECORD_SAMPLES);
    let mut times = Vec::new();
    let mut values = Vec::new();
    let mut lines = Vec::new();
    let mut mistakes = Vec::new();
    for rec in records {
        let rec = rec.map_err(csv_error)?;
        if rec.iter().all(|c| c.trim().is_empty()) {
            continue;
        }
        let line = rec.position().map(|p| p.line() as usize).unwrap_or(0);
        if times.len() as u64 >= max_rows {
            return Err(refuse(
                &file,
                Some(line),
                format!(
                    "the record has more than {max_rows} rows, above the limit {} = {max_rows}",
                    limits::RECORD_SAMPLES.name
                ),
                limits::over_limit_help(limits::RECORD_SAMPLES, max_rows + 1),
            ));
        }
        let t = cell(&file, &rec, line, time_col, &header, &mut mistakes);
        let v = cell(&file, &rec, line, channel_col, &header, &mut mistakes);
        if let (Some(t), Some(v)) = (t, v) {
            times.push(t * to_seconds(time_unit));
            values.push(v);
            lines.push(line);
        }
    }
    if !mistakes.is_empty() {
        return Err(Error::Input(finish(&file, mistakes)));
    }
    if times.len() < 2 {
        return Err(refuse(
            &file,
            header_line,
            format!(
                "the record has {} row(s) of samples; it needs at least two",
                times.len()
            ),
            "export the whole event, from before the disturbance to the settled frequency"
                .to_string(),
        ));
    }
    let place = |i: usize| (Some(lines[i]), format!("row {}", lines[i]));
    let measured = channel_kind == Kind::Frequency;
    let mut record = super::series(
        &file, path, times, values, channel, measured, &place, options, true,
    )?;
    record.trigger_s = None;
    Ok(record)
}

/// The time column with its unit, and the channel column with its kind.
fn choose_columns(
    file: &str,
    line: Option<usize>,
    header: &csv::StringRecord,
    options: &ReadOptions,
) -> Result<(usize, TimeUnit, usize, Kind), Error> {
    let mut kinds = Vec::new();
    for (i, h) in header.iter().enumerate() {
        match kind(h) {
            Ok(k) => kinds.push(k),
            Err(message) => {
                return Err(Error::Input(vec![Diagnostic {
                    file: file.to_string(),
                    line,
                    column: Some(i + 1),
                    path: String::new(),
                    message,
                    help: Some(
                        "write the time in s or ms and the frequency in Hz, and say so in the \
                         heading (`time [ms]`, `frequency [Hz]`)"
                            .to_string(),
                    ),
                }]))
            }
        }
    }
    let at = |col: usize, message: String, help: String| {
        Error::Input(vec![Diagnostic {
            file: file.to_string(),
            line,
            column: Some(col + 1),
            path: String::new(),
            message,
            help: Some(help),
        }])
    };
    let times: Vec<usize> = (0..kinds.len())
        .filter(|&i| matches!(kinds[i], Kind::Time(_)))
        .collect();
    let time_col = match times.as_slice() {
        [] => {
            return Err(refuse(
                file,
                line,
                format!(
                    "the header row has no time column (its headings: {})",
                    headings(header)
                ),
                format!("name the columns: {}", accepted_names()),
            ))
        }
        [one] => *one,
        [first, second, ..] => {
            return Err(at(
                *second,
                format!(
                    "two time columns, `{}` and `{}`",
                    header[*first].trim(),
                    header[*second].trim()
                ),
                "keep one time column (seconds or milliseconds from any origin)".to_string(),
            ))
        }
    };
    let Kind::Time(from_heading) = kinds[time_col] else {
        unreachable!("time_col is a time column")
    };
    let time_unit = match (from_heading, options.time_unit) {
        (Some(a), Some(b)) if a != b => {
            return Err(at(
                time_col,
                format!(
                    "the time column `{}` is in {} but the time unit asked for is {}",
                    header[time_col].trim(),
                    unit_name(a),
                    unit_name(b)
                ),
                "drop --time-unit, or correct the heading".to_string(),
            ))
        }
        (Some(a), _) | (None, Some(a)) => a,
        (None, None) => {
            return Err(at(
                time_col,
                format!(
                    "the time column `{}` does not say its unit",
                    header[time_col].trim()
                ),
                "name it `time_s` or `time_ms` (or `time [s]`, `time [ms]`), or give \
                 --time-unit s|ms|us; nadir does not guess it, since seconds read as milliseconds \
                 make every rate of change a thousand times too steep"
                    .to_string(),
            ))
        }
    };
    let channel_col = match &options.channel {
        Some(name) => {
            let wanted = split_heading(name).0;
            let Some(col) = header
                .iter()
                .position(|h| h.trim() == name.trim() || split_heading(h).0 == wanted)
            else {
                return Err(refuse(
                    file,
                    line,
                    format!("the record has no column `{}`", clip(name)),
                    format!("its columns are {}", headings(header)),
                ));
            };
            if !matches!(kinds[col], Kind::Frequency | Kind::Voltage) {
                return Err(at(
                    col,
                    format!(
                        "the column `{}` is not a frequency or voltage column by its heading",
                        header[col].trim()
                    ),
                    format!("name the columns: {}", accepted_names()),
                ));
            }
            col
        }
        None => {
            let of = |k: Kind| {
                (0..kinds.len())
                    .filter(|&i| kinds[i] == k)
                    .collect::<Vec<_>>()
            };
            let freq = of(Kind::Frequency);
            let volt = of(Kind::Voltage);
            match (freq.as_slice(), volt.first()) {
                ([one], _) => *one,
                ([first, second, ..], _) => {
                    return Err(at(
                        *second,
                        format!(
                            "two frequency columns, `{}` and `{}`",
                            header[*first].trim(),
                            header[*second].trim()
                        ),
                        "name the one to use as the record's channel, or delete the other"
                            .to_string(),
                    ))
                }
                ([], Some(v)) => *v,
                ([], None) => {
                    return Err(refuse(
                        file,
                        line,
                        format!(
                            "the header row has no frequency or voltage column (its headings: {})",
                            headings(header)
                        ),
                        format!("name the columns: {}", accepted_names()),
                    ))
                }
            }
        }
    };
    Ok((time_col, time_unit, channel_col, kinds[channel_col]))
}

/// One number cell, or `None` with its mistake recorded.
fn cell(
    file: &str,
    rec: &csv::StringRecord,
    line: usize,
    col: usize,
    header: &csv::StringRecord,
    mistakes: &mut Vec<Diagnostic>,
) -> Option<f64> {
    let text = rec.get(col).map(str::trim).unwrap_or("");
    let heading = header[col].trim();
    let (message, help) = if text.is_empty() {
        (
            format!("`{heading}` is empty"),
            if rec.len() <= col {
                format!(
                    "the row has {} cells but the header has {}; check the separators",
                    rec.len(),
                    header.len()
                )
            } else {
                "every row needs its time and value; cut the record before this row or fill it"
                    .to_string()
            },
        )
    } else {
        match text.parse::<f64>() {
            Ok(v) => return Some(v),
            Err(_) => (
                format!("`{heading}` is `{}`, not a number", clip(text)),
                decimal_comma_help(text).unwrap_or_else(|| {
                    "write a plain number with a decimal point, without units or text".to_string()
                }),
            ),
        }
    };
    if mistakes.len() <= limits::MAX_DIAGNOSTICS {
        mistakes.push(Diagnostic {
            file: file.to_string(),
            line: Some(line),
            column: Some(col + 1),
            path: String::new(),
            message,
            help: Some(help),
        });
    }
    None
}

/// The mistakes, the one past the cap replaced by a summary.
fn finish(file: &str, mut list: Vec<Diagnostic>) -> Vec<Diagnostic> {
    if list.len() > limits::MAX_DIAGNOSTICS {
        list.truncate(limits::MAX_DIAGNOSTICS);
        list.push(Diagnostic {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: format!(
                "more mistakes not shown; only the first {} are listed",
                limits::MAX_DIAGNOSTICS
            ),
            help: Some("check that this is the intended file".to_string()),
        });
    }
    list
}

fn headings(header: &csv::StringRecord) -> String {
    header
        .iter()
        .take(20)
        .map(|h| format!("`{}`", clip(h)))
        .collect::<Vec<_>>()
        .join(", ")
}

fn clip(s: &str) -> String {
    let s = s.trim();
    if s.chars().count() > 40 {
        format!("{}…", s.chars().take(40).collect::<String>())
    } else {
        s.to_string()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn headings_are_classified_with_their_units() {
        assert_eq!(
            kind("Time [ms]"),
            Ok(Kind::Time(Some(TimeUnit::Milliseconds)))
        );
        assert_eq!(kind("time_s"), Ok(Kind::Time(Some(TimeUnit::Seconds))));
        assert_eq!(kind(" T "), Ok(Kind::Time(None)));
        assert_eq!(kind("Frequency (Hz)"), Ok(Kind::Frequency));
        assert!(kind("frequency [pu]").is_err());
        assert!(kind("time_ms [s]").is_err());
        assert_eq!(kind("VA [kV]"), Ok(Kind::Voltage));
        assert_eq!(kind("u_L1"), Ok(Kind::Voltage));
        assert_eq!(kind("Vab_kV"), Ok(Kind::Voltage));
        assert_eq!(kind("IA"), Ok(Kind::Other));
        assert_eq!(kind("value"), Ok(Kind::Other));
    }
}
