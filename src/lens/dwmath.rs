//! Elementary functions in double-word arithmetic for [`super::Shadow`], about 100 correct bits at a few hundred
//! flops per call (the 160-bit dashu-float path costs 40–120 µs per call; it stays as the fallback for the
//! arguments these functions decline, signalled by `None`).
//!
//! The methods are the textbook ones (Muller, *Elementary Functions: Algorithms and Implementation*, from
//! memory): additive range reduction by ln 2 or π/2 with double-word constants, Taylor series evaluated by Horner's
//! scheme in double-word arithmetic, and one Newton step from the `f64` libm value for the inverse functions
//! (a Newton step doubles the number of correct bits: 53 → ~106).

use crate::lens::eft::{two_prod, DoubleWord as Dw};
use crate::lens::reference::constant_reference;
use crate::Constant;
use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use std::sync::OnceLock;

fn dw(x: f64) -> Dw {
    Dw::from_f64(x)
}

/// A constant as a double-word number.
fn constant(c: Constant) -> Dw {
    let r = constant_reference(c);
    Dw { hi: r.hi, lo: r.lo }
}

/// The third word of π/2: the double nearest π/2 − p₁ − p₂ (p₁ + p₂ the double-word constant), from π at 256 bits
/// with dashu-float, once per process.
fn half_pi_third_word() -> f64 {
    static THIRD: OnceLock<f64> = OnceLock::new();
    *THIRD.get_or_init(|| {
        let half_pi = constant(Constant::FRAC_PI_2);
        let words = |x: f64| FBig::<HalfEven>::try_from(x).unwrap_or_default();
        let exact = FBig::<HalfEven>::pi(256) / FBig::<HalfEven>::from(2u8);
        (exact - words(half_pi.hi) - words(half_pi.lo)).to_f64().value()
    })
}

/// x·2^k, exact (both words scale by a power of two) for results in the normal range.
fn scale(x: Dw, k: i32) -> Dw {
    let factor = f64::from_bits(((k + 1023) as u64) << 52); // 2^k for −1022 ≤ k ≤ 1023
    Dw { hi: x.hi * factor, lo: x.lo * factor }
}

/// e^r − 1 for |r| ≤ 0.35, accurate relative to the result: r/2^10, the Taylor series
/// (e^s − 1)/s = 1 + s/2 (1 + s/3 (1 + … (1 + s/12))), truncation below s^12/13! < 2^-160 for |s| ≤ 3.5·10^-4,
/// then ten doublings e^{2a} − 1 = m(m + 2) (each multiplies the relative error by at most 1.2 here).
fn expm1_reduced(r: Dw) -> Dw {
    let s = Dw { hi: r.hi / 1024.0, lo: r.lo / 1024.0 };
    let mut t = dw(1.0);
    for j in (2..=12).rev() {
        t = dw(1.0) + s * t / dw(f64::from(j));
    }
    let mut m = s * t;
    for _ in 0..10 {
        m = m * (m + dw(2.0));
    }
    m
}

/// eˣ: x = k ln 2 + r with |r| ≤ ln 2/2, e^x = 2^k (1 + (e^r − 1)). Declines |x| ≥ 708 (overflow, subnormals).
pub fn exp(x: Dw) -> Option<Dw> {
    if x.hi.is_nan() || x.hi.abs() >= 708.0 {
        return None;
    }
    let ln2 = constant(Constant::LN_2);
    let k = (x.hi / ln2.hi).round();
    let r = x - ln2.mul_f64(k); // the double-word ln 2 is good to 2^-107: error ≤ 2^-107·|k|·ln 2 in r
    Some(scale(expm1_reduced(r) + dw(1.0), k as i32))
}

/// eˣ − 1, through the reduced series where it is accurate relative to the (small) result.
pub fn exp_m1(x: Dw) -> Option<Dw> {
    if x.hi.abs() <= 0.35 {
        Some(expm1_reduced(x))
    } else {
        exp(x).map(|e| e - dw(1.0))
    }
}

/// ln x for x > 0: Newton for e^y = x from y₀ = ln(hi), y₁ = y₀ + x e^{−y₀} − 1 (error ≈ (y₀ − ln x)²/2).
pub fn ln(x: Dw) -> Option<Dw> {
    if !(x.hi > 0.0 && x.hi.is_finite()) {
        return None;
    }
    let y0 = x.hi.ln();
    let e = exp(dw(-y0))?;
    Some(dw(y0) + (x * e - dw(1.0)))
}

/// ln(1 + x): near 0, Newton on e^y − 1 = x, y₁ = y₀ + (x − m)/(1 + m) with m = e^{y₀} − 1; else ln of 1 + x.
pub fn ln_1p(x: Dw) -> Option<Dw> {
    if x.hi.abs() < 0.25 {
        let y0 = x.hi.ln_1p();
        let m = expm1_reduced(dw(y0));
        Some(dw(y0) + (x - m) / (dw(1.0) + m))
    } else {
        ln(x + dw(1.0))
    }
}

/// (sin x, cos x): x = k π/2 + r with |r| ≤ π/4, Taylor series of sin r / r and cos r in r² to the r^30 term
/// (truncation < (π/4)^31/31! < 2^-110), then the quadrant. Declines |x| ≥ 10^5 (the reduction would need more
/// digits of π than the double-word constant has).
pub fn sin_cos(x: Dw) -> Option<(Dw, Dw)> {
    if x.hi.is_nan() || x.hi.abs() >= 1e5 {
        return None;
    }
    let half_pi = constant(Constant::FRAC_PI_2);
    let k = (x.hi / half_pi.hi).round();
    // Cody–Waite reduction (Muller, Elementary Functions, §11.2, from memory): r = x − k·(p₁ + p₂ + p₃) with
    // π/2 = p₁ + p₂ + p₃ to ~160 bits. k·p₁ and k·p₂ are exact double-words (TwoProd), so each subtraction errs
    // relative to its own, cancelled, result; a double-word π/2 times k would leave an absolute error near
    // |k|·2^-106, which is a large relative error when x is close to a multiple of π/2.
    let (p1, e1) = two_prod(half_pi.hi, k);
    let (p2, e2) = two_prod(half_pi.lo, k);
    let r = (x - Dw { hi: p1, lo: e1 }) - Dw { hi: p2, lo: e2 } - dw(half_pi_third_word() * k);
    let t = r * r;
    let (mut s, mut c) = (dw(1.0), dw(1.0));
    for j in (1..=15).rev() {
        let j = f64::from(j);
        s = dw(1.0) - t * s / dw(2.0 * j * (2.0 * j + 1.0)); // sin r / r = 1 − r²/(2·3) (1 − r²/(4·5) (…))
        c = dw(1.0) - t * c / dw((2.0 * j - 1.0) * 2.0 * j); // cos r = 1 − r²/(1·2) (1 − r²/(3·4) (…))
    }
    let s = r * s;
    // sin(kπ/2 + r), cos(kπ/2 + r) by the quadrant k mod 4.
    Some(match (k as i64).rem_euclid(4) {
        0 => (s, c),
        1 => (c, -s),
        2 => (-s, -c),
        _ => (-c, s),
    })
}

/// sin x.
pub fn sin(x: Dw) -> Option<Dw> {
    sin_cos(x).map(|(s, _)| s)
}

/// cos x.
pub fn cos(x: Dw) -> Option<Dw> {
    sin_cos(x).map(|(_, c)| c)
}

/// arctan x: Newton on sin y − x cos y = 0 from the libm value.
pub fn atan(x: Dw) -> Option<Dw> {
    let y0 = x.hi.atan();
    let (s, c) = sin_cos(dw(y0))?;
    Some(dw(y0) - (s - x * c) / (c + x * s))
}

/// arcsin x for |x| < 1: Newton on sin y = x.
pub fn asin(x: Dw) -> Option<Dw> {
    if x.hi.is_nan() || x.hi.abs() >= 1.0 {
        return None;
    }
    let y0 = x.hi.asin();
    let (s, c) = sin_cos(dw(y0))?;
    Some(dw(y0) - (s - x) / c)
}

/// arccos x for |x| < 1: Newton on cos y = x.
pub fn acos(x: Dw) -> Option<Dw> {
    if x.hi.is_nan() || x.hi.abs() >= 1.0 {
        return None;
    }
    let y0 = x.hi.acos();
    let (s, c) = sin_cos(dw(y0))?;
    Some(dw(y0) + (c - x) / s)
}

/// atan2(y, x): Newton on x sin θ − y cos θ = 0 (derivative x cos θ + y sin θ = √(x² + y²) > 0 at the root).
pub fn atan2(y: Dw, x: Dw) -> Option<Dw> {
    if (x.hi == 0.0 && y.hi == 0.0) || !x.is_finite() || !y.is_finite() {
        return None;
    }
    let t0 = y.hi.atan2(x.hi);
    let (s, c) = sin_cos(dw(t0))?;
    Some(dw(t0) - (x * s - y * c) / (x * c + y * s))
}

/// sinh x: near 0, m(m + 2) / (2(m + 1)) with m = eˣ − 1 (no cancellation); elsewhere (eˣ − e^{−x})/2.
pub fn sinh(x: Dw) -> Option<Dw> {
    if x.hi.abs() <= 0.35 {
        let m = expm1_reduced(x);
        Some(m * (m + dw(2.0)) / (dw(2.0) * (m + dw(1.0))))
    } else {
        let e = exp(x)?;
        Some((e - dw(1.0) / e) * dw(0.5))
    }
}

/// cosh x = (eˣ + e^{−x})/2.
pub fn cosh(x: Dw) -> Option<Dw> {
    let e = exp(x)?;
    Some((e + dw(1.0) / e) * dw(0.5))
}

/// tanh x = M/(M + 2) with M = e^{2x} − 1; ±(1 − 2e^{−2|x|}) beyond |x| = 20.
pub fn tanh(x: Dw) -> Option<Dw> {
    if x.hi.abs() > 20.0 {
        let tail = exp(dw(-2.0) * Dw { hi: x.hi.abs(), lo: x.lo.abs() }).unwrap_or(dw(0.0));
        let magnitude = dw(1.0) - dw(2.0) * tail;
        return Some(if x.hi < 0.0 { -magnitude } else { magnitude });
    }
    let m = exp_m1(dw(2.0) * x)?;
    Some(m / (m + dw(2.0)))
}

/// 2ˣ = e^{x ln 2}.
pub fn exp2(x: Dw) -> Option<Dw> {
    exp(x * constant(Constant::LN_2))
}

/// log₂ x = ln x · log₂ e.
pub fn log2(x: Dw) -> Option<Dw> {
    Some(ln(x)? * constant(Constant::LOG2_E))
}

/// log₁₀ x = ln x · log₁₀ e.
pub fn log10(x: Dw) -> Option<Dw> {
    Some(ln(x)? * constant(Constant::LOG10_E))
}

/// tan x = sin x / cos x.
pub fn tan(x: Dw) -> Option<Dw> {
    let (s, c) = sin_cos(x)?;
    Some(s / c)
}

/// xʸ = e^{y ln x} for x > 0.
pub fn powf(x: Dw, y: Dw) -> Option<Dw> {
    exp(y * ln(x)?)
}

/// log_b x = ln x / ln b.
pub fn log(x: Dw, base: Dw) -> Option<Dw> {
    let lb = ln(base)?;
    if lb.hi == 0.0 {
        return None;
    }
    Some(ln(x)? / lb)
}
