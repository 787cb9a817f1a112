//! What every example does around its scenario: build the audit with the example's header facts and trace path,
//! run it with the lenses the example picks, say where the trace went and print the terminal report.

use std::path::PathBuf;
use std::process::ExitCode;

use twinstep::audit::{Audit, Error, Scenario, Tolerance};
use twinstep::trace::Trace;

/// An example's audit: the name its trace goes by, the kernel and the line the trace header carries, the steps
/// audited.
pub struct Example {
    pub name: &'static str,
    pub kernel: &'static str,
    pub about: &'static str,
    pub steps: u64,
}

impl Example {
    /// Audits `scenario` against `tolerance` (an invalid tolerance is reported like a failed run); `options` adds
    /// the lenses and whatever else this example asks for. Prints the report and returns the exit code.
    pub fn run<S: Scenario>(
        &self,
        scenario: &S,
        tolerance: Result<Tolerance, Error>,
        options: impl FnOnce(Audit<'_, S>) -> Audit<'_, S>,
    ) -> ExitCode {
        let outcome = tolerance.and_then(|tolerance| {
            let audit = Audit::new(scenario, tolerance, self.steps)
                .kernel(self.kernel)
                .describe(self.about)
                .trace(trace_path(self.name));
            options(audit).run()
        });
        report(self.name, outcome)
    }
}

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
