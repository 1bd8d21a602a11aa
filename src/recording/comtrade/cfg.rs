//! A COMTRADE configuration (`.cfg`, or the CFG section of a `.cff`), IEEE C37.111-1999 and
//! C37.111-2013: station line with the revision year, channel counts, analog channel lines
//! (`An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS`), status channel lines, line
//! frequency, sampling rates, first-sample and trigger time stamps, data file type and time
//! multiplier (and, in 2013, the time-code lines, which nadir does not need).
//!
//! Every refusal names the configuration line. The 1991 revision (no revision year) and any
//! other year are refused: their analog lines and dates differ (1991 dates are mm/dd/yy).

use super::super::refuse;
use crate::error::Error;

/// The data file's encoding (C37.111-2013 adds `BINARY32` and `FLOAT32`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    Ascii,
    Binary,
    Binary32,
    Float32,
}

/// One analog channel.
#[derive(Debug, Clone, PartialEq)]
pub struct Analog {
    pub id: String,
    pub phase: String,
    pub unit: String,
    /// Value = `a`·x + `b` in `unit`, on the side `ps` names.
    pub a: f64,
    pub b: f64,
    /// Time skew of this channel from the sample time, in seconds (the file gives µs).
    pub skew_s: f64,
    /// `P` or `S`: whether the scaled values are primary or secondary quantities.
    pub ps: char,
    /// Configuration line of the channel, for messages.
    pub line: usize,
}

/// A time stamp `dd/mm/yyyy,hh:mm:ss.ssssss`: days from 1 March of year 0 and seconds in the day.
#[derive(Debug, Clone, PartialEq)]
pub struct Stamp {
    pub text: String,
    pub day: i64,
    pub second: f64,
    /// More than six decimals: the data file's timestamps count nanoseconds (2013).
    pub nanoseconds: bool,
}

/// A checked configuration.
#[derive(Debug, Clone, PartialEq)]
pub struct Config {
    pub revision: u16,
    pub analog: Vec<Analog>,
    pub n_status: usize,
    pub line_hz: Option<f64>,
    /// `(samp, endsamp)` per rate; empty when the data file's timestamps give the times.
    pub rates: Vec<(f64, u64)>,
    /// The last sample number the file declares.
    pub end_sample: u64,
    pub start: Option<Stamp>,
    pub trigger: Option<Stamp>,
    pub format: Format,
    pub timemult: f64,
}

impl Config {
    /// The trigger time on the record's axis (first sample at 0), when both stamps are given.
    pub fn trigger_s(&self) -> Option<f64> {
        let (s, t) = (self.start.as_ref()?, self.trigger.as_ref()?);
        Some((t.day - s.day) as f64 * 86_400.0 + (t.second - s.second))
    }

    /// Seconds per unit of the data file's timestamp: µs (ns when the stamps have nine
    /// decimals, 2013) times `timemult`.
    pub fn timestamp_unit_s(&self) -> f64 {
        let ns = self.start.as_ref().is_some_and(|s| s.nanoseconds)
            || self.trigger.as_ref().is_some_and(|s| s.nanoseconds);
        (if ns { 1e-9 } else { 1e-6 }) * self.timemult
    }
}

/// Lines of a configuration with their line numbers in the file (a `.cff` starts later).
struct Lines<'a> {
    file: &'a str,
    lines: Vec<(usize, &'a str)>,
    next: usize,
}

impl<'a> Lines<'a> {
    fn take(&mut self, what: &str) -> Result<(usize, Vec<&'a str>), Error> {
        match self.lines.get(self.next) {
            Some(&(n, l)) => {
                self.next += 1;
                Ok((n, l.split(',').map(str::trim).collect()))
            }
            None => Err(refuse(
                self.file,
                self.lines.last().map(|l| l.0),
                format!("the configuration ends before its {what}"),
                "the file is cut short: export the record again (C37.111 lists every line of a \
                 configuration)"
                    .to_string(),
            )),
        }
    }
}

/// Parses a configuration `text` whose first line is line `first_line` of `file`.
pub fn parse(file: &str, text: &str, first_line: usize) -> Result<Config, Error> {
    let mut lines = Lines {
        file,
        lines: text
            .lines()
            .enumerate()
            .map(|(i, l)| (first_line + i, l.trim_end_matches(['\r', '\u{1a}'])))
            .collect(),
        next: 0,
    };
    let bad = |line: usize, message: String, help: &str| {
        refuse(file, Some(line), message, help.to_string())
    };

    // Station line and revision; a file whose second line is not the channel counts is not a
    // configuration at all (a CSV or a data file given in its place).
    let counts_like = |l: &str| {
        let f: Vec<&str> = l.split(',').map(str::trim).collect();
        f.len() == 3
            && f[1].to_ascii_uppercase().ends_with('A')
            && f[2].to_ascii_uppercase().ends_with('D')
    };
    if lines.lines.len() >= 2 && !counts_like(lines.lines[1].1) {
        return Err(bad(
            lines.lines[1].0,
            "the file does not read as a COMTRADE configuration: its second line is not the \
             channel counts `TT,##A,##D`"
                .to_string(),
            "give the record's .cfg (a CSV record needs the extension .csv)",
        ));
    }
    let (n, f) = lines.take("station line")?;
    let revision = match f.get(2).copied() {
        Some("1999") => 1999,
        Some("2013") => 2013,
        other => {
            let said = match other {
                None | Some("") => "no revision year (the 1991 revision)".to_string(),
                Some(y) => format!("revision year `{y}`"),
            };
            return Err(bad(
                n,
                format!("the configuration has {said}; nadir reads the 1999 and 2013 revisions of IEEE C37.111"),
                "save the record in the 1999 or 2013 format (recorder software and COMTRADE \
                 converters offer it); the third field of the first line then says 1999 or 2013",
            ));
        }
    };

    // Channel counts.
    let (n, f) = lines.take("channel counts")?;
    let count = |s: Option<&&str>, suffix: char| -> Option<usize> {
        let s = s?;
        s.strip_suffix(suffix)
            .or_else(|| s.strip_suffix(suffix.to_ascii_lowercase()))?
            .parse()
            .ok()
    };
    let total: Option<usize> = f.first().and_then(|s| s.parse().ok());
    let (Some(total), Some(n_analog), Some(n_status)) =
        (total, count(f.get(1), 'A'), count(f.get(2), 'D'))
    else {
        return Err(bad(
            n,
            format!("the channel counts `{}` are not `TT,##A,##D`", f.join(",")),
            "the second line gives the channels in total, then analog ones with A and status ones with D, such as `4,3A,1D`",
        ));
    };
    if total != n_analog + n_status {
        return Err(bad(
            n,
            format!("{total} channels in total, but {n_analog} analog and {n_status} status add up to {}", n_analog + n_status),
            "correct the counts on the second line",
        ));
    }
    if n_analog + n_status > 100_000 {
        return Err(bad(
            n,
            format!("{total} channels is more than any recorder keeps"),
            "check that this is a COMTRADE configuration",
        ));
    }

    let mut analog = Vec::with_capacity(n_analog);
    for k in 1..=n_analog {
        let (n, f) = lines.take(&format!("analog channel {k} of {n_analog}"))?;
        if f.len() != 13 {
            return Err(bad(
                n,
                format!("analog channel {k} has {} fields; the 1999 and 2013 revisions have 13", f.len()),
                "each analog line is `An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS`; check the channel counts on line 2 too",
            ));
        }
        let number = |i: usize, name: &str, default: Option<f64>| -> Result<f64, Error> {
            match (f[i], default) {
                ("", Some(d)) => Ok(d),
                (s, _) => s
                    .parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite())
                    .ok_or_else(|| {
                        bad(
                            n,
                            format!("analog channel {k}: `{name}` is `{s}`, not a number"),
                            "write the field as a plain number with a decimal point",
                        )
                    }),
            }
        };
        let a = number(5, "a", None)?;
        let b = number(6, "b", Some(0.0))?;
        let skew = number(7, "skew", Some(0.0))?;
        if a == 0.0 {
            return Err(bad(
                n,
                format!("analog channel {k}: the multiplier `a` is 0, so every value is {b}"),
                "give the channel's multiplier (value = a·x + b)",
            ));
        }
        let ps =
            match f[12].to_ascii_uppercase().as_str() {
                "P" => 'P',
                "S" => 'S',
                s => return Err(bad(
                    n,
                    format!("analog channel {k}: the last field is `{s}`, neither P nor S"),
                    "write P when the scaled values are primary quantities and S when secondary",
                )),
            };
        analog.push(Analog {
            id: f[1].to_string(),
            phase: f[2].to_string(),
            unit: f[4].to_string(),
            a,
            b,
            skew_s: skew * 1e-6,
            ps,
            line: n,
        });
    }
    for k in 1..=n_status {
        let (n, f) = lines.take(&format!("status channel {k} of {n_status}"))?;
        if f.len() != 5 {
            return Err(bad(
                n,
                format!(
                    "status channel {k} has {} fields; the 1999 and 2013 revisions have 5",
                    f.len()
                ),
                "each status line is `Dn,ch_id,ph,ccbm,y`; check the channel counts on line 2 too",
            ));
        }
    }

    let (n, f) = lines.take("line frequency")?;
    let line_hz = match f[0] {
        "" => None,
        s => match s.parse::<f64>() {
            Ok(v) if v == 0.0 => None,
            Ok(v) if v.is_finite() && v > 0.0 => Some(v),
            _ => {
                return Err(bad(
                    n,
                    format!("the line frequency `{s}` is not a frequency in Hz"),
                    "write the nominal frequency, 50 or 60",
                ))
            }
        },
    };

    let (n, f) = lines.take("number of sampling rates")?;
    let Ok(nrates) = f[0].parse::<usize>() else {
        return Err(bad(n, format!("the number of sampling rates `{}` is not a whole number", f[0]), "write how many `samp,endsamp` lines follow (0 when the data file's timestamps give the times)"));
    };
    if nrates > 1000 {
        return Err(bad(
            n,
            format!("{nrates} sampling rates is more than any recorder uses"),
            "check the number of sampling rates",
        ));
    }
    let mut rates = Vec::new();
    let mut end_sample = 0;
    let mut previous_end = 0;
    for k in 1..=nrates.max(1) {
        let (n, f) = lines.take("sampling rate line")?;
        let samp = f[0]
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite() && *v >= 0.0);
        let end = f.get(1).and_then(|s| s.parse::<u64>().ok());
        let (Some(samp), Some(end)) = (samp, end) else {
            return Err(bad(
                n,
                format!(
                    "the sampling rate line `{}` is not `samp,endsamp`",
                    f.join(",")
                ),
                "write the rate in Hz and the number of its last sample, such as `1000,2000`",
            ));
        };
        if nrates > 0 && samp == 0.0 {
            return Err(bad(n, format!("sampling rate {k} is 0 Hz"), "give the rate in samples per second, or 0 sampling rates and timestamps in the data file"));
        }
        if end <= previous_end && nrates > 0 {
            return Err(bad(n, format!("sampling rate {k} ends at sample {end}, not after the previous rate's last sample {previous_end}"), "each rate's `endsamp` is the number of its last sample, increasing from rate to rate"));
        }
        previous_end = end;
        end_sample = end;
        if nrates > 0 {
            rates.push((samp, end));
        }
    }

    let (n, f) = lines.take("time stamp of the first sample")?;
    let start = stamp(file, n, &f, "first sample")?;
    let (n, f) = lines.take("trigger time stamp")?;
    let trigger = stamp(file, n, &f, "trigger")?;
    let (n, f) = lines.take("data file type")?;
    let format = match f[0].to_ascii_uppercase().as_str() {
        "ASCII" => Format::Ascii,
        "BINARY" => Format::Binary,
        "BINARY32" if revision == 2013 => Format::Binary32,
        "FLOAT32" if revision == 2013 => Format::Float32,
        s => {
            return Err(bad(
                n,
                format!("the data file type `{s}` is not one the {revision} revision defines"),
                if revision == 2013 {
                    "write ASCII, BINARY, BINARY32 or FLOAT32"
                } else {
                    "write ASCII or BINARY (BINARY32 and FLOAT32 are 2013 types: say 2013 on the first line if the file is of that revision)"
                },
            ))
        }
    };
    let timemult = match lines.take("time multiplier") {
        Ok((n, f)) => match f[0] {
            "" => 1.0,
            s => match s.parse::<f64>() {
                Ok(v) if v.is_finite() && v > 0.0 => v,
                _ => {
                    return Err(bad(
                        n,
                        format!("the time multiplier `{s}` is not a positive number"),
                        "write the factor of the data file's timestamps, usually 1",
                    ))
                }
            },
        },
        Err(e) => return Err(e),
    };
    Ok(Config {
        revision,
        analog,
        n_status,
        line_hz,
        rates,
        end_sample,
        start,
        trigger,
        format,
        timemult,
    })
}

/// A time stamp line; empty fields mean no stamp.
fn stamp(file: &str, line: usize, f: &[&str], what: &str) -> Result<Option<Stamp>, Error> {
    if f.iter().all(|s| s.is_empty()) {
        return Ok(None);
    }
    let text = f.join(",");
    let fail = || {
        refuse(
            file,
            Some(line),
            format!("the {what} time stamp `{text}` is not `dd/mm/yyyy,hh:mm:ss.ssssss`"),
            "write the date day first with a four-digit year and the time with seconds, such as \
             `14/03/2026,09:12:05.250000`"
                .to_string(),
        )
    };
    if f.len() != 2 {
        return Err(fail());
    }
    let d: Vec<&str> = f[0].split('/').collect();
    let t: Vec<&str> = f[1].split(':').collect();
    if d.len() != 3 || t.len() != 3 || d[2].len() != 4 {
        return Err(fail());
    }
    let int = |s: &str| s.parse::<i64>().ok();
    let (Some(day), Some(month), Some(year), Some(h), Some(m)) =
        (int(d[0]), int(d[1]), int(d[2]), int(t[0]), int(t[1]))
    else {
        return Err(fail());
    };
    let Some(sec) = t[2].parse::<f64>().ok().filter(|s| (0.0..61.0).contains(s)) else {
        return Err(fail());
    };
    if !(1..=31).contains(&day)
        || !(1..=12).contains(&month)
        || !(0..24).contains(&h)
        || !(0..60).contains(&m)
    {
        return Err(fail());
    }
    let decimals = t[2].split('.').nth(1).map_or(0, str::len);
    Ok(Some(Stamp {
        text,
        day: days(year, month, day),
        second: (h * 3600 + m * 60) as f64 + sec,
        nanoseconds: decimals > 6,
    }))
}

/// Days from a fixed origin of a proleptic Gregorian date (H. Hinnant, "chrono-compatible
/// low-level date algorithms", days_from_civil).
fn days(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_count_days_across_months_and_leap_years() {
        // 1 March 2024 is 1 day after 29 February 2024 (a leap year); 1 January 2027 is 365
        // days after 1 January 2026.
        assert_eq!(days(2024, 3, 1) - days(2024, 2, 29), 1);
        assert_eq!(days(2027, 1, 1) - days(2026, 1, 1), 365);
        assert_eq!(days(2025, 1, 1) - days(2024, 1, 1), 366);
    }
}
