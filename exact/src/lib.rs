//! Exact references of the numbers a kernel writes down, shared by the rewrite engine and the runtime.
//!
//! A [`Reference`] describes a real number `x` to about 106 bits: its double-word value `hi + lo` with a bound
//! on `|x − (hi + lo)|`, and the two doubles `down ≤ x ≤ up` around it. Each lens builds its reference side from
//! it (a radius, an enclosure, a double-word).
//!
//! The rewrite engine (`twinstep-engine`) computes the reference of every float literal of a kernel here, at
//! expansion time, and prints it into the twin as a constant: a decimal literal in a stencil loop then costs a
//! lens no parsing and no lookup at run time (a per-thread cache of parsed literals used to cost the Bound lens
//! 2.5× and the Shadow lens 2.6× on a 1-D heat loop, because its miss path kept the loop from vectorizing). The
//! runtime (`twinstep`) uses the same code for integers converted with `as` beyond 2^53, so the maths of rounding
//! an exact rational twice lives in one place.
//!
//! Pure Rust: exact rationals from `dashu-ratio`, no C library.

use core::cmp::Ordering;
use dashu_base::Sign;
use dashu_int::{IBig, UBig};
use dashu_ratio::RBig;

/// A real number `x` known to about 106 bits.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Reference {
    /// The nearest double to `x`.
    pub hi: f64,
    /// The nearest double to `x − hi`.
    pub lo: f64,
    /// An upper bound of `|x − (hi + lo)|` (0 when `hi + lo` is exactly `x`).
    pub err: f64,
    /// A double `≤ x`.
    pub down: f64,
    /// A double `≥ x`.
    pub up: f64,
}

impl Reference {
    /// Zero, exactly.
    pub const ZERO: Reference = Reference::exact(0.0);

    /// A double, exactly.
    #[must_use]
    pub const fn exact(x: f64) -> Reference {
        Reference { hi: x, lo: 0.0, err: 0.0, down: x, up: x }
    }

    /// Whether the reference is one double exactly (`hi`, with nothing left over).
    #[must_use]
    pub fn is_exact(&self) -> bool {
        self.hi.is_finite() && self.lo == 0.0 && self.err == 0.0 && self.down == self.hi && self.up == self.hi
    }

    /// The reference of `x = hi + remainder`, from the double nearest the remainder (`lo`), a bound `err` of
    /// `|remainder − lo|` and the remainder's sign, which decides the doubles `down ≤ x ≤ up`.
    #[must_use]
    pub fn from_parts(hi: f64, lo: f64, err: f64, remainder: Ordering) -> Reference {
        // hi is the nearest double to x, so x lies between hi and its neighbour on the remainder's side.
        let (down, up) = match remainder {
            Ordering::Equal => (hi, hi),
            Ordering::Greater => (hi, next_up(hi)),
            Ordering::Less => (next_down(hi), hi),
        };
        Reference { hi, lo, err, down, up }
    }

    /// The reference of an exact rational number: round to nearest, round the remainder to nearest.
    #[must_use]
    pub fn of_rational(q: &RBig) -> Reference {
        let hi = q.to_f64().value();
        let Ok(hi_exact) = RBig::try_from(hi) else {
            // Beyond the double range: the reference is the overflowed double, as `as` and the parser give.
            let down = if hi > 0.0 { f64::MAX } else { hi };
            let up = if hi < 0.0 { f64::MIN } else { hi };
            return Reference { hi, lo: 0.0, err: 0.0, down, up };
        };
        let remainder = q - hi_exact;
        let lo = remainder.to_f64().value();
        let exact_pair = RBig::try_from(lo).is_ok_and(|lo_exact| lo_exact == remainder);
        // |remainder − lo| ≤ u·|lo| + η/2 for a round-to-nearest `lo` (IEEE 754-2019 §4.3.1); 2^-52 doubles u.
        let err = if exact_pair { 0.0 } else { lo.abs() * f64::EPSILON + f64::from_bits(1) };
        let side = match remainder.sign() {
            _ if remainder == RBig::ZERO => Ordering::Equal,
            Sign::Positive => Ordering::Greater,
            Sign::Negative => Ordering::Less,
        };
        Reference::from_parts(hi, lo, err, side)
    }
}

/// Why a text is not a decimal float literal.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct DecimalError {
    /// The text that was given.
    pub text: String,
}

impl core::fmt::Display for DecimalError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "`{}` is not a decimal float literal", self.text)
    }
}

impl std::error::Error for DecimalError {}

/// Decimal exponents beyond which a literal is certainly outside the double range: `|x| ≥ 10^(digits − 1 + e)`
/// overflows past 10^309 > `f64::MAX` ≈ 1.8·10^308, and `|x| < 10^(digits + e)` underflows below 10^-330, under
/// half the smallest subnormal 2^-1074 ≈ 4.9·10^-324 (IEEE 754-2019 §3.3). [`Reference::of_decimal`] clamps the
/// exponent of such a literal to these bounds, which keeps every double of its reference (it is still an
/// overflow, still an underflow on the same side of zero) and keeps `1e999999999` from building a billion-digit
/// integer.
const OVERFLOW_EXPONENT: i64 = 309;
const UNDERFLOW_EXPONENT: i64 = -330;

/// The largest decimal exponent [`decimal_value`] builds exactly (10^100000 is a 41-kilobyte integer).
const EXACT_EXPONENT: i64 = 100_000;

impl Reference {
    /// The reference of the number a float literal's text spells (the syntax of [`decimal_value`]).
    ///
    /// # Errors
    /// When the text is not a decimal float literal.
    pub fn of_decimal(text: &str) -> Result<Reference, DecimalError> {
        let literal = Literal::parse(text)?;
        let significant = literal.significant_digits();
        let scale = literal.scale.clamp(UNDERFLOW_EXPONENT - significant, OVERFLOW_EXPONENT - (significant - 1));
        Ok(Reference::of_rational(&literal.value(scale)))
    }
}

/// The exact rational number a float literal's text spells, as Rust writes them: an optional run of leading
/// `-` (a negated constant's initializer), digits, an optional point with optional digits after it (`2.` is
/// two), an optional exponent (`e`/`E`, optional sign, digits), underscores anywhere after the first digit
/// (`1_000.5`), and an optional `f32`/`f64` suffix (`0.1f32`, `0.1_f64`).
///
/// # Errors
/// When the text is anything else (no digits, two points, letters, a hexadecimal prefix), or when its decimal
/// exponent is beyond ±100000 (use [`Reference::of_decimal`] for those: it needs no exact value).
pub fn decimal_value(text: &str) -> Result<RBig, DecimalError> {
    let literal = Literal::parse(text)?;
    if literal.scale.unsigned_abs() > EXACT_EXPONENT.unsigned_abs() {
        return Err(DecimalError { text: text.to_string() });
    }
    Ok(literal.value(literal.scale))
}

/// A float literal's text read as `±D·10^scale`.
struct Literal {
    negative: bool,
    /// The digits before and after the point, as one integer.
    significand: UBig,
    /// How many decimal digits the significand has without its leading zeros.
    digits: usize,
    scale: i64,
}

impl Literal {
    fn parse(text: &str) -> Result<Literal, DecimalError> {
        let error = || DecimalError { text: text.to_string() };
        let unsigned = text.trim_start_matches('-');
        let negative = (text.len() - unsigned.len()) % 2 == 1;
        if !unsigned.starts_with(|c: char| c.is_ascii_digit()) {
            return Err(error());
        }
        let body = unsigned.strip_suffix("f64").or_else(|| unsigned.strip_suffix("f32")).unwrap_or(unsigned);
        let body: String = body.chars().filter(|&c| c != '_').collect();
        let (mantissa, exponent) = match body.find(['e', 'E']) {
            Some(at) => (&body[..at], Some(&body[at + 1..])),
            None => (&body[..], None),
        };
        let (whole, fraction) = mantissa.split_once('.').unwrap_or((mantissa, ""));
        let all_digits = |s: &str| s.bytes().all(|b| b.is_ascii_digit());
        if !all_digits(whole) || !all_digits(fraction) {
            return Err(error());
        }
        let exponent: i64 = match exponent {
            None => 0,
            Some(e) => {
                let digits = e.strip_prefix(['+', '-']).unwrap_or(e);
                if digits.is_empty() || !all_digits(digits) {
                    return Err(error());
                }
                // An exponent too long for i64 is certainly out of range: saturate.
                let magnitude = digits.parse::<i64>().unwrap_or(i64::MAX);
                if e.starts_with('-') {
                    -magnitude
                } else {
                    magnitude
                }
            }
        };
        let digits = format!("{whole}{fraction}");
        let significand = UBig::from_str_radix(&digits, 10).map_err(|_| error())?;
        // x = D·10^(e − f) with D the digits and f the count of digits after the point.
        let scale = exponent.saturating_sub(fraction.len() as i64);
        Ok(Literal { negative, significand, digits: digits.trim_start_matches('0').len(), scale })
    }

    fn significant_digits(&self) -> i64 {
        self.digits as i64
    }

    /// `±D·10^scale`, exactly.
    fn value(&self, scale: i64) -> RBig {
        let power = UBig::from(10u8).pow(scale.unsigned_abs() as usize);
        let numerator = IBig::from(self.significand.clone());
        let numerator = if self.negative { -numerator } else { numerator };
        if scale >= 0 {
            RBig::from(numerator * IBig::from(power))
        } else {
            RBig::from_parts(numerator, power)
        }
    }
}

/// The next double above `x` (IEEE 754-2019 nextUp), written out because `f64::next_up` is newer than the MSRV.
#[inline]
#[must_use]
pub const fn next_up(x: f64) -> f64 {
    if x.is_nan() || x == f64::INFINITY {
        return x;
    }
    if x == 0.0 {
        return f64::from_bits(1); // the smallest subnormal, η = 2^-1074
    }
    let bits = x.to_bits();
    // Same-signed doubles are ordered as their encodings (IEEE 754-2019 §3.4): one step away from zero adds one.
    f64::from_bits(if x > 0.0 { bits + 1 } else { bits - 1 })
}

/// The next double below `x` (IEEE 754-2019 nextDown).
#[inline]
#[must_use]
pub const fn next_down(x: f64) -> f64 {
    -next_up(-x)
}
