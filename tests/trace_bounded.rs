//! A 10⁶-step audit of a one-cell kernel writes a trace of bounded size under the `auto` policy: log-spaced steps
//! (about 20 per decade), steps around events, thinned repeats of an event, and the last step.

mod audit_support;

use audit_support::kernels::Fold;
use audit_support::scratch;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::Shadow;
use twinstep::trace;

const STEPS: u64 = 1_000_000;

#[test]
fn a_million_steps_write_a_few_hundred_lines() {
    let path = scratch("trace_bounded").join("fold.jsonl");
    let written = Audit::new(&Fold, Tolerance::absolute(1e-3), STEPS)
        .kernel("fold_step")
        .trace(&path)
        .lens::<Shadow>()
        .run()
        .unwrap();
    let lines = std::fs::read_to_string(&path).unwrap().lines().count();
    // 20 per decade over six decades is 120 steps (and as many profile lines); events add their context and repeats at powers of two
    // (log2(10⁶) ≈ 20 per site). 520 lines leaves room for all of it while being far below one line per step. (The
    // `auto` policy's own numbers, docs/trace.md: a design of this project, no outside source.)
    assert!(lines <= 520, "{lines} lines for {STEPS} steps");
    let read = trace::read(&path).unwrap();
    assert_eq!(read, written);
    assert_eq!(read.steps.first().map(|s| s.step), Some(0));
    assert_eq!(read.steps.last().map(|s| s.step), Some(STEPS));
    // The one-cell field is 1-D: profiles at the log-spaced steps (at most 200) and the last one.
    assert!(read.profiles.len() <= 201, "{} profiles", read.profiles.len());
    assert_eq!(read.profiles.last().map(|p| p.step), Some(STEPS));
    // The fold branches on a rounding residue every other step from step 10 on (see the kernel), so the summary
    // counts about half a million undecided comparisons that the records only sample.
    let summary = read.summary.unwrap();
    let total: u64 = summary.event_totals.iter().map(|t| t.steps).sum();
    assert!(total > 400_000, "{total} event steps counted");
    assert!(read.events.len() < 64, "{} event records", read.events.len());
    // Every written event has its two steps before and after recorded too (the auto policy's context).
    let recorded: std::collections::BTreeSet<u64> = read.steps.iter().map(|s| s.step).collect();
    for event in read.events.iter().filter(|e| e.step >= 2 && e.step + 2 <= STEPS) {
        for around in event.step - 2..=event.step + 2 {
            assert!(recorded.contains(&around), "step {around} around the event at step {}", event.step);
        }
    }
    // Log spacing: every decade from 10 to 10⁶ holds recorded steps, none holds more than 40 (twice the policy's
    // 20 per decade, docs/trace.md; our own design, no outside source).
    for decade in 1..6 {
        let (lo, hi) = (10u64.pow(decade), 10u64.pow(decade + 1));
        let in_decade = read.steps.iter().filter(|s| (lo..hi).contains(&s.step)).count();
        assert!((10..=40).contains(&in_decade), "decade {lo}..{hi}: {in_decade} steps");
    }
}
