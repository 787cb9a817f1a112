//! The scratch crate's audit harness, with the public API of the day (`Scenario` + `Audit`): the kernel, three
//! lenses, 20 steps; the trace goes to the path given as the first argument and the report to stdout.
//!
//! It checks what a user must be able to rely on without any build flag: the audit runs with every lens
//! (the interval lens included), and the undecided comparisons raised on rayon's worker threads reach the trace
//! with the line of the user's own kernel. The count follows from exact arithmetic: from 1, the exact value the
//! fold compares with zero is `1 − n/10` up to step 10 (0 there), then alternately −1/10 and 0, so it is 0 at
//! steps 10, 12, …, 20 — six steps — in every cell, where a guaranteed enclosure cannot decide `v > 0`.

use scratch_solver::fold_step_twin;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Interval, Shadow};
use twinstep::trace::EventName;
use twinstep::{BaseOps, MixedOps, Real, RefOps};

const CELLS: usize = 1000;

struct Plant;

impl Scenario for Plant {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("folded", &[CELLS]), FieldSpec::new("root", &[CELLS])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![1.0; CELLS], vec![1.0; CELLS]]
    }

    fn step<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        let (folded, root) = levels.next.split_at_mut(1);
        fold_step_twin::<T>(&levels.current[0], &mut folded[0], &mut root[0]);
    }
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: audit TRACE")?;
    let trace = Audit::new(&Plant, Tolerance::absolute(1e-9), 20)
        .kernel("fold_step")
        .trace(&path)
        .lens::<Bound>()
        .lens::<Interval>()
        .lens::<Shadow>()
        .run()?;
    println!("{}", twinstep::report::render_text(&trace));
    let summary = trace.summary.as_ref().ok_or("the audit did not complete")?;
    for lens in ["bound", "interval"] {
        let found = summary.event_totals.iter().find(|t| {
            t.lens == lens
                && t.kind == EventName::UndecidedComparison
                && t.site.as_ref().is_some_and(|s| s.file.ends_with("src/lib.rs"))
        });
        let found = found.map(|t| (t.steps, t.count, t.first_step));
        if found != Some((6, 6 * CELLS as u64, 10)) {
            return Err(format!(
                "lens {lens}: undecided comparisons in src/lib.rs {found:?}, expected 6 steps, 6000, from 10"
            )
            .into());
        }
    }
    Ok(())
}
