//! `twinstep demo`: a built-in audit of a scenario of our own, the kiln wall ([`kiln`]), run through the audit
//! driver with the bound, shadow and certified lenses and a precision sweep (binary64, binary32, bfloat16, binary16
//! and the bisection between them), so that a fresh clone shows the whole job in seconds: the per-operation bound
//! lost to the dependency effect within a few steps, the shadow's estimate, the certified lens's guarantee, which
//! holds for the whole run and on which the verdict rests, and the least precision and what f32 would do.
//!
//! The same conduction kernel advances two fields that hold the same physics two ways: `T`, the wall temperature
//! in kelvin (about 1300 K), and `rise`, the temperature above the 1300 K soak. Every step adds a small firing
//! increment; added to a large background value it is rounded to the coarse spacing of doubles near 1300, the
//! same way every step, so `T`'s rounding error grows linearly and crosses the 1 nK budget, while `rise` keeps
//! about four more decimal digits and stays far inside it.
//!
//! The demo also attributes `T`'s error to the kernel's lines (`docs/attribution.md`): the report names the line
//! where the small increment meets the 1300 K background and suggests carrying the rise above it; `rise` is that
//! remedy applied to the same kernel in the same run, so the report sets the two measured errors side by side.

pub mod kiln;

use crate::failure::Failure;
use std::path::Path;
use twinstep::attribution::AttributeOptions;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::sweep::SweepPlan;
use twinstep::trace::Remedy;

/// Steps the demo runs by default: long enough for `T` to cross its budget, short enough for a few seconds. The
/// sweep audits all of them in every format: judged on fewer steps by its growth law, binary64 would seem to meet
/// the budget that the audit shows it crossing (the law fitted to the first tenth of the run undershoots).
pub const DEFAULT_STEPS: u64 = 60_000;

/// Steps the attribution runs (fewer when the demo runs fewer): `T`'s error grows linearly, so the lines that make
/// it after a twelfth of the horizon are those that make it at the end, for a twelfth of the attribution's cost
/// (`auditor/tests/attribution_kiln.rs`).
pub const ATTRIBUTED_STEPS: u64 = 5_000;

/// Lines the attribution ablates: `wall_step` has three lines that compute.
const ABLATED_LINES: usize = 3;

/// Runs the demo audit, writing its trace to `trace`, with a progress bar on stderr when `progress` is set.
pub fn run_with_progress(trace: &Path, steps: u64, progress: bool) -> Result<(), Failure> {
    // A trace left by an earlier run must not feed the progress bar of this one.
    crate::input::remove_stale(trace)?;
    if !progress {
        return run(trace, steps);
    }
    let owned = trace.to_path_buf();
    let worker = std::thread::spawn(move || run(&owned, steps));
    let mut worker = Some(worker);
    crate::progress::follow(trace, || {
        Ok(if worker.as_ref().is_some_and(std::thread::JoinHandle::is_finished) { worker.take() } else { None })
    })
    .map_err(|e| Failure::harness(format!("demo: {e}")))?
    .join()
    .unwrap_or_else(|_| Err(Failure::harness("demo audit thread panicked")))
}

/// Runs the demo audit, writing its trace to `trace`.
pub fn run(trace: &Path, steps: u64) -> Result<(), Failure> {
    let wall = kiln::Wall::default();
    Audit::new(&wall, Tolerance::absolute(kiln::BUDGET_K), steps)
        .kernel("wall_step")
        .describe(&wall.describe())
        .trace(trace)
        .lens::<Bound>()
        .lens::<Shadow>()
        .attribute_with(
            AttributeOptions::new().steps(ATTRIBUTED_STEPS.min(steps)).ablate_lines(ABLATED_LINES).remedy_applied(
                "T",
                "rise",
                Remedy::CarryPerturbation,
                Some(wall.soak),
            ),
        )
        .certified()
        .sweep(SweepPlan::standard())
        .run()
        .map(|_| ())
        .map_err(|e| Failure::harness(format!("demo audit failed: {e}")))
}
