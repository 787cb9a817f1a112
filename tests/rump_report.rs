//! Rump's polynomial through the audit and the report: a one-step kernel whose f64 result has no correct digit.
//!
//! `f(a, b) = 333.75 b⁶ + a² (11 a² b² − b⁶ − 121 b⁴ − 2) + 5.5 b⁸ + a / (2b)` at a = 77617, b = 33096 has the exact
//! value −0.827396059946821368141… (the original form is Rump 1988, from memory; the digits are recalled, from
//! memory), which this test recomputes in exact rationals (dashu-ratio) rather than trusting the recalled digits.
//! Binary64 returns a number of the wrong sign and magnitude (as later reported for IEEE 754 arithmetic, Loh &
//! Walster, Reliable Computing 2002, from memory; checked here against the exact value), and the double-double
//! shadow is fooled too (about 106 bits cannot
//! absorb the cancellation of terms near 2¹²²), so the report must rest on the guaranteed enclosures, say that the
//! f64 result has no correct digit, and never present the shadow's value as the exact result.

mod audit_support;

use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Error, FieldSpec, Levels, Scenario, Scheme, Tolerance};
use twinstep::lens::{Bound, Interval, Shadow};

/// The polynomial as a user would write it.
#[twinstep::audit]
fn rump(a: f64, b: f64) -> f64 {
    333.75 * b.powi(6)
        + a * a * (11.0 * a * a * b * b - b.powi(6) - 121.0 * b.powi(4) - 2.0)
        + 5.5 * b.powi(8)
        + a / (2.0 * b)
}

/// One cell, computed once: the step evaluates the polynomial at the cell's inputs.
struct Evaluation;

#[twinstep::scenario]
impl Scenario for Evaluation {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("f", &[1])]
    }

    fn scheme(&self) -> Scheme {
        Scheme::TwoLevel
    }

    fn init<T>(&self, levels: &mut Levels<T>) -> Result<(), Error> {
        levels.current[0].set_f64(&[0.0])
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        levels.next[0][0] = rump_twin::<T>(T::from_f64(77617.0), T::from_f64(33096.0));
    }

    fn step_original(&self, levels: &mut Levels<f64>) {
        levels.next[0][0] = rump(77617.0, 33096.0);
    }
}

/// The exact value, in rationals: every input and coefficient is a dyadic rational (333.75 = 1335/4, 5.5 = 11/2).
fn exact() -> RBig {
    let (a, b) = (rational(77617.0), rational(33096.0));
    let b2 = &b * &b;
    let b4 = &b2 * &b2;
    let b6 = &b4 * &b2;
    let b8 = &b4 * &b4;
    let a2 = &a * &a;
    rational(333.75) * &b6
        + &a2 * (rational(11.0) * &a2 * &b2 - &b6 - rational(121.0) * &b4 - rational(2.0))
        + rational(5.5) * &b8
        + &a / (rational(2.0) * &b)
}

/// The audit of the evaluation with the two guaranteed lenses and the shadow.
fn audit(test: &str) -> twinstep::trace::Trace {
    let dir = scratch(test);
    Audit::new(&Evaluation, Tolerance::relative(1e-6), 1)
        .kernel("rump")
        .every_step()
        .trace(dir.join("rump.jsonl"))
        .lens::<Bound>()
        .lens::<Interval>()
        .lens::<Shadow>()
        .run()
        .expect("audit")
}

#[test]
fn enclosures_contain_the_exact_value_and_the_report_says_no_digit_is_correct() {
    let exact = exact();
    // The recalled digits (from memory) agree with the exact rational computation, the oracle here.
    assert!(
        (rational_to_f64(&exact) + 0.827_396_059_946_821_4).abs() < 1e-15,
        "exact value {}",
        rational_to_f64(&exact)
    );
    let primal = rump(77617.0, 33096.0);
    let true_error = rational_to_f64(&(rational(primal) - &exact)).abs();

    let trace = audit("rump_report");

    for lens in ["bound", "interval"] {
        let last = trace.steps.iter().rfind(|s| s.lens == lens).expect("a recorded step");
        let field = &last.fields[0];
        let bound = field.bound.expect("a guaranteed lens records its bound");
        // The enclosure [primal − bound, primal + bound] holds the exact value.
        assert!(bound >= true_error, "{lens}: bound {bound} below the true error {true_error}");
        assert_eq!(field.correct_bits, 0.0, "{lens}: no bit of the f64 result is guaranteed");
    }

    let report = twinstep::report::render_text(&trace);
    assert!(report.contains("no correct digit"), "the report must say the f64 result has no correct digit:\n{report}");
    let lower = report.to_lowercase();
    assert!(
        !lower.contains("exact result") && !lower.contains("exact value"),
        "never call a lens value exact:\n{report}"
    );
}

#[test]
fn an_estimate_outside_the_guaranteed_enclosure_is_called_wrong() {
    // The report's rule, on a constructed contradiction: the shadow's recorded distance from the primal is set
    // beyond the guaranteed bound of the same step and field. Then the shadow's value lies outside the enclosure
    // [primal − bound, primal + bound], which holds the exact value, so the shadow is wrong there (a logical
    // consequence of the enclosure, no numeric source needed). The unmodified trace must not trigger the rule.
    let mut trace = audit("rump_report_contradiction");
    let untouched = twinstep::report::render_text(&trace);
    assert!(!untouched.contains("is WRONG"), "the shadow lies inside the enclosures here:\n{untouched}");
    let bound = trace
        .steps
        .iter()
        .filter(|s| s.step == 1 && s.lens == "bound")
        .flat_map(|s| s.fields.iter())
        .find_map(|f| f.bound)
        .expect("bound at step 1");
    for record in trace.steps.iter_mut().filter(|s| s.step == 1 && s.lens == "shadow") {
        record.fields[0].max_err = 4.0 * bound;
    }
    let report = twinstep::report::render_text(&trace);
    assert!(report.contains("the estimate of lens shadow is WRONG"), "{report}");
}
