//! `twinstep sweep`: the precision sweep's findings as a plain summary — every format's run (bits, exponent range,
//! whether it meets the tolerance, each field's first crossing and error at the horizon), the least precision, and
//! where binary64 is not enough the bits each field needs by the fitted law. It reads them from a sweep's main
//! trace (`format_run` and `sweep` records, `docs/trace.md`), or runs the sweep of the built-in kiln wall first.
//!
//! The full reports (text, Markdown, HTML with a curve per format, JSON, CSV) render the same records through the
//! analysis layer; this command is the plain view.

use std::fmt::Write as _;
use std::path::Path;

use crate::failure::Failure;
use twinstep::audit::Tolerance;
use twinstep::sweep::{Remedy, Sweep};
use twinstep::trace::Trace;

/// The summary of the sweep recorded in `trace`; an input error when the trace holds no sweep.
pub fn summary(trace: &Trace) -> Result<String, Failure> {
    let Some(sweep) = &trace.sweep else {
        return Err(Failure::input(
            "the trace holds no precision sweep (no `sweep` record): run one with twinstep::sweep::Sweep, or \
`twinstep sweep --demo`",
        ));
    };
    let header = &trace.header;
    let mut out = String::new();
    let _ = writeln!(
        out,
        "precision sweep of {}: {} steps audited, horizon {}, tolerance {}",
        header.kernel,
        sweep.steps,
        sweep.horizon,
        header.tolerance.describe()
    );
    let _ = writeln!(
        out,
        "{:<10} {:>4}  {:<12} {:<5}  per field: first crossing, error at horizon",
        "format", "bits", "exponents", "meets"
    );
    for run in &trace.format_runs {
        let fields: Vec<String> = run
            .fields
            .iter()
            .map(|f| {
                let crossing = f.first_crossing.map_or_else(|| "none".to_string(), |s| format!("step {s}"));
                format!("{}: {crossing}, {:.3e}", f.name, f.horizon_err)
            })
            .collect();
        let _ = writeln!(
            out,
            "{:<10} {:>4}  {:<12} {:<5}  {}",
            run.format,
            run.bits,
            format!("{}..{}", run.emin, run.emax),
            if run.meets { "yes" } else { "no" },
            fields.join("; ")
        );
    }
    match sweep.least_bits {
        Some(bits) => {
            let _ = writeln!(
                out,
                "least precision: {bits} bits (p-bit runs with exponents {}..{})",
                sweep.bisection_emin, sweep.bisection_emax
            );
        }
        None => {
            let _ = writeln!(out, "least precision: none up to binary64 (53 bits) meets the tolerance");
        }
    }
    for need in &sweep.needed {
        let line = match (need.bits, need.law, need.remedy) {
            (Some(bits), Some(law), remedy) => format!(
                "field {}: needs about {bits:.1} bits by the fitted law log2(err) = {:.3} {:+.3}·p ({} runs){}",
                need.field,
                law.a,
                law.b,
                law.points,
                if remedy == Remedy::DoubleDouble {
                    "; double-double (about 106 bits) would do"
                } else {
                    "; more than double-double"
                }
            ),
            _ => format!("field {}: the runs give no law of error against precision to extrapolate", need.field),
        };
        let _ = writeln!(out, "{line}");
    }
    out.push_str(twinstep::verdict::CAUTION);
    out.push('\n');
    Ok(out)
}

/// Runs the precision sweep of the built-in kiln wall ([`crate::demo::kiln`]), its main trace at `trace`.
pub fn run_demo(trace: &Path, steps: u64) -> Result<(), Failure> {
    crate::input::remove_stale(trace)?;
    let wall = crate::demo::kiln::Wall::default();
    let tolerance = Tolerance::absolute(crate::demo::kiln::BUDGET_K);
    Sweep::new(&wall, tolerance, steps)
        .kernel("wall_step")
        .describe(&wall.describe())
        .trace(trace)
        .run()
        .map(|_| ())
        .map_err(|e| Failure::harness(format!("demo sweep failed: {e}")))
}
