//! A COMTRADE data file (`.dat`, or the DAT section of a `.cff`): one channel's scaled values and
//! the sample times, ASCII (`n,timestamp,A1…Ak,D1…Dm` per line) or binary (per sample: `n` and
//! the timestamp as little-endian u32, each analog value as i16 (`BINARY`), i32 (`BINARY32`) or
//! f32 (`FLOAT32`), the status bits packed in 16-bit words).
//!
//! Times come from the sampling rates when the configuration gives them (sample `n` of a rate is
//! `(n − first)/samp` after the last sample of the rate before, as C37.111 counts), otherwise
//! from the timestamps (µs, or ns in 2013, times `timemult`); the channel's skew is added. A
//! missing value (ASCII `99999` or an empty field, binary 0x8000 / 0x80000000, a non-finite
//! FLOAT32), a sample number that does not follow on, a data file shorter or longer than the
//! configuration declares, and a binary file cut inside a sample are refused by sample number.

use super::super::refuse;
use super::cfg::{Config, Format};
use crate::error::Error;
use crate::input::limits::{self, Limits};

/// One channel's samples on the record's time axis.
pub struct Samples {
    pub times_s: Vec<f64>,
    pub values: Vec<f64>,
    /// For a sample index, the data file line (ASCII) or none (binary).
    pub lines: Option<Vec<usize>>,
}

/// Reads analog channel `channel` (0-based) from the data `bytes` of `file`, whose first line is
/// `first_line` (a `.cff` section starts later).
pub fn read(
    file: &str,
    bytes: &[u8],
    first_line: usize,
    cfg: &Config,
    channel: usize,
    limits: &Limits,
) -> Result<Samples, Error> {
    let max = limits.get(limits::RECORD_SAMPLES);
    if cfg.end_sample > max {
        return Err(refuse(
            file,
            None,
            format!(
                "the configuration declares {} samples, above the limit {} = {max}",
                cfg.end_sample,
                limits::RECORD_SAMPLES.name
            ),
            limits::over_limit_help(limits::RECORD_SAMPLES, cfg.end_sample),
        ));
    }
    let mut clock = Clock::new(cfg);
    let a = &cfg.analog[channel];
    let mut out = Samples {
        times_s: Vec::with_capacity(cfg.end_sample as usize),
        values: Vec::with_capacity(cfg.end_sample as usize),
        lines: None,
    };
    let mut previous: Option<u64> = None;
    let mut follow = |n: u64, at: &str| -> Result<(), Error> {
        if let Some(p) = previous {
            if n != p + 1 {
                return Err(refuse(
                    file,
                    None,
                    format!("{at}: the sample number {n} does not follow {p}"),
                    "samples are missing or out of order: export the record again, or cut it \
                     before this sample"
                        .to_string(),
                ));
            }
        }
        previous = Some(n);
        Ok(())
    };
    let missing = |at: &str| {
        refuse(
            file,
            None,
            format!("{at}: channel `{}` has no value (marked missing)", a.id),
            "the recorder lost this sample: cut the record before it, or use another channel"
                .to_string(),
        )
    };
    match cfg.format {
        Format::Ascii => {
            let text = String::from_utf8_lossy(bytes);
            let width = 2 + cfg.analog.len() + cfg.n_status;
            let mut lines = Vec::new();
            for (i, line) in text.lines().enumerate() {
                let line_no = first_line + i;
                let line = line.trim_end_matches(['\r', '\u{1a}']);
                if line.trim().is_empty() {
                    continue;
                }
                let at_line = |message: String, help: &str| {
                    refuse(file, Some(line_no), message, help.to_string())
                };
                if out.values.len() as u64 >= cfg.end_sample {
                    return Err(at_line(
                        format!(
                            "the data file has more samples than the {} the configuration declares",
                            cfg.end_sample
                        ),
                        "correct the last `endsamp` of the configuration, or cut the data file",
                    ));
                }
                let f: Vec<&str> = line.split(',').map(str::trim).collect();
                if f.len() != width {
                    return Err(at_line(
                        format!(
                            "the line has {} fields; the configuration's {} analog and {} status \
                             channels make {width} (sample number and timestamp first)",
                            f.len(),
                            cfg.analog.len(),
                            cfg.n_status
                        ),
                        "check that the data file belongs to this configuration",
                    ));
                }
                let Ok(n) = f[0].parse::<u64>() else {
                    return Err(at_line(
                        format!("the sample number `{}` is not a whole number", f[0]),
                        "each line starts with its sample number, 1 for the first",
                    ));
                };
                follow(n, &format!("line {line_no}"))?;
                let stamp = match f[1] {
                    "" => None,
                    s => match s.parse::<f64>() {
                        Ok(v) if v.is_finite() => Some(v),
                        _ => {
                            return Err(at_line(
                                format!("the timestamp `{s}` is not a number"),
                                "the second field is the sample's time in µs (times timemult)",
                            ))
                        }
                    },
                };
                let t = clock
                    .time(n, stamp)
                    .ok_or_else(|| missing_stamp(file, Some(line_no), n))?;
                let raw = f[2 + channel];
                let x = match raw {
                    "" | "99999" => return Err(missing(&format!("line {line_no}, sample {n}"))),
                    s => s
                        .parse::<f64>()
                        .ok()
                        .filter(|v| v.is_finite())
                        .ok_or_else(|| {
                            at_line(
                            format!("channel `{}` is `{s}`, not a number", a.id),
                            "the data file holds plain numbers (raw values before the channel's \
                             a·x + b)",
                        )
                        })?,
                };
                out.times_s.push(t + a.skew_s);
                out.values.push(a.a * x + a.b);
                lines.push(line_no);
            }
            out.lines = Some(lines);
        }
        Format::Binary | Format::Binary32 | Format::Float32 => {
            let w = if cfg.format == Format::Binary { 2 } else { 4 };
            let size = 8 + w * cfg.analog.len() + 2 * cfg.n_status.div_ceil(16);
            let whole = bytes.len() / size;
            for (k, rec) in bytes.chunks_exact(size).enumerate() {
                if k as u64 >= cfg.end_sample {
                    break;
                }
                let u32_at =
                    |o: usize| u32::from_le_bytes([rec[o], rec[o + 1], rec[o + 2], rec[o + 3]]);
                let n = u32_at(0) as u64;
                let at = format!("sample {} (byte {})", k + 1, k * size);
                follow(n, &at)?;
                let ts = u32_at(4);
                let stamp = (ts != u32::MAX).then_some(ts as f64);
                let t = clock
                    .time(n, stamp)
                    .ok_or_else(|| missing_stamp(file, None, n))?;
                let o = 8 + w * channel;
                let x = match cfg.format {
                    Format::Binary => {
                        let v = i16::from_le_bytes([rec[o], rec[o + 1]]);
                        (v != i16::MIN).then_some(v as f64)
                    }
                    Format::Binary32 => {
                        let v = u32_at(o) as i32;
                        (v != i32::MIN).then_some(v as f64)
                    }
                    _ => Some(f32::from_bits(u32_at(o)) as f64).filter(|v| v.is_finite()),
                };
                let Some(x) = x else {
                    return Err(missing(&at));
                };
                out.times_s.push(t + a.skew_s);
                out.values.push(a.a * x + a.b);
            }
            let declared = cfg.end_sample as usize;
            if whole > declared {
                return Err(refuse(
                    file,
                    None,
                    format!(
                        "the data file holds {whole} samples of {size} bytes, more than the {declared} the configuration declares"
                    ),
                    "check that the data file belongs to this configuration, or correct its last `endsamp`".to_string(),
                ));
            }
            if whole < declared || bytes.len() % size != 0 {
                return Err(refuse(
                    file,
                    None,
                    format!(
                        "the data file ends inside sample {} ({} bytes: {whole} whole samples of {size} bytes, and {} bytes over), while the configuration declares {declared}",
                        whole + 1,
                        bytes.len(),
                        bytes.len() % size
                    ),
                    "the file is truncated: copy or export it again; or cut the configuration's \
                     last `endsamp` to the samples there are"
                        .to_string(),
                ));
            }
        }
    }
    if (out.values.len() as u64) < cfg.end_sample {
        return Err(refuse(
            file,
            None,
            format!(
                "the data file has {} samples, fewer than the {} the configuration declares",
                out.values.len(),
                cfg.end_sample
            ),
            "the file is truncated: copy or export it again; or cut the configuration's last \
             `endsamp` to the samples there are"
                .to_string(),
        ));
    }
    Ok(out)
}

fn missing_stamp(file: &str, line: Option<usize>, n: u64) -> Error {
    refuse(
        file,
        line,
        format!("sample {n} has no timestamp, and the configuration gives no sampling rate"),
        "give the sampling rates in the configuration, or the timestamp of every sample"
            .to_string(),
    )
}

/// Sample times by rate segment or by timestamp.
struct Clock {
    /// `(samp, endsamp, first sample number, its time)` per rate.
    segments: Vec<(f64, u64, u64, f64)>,
    unit_s: f64,
}

impl Clock {
    fn new(cfg: &Config) -> Clock {
        let mut segments = Vec::new();
        let (mut start_n, mut start_t) = (1u64, 0.0);
        for &(samp, end) in &cfg.rates {
            segments.push((samp, end, start_n, start_t));
            start_t += (end - start_n) as f64 / samp;
            start_n = end;
        }
        Clock {
            segments,
            unit_s: cfg.timestamp_unit_s(),
        }
    }

    fn time(&mut self, n: u64, stamp: Option<f64>) -> Option<f64> {
        if self.segments.is_empty() {
            return stamp.map(|s| s * self.unit_s);
        }
        let &(samp, _, start_n, start_t) = self
            .segments
            .iter()
            .find(|s| n <= s.1)
            .or(self.segments.last())?;
        Some(start_t + (n as f64 - start_n as f64) / samp)
    }
}
