//! The references of decimal literal texts, checked against things outside the crate: the rational value from
//! dashu-ratio's own decimal parser (`RBig::from_str_decimal`), the double from Rust's `str::parse::<f64>` (the
//! correctly rounded conversion IEEE 754-2019 §5.12.2 asks for), and the bounds evaluated in exact rational
//! arithmetic. Tricky texts first, then a property over random literal texts.

use dashu_ratio::RBig;
use proptest::prelude::*;
use twinstep_exact::{decimal_value, next_down, next_up, Reference};

/// The exact rational of a double (dashu-ratio's lossless conversion); only finite doubles have one.
fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("a finite double")
}

/// Checks every claim of `reference` about the real number `x`: `hi` is the double nearest `x` (`nearest`, from
/// an outside parser), `|x − (hi + lo)| ≤ err` and `down ≤ x ≤ up` exactly, `down` and `up` at most one double
/// apart with `hi` one of them, and `is_exact` true exactly when `x` is the double `hi`.
fn check(reference: &Reference, x: &RBig, nearest: f64, text: &str) {
    assert_eq!(reference.hi.to_bits(), nearest.to_bits(), "{text}: hi {:e}, nearest {nearest:e}", reference.hi);
    let exact = nearest.is_finite() && rational(nearest) == *x;
    assert_eq!(reference.is_exact(), exact, "{text}: {reference:?}");
    if !reference.hi.is_finite() {
        // An overflow: the reference is the overflowed double, and [down, up] still holds x.
        assert!(rational(reference.down) <= *x || reference.down == f64::NEG_INFINITY, "{text}: {reference:?}");
        assert!(reference.up == f64::INFINITY || *x <= rational(reference.up), "{text}: {reference:?}");
        return;
    }
    let remainder = x - rational(reference.hi) - rational(reference.lo);
    let err = rational(reference.err);
    assert!(-&err <= remainder && remainder <= err, "{text}: |x − (hi + lo)| > err in {reference:?}");
    assert!(rational(reference.down) <= *x && *x <= rational(reference.up), "{text}: x outside [down, up]");
    let adjacent = reference.down == reference.up || next_up(reference.down) == reference.up;
    assert!(adjacent && (reference.hi == reference.down || reference.hi == reference.up), "{text}: {reference:?}");
}

#[test]
fn tricky_literal_texts() {
    // (literal text as Rust writes it, the same number in dashu-ratio's decimal syntax)
    let cases = [
        ("0.1", "0.1"),
        ("4503599627370496.5", "4503599627370496.5"), // 2^52 + 1/2: a tie, rounds to the even 2^52 (IEEE 754-2019 §4.3.1)
        ("9007199254740993.0", "9007199254740993"),   // 2^53 + 1: a tie, rounds to 2^53
        ("0.99999999999999999999", "0.99999999999999999999"),
        ("1e-400", "1e-400"), // below half the smallest subnormal: rounds to 0, the reference keeps it
        ("2.5e-324", "2.5e-324"), // just above half of η = 2^-1074 ≈ 4.94e-324: rounds up to η
        ("2.4e-324", "2.4e-324"), // just below half of η: rounds to 0
        ("2.", "2"),
        ("2.e3", "2e3"),
        ("1_000.5", "1000.5"),
        ("0.1f32", "0.1"),
        ("0.1_f64", "0.1"),
        ("1f64", "1"),
        ("1E5", "1e5"),
        ("1.5e+3", "1.5e3"),
        ("12.5e-1", "12.5e-1"),
        ("0.000_001", "0.000001"),
        ("-0.1", "-0.1"),
        ("--0.1", "0.1"), // a constant initialised with the negation of a negated literal
        ("1.7976931348623157e308", "1.7976931348623157e308"), // f64::MAX as Rust prints it
        ("2.2250738585072014e-308", "2.2250738585072014e-308"), // the smallest normal double
        ("0.0", "0"),
        ("0e0", "0"),
        ("0.5", "0.5"),
        ("0.015625", "0.015625"),
        ("123456789012345678901234567890", "123456789012345678901234567890"),
    ];
    for (text, decimal) in cases {
        let x = RBig::from_str_decimal(decimal).expect("dashu-ratio reads the decimal");
        assert_eq!(decimal_value(text).as_ref(), Ok(&x), "{text}");
        let nearest: f64 = decimal.parse().expect("std reads the decimal");
        check(&Reference::of_decimal(text).expect("a literal text"), &x, nearest, text);
    }
    // The exactness decision on the texts kernels write (these decimals are dyadic rationals in range) and on
    // those that only look short.
    for text in ["2.0", "4.", "100.0", "1e2", "0.0", "1", "0.5", "0.25", "1.5", "2.5e-1", "0.015625", "333.75"] {
        assert!(Reference::of_decimal(text).unwrap().is_exact(), "{text}");
    }
    for text in ["0.1", "1e-400", "4503599627370496.5", "0.50000000000000001", "1e400", "0.2"] {
        assert!(!Reference::of_decimal(text).unwrap().is_exact(), "{text}");
    }
}

#[test]
fn out_of_range_literals() {
    // 1e400 and a billion-digit exponent overflow (round to +∞, IEEE 754-2019 §7.4); the reference keeps x ≥ MAX.
    for text in ["1e400", "1e999999999", "1e99999999999999999999999"] {
        let reference = Reference::of_decimal(text).unwrap();
        assert_eq!((reference.hi, reference.down, reference.up), (f64::INFINITY, f64::MAX, f64::INFINITY), "{text}");
        let negative = Reference::of_decimal(&format!("-{text}")).unwrap();
        assert_eq!((negative.hi, negative.down, negative.up), (f64::NEG_INFINITY, f64::NEG_INFINITY, f64::MIN));
    }
    // Underflow to zero keeps the side the number lies on, and an error bound covering it.
    for text in ["1e-999999999", "1e-400", "-1e-400"] {
        let reference = Reference::of_decimal(text).unwrap();
        assert_eq!(reference.hi, 0.0, "{text}");
        let x = if text.starts_with('-') { -RBig::from_str_decimal("1e-400").unwrap() } else { RBig::ZERO };
        assert!(rational(reference.down) <= x && x <= rational(reference.up), "{text}");
        assert!(reference.err >= f64::from_bits(1) && !reference.is_exact(), "{text}");
    }
}

#[test]
fn texts_that_are_not_literals_are_errors() {
    for text in ["", "-", ".5", "1..2", "1e", "1e+", "0x1p3", "abc", "1.2.3", "1f16", "e5", "_1.0"] {
        assert!(decimal_value(text).is_err(), "{text}");
        assert!(Reference::of_decimal(text).is_err(), "{text}");
    }
}

#[test]
fn next_up_and_down_step_one_double() {
    // IEEE 754-2019 §5.3.1: nextUp(0) is the smallest subnormal, nextUp(MAX) = +∞, nextUp(−η) = −0, NaN stays.
    assert_eq!(next_up(0.0), f64::from_bits(1));
    assert_eq!(next_up(-0.0), f64::from_bits(1));
    assert_eq!(next_up(f64::MAX), f64::INFINITY);
    assert_eq!(next_up(f64::INFINITY), f64::INFINITY);
    assert_eq!(next_up(f64::NEG_INFINITY), f64::MIN);
    // nextUp of the negative smallest subnormal is −0, which compares equal to 0 (IEEE 754-2019 §5.11).
    assert_eq!(next_up(-f64::from_bits(1)), 0.0);
    assert!(next_up(f64::NAN).is_nan());
    // One ulp of 1 is 2^-52 above and 2^-53 below (binary64 has a 53-bit significand, IEEE 754-2019 §3.6).
    assert_eq!(next_up(1.0), 1.0 + f64::EPSILON);
    assert_eq!(next_down(1.0), 1.0 - f64::EPSILON / 2.0);
    assert_eq!(next_down(0.0), -f64::from_bits(1));
}

/// A literal text as Rust writes it and the same number in dashu-ratio's decimal syntax.
fn literal_texts() -> impl Strategy<Value = (String, String)> {
    let whole = "[0-9]{1,22}";
    let fraction = prop_oneof![Just(None), "[0-9]{0,22}".prop_map(Some)];
    let exponent = prop_oneof![Just(None), (-340i32..340).prop_map(Some)];
    let style = (any::<bool>(), 0usize..3);
    (whole, fraction, exponent, style).prop_map(|(whole, fraction, exponent, (underscore, suffix))| {
        let mut decimal = whole.clone();
        let mut text = if underscore && whole.len() > 1 { format!("{}_{}", &whole[..1], &whole[1..]) } else { whole };
        if let Some(fraction) = fraction {
            text.push('.');
            text.push_str(&fraction);
            if !fraction.is_empty() {
                decimal.push('.');
                decimal.push_str(&fraction);
            }
        }
        if let Some(e) = exponent {
            text.push_str(&format!("e{e}"));
            decimal.push_str(&format!("e{e}"));
        }
        text.push_str(["", "f64", "_f32"][suffix]);
        (text, decimal)
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2_000))]

    #[test]
    fn random_literal_texts((text, decimal) in literal_texts()) {
        let x = RBig::from_str_decimal(&decimal).expect("dashu-ratio reads the decimal");
        prop_assert_eq!(decimal_value(&text), Ok(x.clone()));
        let nearest: f64 = decimal.parse().expect("std reads the decimal");
        check(&Reference::of_decimal(&text).expect("a literal text"), &x, nearest, &text);
    }

    #[test]
    fn random_dyadic_rationals_are_exact(mantissa in -(1i64 << 53)..(1i64 << 53), shift in -60i32..60) {
        // m·2^k with |m| < 2^53 and a small k is a double (IEEE 754-2019 §3.3), so its reference is that double.
        let x = mantissa as f64 * 2f64.powi(shift);
        let reference = Reference::of_rational(&rational(x));
        prop_assert!(reference.is_exact());
        prop_assert_eq!(reference, Reference::exact(x));
        // Its shortest decimal (Rust's `{:?}` round-trips) spells the same double, exactly.
        let printed = format!("{x:?}");
        let decimal = RBig::from_str_decimal(&printed).expect("dashu-ratio reads the decimal");
        prop_assert_eq!(decimal == rational(x), Reference::of_decimal(&printed).unwrap().is_exact());
    }
}
