//! Each kind of tolerance decides the first crossing as its definition says, checked against an independent
//! computation: the exact sequence in rationals (dashu-ratio), the f64 sequence from the hardware, and the ulp
//! from the binade of the value (IEEE 754-2019 §3.3: in [2^e, 2^(e+1)) doubles are 2^(e−52) apart).

mod audit_support;

use audit_support::kernels::{fold_step, Fold};
use audit_support::{rational, rational_to_f64, scratch};
use dashu_ratio::RBig;
use twinstep::audit::{Audit, Tolerance};
use twinstep::lens::Shadow;

const STEPS: usize = 40;

/// The error a tolerance allows at a value, written out from its definition (docs/trace.md).
type Allowance = Box<dyn Fn(f64) -> f64>;

/// The f64 values of the fold from 1 and their true errors against the exact fold (subtract one tenth, take the
/// absolute value), exactly in rationals.
fn truth() -> Vec<(f64, f64)> {
    let tenth = RBig::from(1u8) / RBig::from(10u8);
    let (mut exact, mut float) = (RBig::from(1u8), 1.0f64);
    let mut out = vec![(float, 0.0)];
    for _ in 0..STEPS {
        exact -= &tenth;
        if exact < RBig::from(0u8) {
            exact = -exact;
        }
        float = fold_step(float);
        out.push((float, rational_to_f64(&(rational(float) - &exact)).abs()));
    }
    out
}

/// The first step where `err > allowed(u)`.
fn first_crossing(allowed: impl Fn(f64) -> f64) -> Option<u64> {
    truth().iter().position(|&(u, err)| err > allowed(u)).map(|p| p as u64)
}

/// The spacing of doubles at `u`, from its binade (normal range only, which these values stay in).
fn binade_ulp(u: f64) -> f64 {
    2f64.powi(u.abs().log2().floor() as i32 - 52)
}

fn audited_crossing(tolerance: Tolerance, name: &str) -> Option<u64> {
    let trace = Audit::new(&Fold, tolerance, STEPS as u64)
        .trace(scratch("audit_tolerances").join(format!("{name}.jsonl")))
        .lens::<Shadow>()
        .run()
        .unwrap();
    trace.summary.unwrap().results[0].first_crossing
}

#[test]
fn every_kind_crosses_where_its_definition_says() {
    let cases: [(&str, Tolerance, Allowance); 4] = [
        ("absolute", Tolerance::absolute(1e-16), Box::new(|_| 1e-16)),
        ("relative", Tolerance::relative(1e-15), Box::new(|u: f64| 1e-15 * u.abs())),
        ("mixed", Tolerance::mixed(1e-17, 1e-15), Box::new(|u: f64| 1e-17 + 1e-15 * u.abs())),
        ("ulps", Tolerance::ulps(3.0), Box::new(|u: f64| 3.0 * binade_ulp(u))),
    ];
    for (name, tolerance, allowed) in cases {
        let expected = first_crossing(&allowed);
        assert!(expected.is_some(), "{name}: the case should cross within {STEPS} steps");
        // No value sits within 1 % of its threshold, so the shadow's estimate (tested elsewhere to agree with the
        // true error to ten digits) cannot land on the other side of it.
        for &(u, err) in &truth() {
            let ratio = err / allowed(u);
            assert!(!(0.99..=1.01).contains(&ratio), "{name}: a value at {ratio} of its threshold");
        }
        assert_eq!(audited_crossing(tolerance, name), expected, "{name}");
    }
}
