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

/// Significant digits of a guaranteed interval's ends: enough to show how tight a certified interval is (its ends
/// agree to 10 digits and more on the monotone schemes), few enough to read.
const INTERVAL_DIGITS: usize = 7;

/// One end of a guaranteed interval in exponent form with [`INTERVAL_DIGITS`] digits, rounded *outward* (`up` for
/// the upper end): the printed interval must still contain the true error.
fn interval_end(x: f64, up: bool) -> String {
    if x == 0.0 {
        return "0".to_owned();
    }
    let decimals = INTERVAL_DIGITS - 1;
    let text = format!("{x:.decimals$e}");
    let printed: f64 = text.parse().unwrap_or(x);
    // Strictly: a decimal that reads back as `x` itself may lie on either side of it.
    let outward = if up { printed > x } else { printed < x };
    if outward {
        return text;
    }
    // The nearest decimal fell inside: move it one unit in its last digit outward.
    let (mantissa, exponent) = text.split_once('e').unwrap_or((&text, "0"));
    let mut digits: i64 = mantissa.replace('.', "").parse().unwrap_or(0);
    let mut exponent: i32 = exponent.parse().unwrap_or(0);
    let scale = 10i64.pow(decimals as u32);
    digits += if up { 1 } else { -1 };
    if digits >= 10 * scale {
        (digits, exponent) = (scale, exponent + 1);
    } else if digits < scale {
        (digits, exponent) = (10 * scale - 1, exponent - 1);
    }
    format!("{}.{:0decimals$}e{exponent}", digits / scale, digits % scale)
}

/// A guaranteed interval of an error, `[2.301234e-10, 2.301235e-10]`, rounded outward; an upper end that is not
/// finite (a lost bound) reads `no bound`.
#[must_use]
pub fn interval(lower: f64, upper: Option<f64>) -> String {
    match upper {
        Some(upper) if upper.is_finite() && lower.is_finite() => {
            format!("[{}, {}]", interval_end(lower.max(0.0), false), interval_end(upper, true))
        }
        _ => "no bound".to_owned(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interval_ends_round_outward() {
        // Rust's `{:e}` prints the nearest decimal and `parse` reads the nearest double (std's documentation, from
        // memory): the printed ends, read back, must enclose the interval.
        for (lower, upper) in [(1.0 / 3.0, 2.0 / 3.0), (9.999_999_96e-10, 1.000_000_04e-9), (2.5e-30, 7.1e-14)] {
            let text = interval(lower, Some(upper));
            let (l, u) = text.trim_matches(['[', ']']).split_once(", ").expect("two ends");
            let (l, u): (f64, f64) = (l.parse().unwrap(), u.parse().unwrap());
            assert!(l <= lower && u >= upper, "{text} for [{lower:e}, {upper:e}]");
        }
        // 1/3 = 0.333333333…: down to 3.333333e-1, up to 3.333334e-1 (the decimal expansion).
        assert_eq!(interval(1.0 / 3.0, Some(1.0 / 3.0)), "[3.333333e-1, 3.333334e-1]");
        // Carry across a power of ten: 9.99999996e-10 rounds up to 1.000000e-9, which the upper end may keep, while
        // the lower end rounds down to 9.999999e-10.
        assert_eq!(interval(9.999_999_96e-10, Some(9.999_999_96e-10)), "[9.999999e-10, 1.000000e-9]");
        assert_eq!(interval(0.0, None), "no bound");
        assert_eq!(interval(0.0, Some(f64::INFINITY)), "no bound");
    }

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
