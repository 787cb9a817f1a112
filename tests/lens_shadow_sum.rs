//! The shadow's double-word sum and difference against exact rationals (dashu-ratio): the error bound derived
//! beside `twinstep::lens::eft`'s `dw_sum` — `|z − (x ± y)| ≤ (3 + 2u)·u²·(|xh| + |yh|)` for normalized
//! operands — and the normalization of the result (`|zl| ≤ ulp(zh)/2`), on random operands and on operands
//! built to cancel, where the bound is relative to the operands and not to the result.

mod double_word_support;

use dashu_ratio::RBig;
use double_word_support::{double_word, magnitude, rational, ulp, unit_roundoff, value};
use proptest::prelude::*;
use twinstep::lens::eft::DoubleWord;

/// Random doubles of magnitude between 2^-60 and 2^60, either sign, non-zero.
fn operand() -> impl Strategy<Value = f64> {
    (-1.0f64..1.0, -60i32..60).prop_map(|(m, e)| m * 2f64.powi(e)).prop_filter("non-zero", |x| *x != 0.0)
}

/// Checks `z` against the exact `x ± y` and the bound, and that `z` is normalized.
fn check(z: DoubleWord, exact: &RBig, x: DoubleWord, y: DoubleWord, what: &str) -> Result<(), TestCaseError> {
    let u = unit_roundoff();
    let bound =
        (RBig::from(3) + RBig::from(2) * &u) * &u * &u * (magnitude(&rational(x.hi)) + magnitude(&rational(y.hi)));
    let error = magnitude(&(value(z) - exact));
    prop_assert!(error <= bound, "{what}: {x:?} and {y:?} give {z:?}, error {:e}", error.to_f64().value());
    if z.hi != 0.0 {
        // Normalized: |zl| ≤ ulp(zh)/2, compared exactly (ulp(zh)/2 is a double).
        prop_assert!(z.lo.abs() <= ulp(z.hi) / 2.0, "{what}: {z:?} is not normalized");
    } else {
        prop_assert_eq!(z.lo, 0.0, "{}: a zero hi with a non-zero lo", what);
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(4000))]

    #[test]
    fn sum_and_difference_stay_within_the_bound(a in operand(), b in operand(), fa in -1.0f64..1.0,
                                                 fb in -1.0f64..1.0) {
        let (x, y) = (double_word(a, fa), double_word(b, fb));
        check(x + y, &(value(x) + value(y)), x, y, "x + y")?;
        check(x - y, &(value(x) - value(y)), x, y, "x - y")?;
    }

    #[test]
    fn cancelling_operands_stay_within_the_bound(a in operand(), shift in 0i32..54, fa in -1.0f64..1.0,
                                                 fb in -1.0f64..1.0) {
        // yh = −xh·(1 + 2^-shift) rounded: the high parts cancel to a few bits (Sterbenz: xh + yh is exact), and
        // what is left is of the order of the low parts, where the rounding of xl + yl matters most.
        let b = -(a * (1.0 + 2f64.powi(-shift)));
        let (x, y) = (double_word(a, fa), double_word(b, fb));
        check(x + y, &(value(x) + value(y)), x, y, "x + y")?;
        let z = DoubleWord { hi: -y.hi, lo: -y.lo };
        check(x - z, &(value(x) - value(z)), x, z, "x - z")?;
    }
}

#[test]
fn exact_cancellation_leaves_the_low_parts_exactly() {
    // x = 1 + 2^-60, y = −1 + 2^-61: the high parts cancel exactly and the sum is 2^-60 + 2^-61 = 3·2^-61,
    // which a double holds, so the shadow must be exact (common practice, no source: small powers of two).
    let x = DoubleWord { hi: 1.0, lo: 2f64.powi(-60) };
    let y = DoubleWord { hi: -1.0, lo: 2f64.powi(-61) };
    let z = x + y;
    assert_eq!(value(z), rational(3.0 * 2f64.powi(-61)));
    assert_eq!((z.hi, z.lo), (3.0 * 2f64.powi(-61), 0.0));
}
