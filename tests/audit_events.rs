//! Events the driver itself detects: a field turning NaN (reported with the field, never a panic, and judged as a
//! crossing), and a twin whose primal departs from the f64 original run alongside it.

mod audit_support;

use audit_support::scratch;
use twinstep::audit::{Audit, FieldSpec, Levels, Scenario, Tolerance};
use twinstep::lens::{Bound, Shadow};
use twinstep::trace::EventName;
use twinstep::verdict::Status;

/// A square root of something that goes negative.
#[twinstep::audit]
fn root_step(u: &[f64], out: &mut [f64]) {
    out[0] = (u[0] - 1.0).sqrt();
}

/// A tenth of the value, written two ways: the twin divides by ten, the "original" multiplies by 0.1. The
/// original of this one is deliberately never run (the scenario pairs its twin with the other function).
#[allow(dead_code)]
#[twinstep::audit]
fn tenth_by_division(u: f64) -> f64 {
    u / 10.0
}

fn tenth_by_product(u: f64) -> f64 {
    u * 0.1
}

struct Case {
    start: f64,
    tenth: bool,
}

#[twinstep::scenario]
impl Scenario for Case {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("u", &[1])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![vec![self.start]]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        if self.tenth {
            levels.next[0][0] = tenth_by_division_twin::<T>(levels.current[0][0]);
        } else {
            root_step_twin::<T>(&levels.current[0], &mut levels.next[0]);
        }
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        if self.tenth {
            levels.next[0][0] = tenth_by_product(levels.current[0][0]);
        } else {
            root_step(&levels.current[0], &mut levels.next[0]);
        }
    }
}

#[test]
fn a_field_turning_nan_is_an_event_and_a_crossing() {
    // √(0.5 − 1) is an invalid operation whose default result is NaN (IEEE 754-2019 §7.2 and §9.2).
    assert!((0.5f64 - 1.0).sqrt().is_nan());
    let path = scratch("audit_events_nan").join("nan.jsonl");
    let trace = Audit::new(&Case { start: 0.5, tenth: false }, Tolerance::absolute(1e-9), 5)
        .trace(&path)
        .lens::<Bound>()
        .lens::<Shadow>()
        .run()
        .unwrap();
    for lens in ["bound", "shadow"] {
        let nan = trace.events.iter().find(|e| e.kind == EventName::Nan && e.lens == lens && e.field.is_some());
        assert_eq!(nan.map(|e| e.step), Some(1), "lens {lens}");
        // The site is the square root in the kernel, as the lens reported it (this file, line of `root_step`).
        let site = nan.and_then(|e| e.site.as_ref()).expect("the lens names the operation");
        assert!(site.file.ends_with("audit_events.rs"), "{site}");
    }
    let summary = trace.summary.as_ref().unwrap();
    assert!(summary.results.iter().all(|r| r.first_crossing == Some(1)));
    assert_eq!(summary.verdict.status, Status::NotEnough);
    // A NaN primal's error counts as infinite; JSON writes it as null, which reads back as NaN (docs/trace.md).
    let read = twinstep::trace::read(&path).unwrap();
    let after = read.steps.iter().find(|s| s.step == 1 && s.lens == "shadow").unwrap();
    assert!(after.fields[0].max_err.is_nan() || after.fields[0].max_err == f64::INFINITY);
    assert!(read.is_complete());
    let text = twinstep::report::render_text(&trace);
    assert!(text.contains("NOT ENOUGH"), "{text}");
}

#[test]
fn a_twin_that_departs_from_the_original_is_reported() {
    // 3/10 correctly rounded is the double nearest 0.3, while 3 × fl(0.1) rounds to the next double up
    // (IEEE 754-2019 §4.3 correct rounding; both computed here by the hardware, not by twinstep).
    assert_ne!(3.0f64 / 10.0, 3.0 * 0.1);
    let trace = Audit::new(&Case { start: 3.0, tenth: true }, Tolerance::relative(1e-6), 4)
        .trace(scratch("audit_events_mismatch").join("m.jsonl"))
        .lens::<Shadow>()
        .run()
        .unwrap();
    let mismatch = trace.events.iter().find(|e| e.kind == EventName::PrimalMismatch).expect("a primal_mismatch event");
    assert_eq!((mismatch.step, mismatch.field.as_deref()), (1, Some("u")));
    assert!(mismatch.detail.contains("cell [0]"));
    let text = twinstep::report::render_text(&trace);
    assert!(text.contains("primal_mismatch"), "{text}");
    assert!(trace.summary.unwrap().verdict.text.starts_with("Warning: the primal of lens shadow differs"));
}
