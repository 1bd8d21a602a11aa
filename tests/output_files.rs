//! Output files on the real binary: no verb writes to one of its inputs (by path, symbolic link or
//! hard link, with or without --force); every output flag follows one overwrite rule; output
//! paths are checked before any work; two runs racing for one name give exactly one winner; a
//! SIGINT or SIGTERM leaves no temporary file; a closed stdout ends nadir by SIGPIPE.
//! (src/report/write.rs holds the rule; docs/guarantees.md states it.)

use std::fs;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

const PLANT: &str = "examples/biorefinery/plant.yaml";
const CASES: &str = "examples/biorefinery/cases.yaml";
const SCHEME: &str = "schemes/biorefinery.yaml";

/// A fresh folder holding copies of the demo inputs (plant.yaml, cases.yaml, scheme.yaml).
fn workdir(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join("output-files")
        .join(name);
    let _ = fs::remove_dir_all(&dir);
    fs::create_dir_all(&dir).unwrap();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    fs::copy(root.join(PLANT), dir.join("plant.yaml")).unwrap();
    fs::copy(root.join(CASES), dir.join("cases.yaml")).unwrap();
    fs::copy(root.join(SCHEME), dir.join("scheme.yaml")).unwrap();
    dir
}

fn nadir(dir: &Path, args: &[&str]) -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_nadir"));
    c.args(args).current_dir(dir).stdin(Stdio::null());
    c
}

fn run(dir: &Path, args: &[&str]) -> (i32, String, String) {
    let out: Output = nadir(dir, args).output().expect("nadir runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).to_string(),
        String::from_utf8_lossy(&out.stderr).to_string(),
    )
}

/// The file names in `dir`, sorted.
fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .collect();
    v.sort();
    v
}

fn temporaries(dir: &Path) -> Vec<String> {
    names(dir)
        .into_iter()
        .filter(|n| n.ends_with(".tmp"))
        .collect()
}

const REPLAY: [&str; 7] = [
    "replay",
    "plant.yaml",
    "scheme.yaml",
    "--cases",
    "cases.yaml",
    "--case",
    "utility-loss",
];
const REPORT: [&str; 5] = [
    "report",
    "plant.yaml",
    "scheme.yaml",
    "--cases",
    "cases.yaml",
];
const DESIGN: [&str; 4] = ["design", "plant.yaml", "--cases", "cases.yaml"];

fn with<'a>(base: &[&'a str], more: &[&'a str]) -> Vec<&'a str> {
    base.iter().chain(more).copied().collect()
}

#[test]
fn no_verb_writes_to_one_of_its_inputs_even_with_force() {
    let dir = workdir("inputs");
    let before: Vec<Vec<u8>> = ["plant.yaml", "cases.yaml", "scheme.yaml"]
        .iter()
        .map(|n| fs::read(dir.join(n)).unwrap())
        .collect();
    fs::hard_link(dir.join("cases.yaml"), dir.join("cases-hard.yaml")).unwrap();
    #[cfg(unix)]
    std::os::unix::fs::symlink("scheme.yaml", dir.join("scheme-link.yaml")).unwrap();
    fs::create_dir_all(dir.join("sub")).unwrap();

    let mut attempts: Vec<(Vec<&str>, &str)> = vec![
        (
            with(&DESIGN, &["-o", "plant.yaml", "--force"]),
            "plant.yaml: is the plant file plant.yaml that this command reads; nadir never writes to one of its inputs, with or without --force; choose another name",
        ),
        (
            with(&DESIGN, &["-o", "./cases.yaml"]),
            "./cases.yaml: is the cases file cases.yaml that this command reads",
        ),
        (
            with(&DESIGN, &["--from", "scheme.yaml", "-o", "sub/../scheme.yaml", "--force"]),
            "sub/../scheme.yaml: is the scheme file scheme.yaml that this command reads",
        ),
        (
            with(&REPORT, &["-o", "cases-hard.yaml", "--force"]),
            "cases-hard.yaml: is a hard link to the cases file cases.yaml that this command reads",
        ),
        (
            with(&REPORT, &["-o", "plant.yaml"]),
            "plant.yaml: is the plant file plant.yaml that this command reads",
        ),
        (
            with(&REPLAY, &["--csv", "cases.yaml", "--force"]),
            "cases.yaml: is the cases file cases.yaml that this command reads",
        ),
        (
            with(&REPLAY, &["--plot", "plant.yaml", "--force"]),
            "plant.yaml: is the plant file plant.yaml that this command reads",
        ),
        (
            with(&REPLAY, &["--csv", "new.csv", "--plot", "cases-hard.yaml", "--force"]),
            "cases-hard.yaml: is a hard link to the cases file cases.yaml",
        ),
    ];
    #[cfg(unix)]
    attempts.push((
        with(&REPORT, &["-o", "scheme-link.yaml", "--force"]),
        "scheme-link.yaml: is a symbolic link to the scheme file scheme.yaml that this command reads",
    ));
    for (args, message) in &attempts {
        let (code, stdout, stderr) = run(&dir, args);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert!(stderr.contains(message), "{args:?}: {stderr}");
        assert_eq!(stderr.matches(".yaml: is").count(), 1, "{stderr}");
        assert!(stdout.is_empty(), "{args:?}: {stdout}");
    }
    for (name, bytes) in ["plant.yaml", "cases.yaml", "scheme.yaml"]
        .iter()
        .zip(&before)
    {
        assert_eq!(&fs::read(dir.join(name)).unwrap(), bytes, "{name} changed");
    }
    // Nothing else was written either (new.csv was checked with its clashing sibling first).
    assert!(!dir.join("new.csv").exists());
    assert!(temporaries(&dir).is_empty());
}

#[test]
fn every_output_flag_follows_one_overwrite_rule() {
    let dir = workdir("overwrite");
    for name in ["old.csv", "old.svg", "old.html", "old-scheme.yaml"] {
        fs::write(dir.join(name), b"keep").unwrap();
    }
    fs::create_dir_all(dir.join("schemas")).unwrap();
    fs::write(dir.join("schemas/cases.schema.json"), b"keep").unwrap();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (with(&REPLAY, &["--csv", "old.csv"]), "old.csv"),
        (with(&REPLAY, &["--plot", "old.svg"]), "old.svg"),
        (with(&REPORT, &["-o", "old.html"]), "old.html"),
        (with(&DESIGN, &["-o", "old-scheme.yaml"]), "old-scheme.yaml"),
        (
            vec!["schema", "--out", "schemas"],
            "schemas/cases.schema.json",
        ),
    ];
    for (args, path) in &cases {
        let started = Instant::now();
        let (code, stdout, stderr) = run(&dir, args);
        assert_eq!(code, 2, "{args:?}: {stderr}");
        assert_eq!(
            stderr.trim_end(),
            format!(
                "nadir: {path}: already exists; pass --force to replace it, or choose another name"
            ),
            "{args:?}"
        );
        assert!(stdout.is_empty());
        // Refused before any work: the design search alone takes seconds.
        assert!(started.elapsed() < Duration::from_secs(5), "{args:?}");
        assert_eq!(fs::read(dir.join(path)).unwrap(), b"keep");
    }
    // The schema files were refused together: none of the three was written.
    assert_eq!(names(&dir.join("schemas")), ["cases.schema.json"]);

    // With --force each is replaced.
    let (code, _, stderr) = run(
        &dir,
        &with(
            &REPLAY,
            &["--csv", "old.csv", "--plot", "old.svg", "--force"],
        ),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(fs::read_to_string(dir.join("old.csv"))
        .unwrap()
        .contains("mv-a"));
    assert!(fs::read_to_string(dir.join("old.svg"))
        .unwrap()
        .contains("<svg"));
    let (code, _, stderr) = run(&dir, &["schema", "--out", "schemas", "--force"]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        names(&dir.join("schemas")),
        [
            "cases.schema.json",
            "compare-output.schema.json",
            "plant.schema.json",
            "scheme.schema.json",
            "verify-output.schema.json"
        ]
    );
    assert!(temporaries(&dir).is_empty());
    assert!(temporaries(&dir.join("schemas")).is_empty());
}

#[cfg(unix)]
#[test]
fn symbolic_link_outputs_are_refused_without_force_and_replaced_as_links_with_it() {
    let dir = workdir("symlinks");
    fs::write(dir.join("elsewhere.csv"), b"keep").unwrap();
    std::os::unix::fs::symlink("elsewhere.csv", dir.join("live.csv")).unwrap();
    std::os::unix::fs::symlink("missing/nowhere.csv", dir.join("dangling.csv")).unwrap();
    // A plot is .svg or .png, so the plot's dangling link has that extension.
    std::os::unix::fs::symlink("missing/nowhere.svg", dir.join("dangling.svg")).unwrap();

    let (code, _, stderr) = run(&dir, &with(&REPLAY, &["--csv", "live.csv"]));
    assert_eq!(code, 2);
    assert!(
        stderr.contains("live.csv: is a symbolic link to elsewhere.csv; pass --force to replace the link itself (the file it points to is never written), or choose another name"),
        "{stderr}"
    );
    let (code, _, stderr) = run(&dir, &with(&REPLAY, &["--csv", "dangling.csv"]));
    assert_eq!(code, 2);
    assert!(
        stderr.contains("dangling.csv: is a symbolic link to missing/nowhere.csv, which does not exist; pass --force"),
        "{stderr}"
    );

    let (code, _, stderr) = run(
        &dir,
        &with(
            &REPLAY,
            &["--csv", "live.csv", "--plot", "dangling.svg", "--force"],
        ),
    );
    assert_eq!(code, 0, "{stderr}");
    for link in ["live.csv", "dangling.svg"] {
        let meta = fs::symlink_metadata(dir.join(link)).unwrap();
        assert!(meta.file_type().is_file(), "{link} is now a plain file");
    }
    assert_eq!(fs::read(dir.join("elsewhere.csv")).unwrap(), b"keep");
    assert!(!dir.join("missing").exists());
}

#[test]
fn output_paths_are_checked_before_any_work_with_the_cause_once() {
    let dir = workdir("before-work");
    fs::write(dir.join("a-file"), b"x").unwrap();
    fs::create_dir_all(dir.join("a-folder")).unwrap();
    let cases: Vec<(Vec<&str>, String)> = vec![
        (
            with(&DESIGN, &["-o", "missing/proposed.yaml"]),
            "nadir: missing/proposed.yaml: the folder missing does not exist; create it first, or choose another folder".into(),
        ),
        (
            with(&REPORT, &["-o", "a-file/report.html"]),
            "nadir: a-file/report.html: a-file is not a folder".into(),
        ),
        (
            with(&DESIGN, &["-o", "a-folder", "--force"]),
            "nadir: a-folder: is a folder; give a file name".into(),
        ),
        (
            with(&REPLAY, &["--csv", "fine.csv", "--plot", "missing/p.svg"]),
            "nadir: missing/p.svg: the folder missing does not exist; create it first, or choose another folder".into(),
        ),
        (
            with(&REPLAY, &["--csv", "same.csv", "--plot", "./same.csv"]),
            "nadir: ./same.csv: named for two outputs of this command; give each output its own file".into(),
        ),
    ];
    for (args, message) in &cases {
        let started = Instant::now();
        let (code, stdout, stderr) = run(&dir, args);
        assert_eq!(code, 2, "{args:?}");
        assert_eq!(stderr.trim_end(), message, "{args:?}");
        assert!(!stderr.contains("os error"), "{stderr}");
        assert!(stdout.is_empty());
        assert!(started.elapsed() < Duration::from_secs(5), "{args:?}");
    }
    assert!(!dir.join("fine.csv").exists());
    assert!(temporaries(&dir).is_empty());

    // A folder nadir may not write in: a read-only folder for an ordinary user; as root (who may
    // write anywhere on a writable file system) a system folder that refuses new files.
    let ro = dir.join("read-only");
    fs::create_dir_all(&ro).unwrap();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        fs::set_permissions(&ro, fs::Permissions::from_mode(0o555)).unwrap();
    }
    let refuses = |folder: &Path| fs::File::create(folder.join("probe")).is_err();
    let folder = [ro.clone(), PathBuf::from("/sys"), PathBuf::from("/proc")]
        .into_iter()
        .find(|f| f.is_dir() && refuses(f));
    match folder {
        Some(folder) => {
            let out = folder.join("proposed.yaml");
            let out = out.to_str().unwrap();
            let started = Instant::now();
            let (code, _, stderr) = run(&dir, &with(&DESIGN, &["-o", out]));
            assert_eq!(code, 2);
            let expected = format!(
                "nadir: {out}: cannot write in the folder {}: ",
                folder.display()
            );
            assert!(stderr.starts_with(&expected), "{stderr}");
            assert_eq!(stderr.lines().count(), 1, "{stderr}");
            assert!(!stderr.contains("os error"), "{stderr}");
            assert!(started.elapsed() < Duration::from_secs(5));
        }
        None => eprintln!("no folder refuses new files here; the read-only case was not exercised"),
    }
}

/// Waits until a temporary file of at least `bytes` exists in `dir` (the child is then held in
/// the middle of its write by `NADIR_TEST_WRITE_PAUSE_MS`).
fn wait_for_temporary(dir: &Path, child: &mut Child, bytes: u64) -> PathBuf {
    let started = Instant::now();
    loop {
        for name in temporaries(dir) {
            let p = dir.join(&name);
            if fs::metadata(&p).map(|m| m.len() >= bytes).unwrap_or(false) {
                return p;
            }
        }
        if let Some(status) = child.try_wait().unwrap() {
            panic!("nadir ended ({status}) before its write began");
        }
        assert!(
            started.elapsed() < Duration::from_secs(240),
            "the write never began"
        );
        std::thread::sleep(Duration::from_millis(10));
    }
}

#[test]
fn two_runs_racing_for_one_output_give_exactly_one_winner() {
    let dir = workdir("race");
    // Both runs pass the check at the start (the file does not exist yet), both are held in the
    // middle of writing their temporary file, then both try to take the name.
    for round in 0..3 {
        let _ = fs::remove_file(dir.join("same.csv"));
        let spawn = || {
            nadir(&dir, &with(&REPLAY, &["--csv", "same.csv"]))
                .env("NADIR_TEST_WRITE_PAUSE_MS", "1500")
                .stdout(Stdio::piped())
                .stderr(Stdio::piped())
                .spawn()
                .expect("nadir starts")
        };
        let (a, b) = (spawn(), spawn());
        let outs = [a.wait_with_output().unwrap(), b.wait_with_output().unwrap()];
        let codes: Vec<i32> = outs.iter().map(|o| o.status.code().unwrap_or(-1)).collect();
        let mut sorted = codes.clone();
        sorted.sort();
        assert_eq!(sorted, [0, 2], "round {round}: {outs:?}");
        let loser = &outs[codes.iter().position(|&c| c == 2).unwrap()];
        let winner = &outs[codes.iter().position(|&c| c == 0).unwrap()];
        assert_eq!(
            String::from_utf8_lossy(&loser.stderr).trim_end(),
            "nadir: same.csv: already exists; pass --force to replace it, or choose another name"
        );
        assert!(String::from_utf8_lossy(&winner.stdout).contains("Samples written to same.csv"));
        assert!(String::from_utf8_lossy(&loser.stdout).is_empty());
        assert!(fs::read_to_string(dir.join("same.csv"))
            .unwrap()
            .contains("mv-a"));
        assert!(temporaries(&dir).is_empty(), "{:?}", names(&dir));
    }
}

#[cfg(unix)]
fn signal(child: &Child, name: &str) {
    let status = Command::new("kill")
        .args([&format!("-{name}"), &child.id().to_string()])
        .status()
        .expect("kill runs");
    assert!(status.success());
}

#[cfg(unix)]
#[test]
fn sigint_and_sigterm_in_the_middle_of_a_write_leave_no_temporary_file() {
    use std::os::unix::process::ExitStatusExt;
    for (sig, number) in [("INT", 2), ("TERM", 15)] {
        let dir = workdir(&format!("signal-{sig}"));
        let mut child = nadir(&dir, &with(&REPORT, &["-o", "report.html"]))
            .env("NADIR_TEST_WRITE_PAUSE_MS", "30000")
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("nadir starts");
        let tmp = wait_for_temporary(&dir, &mut child, 1);
        signal(&child, sig);
        let status = child.wait().unwrap();
        assert_eq!(status.signal(), Some(number), "SIG{sig}: {status}");
        assert!(!tmp.exists(), "SIG{sig} left {tmp:?}");
        assert_eq!(
            names(&dir),
            ["cases.yaml", "plant.yaml", "scheme.yaml"],
            "SIG{sig}"
        );
    }
}

#[cfg(unix)]
#[test]
fn sigterm_during_a_design_leaves_nothing() {
    use std::os::unix::process::ExitStatusExt;
    let dir = workdir("signal-design");
    let mut child = nadir(&dir, &with(&DESIGN, &["-o", "proposed.yaml"]))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .expect("nadir starts");
    // In the search (the demo design takes seconds); its outputs were checked by then.
    std::thread::sleep(Duration::from_millis(700));
    signal(&child, "TERM");
    let status = child.wait().unwrap();
    assert_eq!(status.signal(), Some(15), "{status}");
    assert_eq!(names(&dir), ["cases.yaml", "plant.yaml", "scheme.yaml"]);
}

#[cfg(unix)]
#[test]
fn a_closed_stdout_ends_nadir_by_sigpipe_not_a_panic() {
    use std::os::unix::process::ExitStatusExt;
    let dir = workdir("sigpipe");
    for args in [
        with(
            &[
                "verify",
                "plant.yaml",
                "scheme.yaml",
                "--cases",
                "cases.yaml",
            ],
            &["--no-margins"],
        ),
        with(&REPLAY, &["--csv", "run.csv"]),
    ] {
        let mut child = nadir(&dir, &args)
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("nadir starts");
        // Close the reading end before nadir writes anything (as `| head -0` would).
        drop(child.stdout.take());
        let out = child.wait_with_output().unwrap();
        assert_eq!(out.status.signal(), Some(13), "{args:?}: {:?}", out.status);
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(!stderr.contains("panicked"), "{stderr}");
    }
    assert!(temporaries(&dir).is_empty());
}
