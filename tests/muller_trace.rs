//! Muller's recurrence through the audit driver.
//!
//! `u_{n+1} = 111 − 1130/u_n + 3000/(u_n u_{n−1})`, `u_0 = 2`, `u_1 = −4`: the exact sequence tends to 6 while
//! binary64 tends to 100 (Muller et al., Handbook of Floating-Point Arithmetic — from memory). The step where the
//! relative error first exceeds 10⁻⁶ is computed here independently: the exact sequence in dashu-ratio rationals
//! against the same recurrence evaluated in plain f64.

mod audit_support;

use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::Shadow;
use twinstep::trace::EventName;
use twinstep::verdict::Status;

/// The example's own scenario (`examples/muller.rs`), so the check also covers what a user runs.
#[allow(dead_code)]
#[path = "../examples/muller.rs"]
mod example;

use example::{next_term, Recurrence};

#[test]
fn first_relative_error_above_1e_minus_6_matches_exact_rationals() {
    // The oracle: exact terms u_0 … u_30 and the f64 terms of the same recurrence.
    let (mut exact, mut float) = (vec![RBig::from(2u8), -RBig::from(4u8)], vec![2.0f64, -4.0]);
    for k in 1..30 {
        let (e1, e0) = (&exact[k], &exact[k - 1]);
        // 111 − 1130/u_n + 3000/(u_n u_{n−1}), exactly
        let next = RBig::from(111u8) - RBig::from(1130u16) / e1 + RBig::from(3000u16) / (e1 * e0);
        exact.push(next);
        float.push(next_term(float[k - 1], float[k]));
    }
    let crossing_term = (0..exact.len())
        .find(|&k| {
            // |f64 − exact| / |exact|, rounded once to f64 from the exact rational
            let rel = rational_to_f64(&((rational(float[k]) - &exact[k]) / &exact[k]));
            rel.abs() > 1e-6
        })
        .expect("binary64 leaves the exact sequence");
    // The exact sequence tends to 6 and binary64 to 100 (Handbook, from memory).
    assert!((rational_to_f64(&exact[29]) - 6.0).abs() < 0.1);
    assert!((float[29] - 100.0).abs() < 1e-6);

    let dir = scratch("muller");
    let trace = Audit::new(&Recurrence, Tolerance::relative(1e-6), 25)
        .kernel("next_term")
        .trace(dir.join("muller.jsonl"))
        .every_step()
        .lens::<Shadow>()
        .run()
        .unwrap();
    let summary = trace.summary.as_ref().unwrap();
    // Driver step s leaves u_{s+1} in the current level (step 0 holds u_1).
    let crossing = summary.results[0].first_crossing.expect("the audit sees the crossing");
    assert_eq!(crossing + 1, crossing_term as u64);
    let event = trace.events.iter().find(|e| e.kind == EventName::ToleranceCrossed).unwrap();
    assert_eq!(event.step, crossing);
    assert_eq!(summary.verdict.status, Status::EnoughUntil);
    assert_eq!(summary.verdict.until_step, Some(crossing - 1));
    // The primal is the f64 original at every step: no mismatch event.
    assert!(trace.events.iter().all(|e| e.kind != EventName::PrimalMismatch));
}
