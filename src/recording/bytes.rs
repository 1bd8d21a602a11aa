//! Reading a record file's bytes under the `max_record_bytes` limit: a file above it is refused by
//! its length before it is read, and a pipe or device (whose length is unknown) is read at most
//! one byte past the limit, so memory stays bounded whatever the path names.

use super::refuse;
use crate::error::Error;
use crate::input::limits::{self, Limits};
use std::io::Read;
use std::path::Path;

/// The bytes of `path`, or a diagnostic when it is missing, unreadable or above the limit.
pub fn read(path: &Path, limits: &Limits) -> Result<Vec<u8>, Error> {
    let file = path.display().to_string();
    let io = |source| Error::Io {
        path: file.clone(),
        source,
    };
    let max = limits.get(limits::RECORD_BYTES);
    let f = std::fs::File::open(path).map_err(io)?;
    let meta = f.metadata().map_err(io)?;
    if meta.is_dir() {
        return Err(refuse(
            &file,
            None,
            "this is a folder, not a record file".to_string(),
            "give the record's .csv, .cfg or .cff file".to_string(),
        ));
    }
    if meta.is_file() && meta.len() > max {
        return Err(too_large(&file, limits, meta.len(), ""));
    }
    let mut bytes = Vec::new();
    f.take(max.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(io)?;
    if bytes.len() as u64 > max {
        return Err(too_large(&file, limits, max + 1, " more than"));
    }
    Ok(bytes)
}

/// Text of a record file (CSV, COMTRADE configuration or ASCII data): UTF-8, or Latin-1 when it
/// is not (recorders write station names in their own code page; only ASCII matters to nadir).
pub fn text(bytes: Vec<u8>) -> String {
    match String::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => e.into_bytes().iter().map(|&b| b as char).collect(),
    }
}

/// `more` is " more than" when only a lower bound of the size is known (a pipe read to the limit).
fn too_large(file: &str, limits: &Limits, bytes: u64, more: &str) -> Error {
    let limit = limits::RECORD_BYTES;
    let shown = if more.is_empty() { bytes } else { bytes - 1 };
    refuse(
        file,
        None,
        limits::over_limit_message(limits, limit, &format!("the record file has{more}"), shown),
        limits::over_limit_help(limit, bytes),
    )
}
