//! Rump's polynomial in its original form (Rump 1988, from memory) at a = 77617, b = 33096:
//! `333.75 b⁶ + a²(11a²b² − b⁶ − 121b⁴ − 2) + 5.5 b⁸ + a/(2b)`. Massive cancellation. Historical results, each from
//! memory: Rump's 1988 runs on IBM S/370 hexadecimal floating point gave 1.172603… in single, double and extended
//! precision alike; on IEEE 754 binary64 the same form was later reported (Loh & Walster, Reliable Computing
//! 2002) to give a wrong answer of large magnitude. The exact value, −0.827396059946821368141… (the digits as
//! recalled), is computed here in exact rationals (dashu-ratio), which is the oracle of every check below: the
//! guaranteed lenses must contain it, and the double-word shadow is fooled.

use dashu_ratio::RBig;
use twinstep::lens::{Bound, Interval, Lens, Shadow};
use twinstep::Real;

/// The polynomial as a kernel writes it, generic over the scalar (the shape a twin has).
fn rump<T: Real>(a: T, b: T) -> T {
    let b2 = b * b;
    let b4 = b2 * b2;
    let b6 = b4 * b2;
    let b8 = b4 * b4;
    let a2 = a * a;
    T::from_f64(333.75) * b6
        + a2 * (T::from_f64(11.0) * a2 * b2 - b6 - T::from_f64(121.0) * b4 - T::from_f64(2.0))
        + T::from_f64(5.5) * b8
        + a / (T::from_f64(2.0) * b)
}

fn exact_value() -> RBig {
    // The same polynomial in exact rational arithmetic (dashu-ratio).
    let a = RBig::from(77617);
    let b = RBig::from(33096);
    let q = |s: &str| RBig::from_str_decimal(s).unwrap();
    let b2 = &b * &b;
    let b4 = &b2 * &b2;
    let b6 = &b4 * &b2;
    let b8 = &b4 * &b4;
    let a2 = &a * &a;
    q("333.75") * &b6
        + &a2 * (q("11") * &a2 * &b2 - &b6 - q("121") * &b4 - q("2"))
        + q("5.5") * &b8
        + &a / (q("2") * &b)
}

fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite")
}

#[test]
fn exact_value_matches_the_published_digits() {
    // The recalled digits −0.827396059946821368141… (from memory) against the exact rational value: 21 digits.
    let published = RBig::from_str_decimal("-0.827396059946821368141").unwrap();
    let difference = (exact_value() - published).to_f64().value().abs();
    assert!(difference < 1e-21, "{difference:e}");
}

#[test]
fn bound_contains_the_exact_value() {
    let out = rump(Bound::from_f64(77617.0), Bound::from_f64(33096.0));
    let exact = exact_value();
    let distance = (rational(out.primal()) - &exact).to_f64().value().abs();
    assert!(distance <= out.radius(), "{out} vs exact {}", exact.to_f64().value());
    // The primal is far off: binary64 gets the sign and the magnitude wrong (as later reported for IEEE 754
    // arithmetic, Loh & Walster 2002, from memory; the exact rational value above is the oracle of this check).
    assert!(distance > 1.0, "{out}");
}

#[test]
fn interval_contains_the_exact_value() {
    let out = rump(Interval::from_f64(77617.0), Interval::from_f64(33096.0));
    let exact = exact_value();
    let enclosure = out.enclosure();
    assert!(rational(enclosure.inf()) <= exact && exact <= rational(enclosure.sup()), "{out}");
}

#[test]
fn shadow_is_fooled() {
    let out = rump(Shadow::from_f64(77617.0), Shadow::from_f64(33096.0));
    let exact = exact_value();
    let (hi, lo) = out.shadow();
    let shadow = rational(hi) + rational(lo);
    let shadow_error = (&shadow - &exact).to_f64().value().abs();
    // About 106 bits cannot absorb the cancellation of terms near 2^122: the shadow is wrong by more than 1,
    // so its error estimate is wrong too — only the guaranteed lenses are trustworthy here.
    assert!(shadow_error > 1.0, "shadow {} vs exact {}", out.reference_value(), exact.to_f64().value());
    // It lands on exact + 2 = a/(2b), the value Rump's 1988 S/370 runs gave, 1.17260394005317863185… (from
    // memory): the polynomial part 333.75b⁶ + a²(11a²b² − b⁶ − 121b⁴ − 2) + 5.5b⁸ is exactly −2 (checked here in
    // exact rationals), a cancellation of terms near 2^122 that 106 bits resolve only to 2^16, and the shadow
    // computes it as 0.
    let (a, b) = (RBig::from(77617), RBig::from(33096));
    let quotient = &a / (RBig::from(2) * &b);
    assert_eq!(exact_value() - &quotient, RBig::from(-2), "the polynomial part is exactly −2");
    let exact_plus_two = quotient.to_f64().value();
    assert!((out.reference_value() - exact_plus_two).abs() < 1e-12, "{out} vs a/(2b) = {exact_plus_two}");
    assert!((exact_plus_two - 1.172_603_940_053_178_6).abs() < 1e-15, "the recalled digits, from memory");
    // The guaranteed enclosure is honest about it: its radius dwarfs both wrong answers (≈ 1.7e22 here), so the
    // wrong shadow lies inside it — a bound lens reports "f64 not enough", it does not pick a value.
    let bound = rump(Bound::from_f64(77617.0), Bound::from_f64(33096.0));
    assert!(bound.radius() > (bound.primal() - out.reference_value()).abs());
}
