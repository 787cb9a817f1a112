//! The driver runs each lens unwatched and replays a step with the watched variant where a value turns
//! non-finite: the NaN/∞ events must still carry the step and the kernel line where the value arose — when the NaN
//! reaches a field late in a long chunk, when a comparison swallows it and the fields stay finite, and when a
//! later division turns an overflow back into a finite number.

mod audit_support;

use audit_support::scratch;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, BoundUnwatched, Interval, Shadow};
use twinstep::trace::{EventName, Trace};

/// A value walking down by a quarter per step, and its square root above 1 (NaN once the value is below 1).
#[twinstep::audit]
fn descent_step(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out[0] = u[0] - 0.25;
    root[0] = (out[0] - 1.0).sqrt(); // site: reaching root
}

/// The same walk, with the root used only when it is large enough: the comparison swallows the NaN and every
/// field stays finite.
#[twinstep::audit]
fn guarded_step(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out[0] = u[0] - 0.25;
    let r = (out[0] - 1.0).sqrt(); // site: guarded root
    root[0] = if r > 0.5 { r } else { 0.0 };
}

/// The same walk, with the root replaced by 0 when it is not a number: `is_nan` swallows it.
#[twinstep::audit]
fn tested_step(u: &[f64], out: &mut [f64], root: &mut [f64]) {
    out[0] = u[0] - 0.25;
    let r = (out[0] - 1.0).sqrt(); // site: tested root
    root[0] = if r.is_nan() { 0.0 } else { r };
}

/// A value growing sixteenfold per step, and the reciprocal of its square, which overflows to ∞ and comes back as
/// 1/∞ = 0.
#[twinstep::audit]
fn growth_step(u: &[f64], out: &mut [f64], inverse: &mut [f64]) {
    out[0] = u[0] * 16.0;
    let square = out[0] * out[0]; // site: square overflows
    inverse[0] = 1.0 / square;
}

#[derive(Clone, Copy)]
enum Kernel {
    Descent,
    Guarded,
    Tested,
    Growth,
}

struct Walk {
    kernel: Kernel,
    start: f64,
}

#[twinstep::scenario]
impl Scenario for Walk {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1]), FieldSpec::new("derived", &[1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![self.start], vec![0.0]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        let (u, rest) = levels.next.split_at_mut(1);
        let (out, derived) = (&mut u[0], &mut rest[0]);
        let current = &levels.current[0];
        match self.kernel {
            Kernel::Descent => descent_step_twin::<T>(current, out, derived),
            Kernel::Guarded => guarded_step_twin::<T>(current, out, derived),
            Kernel::Tested => tested_step_twin::<T>(current, out, derived),
            Kernel::Growth => growth_step_twin::<T>(current, out, derived),
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        let (u, rest) = levels.next.split_at_mut(1);
        let (out, derived) = (&mut u[0], &mut rest[0]);
        let current = &levels.current[0];
        match self.kernel {
            Kernel::Descent => descent_step(current, out, derived),
            Kernel::Guarded => guarded_step(current, out, derived),
            Kernel::Tested => tested_step(current, out, derived),
            Kernel::Growth => growth_step(current, out, derived),
        }
    }
}

/// The line of this file that carries the comment `site: {marker}`.
fn line_of(marker: &str) -> u32 {
    let needle = format!("// site: {marker}");
    let index = include_str!("audit_replay.rs").lines().position(|line| line.ends_with(&needle)).expect("marker");
    u32::try_from(index + 1).expect("line number")
}

/// The step and line of the first `kind` event of `lens` that names a site.
fn first_site(trace: &Trace, lens: &str, kind: EventName) -> Option<(u64, u32)> {
    trace
        .events
        .iter()
        .filter(|e| e.kind == kind && e.lens == lens)
        .find_map(|e| e.site.as_ref().filter(|s| s.file.ends_with("audit_replay.rs")).map(|s| (e.step, s.line)))
}

fn audit(kernel: Kernel, start: f64, steps: u64, name: &str) -> Trace {
    Audit::new(&Walk { kernel, start }, Tolerance::absolute(1e-9), steps)
        .trace(scratch(name).join("replay.jsonl"))
        .lens::<Bound>()
        .lens::<Shadow>()
        .lens::<Interval>()
        .run()
        .unwrap()
}

#[test]
fn a_nan_reaching_a_field_late_in_a_chunk_is_found_at_its_line() {
    // u_n = 11 − n/4, exact in binary64 (quarters of small integers); u_n − 1 < 0 first at n = 41, and the square
    // root of a negative number is NaN (IEEE 754-2019 §9.2). Step 41 lies inside a long chunk (the driver doubles
    // its chunks from one step), so the replay starts from a checkpoint several steps before it.
    let trace = audit(Kernel::Descent, 11.0, 60, "audit_replay_late");
    assert!(trace.is_complete());
    for lens in ["bound", "shadow", "interval"] {
        assert_eq!(first_site(&trace, lens, EventName::Nan), Some((41, line_of("reaching root"))), "lens {lens}");
        let field = trace.events.iter().find(|e| e.kind == EventName::Nan && e.lens == lens && e.field.is_some());
        assert_eq!(field.map(|e| (e.step, e.field.as_deref())), Some((41, Some("derived"))), "lens {lens}");
    }
}

#[test]
fn a_nan_swallowed_by_a_comparison_is_still_reported() {
    // As above, r = √(u_n − 1) is NaN from step 41 on; `NaN > 0.5` is false (IEEE 754-2019 §5.11: NaN is
    // unordered), so the field holds 0 and stays finite — only the note of the comparison leads to the replay.
    // The same with the NaN tested for explicitly (`is_nan`) and replaced.
    for (kernel, site) in [(Kernel::Guarded, "guarded root"), (Kernel::Tested, "tested root")] {
        let trace = audit(kernel, 11.0, 60, "audit_replay_guarded");
        assert!(trace.is_complete());
        for lens in ["bound", "shadow", "interval"] {
            assert_eq!(first_site(&trace, lens, EventName::Nan), Some((41, line_of(site))), "lens {lens}, {site}");
            assert!(
                !trace.events.iter().any(|e| e.kind == EventName::Nan && e.field.is_some()),
                "no field holds NaN: the guard replaced it"
            );
        }
    }
}

#[test]
fn an_overflow_turned_finite_again_is_reported_where_the_reference_shows_it() {
    // u_n = 16^n = 2^(4n); its square 2^(8n) first exceeds the largest double (below 2^1024, IEEE 754-2019
    // Table 3.5) at n = 128, and 1/∞ = 0 is finite. Bound and Shadow lose their reference with the overflow
    // (infinite radius, NaN shadow), which leads to the replay; the interval's enclosure [0, 1/MAX] still holds
    // the exact 2^-1024 and leads to none (docs/audit.md says so).
    let trace = audit(Kernel::Growth, 1.0, 130, "audit_replay_overflow");
    assert!(trace.is_complete());
    for lens in ["bound", "shadow"] {
        assert_eq!(
            first_site(&trace, lens, EventName::Infinity),
            Some((128, line_of("square overflows"))),
            "lens {lens}"
        );
    }
}

#[test]
fn either_variant_of_a_lens_audits_the_same_under_one_name() {
    let watched = Audit::new(&Walk { kernel: Kernel::Descent, start: 11.0 }, Tolerance::absolute(1e-9), 50)
        .trace(scratch("audit_replay_variant").join("watched.jsonl"))
        .lens::<Bound>()
        .run()
        .unwrap();
    let unwatched = Audit::new(&Walk { kernel: Kernel::Descent, start: 11.0 }, Tolerance::absolute(1e-9), 50)
        .trace(scratch("audit_replay_variant").join("unwatched.jsonl"))
        .lens::<BoundUnwatched>()
        .run()
        .unwrap();
    assert_eq!(watched.steps, unwatched.steps);
    assert_eq!(watched.events, unwatched.events);
    assert!(unwatched.steps.iter().all(|s| s.lens == "bound"));
    // The two variants are one lens: adding both is a duplicate.
    let both = Audit::new(&Walk { kernel: Kernel::Descent, start: 11.0 }, Tolerance::absolute(1e-9), 5)
        .trace(scratch("audit_replay_variant").join("both.jsonl"))
        .lens::<Bound>()
        .lens::<BoundUnwatched>()
        .run();
    assert!(matches!(both, Err(twinstep::audit::Error::DuplicateLens { .. })));
}
