//! Helpers the CLI's integration tests share: paths of the fixed traces, running the built binary, scratch files.
#![allow(dead_code)]

use std::path::PathBuf;
use std::process::{Command, Output};

/// A fixed trace of `fixtures/traces/` (written by its `make_fixtures.py`).
pub fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../fixtures/traces").join(name)
}

/// Runs the `twinstep` binary with arguments, without colour.
pub fn twinstep(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_twinstep"))
        .args(args)
        .env("NO_COLOR", "1")
        .output()
        .expect("the twinstep binary runs")
}

/// A scratch path under cargo's per-target temporary directory, unique per test.
pub fn scratch(name: &str) -> PathBuf {
    let dir = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("twinstep-cli-tests");
    std::fs::create_dir_all(&dir).expect("scratch dir");
    dir.join(name)
}

/// The process's stderr as text.
pub fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).into_owned()
}

/// The process's stdout as text.
pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).into_owned()
}
