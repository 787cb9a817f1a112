//! Helpers shared by the double-word tests: double-word numbers as exact rationals (dashu-ratio), the unit
//! roundoff, and normalized double-word operands.
#![allow(dead_code)]

use dashu_ratio::RBig;
use twinstep::lens::eft::DoubleWord;

/// An f64 as an exact rational (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
pub fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite")
}

/// The exact value `hi + lo` of a double-word number.
pub fn value(x: DoubleWord) -> RBig {
    rational(x.hi) + rational(x.lo)
}

/// `|x|`.
pub fn magnitude(x: &RBig) -> RBig {
    if *x < RBig::ZERO {
        -x.clone()
    } else {
        x.clone()
    }
}

/// u = 2^-53, the unit roundoff of binary64 (IEEE 754-2019 Table 3.5, p = 53), exactly.
pub fn unit_roundoff() -> RBig {
    RBig::from(1) / RBig::from(dashu_int::UBig::ONE << 53)
}

/// The gap from |x| to the next larger double (x finite, non-zero): consecutive encodings of same-signed doubles
/// are consecutive doubles (IEEE 754-2019 §3.4).
pub fn ulp(x: f64) -> f64 {
    f64::from_bits(x.abs().to_bits() + 1) - x.abs()
}

/// A normalized double-word number hi + lo with lo = fraction · ulp(hi)/2, |fraction| ≤ 1.
pub fn double_word(hi: f64, fraction: f64) -> DoubleWord {
    DoubleWord { hi, lo: fraction * ulp(hi) / 2.0 }
}
