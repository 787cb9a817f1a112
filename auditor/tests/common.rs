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

/// Sets the facts of the machine, the build and the wall time to fixed values, so that a snapshot of a report
/// does not depend on where the test runs; every other number stays the audit's.
pub fn fix_machine(trace: &mut twinstep::trace::Trace) {
    use twinstep::trace::{Build, Machine};
    trace.header.machine = Machine { os: "linux".into(), arch: "x86_64".into(), cpus: 2 };
    trace.header.build = Build { twinstep: "0.1.0".into(), profile: "test".into(), target_features: Vec::new() };
    trace.header.started_unix_s = 0;
    if let Some(summary) = trace.summary.as_mut() {
        summary.wall_s = 0.0;
    }
}
