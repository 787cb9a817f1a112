//! [`Enclosure`]: a closed interval `[inf, sup]` of real numbers with binary64 endpoints — IEEE 1788-2015's
//! set-based inf–sup binary64 flavour, for the operations the lenses use: + − × ÷ (division by intervals that hold
//! zero included), √, fma, absolute value, negation, hull and intersection, and the numeric functions inf, sup,
//! mid, rad, wid, mag, mig. Every operation returns the tightest enclosure (the section numbers of the standard
//! below are from memory).
//!
//! Pure Rust with no CPU feature: the directed roundings come from error-free transformations in round-to-nearest
//! ([`super::directed`]), not from switching the rounding mode. The bounded cases of + − × ÷ take branch-free
//! fast paths that the [`super::Interval`] lens inlines; unbounded and empty operands, divisors holding zero and
//! the underflow margin go to `#[cold]` case tables.
//!
//! Representation: an interval is its two endpoints; the empty set is `(+∞, −∞)`; ±∞ as an endpoint stands for an
//! unbounded side (IEEE 1788 intervals hold reals only, so `[1, +∞]` is `{x ≥ 1}`). A zero lower endpoint is kept
//! as −0 and a zero upper endpoint as +0, as IEEE 1788-2015 §12.12.8 asks `inf` and `sup` to return them, so the
//! endpoints read back directly.

use crate::lens::directed;
use crate::lens::eft::{exact_product, exact_quotient, round_down, round_up, two_sum};
use core::ops::{Add, Div, Mul, Neg, Sub};

/// A closed interval of reals `[inf, sup]` (possibly unbounded, possibly empty).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Enclosure {
    inf: f64,
    sup: f64,
}

/// A lower endpoint as stored: −0 for a zero bound, the bound otherwise. −((−x) + 0) is −(+0) = −0 for x = ±0
/// (a sum of opposite zeros is +0 in round-to-nearest, IEEE 754-2019 §6.3) and x for any other x.
#[inline(always)]
#[must_use]
pub fn lower(x: f64) -> f64 {
    -((-x) + 0.0)
}

/// An upper endpoint as stored: +0 for a zero bound (x + 0 = +0 for x = ±0), x otherwise.
#[inline(always)]
#[must_use]
pub fn upper(x: f64) -> f64 {
    x + 0.0
}

impl Enclosure {
    /// The empty set.
    pub const EMPTY: Enclosure = Enclosure { inf: f64::INFINITY, sup: f64::NEG_INFINITY };
    /// The whole real line.
    pub const ENTIRE: Enclosure = Enclosure { inf: f64::NEG_INFINITY, sup: f64::INFINITY };

    /// The interval `[lo, hi]`, or `None` where IEEE 1788-2015's `numsToInterval` has no interval: `lo > hi`, a NaN,
    /// `lo = +∞` or `hi = −∞`.
    #[must_use]
    pub fn new(lo: f64, hi: f64) -> Option<Enclosure> {
        (lo <= hi && lo != f64::INFINITY && hi != f64::NEG_INFINITY).then(|| Enclosure::bounded_by(lo, hi))
    }

    /// The interval `[lo, hi]` read leniently, for bounds computed by a formula: a lower bound `+∞` is read as
    /// `MAX` and an upper bound `−∞` as `MIN` (the interval holds reals only), and crossed or NaN bounds give the
    /// empty set (a domain error upstream).
    #[must_use]
    pub fn between(lo: f64, hi: f64) -> Enclosure {
        let lo = if lo == f64::INFINITY { f64::MAX } else { lo };
        let hi = if hi == f64::NEG_INFINITY { f64::MIN } else { hi };
        Enclosure::new(lo, hi).unwrap_or(Enclosure::EMPTY)
    }

    /// A double as an interval: the point `[x, x]`, `[MAX, +∞]` for +∞ and `[−∞, MIN]` for −∞ (the reals beyond
    /// the largest double), the empty set for NaN.
    #[inline(always)]
    #[must_use]
    pub fn point(x: f64) -> Enclosure {
        if x.is_finite() {
            Enclosure::bounded_by(x, x)
        } else {
            Enclosure::between(x, x)
        }
    }

    /// Bounds already checked (`lo ≤ hi`, or the empty set's `(+∞, −∞)`), zeros signed as stored.
    #[inline(always)]
    #[must_use]
    pub(crate) fn bounded_by(lo: f64, hi: f64) -> Enclosure {
        Enclosure { inf: lower(lo), sup: upper(hi) }
    }

    /// Bounds exactly as an [`Enclosure`] stores them (from [`Enclosure::inf`] and [`Enclosure::sup`]).
    #[inline(always)]
    #[must_use]
    pub(crate) const fn stored(inf: f64, sup: f64) -> Enclosure {
        Enclosure { inf, sup }
    }

    /// The lower endpoint (−0 for zero, +∞ for the empty set).
    #[inline(always)]
    #[must_use]
    pub fn inf(self) -> f64 {
        self.inf
    }

    /// The upper endpoint (+0 for zero, −∞ for the empty set).
    #[inline(always)]
    #[must_use]
    pub fn sup(self) -> f64 {
        self.sup
    }

    /// Whether the interval is the empty set.
    #[inline(always)]
    #[must_use]
    pub fn is_empty(self) -> bool {
        self.inf > self.sup
    }

    /// Whether the interval is one real number.
    #[must_use]
    pub fn is_singleton(self) -> bool {
        self.inf == self.sup
    }

    /// Whether the real number `x` lies in the interval (false for ±∞ and NaN, which are not reals).
    #[must_use]
    pub fn contains(self, x: f64) -> bool {
        x.is_finite() && self.inf <= x && x <= self.sup
    }

    /// The midpoint (IEEE 1788-2015 §9.6.9, from memory): NaN for the empty set, 0 for ℝ, ∓MAX for a half-line
    /// unbounded below or above, else the double nearest `(inf + sup)/2`. `RN(inf + sup)·½` is that double when
    /// the sum does not overflow (halving is exact in the normal range and a subnormal sum is exact, so one
    /// rounding either way); otherwise `RN(inf/2 + sup/2)` is, both halves being exact.
    #[must_use]
    pub fn mid(self) -> f64 {
        let (a, b) = (self.inf, self.sup);
        if self.is_empty() {
            return f64::NAN;
        }
        match (a == f64::NEG_INFINITY, b == f64::INFINITY) {
            (true, true) => 0.0,
            (true, false) => f64::MIN,
            (false, true) => f64::MAX,
            (false, false) => {
                let sum = a + b;
                if sum.is_finite() {
                    sum * 0.5
                } else {
                    a * 0.5 + b * 0.5
                }
            }
        }
    }

    /// The radius: the least double `r` with `[mid − r, mid + r] ⊇` the interval (IEEE 1788-2015 §9.6.9, from
    /// memory), NaN for the empty set, +∞ when unbounded.
    #[must_use]
    pub fn rad(self) -> f64 {
        if self.is_empty() {
            return f64::NAN;
        }
        let m = self.mid();
        directed::sum(m, -self.inf).up.max(directed::sum(self.sup, -m).up)
    }

    /// The width `sup − inf` rounded up; NaN for the empty set.
    #[must_use]
    pub fn wid(self) -> f64 {
        if self.is_empty() {
            return f64::NAN;
        }
        directed::sum(self.sup, -self.inf).up
    }

    /// The magnitude `max |x|`; NaN for the empty set.
    #[must_use]
    pub fn mag(self) -> f64 {
        if self.is_empty() {
            return f64::NAN;
        }
        self.inf.abs().max(self.sup.abs())
    }

    /// The mignitude `min |x|` (0 when the interval holds 0); NaN for the empty set.
    #[must_use]
    pub fn mig(self) -> f64 {
        if self.is_empty() {
            return f64::NAN;
        }
        if self.inf <= 0.0 && 0.0 <= self.sup {
            0.0
        } else {
            self.inf.abs().min(self.sup.abs())
        }
    }

    /// The convex hull of the union (the empty set is neutral: its `(+∞, −∞)` loses both comparisons).
    #[inline]
    #[must_use]
    pub fn convex_hull(self, other: Enclosure) -> Enclosure {
        Enclosure::bounded_by(self.inf.min(other.inf), self.sup.max(other.sup))
    }

    /// The hull with the point `x` (unchanged for a NaN `x`, as the hull with the empty set is).
    #[inline(always)]
    #[must_use]
    pub fn hull_with(self, x: f64) -> Enclosure {
        if x.is_finite() {
            // f64::min/max return the other operand beside the empty set's infinities, so this is [x, x] then.
            Enclosure::bounded_by(self.inf.min(x), self.sup.max(x))
        } else {
            self.convex_hull(Enclosure::point(x))
        }
    }

    /// The intersection.
    #[must_use]
    pub fn intersection(self, other: Enclosure) -> Enclosure {
        let (lo, hi) = (self.inf.max(other.inf), self.sup.min(other.sup));
        if lo > hi {
            Enclosure::EMPTY
        } else {
            Enclosure::bounded_by(lo, hi)
        }
    }

    /// `{|x|}`: the interval itself when `inf ≥ 0`, its negation when `sup ≤ 0`, else `[0, mag]`.
    #[must_use]
    pub fn abs(self) -> Enclosure {
        if self.is_empty() || self.inf >= 0.0 {
            self
        } else if self.sup <= 0.0 {
            -self
        } else {
            Enclosure::bounded_by(0.0, self.mag())
        }
    }

    /// `{√x : x ≥ 0}`: `[√max(inf, 0)↓, √sup↑]`, empty when the interval lies below zero.
    #[must_use]
    pub fn sqrt(self) -> Enclosure {
        if self.is_empty() || self.sup < 0.0 {
            return Enclosure::EMPTY;
        }
        let low = directed::square_root(self.inf.max(0.0)).down;
        Enclosure::bounded_by(low, directed::square_root(self.sup).up)
    }

    /// `{x·y + z}`, the fused multiply-add (IEEE 1788-2015 §9.1, tightest): the hull of the products over the
    /// corners (`x·y` takes its extremes there, with `0·∞ = 0`), each plus the matching bound of `z` and rounded
    /// once. Rounding is monotone, so the least of the rounded-down corners is the rounded-down least corner.
    #[must_use]
    pub fn mul_add(self, y: Enclosure, z: Enclosure) -> Enclosure {
        if self.is_empty() || y.is_empty() || z.is_empty() {
            return Enclosure::EMPTY;
        }
        let corners = [(self.inf, y.inf), (self.inf, y.sup), (self.sup, y.inf), (self.sup, y.sup)];
        let low = corners.iter().map(|&(a, b)| directed::fused(a, b, z.inf).down).fold(f64::INFINITY, f64::min);
        let high = corners.iter().map(|&(a, b)| directed::fused(a, b, z.sup).up).fold(f64::NEG_INFINITY, f64::max);
        Enclosure::bounded_by(low, high)
    }
}

/// The fast path of + and −: `[a + c↓, b + d↑]` by TwoSum and a directed step, or `None` when a sum is not finite
/// (unbounded or empty operands, overflow), where TwoSum is not exact.
#[inline(always)]
fn sum_enclosure(a: f64, c: f64, b: f64, d: f64) -> Option<(f64, f64)> {
    let (low, low_error) = two_sum(a, c); // low + low_error = a + c exactly (Knuth)
    let (high, high_error) = two_sum(b, d);
    // A finite error term also rules out an overflow inside TwoSum (it would leave ∞ or NaN there).
    if !(low.is_finite() && high.is_finite() && low_error.is_finite() && high_error.is_finite()) {
        return None;
    }
    Some((round_down(low, low_error), round_up(high, high_error)))
}

/// The fast path of ×: the four endpoint products with their exact errors (TwoProd), the least rounded down and
/// the greatest rounded up — the tightest enclosure, as the case table gives — or `None` when an operand is
/// unbounded or empty or a product leaves the range where its error is exact.
#[inline(always)]
fn product_enclosure((a, b): (f64, f64), (c, d): (f64, f64)) -> Option<(f64, f64)> {
    // A point factor (a literal, a coefficient taken as exact) has only two distinct endpoint products: the
    // other two repeat them. The test is the same for every cell of a loop, so it predicts perfectly.
    if a == b {
        return Some(directed_hull([exact_product(a, c)?, exact_product(a, d)?]));
    }
    if c == d {
        return Some(directed_hull([exact_product(a, c)?, exact_product(b, c)?]));
    }
    let products = [exact_product(a, c)?, exact_product(a, d)?, exact_product(b, c)?, exact_product(b, d)?];
    Some(directed_hull(products))
}

/// The fast path of ÷ for a divisor that excludes 0: x/y is monotone in each argument there, so the extremes are
/// among the four endpoint quotients (each with the sign of its exact remainder); `None` when the divisor holds
/// 0, an operand is unbounded or empty, or a quotient leaves the range where its residual is exact.
#[inline(always)]
fn quotient_enclosure((a, b): (f64, f64), (c, d): (f64, f64)) -> Option<(f64, f64)> {
    if !(c > 0.0 || d < 0.0) {
        return None;
    }
    let quotients = [exact_quotient(a, c)?, exact_quotient(a, d)?, exact_quotient(b, c)?, exact_quotient(b, d)?];
    Some(directed_hull(quotients))
}

/// `[min vᵢ↓, max vᵢ↑]` of exact values vᵢ = sᵢ + eᵢ given as round-to-nearest doubles and remainders: rounding
/// is monotone, so the rounded-down minimum is the minimum of the rounded-down values (likewise up).
#[inline(always)]
fn directed_hull<const N: usize>(values: [(f64, f64); N]) -> (f64, f64) {
    let low = values.iter().map(|&(s, e)| round_down(s, e)).fold(f64::INFINITY, f64::min);
    let high = values.iter().map(|&(s, e)| round_up(s, e)).fold(f64::NEG_INFINITY, f64::max);
    (low, high)
}

impl Neg for Enclosure {
    type Output = Enclosure;
    /// `−[a, b] = [−b, −a]`, exact; the empty set `(+∞, −∞)` stays empty.
    #[inline(always)]
    fn neg(self) -> Enclosure {
        Enclosure { inf: lower(-self.sup), sup: upper(-self.inf) }
    }
}

impl Add for Enclosure {
    type Output = Enclosure;
    /// `[a, b] + [c, d] = [a + c↓, b + d↑]` (IEEE 1788-2015 §9.1).
    #[inline(always)]
    fn add(self, rhs: Enclosure) -> Enclosure {
        match sum_enclosure(self.inf, rhs.inf, self.sup, rhs.sup) {
            Some((low, high)) => Enclosure::bounded_by(low, high),
            None => self.add_beyond(rhs),
        }
    }
}

impl Sub for Enclosure {
    type Output = Enclosure;
    /// `[a, b] − [c, d] = [a − d↓, b − c↑] = [a + (−d)↓, b + (−c)↑]` (negation is exact).
    #[inline(always)]
    fn sub(self, rhs: Enclosure) -> Enclosure {
        self + -rhs
    }
}

impl Mul for Enclosure {
    type Output = Enclosure;
    /// `[a, b]·[c, d] = [min(ac, ad, bc, bd)↓, max(ac, ad, bc, bd)↑]` with `0·∞ = 0` (IEEE 1788-2015 §9.1).
    #[inline(always)]
    fn mul(self, rhs: Enclosure) -> Enclosure {
        match product_enclosure((self.inf, self.sup), (rhs.inf, rhs.sup)) {
            Some((low, high)) => Enclosure::bounded_by(low, high),
            None => self.mul_beyond(rhs),
        }
    }
}

impl Div for Enclosure {
    type Output = Enclosure;
    /// `{x/y : x ∈ X, y ∈ Y, y ≠ 0}`, hulled (IEEE 1788-2015 §9.1): the four quotients for a divisor that
    /// excludes 0, half-lines or ℝ for one that holds it (`Enclosure::div_beyond`).
    #[inline(always)]
    fn div(self, rhs: Enclosure) -> Enclosure {
        match quotient_enclosure((self.inf, self.sup), (rhs.inf, rhs.sup)) {
            Some((low, high)) => Enclosure::bounded_by(low, high),
            None => self.div_beyond(rhs),
        }
    }
}

impl Enclosure {
    /// The sum for operands the fast path declined: empty gives empty; otherwise the endpoint sums with
    /// infinities (a lower endpoint is never +∞ and an upper never −∞, so no `∞ − ∞` arises) and overflow.
    #[cold]
    fn add_beyond(self, rhs: Enclosure) -> Enclosure {
        if self.is_empty() || rhs.is_empty() {
            return Enclosure::EMPTY;
        }
        Enclosure::bounded_by(directed::sum(self.inf, rhs.inf).down, directed::sum(self.sup, rhs.sup).up)
    }

    /// The product for operands the fast path declined: the four endpoint products with `0·∞ = 0` — for unbounded
    /// operands too, where each product is ±∞, 0 or finite and the extremes are still among them.
    #[cold]
    fn mul_beyond(self, rhs: Enclosure) -> Enclosure {
        if self.is_empty() || rhs.is_empty() {
            return Enclosure::EMPTY;
        }
        let corners = [(self.inf, rhs.inf), (self.inf, rhs.sup), (self.sup, rhs.inf), (self.sup, rhs.sup)];
        let rounded = corners.map(|(a, b)| directed::product(a, b));
        let low = rounded.iter().map(|r| r.down).fold(f64::INFINITY, f64::min);
        let high = rounded.iter().map(|r| r.up).fold(f64::NEG_INFINITY, f64::max);
        Enclosure::bounded_by(low, high)
    }

    /// The quotient for operands the fast path declined. With `X = [a, b]`, `Y = [c, d]` (Ratz's case table as IEEE
    /// 1788-2015 states it, from memory; each entry follows from the monotonicity of x/y in each argument on a
    /// sign-constant piece, and `finite/∞ = 0`):
    ///
    /// | | Y > 0 (c > 0) | Y < 0 (d < 0) | Y = [0, d], d > 0 | Y = [c, 0], c < 0 | c < 0 < d |
    /// | --- | --- | --- | --- | --- | --- |
    /// | X ≥ 0, X ≠ {0} | [a/d, b/c] | [b/d, a/c] | [a/d, +∞] | [−∞, a/c] | ℝ |
    /// | a < 0 < b | [a/c, b/c] | [b/d, a/d] | ℝ | ℝ | ℝ |
    /// | X ≤ 0, X ≠ {0} | [a/c, b/d] | [b/c, a/d] | [−∞, b/d] | [b/c, +∞] | ℝ |
    ///
    /// X = {0} gives {0} and Y = {0} or an empty operand the empty set. (A zero lower bound with the X ≥ 0 row, as
    /// in X = [0, 2] over Y = [0, 1], gives [0/1, +∞] = [0, +∞]: the quotients 0/y are 0, the rest are ≥ 2.)
    #[cold]
    fn div_beyond(self, rhs: Enclosure) -> Enclosure {
        let (a, b, c, d) = (self.inf, self.sup, rhs.inf, rhs.sup);
        if self.is_empty() || rhs.is_empty() || (c == 0.0 && d == 0.0) {
            return Enclosure::EMPTY;
        }
        if a == 0.0 && b == 0.0 {
            return Enclosure::bounded_by(0.0, 0.0);
        }
        let down = |x: f64, y: f64| directed::quotient(x, y).down;
        let up = |x: f64, y: f64| directed::quotient(x, y).up;
        let inf = f64::INFINITY;
        let (low, high) = if c > 0.0 {
            if a >= 0.0 {
                (down(a, d), up(b, c))
            } else if b <= 0.0 {
                (down(a, c), up(b, d))
            } else {
                (down(a, c), up(b, c))
            }
        } else if d < 0.0 {
            if a >= 0.0 {
                (down(b, d), up(a, c))
            } else if b <= 0.0 {
                (down(b, c), up(a, d))
            } else {
                (down(b, d), up(a, d))
            }
        } else if a < 0.0 && b > 0.0 || c < 0.0 && d > 0.0 {
            (-inf, inf)
        } else if a >= 0.0 {
            if c == 0.0 {
                (down(a, d), inf)
            } else {
                (-inf, up(a, c))
            }
        } else if c == 0.0 {
            (-inf, up(b, d))
        } else {
            (down(b, c), inf)
        };
        Enclosure::bounded_by(low, high)
    }
}

#[cfg(test)]
mod tests {
    //! The operations against exact rationals (dashu-ratio) over a grid of bounded intervals — the hull of the
    //! exact endpoint results (for ÷ with a divisor excluding 0 and for ×, the extremes lie at the endpoints:
    //! monotonicity in each argument), rounded outward to the adjacent doubles — and against results derived
    //! from the set definition for unbounded operands and divisors that hold zero.

    use super::*;
    use dashu_ratio::RBig;

    fn exactly(x: f64) -> RBig {
        RBig::try_from(x).expect("finite")
    }

    /// The tightest binary64 enclosure of the exact rationals `values`: roundTowardNegative of the least and
    /// roundTowardPositive of the greatest (through [`directed::rational`], which is checked against direct
    /// comparisons in its own tests).
    fn tightest_hull(values: &[RBig]) -> (u64, u64) {
        let least = values.iter().min().expect("values");
        let greatest = values.iter().max().expect("values");
        (lower(directed::rational(least).down).to_bits(), upper(directed::rational(greatest).up).to_bits())
    }

    fn bounds(x: Enclosure) -> (u64, u64) {
        (x.inf().to_bits(), x.sup().to_bits())
    }

    /// Endpoints with signs, zeros, exact halves, values in the underflow margin and near the overflow
    /// threshold, and pseudo-random doubles between 2^-128 and 2^128.
    fn endpoints() -> Vec<f64> {
        let mut values = vec![0.0, -0.0, 1.0, -1.0, 0.1, -0.3, 3.0, 1e-300, -1e-280, 1e300, -1e308, f64::MAX];
        values.extend(directed::test_doubles(0x9E37_79B9_7F4A_7C15, 30, 8));
        values
    }

    fn bounded_intervals() -> Vec<Enclosure> {
        let ends = endpoints();
        let mut out = Vec::new();
        for (i, &x) in ends.iter().enumerate() {
            for &y in ends.iter().skip(i).step_by(5) {
                out.push(Enclosure::new(x.min(y), x.max(y)).expect("ordered"));
            }
        }
        out
    }

    #[test]
    fn bounded_arithmetic_is_tightest() {
        let all = bounded_intervals();
        let mut checked = 0;
        for &x in &all {
            for &y in &all {
                let (a, b, c, d) = (exactly(x.inf()), exactly(x.sup()), exactly(y.inf()), exactly(y.sup()));
                let finite = |e: Enclosure| e.inf().is_finite() && e.sup().is_finite();
                let sum = x + y;
                if finite(sum) {
                    assert_eq!(bounds(sum), tightest_hull(&[&a + &c, &b + &d]), "{x:?} + {y:?}");
                }
                let difference = x - y;
                if finite(difference) {
                    let expected = tightest_hull(&[&a - &d, &b - &c]);
                    assert_eq!(bounds(difference), expected, "{x:?} - {y:?}");
                }
                let product = x * y;
                if finite(product) {
                    let expected = tightest_hull(&[&a * &c, &a * &d, &b * &c, &b * &d]);
                    assert_eq!(bounds(product), expected, "{x:?} * {y:?}");
                    checked += 1;
                }
                let quotient = x / y;
                if !y.contains(0.0) && finite(quotient) {
                    let expected = tightest_hull(&[&a / &c, &a / &d, &b / &c, &b / &d]);
                    assert_eq!(bounds(quotient), expected, "{x:?} / {y:?}");
                }
            }
        }
        // The check must not pass vacuously.
        assert!(checked > all.len() * all.len() / 2, "{checked} of {}", all.len() * all.len());
    }

    #[test]
    fn fused_multiply_add_is_tightest() {
        let all = bounded_intervals();
        for &x in all.iter().step_by(7) {
            for &y in all.iter().step_by(5) {
                for &z in all.iter().step_by(11) {
                    let out = x.mul_add(y, z);
                    if !(out.inf().is_finite() && out.sup().is_finite()) {
                        continue;
                    }
                    let corners = [
                        exactly(x.inf()) * exactly(y.inf()),
                        exactly(x.inf()) * exactly(y.sup()),
                        exactly(x.sup()) * exactly(y.inf()),
                        exactly(x.sup()) * exactly(y.sup()),
                    ];
                    let least = corners.iter().min().expect("corners") + exactly(z.inf());
                    let greatest = corners.iter().max().expect("corners") + exactly(z.sup());
                    let expected = tightest_hull(&[least, greatest]);
                    assert_eq!(bounds(out), expected, "fma({x:?}, {y:?}, {z:?})");
                }
            }
        }
    }

    #[test]
    fn square_roots_are_tightest() {
        for x in bounded_intervals() {
            let root = x.sqrt();
            if x.sup() < 0.0 {
                assert!(root.is_empty());
                continue;
            }
            // [lo, hi] is tightest iff lo² ≤ max(inf, 0) and sup ≤ hi², each endpoint adjacent to the exact root.
            let (lo, hi) = (exactly(root.inf()), exactly(root.sup()));
            assert!(&lo * &lo <= exactly(x.inf().max(0.0)) && exactly(x.sup()) <= &hi * &hi, "sqrt {x:?}: {root:?}");
            let above = twinstep_exact::next_up(root.inf());
            assert!(
                &lo * &lo == exactly(x.inf().max(0.0)) || exactly(above) * exactly(above) > exactly(x.inf().max(0.0)),
                "sqrt {x:?}: {root:?} not tightest below"
            );
        }
    }

    /// An interval from its bounds (test shorthand; `None` bounds are not valid).
    fn iv(lo: f64, hi: f64) -> Enclosure {
        Enclosure::new(lo, hi).expect("valid")
    }

    #[test]
    fn unbounded_operands_and_zero_divisors_follow_the_set_definition() {
        let inf = f64::INFINITY;
        // Each expected value derived from {x ∘ y : x ∈ X, y ∈ Y} (and y ≠ 0 for ÷), IEEE 1788-2015 §9.1.
        assert_eq!(iv(-inf, -1.0) + iv(-1.0, 8.0), iv(-inf, 7.0)); // sums below −2 without bound, up to −1 + 8
        assert_eq!(iv(-inf, -1.0) - iv(-1.0, 8.0), iv(-inf, 0.0)); // x − y ≤ −1 − (−1)
        assert_eq!(iv(1.0, 2.0) * iv(-inf, 1.0), iv(-inf, 2.0)); // the largest product 2·1, none below bound
        assert_eq!(iv(0.0, 0.0) * Enclosure::ENTIRE, iv(0.0, 0.0)); // 0·y = 0 for every real y
        assert_eq!(iv(0.0, 1.0) * iv(1.0, inf), iv(0.0, inf));
        assert_eq!(iv(-30.0, -15.0) / iv(-5.0, -3.0), iv(3.0, 10.0)); // −15/−5 = 3 to −30/−3 = 10
        assert_eq!(iv(1.0, 2.0) / iv(0.0, 1.0), iv(1.0, inf)); // y ∈ (0, 1]: x/y ≥ 1/1, unbounded as y → 0
        assert_eq!(iv(1.0, 2.0) / iv(-4.0, 0.0), iv(-inf, -0.25)); // y ∈ [−4, 0): x/y ≤ 1/(−4)
        assert_eq!(iv(-2.0, -1.0) / iv(0.0, 4.0), iv(-inf, -0.25)); // y ∈ (0, 4]: x/y ≤ −1/4
        assert_eq!(iv(-2.0, -1.0) / iv(-4.0, 0.0), iv(0.25, inf)); // y ∈ [−4, 0): x/y ≥ −1/−4
        assert_eq!(iv(1.0, 2.0) / iv(-1.0, 1.0), Enclosure::ENTIRE); // both half-lines: their hull is ℝ
        assert_eq!(iv(-1.0, 2.0) / iv(0.0, 1.0), Enclosure::ENTIRE); // 0 inside X and Y
        assert_eq!(iv(0.0, 2.0) / iv(0.0, 1.0), iv(0.0, inf)); // 0/y = 0, the rest ≥ 2
        assert_eq!(iv(0.0, 0.0) / iv(-1.0, 1.0), iv(0.0, 0.0)); // 0/y = 0 for every y ≠ 0
        assert!((iv(1.0, 2.0) / iv(0.0, 0.0)).is_empty()); // no y ≠ 0
        assert_eq!(iv(1.0, 2.0) / iv(3.0, inf), iv(0.0, 2.0 / 3.0 + f64::EPSILON / 2.0)); // 2/3 rounded up, down to 0
        assert_eq!(iv(-5.0, 25.0).sqrt(), iv(0.0, 5.0)); // √ of the part ≥ 0
        assert_eq!(iv(1.0, inf).mul_add(iv(2.0, 3.0), iv(-inf, 0.0)), Enclosure::ENTIRE);
        assert_eq!(iv(1.0, 2.0).mul_add(iv(3.0, 4.0), iv(5.0, 6.0)), iv(8.0, 14.0)); // 1·3 + 5 to 2·4 + 6
        for op in [Enclosure::add, Enclosure::sub, Enclosure::mul, Enclosure::div] {
            assert!(op(Enclosure::EMPTY, iv(1.0, 2.0)).is_empty() && op(iv(1.0, 2.0), Enclosure::EMPTY).is_empty());
        }
    }

    #[test]
    fn endpoints_and_numeric_functions_read_as_the_standard_says() {
        // Zeros: inf −0, sup +0 (IEEE 1788-2015 §12.12.8, from memory).
        let zero = iv(0.0, -0.0);
        assert!(zero.inf().is_sign_negative() && zero.sup().is_sign_positive());
        assert!(Enclosure::new(1.0, 0.0).is_none() && Enclosure::new(f64::INFINITY, f64::INFINITY).is_none());
        assert!(Enclosure::new(f64::NAN, 1.0).is_none());
        assert_eq!(Enclosure::point(f64::INFINITY), iv(f64::MAX, f64::INFINITY));
        assert!(Enclosure::point(f64::NAN).is_empty());
        let x = iv(1.0, 4.0);
        assert_eq!((x.mid(), x.rad(), x.wid(), x.mag(), x.mig()), (2.5, 1.5, 3.0, 4.0, 1.0));
        assert_eq!(iv(-2.0, 3.0).mig(), 0.0);
        assert_eq!((iv(f64::NEG_INFINITY, 1.0).mid(), iv(1.0, f64::INFINITY).mid()), (f64::MIN, f64::MAX));
        assert_eq!(Enclosure::ENTIRE.mid(), 0.0);
        assert_eq!(iv(-f64::MAX, f64::MAX).mid(), 0.0); // the sum overflows nowhere: −MAX + MAX = 0
        assert_eq!(iv(f64::MAX / 2.0, f64::MAX).mid(), f64::MAX * 0.75); // the sum overflows: halves first
        assert!(Enclosure::EMPTY.mid().is_nan() && Enclosure::EMPTY.rad().is_nan());
        // rad: the least r with [mid − r, mid + r] ⊇ X: for [0, 1 + 2^-52] mid is 0.5 + 2^-53, r the same.
        let y = iv(0.0, 1.0 + f64::EPSILON);
        assert!(y.mid() - y.rad() <= 0.0 && y.mid() + y.rad() >= y.sup());
        assert_eq!(iv(-3.0, -1.0).abs(), iv(1.0, 3.0));
        assert_eq!(iv(-3.0, 1.0).abs(), iv(0.0, 3.0));
        assert_eq!(iv(1.0, 2.0).convex_hull(Enclosure::EMPTY), iv(1.0, 2.0));
        assert!(iv(1.0, 2.0).intersection(iv(3.0, 4.0)).is_empty());
        assert_eq!(iv(1.0, 3.0).intersection(iv(2.0, 4.0)), iv(2.0, 3.0));
        assert_eq!(iv(1.0, 2.0).hull_with(f64::NAN), iv(1.0, 2.0));
        assert_eq!(iv(1.0, 2.0).hull_with(-1.0), iv(-1.0, 2.0));
    }
}
