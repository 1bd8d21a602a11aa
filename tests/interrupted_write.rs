//! A run killed in the middle of writing its output leaves the previous file intact: files are
//! written to a temporary file beside the target and renamed over it only when complete
//! (src/report/write.rs). The test hook `NADIR_TEST_WRITE_PAUSE_MS` holds the writer after its
//! first 64 KiB so that the process can be killed mid-write deterministically.

use std::path::PathBuf;
use std::process::Command;
use std::time::{Duration, Instant};

#[test]
fn killing_nadir_mid_write_keeps_the_old_report() {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("interrupted-write");
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let target = dir.join("report.html");
    let old = b"<html>the report a reviewer signed yesterday</html>".to_vec();
    std::fs::write(&target, &old).unwrap();

    let mut child = Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args([
            "report",
            "examples/biorefinery/plant.yaml",
            "schemes/biorefinery.yaml",
            "--cases",
            "examples/biorefinery/cases.yaml",
            "--force",
            "-o",
        ])
        .arg(&target)
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("NADIR_TEST_WRITE_PAUSE_MS", "20000")
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("nadir starts");

    // Wait until the temporary file holds its first chunk: the write has begun.
    let started = Instant::now();
    let tmp = loop {
        let partial = std::fs::read_dir(&dir)
            .unwrap()
            .filter_map(|e| e.ok())
            .map(|e| e.path())
            .find(|p| p.file_name().unwrap().to_string_lossy().ends_with(".tmp"));
        if let Some(p) = partial {
            if std::fs::metadata(&p)
                .map(|m| m.len() >= 64 * 1024)
                .unwrap_or(false)
            {
                break p;
            }
        }
        assert!(
            started.elapsed() < Duration::from_secs(240),
            "the write never started"
        );
        if let Some(status) = child.try_wait().unwrap() {
            panic!("nadir ended ({status}) before its write could be interrupted");
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    child.kill().expect("kill");
    let _ = child.wait();

    assert_eq!(
        std::fs::read(&target).unwrap(),
        old,
        "the old report must be intact"
    );
    // What is left is a clearly temporary file, never a truncated report.
    assert!(tmp
        .file_name()
        .unwrap()
        .to_string_lossy()
        .starts_with(".report.html."));
}
