//! One way for the tests to run the `nadir` binary: from the repository root, with its exit code
//! and both output streams.
#![allow(dead_code)]

/// What a run of the `nadir` binary gave.
pub struct Run {
    pub code: i32,
    pub stdout: String,
    pub stderr: String,
}

/// The repository root, where the binary runs.
pub fn root() -> std::path::PathBuf {
    std::path::PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Run the `nadir` binary with `args` from the repository root.
pub fn nadir(args: &[&str]) -> Run {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_nadir"))
        .args(args)
        .current_dir(root())
        .output()
        .expect("the nadir binary runs");
    Run {
        code: out.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}
