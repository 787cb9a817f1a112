//! The shadow's fast paths against outside oracles: the double-word product with an operand that is a double
//! (`lo = 0`) or a power of two, the subtraction by TwoSum of the negation, and the readers that zero `lo` beside
//! a non-finite `hi` (the operations no longer mask it).
//!
//! Oracles: exact rationals (dashu-ratio) for every value; the published algorithms transcribed here from
//! Joldes, Muller, Popescu, "Tight and rigorous error bounds for basic building blocks of double-word
//! arithmetic", ACM TOMS 44(2), 2017 (Algorithm 12, DWTimesDW3; from memory) and Knuth's TwoSum (TAOCP vol. 2,
//! §4.2.2), for the claim that the fast paths return the algorithm's own doubles; IEEE 754-2019 for the
//! non-finite cases.

mod double_word_support;

use dashu_ratio::RBig;
use double_word_support::{double_word, dw_times_dw3, rational, value};
use proptest::prelude::*;
use twinstep::lens::eft::{two_diff, two_sum, DoubleWord, Products};
use twinstep::lens::{Lens, Shadow, ShadowUnwatched};
use twinstep::Real;

/// Random doubles with random magnitudes between 2^-40 and 2^40, either sign.
fn operand() -> impl Strategy<Value = f64> {
    (-1.0f64..1.0, -40i32..40).prop_map(|(m, e)| m * 2f64.powi(e)).prop_filter("non-zero", |x| *x != 0.0)
}

/// A power of two ±2^k.
fn power_of_two() -> impl Strategy<Value = f64> {
    (-60i32..60, any::<bool>()).prop_map(|(k, negative)| if negative { -(2f64.powi(k)) } else { 2f64.powi(k) })
}

/// The relative error |computed − exact| / |exact| as a rational, compared with 2^-k.
fn within(computed: &RBig, exact: &RBig, k: usize) -> bool {
    if *exact == RBig::ZERO {
        return *computed == RBig::ZERO;
    }
    let relative = (computed - exact) / exact;
    let relative = if relative < RBig::ZERO { -relative } else { relative };
    relative <= RBig::from(1) / RBig::from(dashu_int::UBig::ONE << k)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn product_with_a_double_operand_is_the_algorithms(a in operand(), b in operand(), f in -1.0f64..1.0) {
        // Either operand a double (lo = 0), the other a double-word number: the select that drops the vanishing
        // terms of a left double, and the general path for a right one, must give Algorithm 12's doubles (zeros
        // compared by value: the sign of a zero lo may differ).
        let (x, y) = (DoubleWord::from_f64(a), double_word(b, f));
        // With the fused products the algorithm is stated with (the split ones: tests/lens_eft_paths.rs).
        for (left, right) in [(x, y), (y, x), (x, DoubleWord::from_f64(b))] {
            let fast = left.mul_with(right, Products::Fused);
            let (hi, lo) = dw_times_dw3(Products::Fused, left, right);
            prop_assert!(fast.hi == hi && fast.lo == lo, "{left:?} * {right:?}: {fast:?} vs ({hi:e}, {lo:e})");
            // And the result is within JMP's bound for Algorithm 12, 4u² = 2^-104 (from memory), of the exact
            // product; 2^-103 leaves room for the bound's higher-order terms.
            prop_assert!(within(&value(fast), &(value(left) * value(right)), 103), "{left:?} * {right:?}");
        }
    }

    #[test]
    fn power_of_two_times_a_double_word_is_exact(k in power_of_two(), b in operand(), f in -1.0f64..1.0) {
        // 2^k · (yh + yl) = 2^k·yh + 2^k·yl, both products exact in the normal range (IEEE 754-2019 §4.3: a
        // product that fits the format is delivered exactly); the fast path returns that pair, and so does
        // Algorithm 12.
        let (x, y) = (DoubleWord::from_f64(k), double_word(b, f));
        let fast = x.mul_with(y, Products::Fused);
        prop_assert_eq!(value(fast), value(x) * value(y));
        let (hi, lo) = dw_times_dw3(Products::Fused, x, y);
        prop_assert!(fast.hi == hi && fast.lo == lo, "{fast:?} vs ({hi:e}, {lo:e})");
    }

    #[test]
    fn two_diff_is_exact_and_equals_two_sum_of_the_negation(a in operand(), b in operand(), shift in 0i32..60) {
        // Operands near each other (cancellation) and far apart.
        for (a, b) in [(a, b), (a, a * (1.0 + 2f64.powi(-shift))), (a, b * 2f64.powi(-shift))] {
            let (s, e) = two_diff(a, b);
            prop_assert_eq!(rational(s) + rational(e), rational(a) - rational(b)); // s + e = a − b exactly
            prop_assert_eq!(s, a - b); // s = RN(a − b)
            let (s2, e2) = two_sum(a, -b);
            prop_assert!(s.to_bits() == s2.to_bits() && e == e2, "two_sum(a, -b) = ({s2:e}, {e2:e})");
        }
    }

    #[test]
    fn shadow_with_literal_operands_agrees_to_100_bits(a in operand(), b in operand(), f in -1.0f64..1.0,
                                                      k in power_of_two()) {
        // Through the lens as a twin computes: a literal power of two or an f64 parameter (exact, lo = 0) on either
        // side of a product with a shadow carrying a lo, then a difference. Exact results by dashu-ratio. JMP 2017
        // bound each step by a few u² relative to its own result (from memory), so the composite's error is at
        // most 2^-100 times the sum of the magnitudes of the two products (the difference may cancel).
        let yl = double_word(b, f).lo;
        let y = ShadowUnwatched::new(b, b, yl);
        let exact_y = rational(b) + rational(yl);
        let (scale, r) = (ShadowUnwatched::from_f64(k), ShadowUnwatched::from_f64(a));
        let magnitude = |p: &RBig| if *p < RBig::ZERO { -p.clone() } else { p.clone() };
        let (ry, ky) = (rational(a) * &exact_y, rational(k) * &exact_y);
        for (out, exact, size) in [
            (scale * y, ky.clone(), magnitude(&ky)),
            (r * y - y, &ry - &exact_y, magnitude(&ry) + magnitude(&exact_y)),
            (y * r - scale * y, &ry - &ky, magnitude(&ry) + magnitude(&ky)),
        ] {
            let (hi, lo) = out.shadow();
            let error = magnitude(&(rational(hi) + rational(lo) - &exact));
            let allowed = size / RBig::from(dashu_int::UBig::ONE << 100);
            prop_assert!(error <= allowed, "{out} vs {}", exact.to_f64().value());
        }
    }
}

#[test]
fn readers_zero_lo_beside_a_non_finite_hi() {
    // Whatever the correction terms left in lo beside hi = +∞, the value reads as +∞ (IEEE 754-2019 §6.1:
    // infinity arithmetic is exact), its lo as 0, and the error of a finite primal against it as −∞.
    for lo in [f64::NAN, f64::NEG_INFINITY, f64::INFINITY, 1.0, 0.0] {
        let s = Shadow::new(1.0, f64::INFINITY, lo);
        assert_eq!(s.shadow(), (f64::INFINITY, 0.0), "lo = {lo}");
        assert_eq!(s.reference_value(), f64::INFINITY, "lo = {lo}");
        assert_eq!(s.signed_error(), f64::NEG_INFINITY, "lo = {lo}");
        assert!(s.error_estimate().is_infinite());
        assert_eq!(DoubleWord { hi: f64::INFINITY, lo }.to_f64(), f64::INFINITY);
        // Two equal infinities compare equal whatever their lo.
        let ordering = DoubleWord { hi: f64::INFINITY, lo }.partial_cmp(DoubleWord::from_f64(f64::INFINITY));
        assert_eq!(ordering, Some(core::cmp::Ordering::Equal), "lo = {lo}");
    }
}

#[test]
fn operations_on_a_non_finite_hi_ignore_its_lo() {
    // The operations leave lo unmasked because nothing downstream depends on it: the result of an operation on a
    // pair with hi = ±∞ reads the same whatever that pair's lo (IEEE 754-2019 §7.2: ∞ − ∞ and 0·∞ are NaN).
    let y = DoubleWord { hi: 3.0, lo: 1e-17 };
    let read = |d: DoubleWord| {
        let c = d.canonical();
        (c.hi.to_bits(), c.lo.to_bits(), c.hi.is_nan())
    };
    let same = |a: DoubleWord, b: DoubleWord| {
        let (ra, rb) = (read(a), read(b));
        (ra.2 && rb.2) || ra == rb
    };
    for hi in [f64::INFINITY, f64::NEG_INFINITY] {
        let clean = DoubleWord { hi, lo: 0.0 };
        for lo in [f64::NAN, f64::NEG_INFINITY, f64::INFINITY, 1.0] {
            let dirty = DoubleWord { hi, lo };
            for (a, b, what) in [
                (dirty + y, clean + y, "x + y"),
                (y - dirty, y - clean, "y - x"),
                (dirty * y, clean * y, "x * y"),
                (y * dirty, y * clean, "y * x"),
                (dirty / y, clean / y, "x / y"),
                (y / dirty, y / clean, "y / x"),
                (dirty.mul_f64(2.0), clean.mul_f64(2.0), "x * 2"),
                (dirty.sqrt(), clean.sqrt(), "sqrt"),
            ] {
                assert!(same(a, b), "{what} with lo = {lo}: {a:?} vs {b:?}");
            }
        }
    }
}

#[test]
fn an_overflowing_shadow_reads_infinite_or_nan_never_a_finite_value() {
    // 2 · f64::MAX overflows (IEEE 754-2019 §7.4): the primal is +∞, and the shadow's exact scaling by the power
    // of two gives +∞ with lo = 0 — not a finite number beside an infinite primal.
    let huge = ShadowUnwatched::from_f64(2.0) * ShadowUnwatched::from_f64(f64::MAX);
    assert_eq!(huge.primal(), f64::INFINITY);
    assert_eq!(huge.shadow(), (f64::INFINITY, 0.0));
    // 3 · f64::MAX by the general algorithm: the error term of ∞ is NaN, so the shadow is NaN, never finite.
    let huge = ShadowUnwatched::from_f64(3.0) * ShadowUnwatched::from_f64(f64::MAX);
    assert!(!huge.reference_value().is_finite());
}
