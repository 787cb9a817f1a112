//! Muller's recurrence `u_{n+1} = 111 − 1130/u_n + 3000/(u_n u_{n−1})`, `u_0 = 2`, `u_1 = −4` (Muller et al.,
//! Handbook of Floating-Point Arithmetic, from memory): the exact sequence tends to 6, every float computation
//! to 100. The lens-level claim: the shadow's relative error estimate crosses 1e-6 at the same step as the true
//! relative error computed with dashu exact rationals, and the bound's guaranteed radius crosses no later.

use dashu_ratio::RBig;
use twinstep::lens::{Bound, Lens, Shadow};
use twinstep::Real;

const STEPS: usize = 40;
const TOLERANCE: f64 = 1e-6;

/// The recurrence as a kernel writes it.
fn muller<T: Real>() -> Vec<T> {
    let mut u = vec![T::from_f64(2.0), -T::from_f64(4.0)];
    for n in 1..STEPS {
        let next = T::from_f64(111.0) - T::from_f64(1130.0) / u[n] + T::from_f64(3000.0) / (u[n] * u[n - 1]);
        u.push(next);
    }
    u
}

/// The exact sequence (dashu-ratio rationals).
fn exact() -> Vec<RBig> {
    let mut u = vec![RBig::from(2), RBig::from(-4)];
    for n in 1..STEPS {
        let next = RBig::from(111) - RBig::from(1130) / &u[n] + RBig::from(3000) / (&u[n] * &u[n - 1]);
        u.push(next);
    }
    u
}

fn true_relative_errors(primals: impl Iterator<Item = f64>) -> Vec<f64> {
    primals.zip(exact()).map(|(p, x)| ((RBig::try_from(p).unwrap() - &x) / &x).to_f64().value().abs()).collect()
}

fn first_crossing(errors: &[f64]) -> Option<usize> {
    errors.iter().position(|&e| e > TOLERANCE)
}

#[test]
fn exact_sequence_tends_to_six_and_floats_to_one_hundred() {
    // Handbook of Floating-Point Arithmetic (from memory): limit 6 exactly, 100 in floating point.
    let x = exact();
    assert!((x[STEPS - 1].to_f64().value() - 6.0).abs() < 0.01);
    let f = muller::<f64>();
    assert!((f[STEPS - 1] - 100.0).abs() < 1e-6);
}

#[test]
fn shadow_estimate_crosses_with_the_true_error() {
    let shadow = muller::<Shadow>();
    let truth = true_relative_errors(shadow.iter().map(|s| s.primal()));
    let estimate: Vec<f64> = shadow.iter().map(|s| s.relative_error()).collect();
    let true_step = first_crossing(&truth).expect("the float sequence leaves the exact one");
    assert_eq!(first_crossing(&estimate), Some(true_step), "truth {truth:?}\nestimate {estimate:?}");
    // Before the crossing the estimate is within a factor 2 of the truth where the truth is resolvable.
    for n in 2..true_step {
        if truth[n] > 1e-13 {
            assert!(estimate[n] > truth[n] / 2.0 && estimate[n] < truth[n] * 2.0, "step {n}");
        }
    }
}

#[test]
fn bound_radius_crosses_no_later_than_the_true_error() {
    let bound = muller::<Bound>();
    let truth = true_relative_errors(bound.iter().map(|b| b.primal()));
    let exact = exact();
    for (n, b) in bound.iter().enumerate() {
        let distance = (RBig::try_from(b.primal()).unwrap() - &exact[n]).to_f64().value().abs();
        assert!(distance <= b.error_bound().unwrap(), "step {n}: {b} misses the exact value");
    }
    let radius: Vec<f64> = bound.iter().map(|b| b.radius() / b.primal().abs()).collect();
    assert!(first_crossing(&radius).unwrap() <= first_crossing(&truth).unwrap());
}
