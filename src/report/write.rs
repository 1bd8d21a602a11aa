//! Output files: the one overwrite rule, checked before any work, and race-free atomic writes.
//!
//! Every file nadir writes goes through here, in two steps:
//!
//! 1. [`check_outputs`], before any simulation: each output is checked against the verb's inputs
//!    (same file after resolving symbolic links, or the same device and inode, so a hard link
//!    counts: refused with or without `--force`), against the overwrite rule (an existing file, or
//!    a symbolic link, live or dangling, is refused unless `--force`), and against its folder
//!    (exists, is a folder, and a file can be created in it, proven by creating and removing a
//!    temporary file there). Two outputs of one command naming the same file are refused.
//! 2. [`Target::write`]: the bytes go to a temporary file beside the target (created exclusively,
//!    so it never replaces anything), are flushed to disk, and only then take the final name. With
//!    [`Overwrite::Refuse`] the final name is taken without replacing (a hard link, which fails if
//!    the name exists, then the temporary name is removed; where hard links are not supported, the
//!    name is claimed with an exclusive create and the temporary renamed onto the claim), so when
//!    two runs race for one name exactly one wins and the other is refused. With
//!    [`Overwrite::Allow`] the temporary file is renamed over the target, which is atomic: a reader
//!    sees the old file or the new one, never a partial one. A symbolic link at the target is
//!    replaced as a link: the file it points to is never written.
//!
//! Temporary files are named `.NAME.PID.N.tmp` beside the target, are registered while they exist,
//! and [`remove_temporaries_then`] removes every registered one: the binary calls it on SIGINT and
//! SIGTERM (src/cli/mod.rs) before ending. Creating, committing and removing a temporary file all
//! hold one lock, so a signal never lands between a temporary file's creation and its registration.

use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, MutexGuard};

/// Why a file cannot be written, in words a user can act on: the path once, the cause once.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum WriteError {
    #[error("{0}: is a folder; give a file name")]
    IsDirectory(PathBuf),
    #[error("{0}: already exists; pass --force to replace it, or choose another name")]
    Exists(PathBuf),
    #[error(
        "{path}: is a symbolic link to {}{}; pass --force to replace the link itself (the file \
         it points to is never written), or choose another name",
        target.display(),
        if *dangling { ", which does not exist" } else { "" }
    )]
    Symlink {
        path: PathBuf,
        target: PathBuf,
        dangling: bool,
    },
    #[error(
        "{path}: {how} the {role} file {} that this command reads; nadir never writes to one of \
         its inputs, with or without --force; choose another name",
        input.display()
    )]
    IsInput {
        path: PathBuf,
        /// "is", "is a symbolic link to" or "is a hard link to".
        how: &'static str,
        role: String,
        input: PathBuf,
    },
    #[error(
        "{0}: is a device, pipe or socket, not a file; nadir writes only plain files, even with \
         --force; choose a file name"
    )]
    NotAFile(PathBuf),
    #[error("{0}: named for two outputs of this command; give each output its own file")]
    Twice(PathBuf),
    #[error(
        "{path}: the folder {} does not exist; create it first, or choose another folder",
        folder_name(folder)
    )]
    NoFolder { path: PathBuf, folder: PathBuf },
    #[error("{path}: {} is not a folder", folder.display())]
    NotAFolder { path: PathBuf, folder: PathBuf },
    #[error("{path}: cannot write in the folder {}: {cause}", folder_name(folder))]
    FolderNotWritable {
        path: PathBuf,
        folder: PathBuf,
        cause: String,
    },
    #[error("{path}: cannot write: {cause}")]
    Io { path: PathBuf, cause: String },
}

/// Whether an existing target may be replaced: `--force` gives [`Overwrite::Allow`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Overwrite {
    Allow,
    Refuse,
}

impl Overwrite {
    /// The rule for a verb's `--force` flag.
    pub fn from_force(force: bool) -> Overwrite {
        if force {
            Overwrite::Allow
        } else {
            Overwrite::Refuse
        }
    }
}

/// An output path that passed [`check_outputs`]; write it with [`Target::write`].
#[derive(Debug, Clone)]
pub struct Target {
    path: PathBuf,
    overwrite: Overwrite,
    inputs: Vec<InputFile>,
}

#[derive(Debug, Clone)]
struct InputFile {
    role: String,
    path: PathBuf,
    id: FileId,
}

impl Target {
    /// The path as the user gave it.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Writes `bytes` atomically under the rule checked at the start. The checks are made again
    /// here: the file system may have changed while the verb worked.
    pub fn write(&self, bytes: &[u8]) -> Result<(), WriteError> {
        check_one(&self.path, self.overwrite, &self.inputs)?;
        commit(&self.path, bytes, self.overwrite)
    }
}

/// Checks a verb's outputs before any work, against its inputs (`(role, path)`, the role named
/// in messages: "plant", "cases", "scheme") and the overwrite rule. See the module doc.
pub fn check_outputs(
    outputs: &[&Path],
    inputs: &[(&str, &Path)],
    overwrite: Overwrite,
) -> Result<Vec<Target>, WriteError> {
    let inputs: Vec<InputFile> = inputs
        .iter()
        .filter_map(|&(role, path)| {
            // An input that cannot be read is reported by its reader, not here.
            let id = FileId::of(path)?;
            Some(InputFile {
                role: role.to_string(),
                path: path.to_path_buf(),
                id,
            })
        })
        .collect();
    let mut targets: Vec<Target> = Vec::with_capacity(outputs.len());
    for &path in outputs {
        check_one(path, overwrite, &inputs)?;
        if targets.iter().any(|t| same_output(&t.path, path)) {
            return Err(WriteError::Twice(path.to_path_buf()));
        }
        targets.push(Target {
            path: path.to_path_buf(),
            overwrite,
            inputs: inputs.clone(),
        });
    }
    Ok(targets)
}

/// Writes `bytes` to `path` under the overwrite rule, for a caller with no input files to protect
/// (the same checks as [`check_outputs`] with no inputs, then [`Target::write`]).
pub fn write_atomic(path: &Path, bytes: &[u8], overwrite: Overwrite) -> Result<(), WriteError> {
    let target = check_outputs(&[path], &[], overwrite)?;
    target[0].write(bytes)
}

/// Removes every temporary file that is being written, then runs `then` (which ends the process)
/// while still holding the lock, so that no new temporary file is created and none is committed
/// in between. The binary calls it on SIGINT and SIGTERM.
pub fn remove_temporaries_then<R>(then: impl FnOnce() -> R) -> R {
    let mut live = registry();
    for path in live.drain(..) {
        let _ = fs::remove_file(path);
    }
    then()
}

/// An I/O error's cause in words, without the `(os error N)` suffix: the path is named by the
/// caller, once.
pub fn cause(e: &std::io::Error) -> String {
    use std::io::ErrorKind;
    match e.kind() {
        ErrorKind::PermissionDenied => "permission denied".to_string(),
        ErrorKind::NotFound => "no such file or folder".to_string(),
        ErrorKind::AlreadyExists => "already exists".to_string(),
        _ => {
            let text = e.to_string();
            let text = match text.find(" (os error") {
                Some(i) => text[..i].to_string(),
                None => text,
            };
            let mut chars = text.chars();
            match chars.next() {
                Some(c) => c.to_lowercase().chain(chars).collect(),
                None => text,
            }
        }
    }
}

fn folder_name(folder: &Path) -> String {
    if folder.as_os_str().is_empty() || folder == Path::new(".") {
        "(the current folder)".to_string()
    } else {
        folder.display().to_string()
    }
}

/// The folder a path's file lives in; `.` for a bare name.
fn folder_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    }
}

fn check_one(path: &Path, overwrite: Overwrite, inputs: &[InputFile]) -> Result<(), WriteError> {
    let owned = || path.to_path_buf();
    if path.as_os_str().is_empty() {
        return Err(WriteError::Io {
            path: owned(),
            cause: "the output name is empty".to_string(),
        });
    }
    // The folder first: without it nothing else can be said.
    let folder = folder_of(path);
    match fs::metadata(&folder) {
        Ok(m) if m.is_dir() => {}
        Ok(_) => {
            return Err(WriteError::NotAFolder {
                path: owned(),
                folder,
            })
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
            return Err(WriteError::NoFolder {
                path: owned(),
                folder,
            })
        }
        Err(e) => {
            return Err(WriteError::FolderNotWritable {
                path: owned(),
                folder,
                cause: cause(&e),
            })
        }
    }
    match fs::symlink_metadata(path) {
        Ok(meta) => {
            // The file the path leads to, after every symbolic link; absent when dangling.
            let followed = if meta.file_type().is_symlink() {
                fs::metadata(path).ok()
            } else {
                Some(meta.clone())
            };
            if let Some(f) = &followed {
                let id = FileId::from_meta(path, f);
                if let Some(input) = inputs.iter().find(|i| id.as_ref() == Some(&i.id)) {
                    let how = if meta.file_type().is_symlink() {
                        "is a symbolic link to"
                    } else if same_spelling(path, &input.path) {
                        "is"
                    } else {
                        "is a hard link to"
                    };
                    return Err(WriteError::IsInput {
                        path: owned(),
                        how,
                        role: input.role.clone(),
                        input: input.path.clone(),
                    });
                }
                if f.is_dir() {
                    return Err(WriteError::IsDirectory(owned()));
                }
                // Replacing /dev/null or a named pipe (or a link to one) would destroy it.
                if !f.is_file() {
                    return Err(WriteError::NotAFile(owned()));
                }
            }
            if meta.file_type().is_symlink() {
                if overwrite == Overwrite::Refuse {
                    return Err(WriteError::Symlink {
                        path: owned(),
                        target: fs::read_link(path).unwrap_or_default(),
                        dangling: followed.is_none(),
                    });
                }
            } else if overwrite == Overwrite::Refuse {
                return Err(WriteError::Exists(owned()));
            }
        }
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
        Err(e) => {
            return Err(WriteError::Io {
                path: owned(),
                cause: cause(&e),
            })
        }
    }
    // Prove that a file can be created in the folder (permissions, a read-only file system).
    let probe = Temporary::create(path).map_err(|e| WriteError::FolderNotWritable {
        path: owned(),
        folder: folder.clone(),
        cause: cause(&e),
    })?;
    drop(probe);
    Ok(())
}

/// Whether two output paths name one file: the same spelling once made absolute, or (when the
/// file exists) the same file.
fn same_output(a: &Path, b: &Path) -> bool {
    if same_spelling(a, b) {
        return true;
    }
    match (FileId::of(a), FileId::of(b)) {
        (Some(x), Some(y)) => x == y,
        _ => false,
    }
}

fn same_spelling(a: &Path, b: &Path) -> bool {
    let abs = |p: &Path| {
        let folder = fs::canonicalize(folder_of(p)).unwrap_or_else(|_| folder_of(p));
        folder.join(p.file_name().unwrap_or_default())
    };
    abs(a) == abs(b)
}

/// A file's identity: device and inode on Unix (so hard links match), its canonical path elsewhere.
#[derive(Debug, Clone, PartialEq, Eq)]
enum FileId {
    #[cfg(unix)]
    Inode(u64, u64),
    #[cfg_attr(unix, allow(dead_code))]
    Canonical(PathBuf),
}

impl FileId {
    /// The file `path` leads to after every link; `None` when there is none.
    fn of(path: &Path) -> Option<FileId> {
        let meta = fs::metadata(path).ok()?;
        FileId::from_meta(path, &meta)
    }

    #[allow(unused_variables)]
    fn from_meta(path: &Path, meta: &fs::Metadata) -> Option<FileId> {
        #[cfg(unix)]
        {
            use std::os::unix::fs::MetadataExt;
            Some(FileId::Inode(meta.dev(), meta.ino()))
        }
        #[cfg(not(unix))]
        {
            fs::canonicalize(path).ok().map(FileId::Canonical)
        }
    }
}

/// Temporary files being written, for [`remove_temporaries_then`].
static LIVE: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static COUNTER: AtomicU64 = AtomicU64::new(0);

fn registry() -> MutexGuard<'static, Vec<PathBuf>> {
    LIVE.lock().unwrap_or_else(|poisoned| poisoned.into_inner())
}

/// A registered temporary file beside a target; removed when dropped unless committed.
struct Temporary {
    path: Option<PathBuf>,
    file: Option<fs::File>,
}

impl Temporary {
    /// Creates `.NAME.PID.N.tmp` beside `target`, exclusively (never over an existing file).
    fn create(target: &Path) -> std::io::Result<Temporary> {
        let folder = folder_of(target);
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or_default();
        let mut live = registry();
        let mut last = None;
        for _ in 0..100 {
            let n = COUNTER.fetch_add(1, Ordering::Relaxed);
            let path = folder.join(format!(".{name}.{}.{n}.tmp", std::process::id()));
            match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(&path)
            {
                Ok(file) => {
                    live.push(path.clone());
                    return Ok(Temporary {
                        path: Some(path),
                        file: Some(file),
                    });
                }
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
                Err(e) => return Err(e),
            }
        }
        Err(last.unwrap_or_else(|| std::io::Error::other("no free temporary name")))
    }
}

impl Drop for Temporary {
    fn drop(&mut self) {
        drop(self.file.take());
        if let Some(path) = self.path.take() {
            let mut live = registry();
            let _ = fs::remove_file(&path);
            live.retain(|p| p != &path);
        }
    }
}

/// Writes the temporary file, then gives it the final name under the rule (module doc).
fn commit(path: &Path, bytes: &[u8], overwrite: Overwrite) -> Result<(), WriteError> {
    let io = |e: std::io::Error| WriteError::Io {
        path: path.to_path_buf(),
        cause: cause(&e),
    };
    let mut tmp = Temporary::create(path).map_err(io)?;
    {
        let Some(file) = tmp.file.as_mut() else {
            return Err(io(std::io::Error::other("temporary file lost")));
        };
        let pause = interruption_test_pause();
        for (i, chunk) in bytes.chunks(64 * 1024).enumerate() {
            file.write_all(chunk).map_err(io)?;
            if i == 0 {
                if let Some(p) = pause {
                    file.flush().map_err(io)?;
                    std::thread::sleep(p);
                }
            }
        }
        file.sync_all().map_err(io)?;
    }
    drop(tmp.file.take());
    let Some(tmp_path) = tmp.path.clone() else {
        return Err(io(std::io::Error::other("temporary file lost")));
    };
    let mut live = registry();
    if !live.contains(&tmp_path) {
        // Removed by a signal's clean-up: the process is ending; write nothing.
        tmp.path = None;
        return Err(io(std::io::Error::other("interrupted")));
    }
    let result = match overwrite {
        Overwrite::Allow => fs::rename(&tmp_path, path).map(|()| false).map_err(io),
        Overwrite::Refuse => match fs::hard_link(&tmp_path, path) {
            Ok(()) => Ok(true),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                Err(WriteError::Exists(path.to_path_buf()))
            }
            // No hard links on this file system: claim the name exclusively, then rename onto it.
            Err(_) => match fs::OpenOptions::new()
                .write(true)
                .create_new(true)
                .open(path)
            {
                Ok(_) => fs::rename(&tmp_path, path).map(|()| false).map_err(|e| {
                    let _ = fs::remove_file(path);
                    io(e)
                }),
                Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                    Err(WriteError::Exists(path.to_path_buf()))
                }
                Err(e) => Err(io(e)),
            },
        },
    };
    let linked = result?;
    if linked {
        let _ = fs::remove_file(&tmp_path);
    }
    live.retain(|p| p != &tmp_path);
    tmp.path = None;
    Ok(())
}

/// `NADIR_TEST_WRITE_PAUSE_MS`: pause after the first 64 KiB (or the whole file, if smaller) of
/// every file written, so that a test can interrupt a write or race two of them
/// (tests/interrupted_write.rs, tests/output_files.rs). Unset in normal use.
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
        let _ = fs::remove_dir_all(&dir);
        fs::create_dir_all(&dir).unwrap();
        dir
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn refuses_to_replace_without_permission_and_keeps_the_old_bytes() {
        let dir = scratch("refuse");
        let target = dir.join("scheme.yaml");
        fs::write(&target, b"old").unwrap();
        let err = write_atomic(&target, b"new", Overwrite::Refuse).unwrap_err();
        assert_eq!(err, WriteError::Exists(target.clone()));
        assert!(err.to_string().contains("already exists; pass --force"));
        assert_eq!(fs::read(&target).unwrap(), b"old");
        write_atomic(&target, b"new", Overwrite::Allow).unwrap();
        assert_eq!(fs::read(&target).unwrap(), b"new");
    }

    #[test]
    fn a_directory_target_is_a_clear_error() {
        let dir = scratch("dir");
        let err = write_atomic(&dir, b"x", Overwrite::Allow).unwrap_err();
        assert_eq!(err, WriteError::IsDirectory(dir.clone()));
        assert!(err.to_string().ends_with(": is a folder; give a file name"));
    }

    #[test]
    fn no_temporary_file_is_left_behind() {
        let dir = scratch("clean");
        write_atomic(&dir.join("a.csv"), b"1,2\n", Overwrite::Allow).unwrap();
        write_atomic(&dir.join("b.csv"), b"1,2\n", Overwrite::Refuse).unwrap();
        assert!(write_atomic(&dir.join("b.csv"), b"3\n", Overwrite::Refuse).is_err());
        assert_eq!(names(&dir), ["a.csv", "b.csv"]);
        assert!(!registry().iter().any(|p| p.starts_with(&dir)));
    }

    #[test]
    fn an_input_is_refused_by_path_by_symlink_and_by_hard_link_even_with_force() {
        let dir = scratch("inputs");
        let plant = dir.join("plant.yaml");
        fs::write(&plant, b"plant: {}").unwrap();
        let inputs = [("plant", plant.as_path())];
        // The same file spelled another way.
        let other_spelling = dir.join(".").join("plant.yaml");
        let hard = dir.join("hard.yaml");
        fs::hard_link(&plant, &hard).unwrap();
        #[cfg(unix)]
        let soft = {
            let soft = dir.join("soft.yaml");
            std::os::unix::fs::symlink(&plant, &soft).unwrap();
            soft
        };
        for overwrite in [Overwrite::Allow, Overwrite::Refuse] {
            for (out, how) in [
                (&plant, "is"),
                (&other_spelling, "is"),
                (&hard, "is a hard link to"),
                #[cfg(unix)]
                (&soft, "is a symbolic link to"),
            ] {
                let err = check_outputs(&[out.as_path()], &inputs, overwrite).unwrap_err();
                assert_eq!(
                    err,
                    WriteError::IsInput {
                        path: out.clone(),
                        how,
                        role: "plant".into(),
                        input: plant.clone()
                    },
                    "{out:?}"
                );
                assert!(err
                    .to_string()
                    .contains("that this command reads; nadir never writes to one of its inputs"));
            }
        }
        assert_eq!(fs::read(&plant).unwrap(), b"plant: {}");
    }

    #[cfg(unix)]
    #[test]
    fn symbolic_links_are_refused_without_force_and_replaced_as_links_with_it() {
        let dir = scratch("links");
        let pointed = dir.join("pointed.txt");
        fs::write(&pointed, b"keep me").unwrap();
        let live = dir.join("live.csv");
        std::os::unix::fs::symlink(&pointed, &live).unwrap();
        let dangling = dir.join("dangling.csv");
        std::os::unix::fs::symlink(dir.join("nowhere.txt"), &dangling).unwrap();

        let err = write_atomic(&live, b"new", Overwrite::Refuse).unwrap_err();
        assert_eq!(
            err,
            WriteError::Symlink {
                path: live.clone(),
                target: pointed.clone(),
                dangling: false
            }
        );
        let err = write_atomic(&dangling, b"new", Overwrite::Refuse).unwrap_err();
        assert!(err
            .to_string()
            .contains(", which does not exist; pass --force"));
        assert!(!dir.join("nowhere.txt").exists());

        // With --force the link itself is replaced; the file it pointed to is untouched.
        write_atomic(&live, b"new", Overwrite::Allow).unwrap();
        write_atomic(&dangling, b"new", Overwrite::Allow).unwrap();
        assert!(!fs::symlink_metadata(&live)
            .unwrap()
            .file_type()
            .is_symlink());
        assert_eq!(fs::read(&live).unwrap(), b"new");
        assert_eq!(fs::read(&pointed).unwrap(), b"keep me");
        assert!(!dir.join("nowhere.txt").exists());
    }

    #[cfg(unix)]
    #[test]
    fn devices_and_links_to_them_are_never_replaced() {
        let dir = scratch("devices");
        let link = dir.join("null.csv");
        std::os::unix::fs::symlink("/dev/null", &link).unwrap();
        for path in [Path::new("/dev/null"), link.as_path()] {
            for overwrite in [Overwrite::Allow, Overwrite::Refuse] {
                let err = check_outputs(&[path], &[], overwrite).unwrap_err();
                assert_eq!(err, WriteError::NotAFile(path.to_path_buf()));
            }
        }
        assert!(fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink());
    }

    #[test]
    fn a_missing_or_non_folder_parent_is_named_once() {
        let dir = scratch("folders");
        let out = dir.join("missing").join("r.html");
        let err = check_outputs(&[out.as_path()], &[], Overwrite::Allow).unwrap_err();
        assert_eq!(
            err.to_string(),
            format!(
                "{}: the folder {} does not exist; create it first, or choose another folder",
                out.display(),
                dir.join("missing").display()
            )
        );
        let file = dir.join("file.txt");
        fs::write(&file, b"x").unwrap();
        let out = file.join("r.html");
        let err = check_outputs(&[out.as_path()], &[], Overwrite::Allow).unwrap_err();
        assert_eq!(
            err.to_string(),
            format!("{}: {} is not a folder", out.display(), file.display())
        );
        assert_eq!(names(&dir), ["file.txt"]);
    }

    #[test]
    fn the_same_output_twice_is_refused() {
        let dir = scratch("twice");
        let a = dir.join("x.csv");
        let b = dir.join(".").join("x.csv");
        let err = check_outputs(&[a.as_path(), b.as_path()], &[], Overwrite::Allow).unwrap_err();
        assert_eq!(err, WriteError::Twice(b.clone()));
    }

    #[test]
    fn racing_threads_exactly_one_wins() {
        let dir = scratch("race");
        let target = dir.join("same.html");
        for round in 0..20 {
            let _ = fs::remove_file(&target);
            let barrier = std::sync::Barrier::new(8);
            let results: Vec<Result<(), WriteError>> = std::thread::scope(|s| {
                let handles: Vec<_> = (0..8)
                    .map(|i| {
                        let (barrier, target) = (&barrier, &target);
                        s.spawn(move || {
                            let checked =
                                check_outputs(&[target.as_path()], &[], Overwrite::Refuse)?;
                            barrier.wait();
                            checked[0].write(format!("writer {i}").as_bytes())
                        })
                    })
                    .collect();
                handles.into_iter().map(|h| h.join().unwrap()).collect()
            });
            let winners = results.iter().filter(|r| r.is_ok()).count();
            assert_eq!(winners, 1, "round {round}: {results:?}");
            for r in results.iter().filter_map(|r| r.as_ref().err()) {
                assert_eq!(r, &WriteError::Exists(target.clone()));
            }
            let text = fs::read_to_string(&target).unwrap();
            assert!(text.starts_with("writer "), "{text}");
            assert_eq!(names(&dir), ["same.html"]);
        }
    }

    #[test]
    fn temporaries_are_hidden_registered_while_they_exist_and_removed_when_dropped() {
        // The clean-up on a real SIGINT or SIGTERM is tested on the binary
        // (tests/output_files.rs); here, the registry it empties.
        let dir = scratch("registry");
        let target = dir.join("r.html");
        let tmp = Temporary::create(&target).unwrap();
        let tmp_path = tmp.path.clone().unwrap();
        let name = tmp_path.file_name().unwrap().to_string_lossy().to_string();
        assert!(
            name.starts_with(".r.html.") && name.ends_with(".tmp"),
            "{name}"
        );
        assert!(tmp_path.exists());
        assert!(registry().contains(&tmp_path));
        drop(tmp);
        assert!(!registry().contains(&tmp_path));
        assert!(names(&dir).is_empty());
    }

    #[test]
    fn causes_drop_the_os_error_suffix() {
        let e = std::io::Error::from_raw_os_error(30);
        assert!(!cause(&e).contains("os error"), "{}", cause(&e));
        assert_eq!(
            cause(&std::io::Error::from(std::io::ErrorKind::PermissionDenied)),
            "permission denied"
        );
    }
}
