//! `twinstep run`: builds and runs a user's audit harness (an example, binary or test of their crate) through
//! cargo, with what the lenses need, without touching the user's own build.
//!
//! Why a separate target directory (`<workspace>/target/twinstep` by default): the harness is built with
//! `-C target-cpu=native` and in the release profile; sharing the user's `target/` would rebuild their production
//! artefacts with those settings and back. The flag is for speed only — twinstep builds and audits correctly with
//! no flags on any target — and it is safe because the harness runs where it is built: with a hardware fused
//! multiply-add in reach (x86-64 since Haswell; every AArch64), the lenses' error-free products take it instead of
//! Veltkamp–Dekker splitting, and the loops use the machine's widest vectors. Floating-point results do not depend
//! on it (Rust never contracts `a * b + c` into a fused operation, and `mul_add` is IEEE fusedMultiplyAdd on
//! every target). The flag is passed through `CARGO_ENCODED_RUSTFLAGS`, appended to what the user's environment
//! already sets; a `target-cpu` of the user's own wins.
//!
//! The harness learns where to write its trace from the `TWINSTEP_TRACE` environment variable; while it runs, the
//! growing trace feeds a progress bar on stderr when stderr is a terminal. When it ends, the trace is rendered; the
//! harness is told so by `TWINSTEP_RUN`, and `Audit::report` then does not print the report a second time.

use crate::failure::Failure;
use crate::input::plain;
use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The environment variables that tell a harness where to write its trace, and that the CLI renders the report
/// (the runtime's own names, so the two cannot drift apart).
pub use twinstep::audit::{RUN_ENV, TRACE_ENV};

/// Which target of the user's crate is the harness.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Harness {
    Example(String),
    Bin(String),
    Test(String),
}

impl Harness {
    fn name(&self) -> &str {
        match self {
            Harness::Example(n) | Harness::Bin(n) | Harness::Test(n) => n,
        }
    }

    /// The cargo subcommand and target selection: `run --example N`, `run --bin N`, `test --test N`.
    fn cargo_args(&self) -> [&str; 3] {
        match self {
            Harness::Example(n) => ["run", "--example", n],
            Harness::Bin(n) => ["run", "--bin", n],
            Harness::Test(n) => ["test", "--test", n],
        }
    }
}

/// Resolved settings of one `twinstep run`.
#[derive(Clone, Debug)]
pub struct RunPlan {
    pub harness: Harness,
    pub manifest_path: Option<PathBuf>,
    pub features: Vec<String>,
    pub profile: String,
    pub target_dir: PathBuf,
    pub trace: PathBuf,
    pub args: Vec<String>,
}

/// What the user typed, before the workspace is looked up.
#[derive(Clone, Debug)]
pub struct RunRequest {
    pub harness: Harness,
    pub manifest_path: Option<PathBuf>,
    pub features: Vec<String>,
    pub profile: String,
    pub target_dir: Option<PathBuf>,
    pub trace: Option<PathBuf>,
    pub args: Vec<String>,
}

/// The cargo to call: the one that is running us when we run under cargo, else the one on PATH.
fn cargo() -> OsString {
    std::env::var_os("CARGO").unwrap_or_else(|| OsString::from("cargo"))
}

/// The root directory of the user's workspace (`cargo locate-project --workspace`).
fn workspace_root(manifest_path: Option<&Path>) -> Result<PathBuf, Failure> {
    let mut command = Command::new(cargo());
    command.args(["locate-project", "--workspace", "--message-format", "plain"]);
    if let Some(path) = manifest_path {
        command.arg("--manifest-path").arg(path);
    }
    let output = command.output().map_err(|e| Failure::input(format!("cannot start cargo: {}", plain(&e))))?;
    if !output.status.success() {
        let message = String::from_utf8_lossy(&output.stderr);
        let message = message.trim().trim_start_matches("error: ");
        let place = manifest_path.map_or_else(|| "the current directory".to_owned(), |p| p.display().to_string());
        return Err(Failure::input(format!("{place}: no cargo workspace: {message}")));
    }
    let manifest = PathBuf::from(String::from_utf8_lossy(&output.stdout).trim());
    Ok(manifest.parent().map_or_else(|| PathBuf::from("."), Path::to_path_buf))
}

impl RunRequest {
    /// Fills in the defaults that depend on the user's workspace.
    pub fn resolve(self) -> Result<RunPlan, Failure> {
        let target_dir = match self.target_dir {
            Some(dir) => dir,
            None => workspace_root(self.manifest_path.as_deref())?.join("target").join("twinstep"),
        };
        let trace =
            self.trace.unwrap_or_else(|| target_dir.join("traces").join(format!("{}.jsonl", self.harness.name())));
        Ok(RunPlan {
            harness: self.harness,
            manifest_path: self.manifest_path,
            features: self.features,
            profile: self.profile,
            target_dir,
            trace,
            args: self.args,
        })
    }
}

/// `CARGO_ENCODED_RUSTFLAGS` for the audit build: the user's flags (encoded, or plain `RUSTFLAGS`, which cargo
/// would otherwise read) with `-C target-cpu=native` appended unless they name a `target-cpu`. Flags are
/// separated by 0x1f in the encoded form (cargo reference, "Environment variables").
#[must_use]
pub fn encoded_rustflags(encoded: Option<&str>, plain_flags: Option<&str>) -> String {
    let mut flags: Vec<String> = match (encoded, plain_flags) {
        (Some(e), _) if !e.is_empty() => e.split('\x1f').map(str::to_owned).collect(),
        (_, Some(p)) => p.split_whitespace().map(str::to_owned).collect(),
        _ => Vec::new(),
    };
    if !flags.iter().any(|f| f.contains("target-cpu")) {
        flags.extend(["-C".to_owned(), "target-cpu=native".to_owned()]);
    }
    flags.join("\x1f")
}

/// The cargo command that builds and runs the harness.
#[must_use]
pub fn command(plan: &RunPlan) -> Command {
    let mut command = Command::new(cargo());
    command.args(plan.harness.cargo_args());
    command.arg("--profile").arg(&plan.profile);
    command.arg("--target-dir").arg(&plan.target_dir);
    if let Some(path) = &plan.manifest_path {
        command.arg("--manifest-path").arg(path);
    }
    if !plan.features.is_empty() {
        command.arg("--features").arg(plan.features.join(","));
    }
    if !plan.args.is_empty() {
        command.arg("--").args(&plan.args);
    }
    let encoded = std::env::var("CARGO_ENCODED_RUSTFLAGS").ok();
    let plain_flags = std::env::var("RUSTFLAGS").ok();
    command.env("CARGO_ENCODED_RUSTFLAGS", encoded_rustflags(encoded.as_deref(), plain_flags.as_deref()));
    command.env_remove("RUSTFLAGS");
    command.env(TRACE_ENV, &plan.trace);
    command.env(RUN_ENV, "1");
    command
}

/// Builds and runs the harness, showing progress when `progress` is set; returns the trace path once it exists.
///
/// A harness that fails still leaves its trace (incomplete); the caller renders it and then reports the failure.
pub fn run(plan: &RunPlan, progress: bool) -> Result<(PathBuf, Option<Failure>), Failure> {
    if let Some(parent) = plan.trace.parent().filter(|p| !p.as_os_str().is_empty()) {
        std::fs::create_dir_all(parent)
            .map_err(|e| Failure::input(format!("{}: cannot create: {}", parent.display(), plain(&e))))?;
    }
    // A trace left by an earlier run must not pass for this run's.
    crate::input::remove_stale(&plan.trace)?;
    let mut child =
        command(plan).spawn().map_err(|e| Failure::harness(format!("cannot start cargo: {}", plain(&e))))?;
    let status = if progress { crate::progress::follow_child(&plan.trace, &mut child) } else { child.wait() }
        .map_err(|e| Failure::harness(format!("waiting for the harness: {}", plain(&e))))?;
    let name = plan.harness.name();
    let failed = (!status.success()).then(|| {
        let code = status.code().map_or_else(|| "a signal".to_owned(), |c| format!("status {c}"));
        Failure::harness(format!("{name}: the build or the harness failed ({code}); see cargo's output above"))
    });
    if !plan.trace.exists() {
        return Err(failed.unwrap_or_else(|| {
            Failure::harness(format!(
                "{name}: wrote no trace to {}: the harness must write its trace where the {TRACE_ENV} environment \
                 variable says",
                plan.trace.display()
            ))
        }));
    }
    Ok((plan.trace.clone(), failed))
}
