//! Atomic file writing: write to a temporary file beside the target, flush, then rename over it.
//!
//! A rename within one directory is atomic on the file systems nadir runs on, so a reader sees either
//! the old file or the new one, never a partial file, and an interrupted run leaves the old file intact.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Why a file could not be written, in words a user can act on.
#[derive(Debug, thiserror::Error)]
pub enum WriteError {
    #[error("{0}: is a directory; give a file name")]
    IsDirectory(PathBuf),
    #[error("{0}: already exists; pass --force to replace it")]
    Exists(PathBuf),
    #[error("{path}: cannot write: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
}

/// Whether an existing target may be replaced.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Overwrite {
    Allow,
    Refuse,
}

/// Write `bytes` to `path` atomically.
pub fn write_atomic(path: &Path, bytes: &[u8], overwrite: Overwrite) -> Result<(), WriteError> {
    if path.is_dir() {
        return Err(WriteError::IsDirectory(path.to_path_buf()));
    }
    if overwrite == Overwrite::Refuse && path.exists() {
        return Err(WriteError::Exists(path.to_path_buf()));
    }
    let io = |source| WriteError::Io {
        path: path.to_path_buf(),
        source,
    };
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.{}.tmp", std::process::id()));
    let pause = interruption_test_pause();
    let result = (|| {
        let mut file = fs::File::create(&tmp)?;
        for (i, chunk) in bytes.chunks(64 * 1024).enumerate() {
            file.write_all(chunk)?;
            if i == 0 {
                if let Some(p) = pause {
                    file.flush()?;
                    std::thread::sleep(p);
                }
            }
        }
        file.sync_all()?;
        fs::rename(&tmp, path)
    })();
    if let Err(e) = result {
        let _ = fs::remove_file(&tmp);
        return Err(io(e));
    }
    Ok(())
}

/// `NADIR_TEST_WRITE_PAUSE_MS`: pause after the first 64 KiB of every file written, so that a test
/// can kill the process in the middle of a write (tests/interrupted_write.rs). Unset in normal use.
fn interruption_test_pause() -> Option<std::time::Duration> {
    let ms: u64 = std::env::var("NADIR_TEST_WRITE_PAUSE_MS")
        .ok()?
        .parse()
        .ok()?;
    Some(std::time::Duration::from_millis(ms.min(60_000)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scratch(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("nadir-write-{}-{name}", std::process::id()));
        let _ = fs::create_dir_all(&dir);
        dir
    }

    #[test]
    fn refuses_to_replace_without_permission_and_keeps_the_old_bytes() {
        let dir = scratch("refuse");
        let target = dir.join("scheme.yaml");
        fs::write(&target, b"old").unwrap();
        let err = write_atomic(&target, b"new", Overwrite::Refuse).unwrap_err();
        assert!(err.to_string().contains("--force"));
        assert_eq!(fs::read(&target).unwrap(), b"old");
        write_atomic(&target, b"new", Overwrite::Allow).unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"new");
    }

    #[test]
    fn a_directory_target_is_a_clear_error() {
        let dir = scratch("dir");
        let err = write_atomic(&dir, b"x", Overwrite::Allow).unwrap_err();
        assert!(err.to_string().contains("is a directory"));
    }

    #[test]
    fn no_temporary_file_is_left_behind() {
        let dir = scratch("clean");
        write_atomic(&dir.join("a.csv"), b"1,2\n", Overwrite::Allow).unwrap();
        let names: Vec<_> = fs::read_dir(&dir)
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(names.len(), 1, "{names:?}");
    }
}
