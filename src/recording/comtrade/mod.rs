//! COMTRADE records (IEEE C37.111-1999 and C37.111-2013): a configuration file (`.cfg`) with its
//! data file (`.dat`, same stem, beside it), or the 2013 single file (`.cff`) holding both.
//!
//! `cfg.rs` parses and checks the configuration, `dat.rs` reads one channel of the data. This
//! file finds the data file, picks the channel and hands its samples to the checks every record
//! passes. Reader of our own rather than the `comtrade` crate (docs/ARCHITECTURE.md says why).
//!
//! Values are the channel's `a·x + b` in its unit, on the side (primary or secondary) its `PS`
//! field names; a frequency in Hz and the zero crossings of a voltage do not depend on the side,
//! so nothing is converted.

pub mod cfg;
pub mod dat;

use super::{bytes, refuse, FrequencyRecord, ReadOptions};
use crate::error::Error;
use crate::input::limits::Limits;
use cfg::Config;
use std::path::{Path, PathBuf};

/// Reads a COMTRADE record by its `.cfg` or `.cff` path.
pub fn read(path: &Path, options: &ReadOptions, limits: &Limits) -> Result<FrequencyRecord, Error> {
    let file = path.display().to_string();
    let is_cff = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("cff"));
    let (cfg, dat_file, dat_bytes, dat_first_line) = if is_cff {
        let all = bytes::read(path, limits)?;
        let parts = split_cff(&file, &all)?;
        let cfg = cfg::parse(&file, &bytes::text(parts.cfg.to_vec()), parts.cfg_line)?;
        (cfg, file.clone(), parts.dat.to_vec(), parts.dat_line)
    } else {
        let text = bytes::text(bytes::read(path, limits)?);
        let cfg = cfg::parse(&file, &text, 1)?;
        let dat = data_path(path).ok_or_else(|| {
            refuse(
                &file,
                None,
                format!(
                    "the data file `{}` is not beside the configuration",
                    path.with_extension("dat").display()
                ),
                "copy the .dat with the same name next to the .cfg (a COMTRADE record is the \
                 pair)"
                    .to_string(),
            )
        })?;
        let dat_bytes = bytes::read(&dat, limits)?;
        (cfg, dat.display().to_string(), dat_bytes, 1)
    };
    let (channel, measured) = choose(&file, &cfg, options)?;
    let a = &cfg.analog[channel];
    let samples = dat::read(&dat_file, &dat_bytes, dat_first_line, &cfg, channel, limits)?;
    let lines = samples.lines;
    let place = |i: usize| match &lines {
        Some(l) => (Some(l[i]), format!("sample {}", i + 1)),
        None => (None, format!("sample {}", i + 1)),
    };
    let mut record = super::series(
        &dat_file,
        path,
        samples.times_s,
        samples.values,
        a.id.clone(),
        measured,
        &place,
        options,
        cfg.rates.is_empty(),
    )?;
    record.trigger_s = cfg.trigger_s();
    record.nominal_hz = cfg.line_hz;
    record.start_time = cfg.start.as_ref().map(|s| s.text.clone());
    Ok(record)
}

/// The `.dat` beside a `.cfg`, in the configuration's case or the other (`REC.CFG` with
/// `REC.DAT`).
pub fn data_path(cfg: &Path) -> Option<PathBuf> {
    ["dat", "DAT", "Dat"]
        .iter()
        .map(|e| cfg.with_extension(e))
        .find(|p| p.is_file())
}

/// Whether a channel's unit is Hz, or a voltage (V, kV, mV).
fn is_hz(unit: &str) -> bool {
    unit.trim().eq_ignore_ascii_case("hz")
}

fn is_volts(unit: &str) -> bool {
    matches!(unit.trim().to_ascii_lowercase().as_str(), "v" | "kv" | "mv")
}

/// The analog channel to read (0-based) and whether it holds frequency.
fn choose(file: &str, cfg: &Config, options: &ReadOptions) -> Result<(usize, bool), Error> {
    let list = || {
        cfg.analog
            .iter()
            .take(30)
            .map(|a| format!("`{}` [{}]", a.id, a.unit))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if let Some(name) = &options.channel {
        let key = |s: &str| crate::input::load_list::columns::key(s);
        let Some(i) = cfg
            .analog
            .iter()
            .position(|a| a.id.trim() == name.trim() || key(&a.id) == key(name))
        else {
            return Err(refuse(
                file,
                None,
                format!("the record has no analog channel `{name}`"),
                format!("its analog channels are {}", list()),
            ));
        };
        let a = &cfg.analog[i];
        if is_hz(&a.unit) {
            return Ok((i, true));
        }
        if is_volts(&a.unit) {
            return Ok((i, false));
        }
        return Err(refuse(
            file,
            Some(a.line),
            format!(
                "channel `{}` is in `{}`, neither Hz (a frequency) nor V or kV (a voltage)",
                a.id, a.unit
            ),
            "choose a frequency or voltage channel".to_string(),
        ));
    }
    let hz: Vec<usize> = (0..cfg.analog.len())
        .filter(|&i| is_hz(&cfg.analog[i].unit))
        .collect();
    match hz.as_slice() {
        [one] => return Ok((*one, true)),
        [first, second, ..] => {
            return Err(refuse(
                file,
                Some(cfg.analog[*second].line),
                format!(
                    "two frequency channels, `{}` and `{}`",
                    cfg.analog[*first].id, cfg.analog[*second].id
                ),
                "name the channel to use".to_string(),
            ))
        }
        [] => {}
    }
    match (0..cfg.analog.len()).find(|&i| is_volts(&cfg.analog[i].unit)) {
        Some(i) => Ok((i, false)),
        None => Err(refuse(
            file,
            None,
            format!(
                "the record has no analog channel in Hz or in V or kV (its channels: {})",
                if cfg.analog.is_empty() {
                    "none".to_string()
                } else {
                    list()
                }
            ),
            "a record needs a frequency channel (unit Hz) or a voltage channel (unit V or kV)"
                .to_string(),
        )),
    }
}

/// The parts of a `.cff`: the configuration text and the data bytes, with their first lines.
struct CffParts<'a> {
    cfg: &'a [u8],
    cfg_line: usize,
    dat: &'a [u8],
    dat_line: usize,
}

/// Splits a `.cff` at its `--- file type: … ---` headers (C37.111-2013, clause 9). A binary DAT
/// section states its byte count, which is taken exactly (its bytes may contain line breaks).
fn split_cff<'a>(file: &str, all: &'a [u8]) -> Result<CffParts<'a>, Error> {
    let mut pos = 0;
    let mut line = 1;
    let mut cfg = None;
    let mut dat = None;
    let mut current: Option<(&str, usize, usize)> = None; // (kind, start byte, first line)
    let close = |current: Option<(&str, usize, usize)>,
                 end: usize,
                 cfg: &mut Option<(usize, usize, usize)>,
                 dat: &mut Option<(usize, usize, usize)>| {
        if let Some((kind, start, first)) = current {
            match kind {
                "cfg" => *cfg = Some((start, end, first)),
                "dat" => *dat = Some((start, end, first)),
                _ => {}
            }
        }
    };
    while pos < all.len() {
        let end = all[pos..]
            .iter()
            .position(|&b| b == b'\n')
            .map_or(all.len(), |i| pos + i + 1);
        let text = String::from_utf8_lossy(&all[pos..end]);
        let t = text.trim().to_ascii_lowercase();
        if let Some(rest) = t
            .strip_prefix("---")
            .and_then(|r| r.strip_suffix("---"))
            .map(str::trim)
            .and_then(|r| r.strip_prefix("file type:"))
        {
            close(current.take(), pos, &mut cfg, &mut dat);
            let rest = rest.trim();
            if rest.starts_with("cfg") {
                current = Some(("cfg", end, line + 1));
            } else if rest.starts_with("dat") {
                if rest.contains("binary") || rest.contains("float") {
                    let size = rest
                        .rsplit(':')
                        .next()
                        .and_then(|s| s.trim().parse::<usize>().ok())
                        .ok_or_else(|| {
                            refuse(
                                file,
                                Some(line),
                                format!(
                                    "the binary data header `{}` has no byte count",
                                    text.trim()
                                ),
                                "write it as `--- file type: DAT BINARY: 12345 ---`".to_string(),
                            )
                        })?;
                    if end + size > all.len() {
                        return Err(refuse(
                            file,
                            Some(line),
                            format!(
                                "the binary data section declares {size} bytes but the file has \
                                 {} after its header",
                                all.len() - end
                            ),
                            "the file is truncated: copy or export it again".to_string(),
                        ));
                    }
                    dat = Some((end, end + size, line + 1));
                    pos = end + size;
                    line += 1 + all[end..end + size].iter().filter(|&&b| b == b'\n').count();
                    continue;
                }
                current = Some(("dat", end, line + 1));
            } else {
                current = Some(("other", end, line + 1));
            }
        }
        pos = end;
        line += 1;
    }
    close(current.take(), all.len(), &mut cfg, &mut dat);
    match (cfg, dat) {
        (Some(c), Some(d)) => Ok(CffParts {
            cfg: &all[c.0..c.1],
            cfg_line: c.2,
            dat: &all[d.0..d.1],
            dat_line: d.2,
        }),
        _ => Err(refuse(
            file,
            None,
            "the .cff file has no `--- file type: CFG ---` or no `--- file type: DAT … ---` \
             section"
                .to_string(),
            "a single-file COMTRADE record holds both sections (C37.111-2013); give the .cfg and \
             .dat pair instead if that is what you have"
                .to_string(),
        )),
    }
}
