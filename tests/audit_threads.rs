//! Events raised on threads the audit did not start — rayon's workers inside `par_iter_mut`, a thread the step
//! spawns — reach the audit of the lens that raised them, with their lines and their counts; the same kernel run
//! sequentially gives the same totals; two audits of one lens type running at once keep their events apart; and
//! a recorder in a loop of the user's own collects them too.
//!
//! The counts follow from exact arithmetic. `fold` takes the decimal 0.1 (one tenth as written) off every cell
//! and folds at zero: from 1, the exact value before the comparison is `1 − n/10` at step n ≤ 10, so exactly 0 at
//! step 10; after it the exact state alternates between 0 (the fold of 0) and 1/10 (the fold of −1/10), so the
//! exact value compared with zero is 0 again at steps 12, 14, 16, … (and −1/10 between them). A guaranteed
//! enclosure holds the exact value; where that is 0 and the enclosure has width (rounding happened), the
//! comparison `v > 0` cannot be decided: an undecided comparison in every cell at steps 10, 12, …, 20 — six steps
//! in twenty — and nowhere else, since every other exact value is 1/10 or more away from zero while the
//! enclosures are a few 10^-16 wide.

mod audit_support;

use audit_support::scratch;
use rayon::prelude::*;
use twinstep::audit::{Audit, FieldSpec, Levels, Plan, Recorder, Scenario, Tolerance};
use twinstep::lens::{Bound, Interval, Lens};
use twinstep::trace::{EventName, Trace};
use twinstep::{BaseOps, MixedOps, Real, RefOps};

/// One tenth off every cell, folded at zero; one rayon task per chunk of cells.
#[twinstep::audit]
fn parallel_fold(u: &[f64], out: &mut [f64]) {
    out.par_iter_mut().enumerate().for_each(|(i, o)| {
        let v = u[i] - 0.1;
        *o = if v > 0.0 { v } else { -v }; // site: parallel fold
    });
}

/// The same, cell after cell on the calling thread.
#[twinstep::audit]
fn sequential_fold(u: &[f64], out: &mut [f64]) {
    for i in 0..u.len() {
        let v = u[i] - 0.1;
        out[i] = if v > 0.0 { v } else { -v }; // site: sequential fold
    }
}

/// A quarter off every cell, and the square root of the excess over 1 (NaN once a value is below 1), in parallel.
#[twinstep::audit]
fn parallel_descent(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out.par_iter_mut().zip(root.par_iter_mut()).enumerate().for_each(|(i, (o, r))| {
        *o = u[i] - 0.25;
        *r = (*o - 1.0).sqrt(); // site: parallel root
    });
}

/// The same walk with the root kept only when it is large enough: the comparison swallows the NaN, every field
/// stays finite, and only the unwatched lens's note (made on a worker thread) leads to the replay.
#[twinstep::audit]
fn parallel_guarded(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out.par_iter_mut().zip(root.par_iter_mut()).enumerate().for_each(|(i, (o, r))| {
        *o = u[i] - 0.25;
        let s = (*o - 1.0).sqrt(); // site: guarded root
        *r = if s > 0.5 { s } else { 0.0 };
    });
}

#[derive(Clone, Copy, PartialEq)]
enum Kernel {
    ParallelFold,
    SequentialFold,
    /// The sequential fold on a thread the step spawns.
    SpawnedFold,
    ParallelDescent,
    ParallelGuarded,
}

struct Cells {
    kernel: Kernel,
    cells: usize,
    start: f64,
}

impl Cells {
    fn walks(&self) -> bool {
        matches!(self.kernel, Kernel::ParallelDescent | Kernel::ParallelGuarded)
    }
}

impl Scenario for Cells {
    fn fields(&self) -> Vec<FieldSpec> {
        let mut fields = vec![FieldSpec::new("u", &[self.cells])];
        if self.walks() {
            fields.push(FieldSpec::new("root", &[self.cells]));
        }
        fields
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        let mut values = vec![vec![self.start; self.cells]];
        if self.walks() {
            values.push(vec![0.0; self.cells]);
        }
        values
    }

    fn step<T>(&self, levels: &mut Levels<T>)
    where
        T: Real + BaseOps<f64>,
        f64: MixedOps<T>,
        for<'a> &'a T: RefOps<T>,
    {
        let (u, rest) = levels.next.split_at_mut(1);
        let current = &levels.current[0];
        match self.kernel {
            Kernel::ParallelFold => parallel_fold_twin::<T>(current, &mut u[0]),
            Kernel::SequentialFold => sequential_fold_twin::<T>(current, &mut u[0]),
            Kernel::SpawnedFold => {
                std::thread::scope(|scope| {
                    scope.spawn(|| sequential_fold_twin::<T>(current, &mut u[0]));
                });
            }
            Kernel::ParallelDescent => parallel_descent_twin::<T>(current, &mut u[0], &mut rest[0]),
            Kernel::ParallelGuarded => parallel_guarded_twin::<T>(current, &mut u[0], &mut rest[0]),
        }
    }

    /// The untouched originals: the audit checks every lens's primal against them, bit for bit.
    fn step_original(&self, levels: &mut Levels<f64>) {
        let (u, rest) = levels.next.split_at_mut(1);
        let current = &levels.current[0];
        match self.kernel {
            Kernel::ParallelFold => parallel_fold(current, &mut u[0]),
            Kernel::SequentialFold | Kernel::SpawnedFold => sequential_fold(current, &mut u[0]),
            Kernel::ParallelDescent => parallel_descent(current, &mut u[0], &mut rest[0]),
            Kernel::ParallelGuarded => parallel_guarded(current, &mut u[0], &mut rest[0]),
        }
    }
}

/// The line of this file that carries the comment `site: {marker}`.
fn line_of(marker: &str) -> u32 {
    let needle = format!("// site: {marker}");
    let index = include_str!("audit_threads.rs").lines().position(|line| line.ends_with(&needle)).expect("marker");
    u32::try_from(index + 1).expect("line number")
}

/// `(steps, count, first step, last step)` of the `kind` events of `lens` at the line of `marker`, from the
/// summary's totals (every occurrence, whatever the trace thinned out).
fn totals(trace: &Trace, lens: &str, kind: EventName, marker: &str) -> Option<(u64, u64, u64, u64)> {
    let line = line_of(marker);
    let summary = trace.summary.as_ref().expect("a complete run");
    summary
        .event_totals
        .iter()
        .find(|t| t.lens == lens && t.kind == kind && t.site.as_ref().is_some_and(|s| s.line == line))
        .map(|t| (t.steps, t.count, t.first_step, t.last_step))
}

/// Every event total of `lens` that names a site, without the site: what two kernels at different lines share.
fn site_totals(trace: &Trace, lens: &str) -> Vec<(EventName, u64, u64, u64, u64)> {
    let summary = trace.summary.as_ref().expect("a complete run");
    summary
        .event_totals
        .iter()
        .filter(|t| t.lens == lens && t.site.is_some())
        .map(|t| (t.kind, t.steps, t.count, t.first_step, t.last_step))
        .collect()
}

fn audit<L: twinstep::audit::AuditLens>(scenario: &Cells, steps: u64, name: &str) -> Trace {
    Audit::new(scenario, Tolerance::absolute(1e-9), steps)
        .trace(scratch(name).join(format!("{}.jsonl", L::NAME)))
        .lens::<L>()
        .run()
        .unwrap()
}

const CELLS: usize = 10_000;

#[test]
fn undecided_comparisons_on_rayon_workers_reach_the_audit_with_their_line() {
    // Six undecidable steps (10, 12, …, 20) of 10 000 cells each: 60 000 instabilities (module paragraph).
    let scenario = Cells { kernel: Kernel::ParallelFold, cells: CELLS, start: 1.0 };
    let trace = Audit::new(&scenario, Tolerance::absolute(1e-9), 20)
        .trace(scratch("audit_threads_parallel").join("fold.jsonl"))
        .lens::<Bound>()
        .lens::<Interval>()
        .run()
        .unwrap();
    for lens in ["bound", "interval"] {
        let expected = Some((6, 6 * CELLS as u64, 10, 20));
        assert_eq!(totals(&trace, lens, EventName::UndecidedComparison, "parallel fold"), expected, "lens {lens}");
        let at_step_12 = trace.events.iter().find(|e| e.lens == lens && e.step == 12);
        assert_eq!(at_step_12.map(|e| e.count), Some(CELLS as u64), "lens {lens}: every cell at step 12");
    }
}

#[test]
fn sequential_spawned_and_parallel_runs_give_the_same_totals() {
    for lens in [Bound::NAME, Interval::NAME] {
        let run = |kernel: Kernel, name: &str| {
            let scenario = Cells { kernel, cells: CELLS, start: 1.0 };
            if lens == Bound::NAME {
                audit::<Bound>(&scenario, 20, name)
            } else {
                audit::<Interval>(&scenario, 20, name)
            }
        };
        let sequential = run(Kernel::SequentialFold, "audit_threads_sequential");
        let spawned = run(Kernel::SpawnedFold, "audit_threads_spawned");
        let parallel = run(Kernel::ParallelFold, "audit_threads_same");
        assert_eq!(
            totals(&sequential, lens, EventName::UndecidedComparison, "sequential fold"),
            Some((6, 6 * CELLS as u64, 10, 20)),
            "lens {lens}"
        );
        // A thread the step spawns runs the sequential kernel: the same line, the same counts.
        assert_eq!(site_totals(&spawned, lens), site_totals(&sequential, lens), "lens {lens}");
        assert_eq!(site_totals(&parallel, lens), site_totals(&sequential, lens), "lens {lens}");
    }
}

#[test]
fn a_nan_on_rayon_workers_is_found_at_its_line() {
    // u_n = 11 − n/4, exact in binary64 (quarters of small integers); u_n − 1 < 0 first at n = 41, and the square
    // root of a negative number is NaN (IEEE 754-2019 §9.2) — in each of the cells at once. The replay with the
    // watched lens runs on rayon's workers too; it records one NaN per cell at the root's line.
    let cells = 1000;
    let scenario = Cells { kernel: Kernel::ParallelDescent, cells, start: 11.0 };
    let trace = audit::<Bound>(&scenario, 60, "audit_threads_nan");
    assert_eq!(totals(&trace, "bound", EventName::Nan, "parallel root"), Some((1, cells as u64, 41, 41)));
    // The same NaN swallowed by a comparison: only the unwatched lens's notes, made on the workers, lead to it.
    let scenario = Cells { kernel: Kernel::ParallelGuarded, cells, start: 11.0 };
    let trace = audit::<Bound>(&scenario, 60, "audit_threads_nan_guarded");
    let found = totals(&trace, "bound", EventName::Nan, "guarded root");
    assert_eq!(found.map(|(_, count, first, _)| (count >= cells as u64, first)), Some((true, 41)), "{found:?}");
}

#[test]
fn two_audits_of_one_lens_type_at_once_keep_their_events_apart() {
    // From 0.55 the exact values compared are 0.45, 0.35, 0.25, 0.15, 0.05, then −0.05 and ∓0.05 alternating:
    // never 0, so that audit has no instability, while the one from 1 has its 60 000. Run at the same time, on
    // the same lens type, each must find exactly its own.
    let (busy, quiet) = std::thread::scope(|scope| {
        let busy = scope.spawn(|| {
            audit::<Bound>(&Cells { kernel: Kernel::ParallelFold, cells: CELLS, start: 1.0 }, 200, "audit_threads_busy")
        });
        let quiet = scope.spawn(|| {
            audit::<Bound>(
                &Cells { kernel: Kernel::ParallelFold, cells: CELLS, start: 0.55 },
                200,
                "audit_threads_quiet",
            )
        });
        (busy.join().expect("busy audit"), quiet.join().expect("quiet audit"))
    });
    // Steps 10, 12, …, 200: 96 undecidable steps.
    assert_eq!(
        totals(&busy, "bound", EventName::UndecidedComparison, "parallel fold"),
        Some((96, 96 * CELLS as u64, 10, 200))
    );
    assert_eq!(site_totals(&quiet, "bound"), Vec::new());
    assert!(!busy.events.iter().chain(&quiet.events).any(|e| e.kind == EventName::PrimalMismatch));
}

#[test]
fn a_recorder_in_a_loop_of_ones_own_collects_the_workers_events() {
    let plan = Plan::new(
        "parallel_fold",
        vec![FieldSpec::new("u", &[CELLS])],
        Tolerance::absolute(1e-9),
        20,
        scratch("audit_threads_recorder").join("loop.jsonl"),
    );
    let mut recorder = Recorder::create::<Bound>(&plan).unwrap();
    let mut u = vec![Bound::from_f64(1.0); CELLS];
    let mut next = u.clone();
    for step in 1..=20 {
        parallel_fold_twin::<Bound>(&u, &mut next);
        std::mem::swap(&mut u, &mut next);
        recorder.record_step(step, &[&u]).unwrap();
    }
    // While the recorder lives it holds the lens's events: an audit of the same lens from this thread would wait
    // for it forever, so it is refused.
    let refused =
        Audit::new(&Cells { kernel: Kernel::SequentialFold, cells: 1, start: 1.0 }, Tolerance::absolute(1e-9), 1)
            .trace(scratch("audit_threads_recorder").join("refused.jsonl"))
            .lens::<Bound>()
            .run();
    assert!(matches!(refused, Err(twinstep::audit::Error::LensCollectedHere { .. })), "{refused:?}");
    let trace = recorder.finish().unwrap();
    assert_eq!(
        totals(&trace, "bound", EventName::UndecidedComparison, "parallel fold"),
        Some((6, 6 * CELLS as u64, 10, 20))
    );
}
