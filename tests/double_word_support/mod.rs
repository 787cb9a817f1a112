//! Helpers shared by the double-word tests: doubles and double-word numbers as exact rationals (dashu-ratio),
//! normalized double-word operands, and DWTimesDW3 as published, for the claims that the fast paths return the
//! algorithm's own doubles.
#![allow(dead_code)]

use dashu_ratio::RBig;
use twinstep::lens::eft::{DoubleWord, Products};

/// A finite double, exactly (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
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

/// DWTimesDW3 exactly as Joldes, Muller, Popescu, ACM TOMS 44(2), 2017 state it (Algorithm 12, from memory), with
/// no shortcut, its two fused operations fused or each split into a product and a sum, as `products` has them:
/// (ch, cl1) = 2Prod(xh, yh); tl0 = RN(xl·yl); tl1 = RN(xh·yl + tl0); cl2 = RN(xl·yh + tl1); cl3 = RN(cl1 + cl2);
/// (zh, zl) = Fast2Sum(ch, cl3).
pub fn dw_times_dw3(products: Products, x: DoubleWord, y: DoubleWord) -> (f64, f64) {
    let (ch, cl1) = products.two_prod(x.hi, y.hi);
    let tl0 = x.lo * y.lo;
    let tl1 = products.mul_acc(x.hi, y.lo, tl0);
    let cl2 = products.mul_acc(x.lo, y.hi, tl1);
    let cl3 = cl1 + cl2;
    let zh = ch + cl3;
    (zh, cl3 - (zh - ch))
}
