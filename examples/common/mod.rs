//! What every example does after its audit: say where the trace went and print the terminal report.

use std::path::PathBuf;
use std::process::ExitCode;

use twinstep::audit::Error;
use twinstep::trace::Trace;

/// Where an example's trace goes: `TWINSTEP_TRACE` when `twinstep run` sets it, else
/// `target/twinstep-examples/NAME.jsonl` in the workspace.
pub fn trace_path(name: &str) -> PathBuf {
    std::env::var_os("TWINSTEP_TRACE").map_or_else(
        || PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("target/twinstep-examples").join(format!("{name}.jsonl")),
        PathBuf::from,
    )
}

/// Prints the report of a finished audit, or the error that stopped it.
pub fn report(name: &str, outcome: Result<Trace, Error>) -> ExitCode {
    match outcome {
        Ok(trace) => {
            println!("{}", twinstep::report::render_text(&trace));
            println!("trace: {}", trace_path(name).display());
            ExitCode::SUCCESS
        }
        Err(error) => {
            eprintln!("audit failed: {error}");
            ExitCode::FAILURE
        }
    }
}
