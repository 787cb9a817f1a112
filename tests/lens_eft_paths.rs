//! Both ways of making products exact — with a fused multiply-add (`Products::Fused`) and by Veltkamp–Dekker
//! splitting (`Products::Split`, what a build without the `fma` target feature uses) — against exact rationals (dashu-ratio), called
//! directly so that each build tests both:
//! - TwoProd gives `p = RN(a·b)` and `p + e = a·b` exactly, for factors across the whole range (the split's
//!   scaling of factors above 2^996 included);
//! - the residual of a quotient or a square root is the exact `a − x·y` (a double: Bohlender, Walter, Kornerup,
//!   Matula 1991 for the quotient, from memory; it is checked here, not assumed), the same from both;
//! - the double-word product, product by a double, quotient and square root stay within their error bounds: the
//!   bounds of Joldes, Muller, Popescu, ACM TOMS 44(2), 2017 (from memory) with `Fused`, and the bounds derived
//!   beside the code in `src/lens/eft.rs` for `Split` (one more rounding per split fused operation).

mod double_word_support;

use dashu_int::UBig;
use dashu_ratio::RBig;
use double_word_support::{double_word, dw_times_dw3, magnitude, rational, value};
use proptest::prelude::*;
use twinstep::lens::eft::{DoubleWord, Products};

/// `k·u²` with u = 2^-53 (unit roundoff of binary64, IEEE 754-2019 Table 3.5's p = 53), as a rational.
fn u_squared_times(k: u32) -> RBig {
    RBig::from(k) / RBig::from(UBig::ONE << 106)
}

/// Whether `|computed − exact| ≤ bound·|exact|`.
fn within(computed: &RBig, exact: &RBig, bound: &RBig) -> bool {
    magnitude(&(computed - exact)) <= bound * magnitude(exact)
}

/// Random doubles with magnitudes from 2^-400 to 2^400, either sign (products stay far from the underflow
/// margin and from overflow, where neither TwoProd is exact).
fn wide_operand() -> impl Strategy<Value = f64> {
    (1.0f64..2.0, -400i32..400, any::<bool>()).prop_map(|(m, e, negative)| {
        let x = m * 2f64.powi(e);
        if negative {
            -x
        } else {
            x
        }
    })
}

fn check_two_prod(products: Products, a: f64, b: f64, what: &str) -> Result<(), TestCaseError> {
    let (p, e) = products.two_prod(a, b);
    prop_assert_eq!(p.to_bits(), (a * b).to_bits(), "{}: p is not RN(a·b)", what);
    prop_assert!(rational(p) + rational(e) == rational(a) * rational(b), "{what}: {a:e}·{b:e} ≠ {p:e} + {e:e}");
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(1024))]

    #[test]
    fn two_prod_is_exact_both_ways(a in wide_operand(), b in wide_operand()) {
        check_two_prod(Products::Fused, a, b, "fused")?;
        check_two_prod(Products::Split, a, b, "split")?;
    }

    #[test]
    fn two_prod_splits_factors_beyond_2_to_996(m in 1.0f64..2.0, e in 996i32..1023, small in wide_operand()) {
        // A factor above 2^996 would overflow Veltkamp's (2^27 + 1)·a; the product with a small factor is finite.
        let big = m * 2f64.powi(e);
        let small = small * 2f64.powi(-500);
        prop_assume!((big * small).is_finite());
        check_two_prod(Products::Split, big, small, "split, big left")?;
        check_two_prod(Products::Split, small, big, "split, big right")?;
        check_two_prod(Products::Fused, big, small, "fused, big left")?;
    }

    #[test]
    fn residuals_are_exact_and_the_same_both_ways(a in wide_operand(), b in wide_operand()) {
        let q = a / b;
        let exact = rational(a) - rational(q) * rational(b);
        let (fused, split) = (Products::Fused.residual(a, q, b), Products::Split.residual(a, q, b));
        prop_assert!(rational(fused) == exact, "a − q·b for {a:e} / {b:e}: fused {fused:e}");
        prop_assert_eq!(fused.to_bits(), split.to_bits(), "a − q·b for {:e} / {:e}", a, b);
        let x = a.abs();
        let s = x.sqrt();
        let exact = rational(x) - rational(s) * rational(s);
        let (fused, split) = (Products::Fused.residual(x, s, s), Products::Split.residual(x, s, s));
        prop_assert!(rational(fused) == exact, "x − s² for {x:e}: fused {fused:e}");
        prop_assert_eq!(fused.to_bits(), split.to_bits(), "x − s² for {:e}", x);
    }

    #[test]
    fn residuals_near_the_overflow_threshold_are_exact_both_ways(m in 1.0f64..2.0, e in 1000i32..1024,
                                                                 b in 1.0f64..2.0, k in 0i32..300) {
        // a = m·2^e up to MAX, where x·y ≈ a may round beyond MAX in a product (IEEE 754-2019 §7.4) but not in the
        // fused operation: the split residual scales first.
        let a = (m * 2f64.powi(e - 1)) * 2.0;
        prop_assume!(a.is_finite());
        let divisor = b * 2f64.powi(k);
        let q = a / divisor;
        let exact = rational(a) - rational(q) * rational(divisor);
        prop_assert!(rational(Products::Split.residual(a, q, divisor)) == exact, "a − q·b for {a:e} / {divisor:e}");
        prop_assert!(rational(Products::Fused.residual(a, q, divisor)) == exact, "a − q·b for {a:e} / {divisor:e}");
        let s = a.sqrt();
        let exact = rational(a) - rational(s) * rational(s);
        prop_assert!(rational(Products::Split.residual(a, s, s)) == exact, "x − s² for {a:e}");
    }

    #[test]
    fn double_word_operations_stay_within_their_bounds(a in wide_operand(), b in wide_operand(),
                                                       fa in -1.0f64..1.0, fb in -1.0f64..1.0) {
        let (x, y) = (double_word(a, fa), double_word(b, fb * 2f64.powi(-1)));
        let (ex, ey) = (value(x), value(y));
        // Products: JMP 2017 4u² (Alg. 12) and 2u² (Alg. 9) with FMA; 6u² and 3u² derived for the split, each
        // with room for the bounds' higher-order terms (+1u²).
        let cases: [(DoubleWord, RBig, u32, &str); 4] = [
            (x.mul_with(y, Products::Fused), &ex * &ey, 5, "fused x·y"),
            (x.mul_with(y, Products::Split), &ex * &ey, 7, "split x·y"),
            (x.mul_f64_with(b, Products::Fused), &ex * rational(b), 3, "fused x·b"),
            (x.mul_f64_with(b, Products::Split), &ex * rational(b), 4, "split x·b"),
        ];
        for (out, exact, k, what) in cases {
            prop_assert!(within(&value(out), &exact, &u_squared_times(k)), "{what}: {x:?}, {y:?} → {out:?}");
        }
        // Quotients: 15u² + 56u³ (JMP 2017 Alg. 17) with FMA, about one u² more for the split.
        let exact = &ex / &ey;
        prop_assert!(within(&value(x.div_with(y, Products::Fused)), &exact, &u_squared_times(16)), "fused x/y: {x:?}, {y:?}");
        prop_assert!(within(&value(x.div_with(y, Products::Split)), &exact, &u_squared_times(17)), "split x/y: {x:?}, {y:?}");
        // Square root: the same residual both ways, so the same doubles; about 2^-104 (common practice), 2^-102
        // checked: s ≈ √x within 2^-102·√x ⟺ s² within about 2^-101·x.
        let root = DoubleWord { hi: x.hi.abs(), lo: if x.hi < 0.0 { -x.lo } else { x.lo } };
        let (fused, split) = (root.sqrt_with(Products::Fused), root.sqrt_with(Products::Split));
        prop_assert!(fused == split, "sqrt {root:?}: {fused:?} vs {split:?}");
        let square = value(fused) * value(fused);
        prop_assert!(within(&square, &value(root), &(RBig::from(1) / RBig::from(UBig::ONE << 101))), "sqrt {root:?}");
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn product_shortcuts_give_the_algorithms_doubles_both_ways(a in wide_operand(), b in wide_operand(),
                                                               f in -1.0f64..1.0, k in -60i32..60) {
        // A left operand with lo = 0, and a power of two: the shortcuts of `mul_with` must return the doubles of
        // the algorithm as written (zeros by value: the sign of a zero lo may differ).
        let y = double_word(b, f);
        for x in [DoubleWord::from_f64(a), DoubleWord::from_f64(2f64.powi(k)), double_word(a, f)] {
            let fused = x.mul_with(y, Products::Fused);
            let (hi, lo) = dw_times_dw3(Products::Fused, x, y);
            prop_assert!(fused.hi == hi && fused.lo == lo, "fused {x:?} * {y:?}: {fused:?} vs ({hi:e}, {lo:e})");
            let split = x.mul_with(y, Products::Split);
            let (hi, lo) = dw_times_dw3(Products::Split, x, y);
            prop_assert!(split.hi == hi && split.lo == lo, "split {x:?} * {y:?}: {split:?} vs ({hi:e}, {lo:e})");
        }
    }
}
