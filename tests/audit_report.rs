//! The terminal report tells the whole story of a trace: the table, the worst field, the first crossing, bound
//! against estimate with both numbers, events with their source sites, the verdict and the rounding-only caution;
//! an incomplete trace says so.

mod audit_support;

use audit_support::kernels::Fold;
use audit_support::scratch;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::report::render_text;
use twinstep::trace::{self, EventName};

#[test]
fn report_has_every_section() {
    let path = scratch("audit_report").join("fold.jsonl");
    let trace = Audit::new(&Fold, Tolerance::absolute(1e-16), 60)
        .kernel("fold_step")
        .describe("one cell")
        .trace(&path)
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()
        .unwrap();
    let text = render_text(&trace);
    for needle in [
        "twinstep audit of fold_step",
        "Error by step, lens bound",
        "Error by step, lens shadow",
        "Worst field: u",
        "First crossing: step",
        "Guaranteed bound against estimate",
        "Events",
        "undecided_comparison",
        "comparison undecided by rounding",
        "Verdict:",
        "rounding error only, not discretization or modelling error",
        "licensed review",
    ] {
        assert!(text.contains(needle), "missing {needle:?} in\n{text}");
    }
    // Events carry the kernel's own source site (the comparison in kernels.rs).
    let site = trace.events.iter().find(|e| e.kind == EventName::UndecidedComparison).unwrap().site.clone().unwrap();
    assert!(text.contains(&site.to_string()), "{text}");
    // The crossing step shown is the trace's.
    let crossing = trace.events.iter().find(|e| e.kind == EventName::ToleranceCrossed && e.lens == "shadow");
    let step = crossing.unwrap().step;
    assert!(text.contains(&format!("First crossing: step {step}, field u, lens shadow")), "{text}");
    // The verdict says the figures follow the f64 program's path past an unstable branch.
    assert!(trace.summary.as_ref().unwrap().verdict.text.contains("another path"));
    // The caution is said once, at the end.
    assert_eq!(text.matches("licensed review").count(), 1);

    // A prefix of the same file: the report says the run is incomplete and gives no verdict.
    let full = std::fs::read_to_string(&path).unwrap();
    let prefix: String = full.lines().take(6).map(|l| format!("{l}\n")).collect();
    let partial = render_text(&trace::parse(&prefix).unwrap());
    assert!(partial.contains("INCOMPLETE") && partial.contains("Verdict: none"), "{partial}");
}

#[test]
fn worst_field_ranks_a_nan_ratio_as_infinite_whatever_its_sign() {
    let path = scratch("audit_report_nan").join("fold.jsonl");
    let mut trace = Audit::new(&Fold, Tolerance::absolute(1e-3), 5).trace(&path).lens::<Shadow>().run().unwrap();
    // A second field whose last ratio is NaN, as an infinite ratio reads back (`docs/trace.md`: JSON writes ∞ as
    // null, null reads as NaN); `-NaN` is what arithmetic on NaN may give, and `total_cmp` puts it below 0.
    trace.header.fields.push(twinstep::trace::FieldSpec::new("w", &[1]));
    let last = trace.steps.last_mut().unwrap();
    let mut blown = last.fields[0].clone();
    (blown.name, blown.tol_ratio, blown.max_err) = ("w".to_string(), -f64::NAN, f64::NAN);
    last.fields.push(blown);
    let text = render_text(&trace);
    assert!(text.contains("Worst field: w"), "{text}");
}

#[test]
fn guaranteed_lenses_come_from_the_header_and_older_traces_still_infer_them() {
    let path = scratch("audit_report_guaranteed").join("fold.jsonl");
    let mut trace =
        Audit::new(&Fold, Tolerance::absolute(1e-3), 5).trace(&path).lens::<Bound>().lens::<Shadow>().run().unwrap();
    // The bound lens is the one with a guarantee (its documented contract); the shadow lens estimates.
    assert_eq!(trace.header.guaranteed_lenses, Some(vec!["bound".to_string()]));
    // Every bound overflowed (written as null): the header still says which lens is guaranteed.
    for step in trace.steps.iter_mut().filter(|s| s.lens == "bound") {
        step.fields.iter_mut().for_each(|f| f.bound = None);
    }
    assert!(trace.is_guaranteed("bound") && !trace.is_guaranteed("shadow"));
    // A trace from before the header member: a lens with no bound anywhere cannot be told from an estimate.
    trace.header.guaranteed_lenses = None;
    assert!(!trace.is_guaranteed("bound"));
    let read = trace::read(&path).unwrap();
    let older = twinstep::trace::Trace {
        header: twinstep::trace::Header { guaranteed_lenses: None, ..read.header.clone() },
        ..read
    };
    assert!(older.is_guaranteed("bound") && !older.is_guaranteed("shadow"));
}
