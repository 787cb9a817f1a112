//! Rigorous enclosures of the elementary functions over an input enclosure, without MPFR, for [`super::Bound`]
//! and [`super::Interval`].
//!
//! The interval core ([`super::Enclosure`]) has the basic operations only, so these functions evaluate the system libm
//! in `f64` and widen outward. The assumption (stated in `docs/lenses.md`): every libm function used here is
//! within [`LIBM_ULPS`] units in the last place of the true result for finite arguments (glibc documents ≤ 1–2
//! ulps for these functions on x86-64; we allow 4). The widening is twice that, plus a few subnormals, computed in
//! round-to-nearest so that the rounding of the widening itself is covered.
//!
//! Each function states how the enclosure follows from the input: monotone functions map endpoints; `sin` and
//! `cos` use a second-order Taylor bound around the midpoint; `tan` detects a pole in the range; `atan2` uses
//! the gradient bound away from the origin and the branch cut.

use crate::lens::enclosure::Enclosure as Interval;
use crate::lens::reference::constant_reference;
use crate::Constant;

/// The assumed maximum error of libm's elementary functions, in ulps of the result.
pub const LIBM_ULPS: f64 = 4.0;

/// Relative widening: `2·LIBM_ULPS` ulps of `|v|`, as a factor (ulp(v) ≤ 2^-52·|v| for normal v).
const WIDEN_RELATIVE: f64 = 2.0 * LIBM_ULPS * f64::EPSILON;
/// Absolute widening for subnormal results: a few η = 2^-1074.
const WIDEN_ABSOLUTE: f64 = 4.0 * f64::from_bits(1);

/// `v` moved down past any true value libm's `v` may stand for.
#[inline]
fn down(v: f64) -> f64 {
    if v.is_finite() {
        v - (v.abs() * WIDEN_RELATIVE + WIDEN_ABSOLUTE)
    } else {
        v
    }
}

/// `v` moved up past any true value libm's `v` may stand for.
#[inline]
fn up(v: f64) -> f64 {
    -down(-v)
}

/// The interval `[lo, hi]`, or the empty set when the bounds are NaN or crossed (a domain error):
/// [`Interval::between`].
#[must_use]
pub fn interval(lo: f64, hi: f64) -> Interval {
    Interval::between(lo, hi)
}

/// The enclosure of a constant of `std::f64::consts`: the doubles below and above the real number, from its
/// 256-bit value ([`constant_reference`]).
fn constant(c: Constant) -> Interval {
    let r = constant_reference(c);
    interval(r.down, r.up)
}

/// The enclosure of libm results `lo ≤ hi` standing for true values.
#[must_use]
pub fn widened(lo: f64, hi: f64) -> Interval {
    interval(down(lo), up(hi))
}

/// An increasing function through its endpoints: `f([a, b]) ⊆ [f(a)↓, f(b)↑]`.
fn increasing(x: Interval, f: fn(f64) -> f64) -> Interval {
    if x.is_empty() {
        return x;
    }
    widened(f(x.inf()), f(x.sup()))
}

/// A decreasing function through its endpoints: `f([a, b]) ⊆ [f(b)↓, f(a)↑]`.
fn decreasing(x: Interval, f: fn(f64) -> f64) -> Interval {
    if x.is_empty() {
        return x;
    }
    widened(f(x.sup()), f(x.inf()))
}

/// Restricts the input to a function's domain (the result is empty when the input lies outside it).
fn within(x: Interval, lo: f64, hi: f64) -> Interval {
    x.intersection(interval(lo, hi))
}

/// √x, increasing on [0, ∞) (correctly rounded in IEEE 754-2019, so the tightest enclosure: [`Interval::sqrt`]).
#[must_use]
pub fn sqrt(x: Interval) -> Interval {
    x.sqrt()
}

/// ∛x, increasing on ℝ.
#[must_use]
pub fn cbrt(x: Interval) -> Interval {
    increasing(x, f64::cbrt)
}

/// eˣ, increasing, positive.
#[must_use]
pub fn exp(x: Interval) -> Interval {
    increasing(x, f64::exp).intersection(interval(0.0, f64::INFINITY))
}

/// 2ˣ, increasing, positive.
#[must_use]
pub fn exp2(x: Interval) -> Interval {
    increasing(x, f64::exp2).intersection(interval(0.0, f64::INFINITY))
}

/// eˣ − 1, increasing, > −1.
#[must_use]
pub fn exp_m1(x: Interval) -> Interval {
    increasing(x, f64::exp_m1).intersection(interval(-1.0, f64::INFINITY))
}

/// ln x, increasing on (0, ∞); ln 0 = −∞.
#[must_use]
pub fn ln(x: Interval) -> Interval {
    increasing(within(x, 0.0, f64::INFINITY), f64::ln)
}

/// ln(1 + x), increasing on (−1, ∞).
#[must_use]
pub fn ln_1p(x: Interval) -> Interval {
    increasing(within(x, -1.0, f64::INFINITY), f64::ln_1p)
}

/// log₂ x, increasing on (0, ∞).
#[must_use]
pub fn log2(x: Interval) -> Interval {
    increasing(within(x, 0.0, f64::INFINITY), f64::log2)
}

/// log₁₀ x, increasing on (0, ∞).
#[must_use]
pub fn log10(x: Interval) -> Interval {
    increasing(within(x, 0.0, f64::INFINITY), f64::log10)
}

/// log_b x = ln x / ln b.
#[must_use]
pub fn log(x: Interval, base: Interval) -> Interval {
    ln(x) / ln(base)
}

/// arcsin, increasing on [−1, 1].
#[must_use]
pub fn asin(x: Interval) -> Interval {
    increasing(within(x, -1.0, 1.0), f64::asin)
}

/// arccos, decreasing on [−1, 1].
#[must_use]
pub fn acos(x: Interval) -> Interval {
    decreasing(within(x, -1.0, 1.0), f64::acos)
}

/// arctan, increasing, inside (−π/2, π/2).
#[must_use]
pub fn atan(x: Interval) -> Interval {
    let half_pi = constant(Constant::FRAC_PI_2).sup();
    increasing(x, f64::atan).intersection(interval(-half_pi, half_pi))
}

/// sinh, increasing.
#[must_use]
pub fn sinh(x: Interval) -> Interval {
    increasing(x, f64::sinh)
}

/// tanh, increasing, inside [−1, 1].
#[must_use]
pub fn tanh(x: Interval) -> Interval {
    increasing(x, f64::tanh).intersection(interval(-1.0, 1.0))
}

/// cosh, decreasing on (−∞, 0] and increasing on [0, ∞), ≥ 1.
#[must_use]
pub fn cosh(x: Interval) -> Interval {
    if x.is_empty() {
        return x;
    }
    let top = up(f64::max(x.inf().cosh(), x.sup().cosh()));
    let bottom = if x.contains(0.0) { 1.0 } else { down(f64::min(x.inf().cosh(), x.sup().cosh())) };
    interval(bottom.max(1.0), top)
}

/// sin or cos around the midpoint m with radius r: |f(m + h) − f(m)| ≤ r·|f′(m)| + r²/2 (Taylor with Lagrange
/// remainder, |f″| ≤ 1), inside [−1, 1].
fn periodic(x: Interval, f: fn(f64) -> f64, derivative: fn(f64) -> f64) -> Interval {
    let unit = interval(-1.0, 1.0);
    if x.is_empty() {
        return x;
    }
    let (m, r) = (x.mid(), x.rad());
    if r.is_nan() || r >= 2.0 || !m.is_finite() {
        return unit;
    }
    let slope = widened(derivative(m).abs(), derivative(m).abs()); // |f′(m)| with the libm allowance
    let radius = interval(r, r);
    let spread = (radius * slope + radius * radius * interval(0.5, 0.5)).sup(); // r·|f′(m)| + r²/2, ↑
    let centre = widened(f(m), f(m));
    (centre + interval(-spread, spread)).intersection(unit)
}

/// sin x.
#[must_use]
pub fn sin(x: Interval) -> Interval {
    periodic(x, f64::sin, f64::cos)
}

/// cos x (cos′ = −sin; the bound uses |cos′(m)| = |sin m|).
#[must_use]
pub fn cos(x: Interval) -> Interval {
    periodic(x, f64::cos, f64::sin)
}

/// tan x: increasing between poles; a range of width ≥ π, or one whose endpoint values are out of order, holds
/// a pole and gives ℝ.
#[must_use]
pub fn tan(x: Interval) -> Interval {
    if x.is_empty() {
        return x;
    }
    let (a, b) = (x.inf().tan(), x.sup().tan());
    if x.wid().is_nan() || x.wid() >= constant(Constant::PI).inf() || a > b {
        return Interval::ENTIRE;
    }
    widened(a, b)
}

/// xⁿ for an integer n, from |x| on the monotone pieces. The f64 value of a product of |n| factors carries at
/// most |n| roundings (and one more for the reciprocal of n < 0), relative error ≤ γ_{|n|+1} (Higham 2002,
/// §3.1, from memory), so the endpoints are widened by 2(|n| + 1)·u plus the libm allowance.
#[must_use]
pub fn powi(x: Interval, n: i32) -> Interval {
    if x.is_empty() {
        return x;
    }
    if n == 0 {
        return interval(1.0, 1.0); // x⁰ = 1, also for x = 0 as f64::powi has it
    }
    let magnitude = x.abs();
    let (small, large) = (magnitude.inf(), magnitude.sup());
    let slack = (f64::from(n.unsigned_abs()) + 1.0) * f64::EPSILON + WIDEN_RELATIVE;
    let lower = |v: f64| if v.is_finite() { (v - v * slack - WIDEN_ABSOLUTE).max(0.0) } else { v };
    let upper = |v: f64| if v.is_finite() { v + v * slack + WIDEN_ABSOLUTE } else { v };
    // |x|ⁿ over [small, large]: increasing for n > 0, decreasing for n < 0.
    let (lo, hi) =
        if n > 0 { (lower(small.powi(n)), upper(large.powi(n))) } else { (lower(large.powi(n)), upper(small.powi(n))) };
    let even = n % 2 == 0;
    let positive = interval(lo, hi);
    if even || x.inf() >= 0.0 {
        positive
    } else if x.sup() <= 0.0 {
        -positive
    } else {
        // Odd power over a range holding zero: from −|a|ⁿ to |b|ⁿ, or everything for a negative power.
        if n < 0 {
            Interval::ENTIRE
        } else {
            interval(-upper((-x.inf()).powi(n)), upper(x.sup().powi(n)))
        }
    }
}

/// xʸ: e^{y ln x} for x > 0; an integer point y reduces to [`powi`]; a base that may be ≤ 0 with a non-integer
/// exponent is outside the real domain there and gives ℝ.
#[must_use]
pub fn powf(x: Interval, y: Interval) -> Interval {
    if x.is_empty() || y.is_empty() {
        return Interval::EMPTY;
    }
    if y.is_singleton() && y.inf().fract() == 0.0 && y.inf().abs() <= f64::from(i32::MAX) {
        return powi(x, y.inf() as i32);
    }
    if x.inf() > 0.0 {
        exp(y * ln(x))
    } else {
        Interval::ENTIRE
    }
}

/// √(x² + y²): increasing in |x| and |y|.
#[must_use]
pub fn hypot(x: Interval, y: Interval) -> Interval {
    if x.is_empty() || y.is_empty() {
        return Interval::EMPTY;
    }
    widened(x.mig().hypot(y.mig()), x.mag().hypot(y.mag()))
}

/// atan2(y, x): ±π when the box holds the origin or meets the branch cut (x < 0, y = 0); otherwise the value at
/// the centre ± (r_x + r_y)/d, where d ≤ the box's distance to the origin bounds 1/|∇atan2| = √(x² + y²).
#[must_use]
pub fn atan2(y: Interval, x: Interval) -> Interval {
    let pi = constant(Constant::PI).sup();
    let whole = interval(-pi, pi);
    if x.is_empty() || y.is_empty() {
        return Interval::EMPTY;
    }
    let crosses_cut = x.inf() < 0.0 && y.contains(0.0);
    if crosses_cut {
        return whole;
    }
    // Distance from the box to the origin, rounded down: √(mig(x)² + mig(y)²).
    let d = down(x.mig().hypot(y.mig()));
    if d.is_nan() || d <= 0.0 {
        return whole; // the box holds the origin (or lies within a few η of it)
    }
    let spread = ((interval(x.rad(), x.rad()) + interval(y.rad(), y.rad())) / interval(d, d)).sup();
    let centre = y.mid().atan2(x.mid());
    (widened(centre, centre) + interval(-spread, spread)).intersection(whole)
}

/// Implements the elementary functions of [`super::scalar::Core`] for an enclosure lens through the functions of
/// this module. The lens provides `fn enclosure(self) -> Enclosure` (its reference as an enclosure) and
/// `fn around(primal: f64, enclosure: Enclosure) -> Self`; the primal is always the `f64` function of the
/// primal, as the float program computes it.
#[macro_export]
#[doc(hidden)]
macro_rules! enclosed_functions {
    (unary: [$($unary:ident)*], binary: [$($binary:ident)*]) => {
        $(
            #[inline]
            #[track_caller]
            fn $unary(self) -> Self {
                let primal = f64::$unary($crate::lens::scalar::Core::primal(self));
                Self::around(primal, $crate::lens::elementary::$unary(self.enclosure()))
            }
        )*
        $(
            #[inline]
            #[track_caller]
            fn $binary(self, other: Self) -> Self {
                let primal = f64::$binary($crate::lens::scalar::Core::primal(self), $crate::lens::scalar::Core::primal(other));
                Self::around(primal, $crate::lens::elementary::$binary(self.enclosure(), other.enclosure()))
            }
        )*
        #[inline]
        #[track_caller]
        fn powi(self, n: i32) -> Self {
            let primal = $crate::lens::scalar::Core::primal(self).powi(n);
            Self::around(primal, $crate::lens::elementary::powi(self.enclosure(), n))
        }
    };
}
