//! `twinstep demo`: a built-in audit of a scenario of our own, the kiln wall ([`kiln`]), run through the audit
//! driver with the bound, shadow and certified lenses, so that a fresh clone shows the whole job in seconds: the
//! per-operation bound lost to the dependency effect within a few steps, the shadow's estimate, and the certified
//! lens's guarantee, which holds for the whole run and on which the verdict rests.
//!
//! The same conduction kernel advances two fields that hold the same physics two ways: `T`, the wall temperature
//! in kelvin (about 1300 K), and `rise`, the temperature above the 1300 K soak. Every step adds a small firing
//! increment; added to a large background value it is rounded to the coarse spacing of doubles near 1300, the
//! same way every step, so `T`'s rounding error grows linearly and crosses the 1 nK budget, while `rise` keeps
//! about four more decimal digits and stays far inside it.

pub mod kiln;

use crate::failure::Failure;
use std::path::Path;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::{Bound, Shadow};

/// Steps the demo runs by default: long enough for `T` to cross its budget, short enough for a few seconds.
pub const DEFAULT_STEPS: u64 = 60_000;

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
        .certified()
        .run()
        .map(|_| ())
        .map_err(|e| Failure::harness(format!("demo audit failed: {e}")))
}
