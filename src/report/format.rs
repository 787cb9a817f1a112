//! Numbers in reports, formatted in one place so that every format and every sentence writes them alike.
//!
//! Rules (stated in `docs/cli.md`, "How numbers are written"):
//! - a magnitude (error, bound, |u|) in exponent form with three significant digits, `2.30e-10`;
//! - a ratio (`err / allowed`, bound over estimate) in fixed point with three decimals between 10⁻³ and 10³, where
//!   a reader compares it with 1, and in exponent form with two significant digits outside, so that a ratio of 10⁸⁹
//!   reads `6.0e89`, never as a 90-digit number;
//! - a number a trace writes as `null` reads back as NaN ([`crate::trace`]): it is never printed as `NaN`, but as
//!   `overflowed` for a bound or a ratio (the only way a measured bound or ratio stops being finite is to grow past
//!   the largest double, or to divide by a zero allowance) and as `lost` for an error estimate (NaN or overflow:
//!   the estimate no longer says anything);
//! - a value a lens does not have (no bound for an estimating lens) is `—`.

/// What a report writes for a value a lens does not have.
pub const ABSENT: &str = "—";
/// What a report writes for a bound or ratio that is not a finite number.
pub const OVERFLOWED: &str = "overflowed";
/// What a report writes for an error estimate that is not a finite number.
pub const LOST: &str = "lost";

/// A finite magnitude: three significant digits in exponent form (`2.30e-10`); zero as `0`.
fn exponent(x: f64) -> String {
    if x == 0.0 {
        "0".to_owned()
    } else {
        format!("{x:.2e}")
    }
}

/// An error estimate: exponent form, `lost` when not finite.
#[must_use]
pub fn error(x: f64) -> String {
    if x.is_finite() {
        exponent(x)
    } else {
        LOST.to_owned()
    }
}

/// An error estimate a lens may not have: `—` when absent.
#[must_use]
pub fn error_opt(x: Option<f64>) -> String {
    x.map_or_else(|| ABSENT.to_owned(), error)
}

/// A guaranteed bound: exponent form, `overflowed` when not finite, `—` for a lens without one.
#[must_use]
pub fn bound(x: Option<f64>) -> String {
    match x {
        None => ABSENT.to_owned(),
        Some(b) if b.is_finite() => exponent(b),
        Some(_) => OVERFLOWED.to_owned(),
    }
}

/// A ratio: fixed point near 1 (`0.958`, `614.923`), two significant digits in exponent form far from it
/// (`6.0e89`, `2.3e-5`), `0` for zero, `overflowed` when not finite.
#[must_use]
pub fn ratio(x: f64) -> String {
    if !x.is_finite() {
        OVERFLOWED.to_owned()
    } else if x == 0.0 {
        "0".to_owned()
    } else if (1e-3..1e3).contains(&x.abs()) {
        format!("{x:.3}")
    } else {
        format!("{x:.1e}")
    }
}

/// A ratio a lens may not have: `—` when absent.
#[must_use]
pub fn ratio_opt(x: Option<f64>) -> String {
    x.map_or_else(|| ABSENT.to_owned(), ratio)
}

/// How many times larger one magnitude is than another, for a sentence: `614.9 times`, `6.0e89 times`, and below 1
/// as a ratio (`0.010 times`), where one decimal would round it to nothing.
#[must_use]
pub fn times(x: f64) -> String {
    if x.is_finite() && (1.0..1e3).contains(&x.abs()) {
        format!("{x:.1} times")
    } else {
        format!("{} times", ratio(x))
    }
}

/// Correct bits with one decimal, `—` when not known.
#[must_use]
pub fn bits(x: f64) -> String {
    if x.is_finite() {
        // `+ 0.0` turns −0 (a clamp of −0.0 bits) into +0, so the report never reads "-0.0 correct bits".
        format!("{:.1}", x + 0.0)
    } else {
        ABSENT.to_owned()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn huge_and_non_finite_values_never_print_as_digits_or_nan() {
        // The largest double is (2 − 2^-52)·2^1023 ≈ 1.80e308 (IEEE 754-2019 Table 3.5, binary64).
        assert_eq!(error(f64::MAX), "1.80e308");
        assert_eq!(ratio(6.0e89), "6.0e89");
        assert_eq!(times(6.0e89), "6.0e89 times");
        assert_eq!(times(614.92), "614.9 times");
        assert_eq!(times(0.0104), "0.010 times");
        assert_eq!(ratio(0.958), "0.958");
        assert_eq!(ratio(2.3e-5), "2.3e-5");
        assert_eq!(ratio(0.0), "0");
        for x in [f64::NAN, f64::INFINITY, -f64::NAN] {
            assert_eq!(error(x), LOST);
            assert_eq!(bound(Some(x)), OVERFLOWED);
            assert_eq!(ratio(x), OVERFLOWED);
            assert!(!times(x).contains("NaN") && !times(x).contains("inf"));
        }
        assert_eq!(bound(None), ABSENT);
    }
}
