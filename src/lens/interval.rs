//! [`Interval`]: the primal with an inf–sup enclosure of the exact result, computed with inari (IEEE 1788-2015
//! set-based interval arithmetic, here without MPFR: `default-features = false`).
//!
//! The enclosure contains the exact result of the computation along the primal's path, and always the primal
//! itself: + − × ÷ √ and `mul_add` round outward from enclosures that contain the primal operands, so they contain
//! the round-to-nearest primal result too (it lies between the downward and upward roundings); the elementary
//! functions ([`super::elementary`]) take the hull with the primal explicitly. Hence
//! `|primal − exact| ≤ max(primal − inf, sup − primal)`.
//!
//! inari's arithmetic needs FMA/AVX2 on x86-64 (`-C target-cpu=haswell`, set in the workspace's
//! `.cargo/config.toml`).

use crate::events::{record, EventKind};
use crate::lens::eft::{exact_product, exact_quotient, round_down, round_up, two_sum};
use crate::lens::elementary::interval;
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use crate::lens::Lens;

/// A value with a guaranteed enclosure `[inf, sup]` of its exact counterpart.
///
/// The bounds are kept as the two doubles inari's `inf()` and `sup()` return (a zero lower bound as −0, a zero
/// upper bound as +0, the empty set as (+∞, −∞)), so the hot operations read and write them directly instead of
/// going through inari's packed `[−inf; sup]` representation and its normalizing accessors.
#[derive(Clone, Copy, Debug)]
pub struct IntervalOf<const WATCH: bool> {
    primal: f64,
    inf: f64,
    sup: f64,
}

super::watch_variants!(IntervalOf, Interval, IntervalUnwatched);

impl<const W: bool> IntervalOf<W> {
    /// A primal with an enclosure (the enclosure is widened to hold the primal).
    #[must_use]
    pub fn new(primal: f64, enclosure: inari::Interval) -> Self {
        Self::around(primal, enclosure)
    }

    /// The enclosure of the exact value.
    #[must_use]
    pub fn enclosure(self) -> inari::Interval {
        inari::Interval::try_from((self.inf, self.sup)).unwrap_or(inari::Interval::EMPTY)
    }

    /// The primal with `out` widened to hold it.
    fn around(primal: f64, out: inari::Interval) -> Self {
        Self::of(primal, out.convex_hull(point(primal)))
    }

    /// The primal with the enclosure `out` as it is.
    #[inline(always)]
    fn of(primal: f64, out: inari::Interval) -> Self {
        Self { primal, inf: out.inf(), sup: out.sup() }
    }

    /// The primal with the bounds of a fast path, or with inari's enclosure `slow` when the fast path declined.
    #[inline(always)]
    fn bounded(primal: f64, fast: Option<(f64, f64)>, slow: impl FnOnce() -> inari::Interval) -> Self {
        match fast {
            Some((low, high)) => Self::from_bounds(primal, low, high),
            None => Self::of(primal, slow()),
        }
    }

    /// The primal with the bounds `[low, high]` of a fast path (a non-empty enclosure).
    #[inline(always)]
    fn from_bounds(primal: f64, low: f64, high: f64) -> Self {
        Self { primal, inf: lower(low), sup: upper(high) }
    }

    /// Whether the enclosure is the empty set (a domain error upstream).
    #[inline(always)]
    fn is_empty(self) -> bool {
        self.inf > self.sup
    }
}

/// A lower bound as inari's `inf()` gives it: −0 for a zero bound (IEEE 1788-2015 §12.12.8 asks inf of an
/// interval with a zero lower bound to be −0; from memory), the bound otherwise. −((−x) + 0) is −(+0) = −0 for
/// x = ±0 (a sum of opposite zeros is +0 in round-to-nearest, IEEE 754-2019 §6.3) and x for any other x.
#[inline(always)]
fn lower(x: f64) -> f64 {
    -((-x) + 0.0)
}

/// An upper bound as inari's `sup()` gives it: +0 for a zero bound (x + 0 = +0 for x = ±0), x otherwise.
#[inline(always)]
fn upper(x: f64) -> f64 {
    x + 0.0
}

/// A double as an enclosure: the point, `[MAX, +∞]` for +∞ (IEEE 1788 intervals hold reals only), empty for NaN.
#[inline(always)]
fn point(x: f64) -> inari::Interval {
    interval(x, x)
}

/// The fast path of + and −: `[a + c↓, b + d↑]` by TwoSum and a directed step (exactly the IEEE 754-2019
/// directed roundings inari computes with a rounding-mode switch, without the switch), or `None` when a sum is
/// not finite (unbounded or empty operands, overflow), where TwoSum is not exact.
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

/// The fast path of ×: the four endpoint products with their exact errors (TwoProd by FMA), the least rounded
/// down and the greatest rounded up — the tightest enclosure, as inari's case table gives — or `None` when an
/// operand is unbounded or empty or a product leaves the range where its error is exact.
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

/// The fast path of ÷ for a divisor enclosure that excludes 0: x/y is monotone in each argument there, so the
/// extremes are among the four endpoint quotients (each with the sign of its exact remainder); `None` when the
/// divisor holds 0, an operand is unbounded or empty, or a quotient leaves the range where its residual is exact.
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

impl<const W: bool> Core for IntervalOf<W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        if value.is_finite() {
            Self { primal: value, inf: lower(value), sup: upper(value) } // the point [x, x]
        } else {
            Self::of(value, point(value))
        }
    }

    #[inline]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        let (down, up) = (reference.down, reference.up);
        if down.is_finite() && up.is_finite() && value.is_finite() && down <= up {
            // The hull of [down, up] and the primal, as inari's `convex_hull` gives it, without the round trip.
            Self::from_bounds(value, down.min(value), up.max(value))
        } else {
            Self::around(value, interval(down, up))
        }
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        (self.inf, self.sup)
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        if self.is_empty() || rhs.is_empty() {
            return Orders::NONE;
        }
        Orders::of_ranges(self.inf, self.sup, rhs.inf, rhs.sup)
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        let ((a, b), (c, d)) = (self.range(), rhs.range());
        // [a, b] + [c, d] = [a+c↓, b+d↑]; inari (rounding-mode switch) for unbounded or empty operands.
        let fast = sum_enclosure(a, c, b, d);
        Self::bounded(self.primal + rhs.primal, fast, || self.enclosure() + rhs.enclosure())
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        let ((a, b), (c, d)) = (self.range(), rhs.range());
        // [a, b] − [c, d] = [a−d↓, b−c↑] = [a + (−d)↓, b + (−c)↑] (negation is exact)
        let fast = sum_enclosure(a, -d, b, -c);
        Self::bounded(self.primal - rhs.primal, fast, || self.enclosure() - rhs.enclosure())
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        // [a, b]·[c, d] = [min(ac, ad, bc, bd)↓, max(ac, ad, bc, bd)↑]; inari's case table where that fails.
        let fast = product_enclosure(self.range(), rhs.range());
        Self::bounded(self.primal * rhs.primal, fast, || self.enclosure() * rhs.enclosure())
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.inf <= 0.0 && 0.0 <= rhs.sup && rhs.primal.is_finite() {
            record(EventKind::DivisorMayBeZero);
        }
        // IEEE 1788 division: [a, b]/[c, d] with 0 ∉ [c, d] is [min(a/c, a/d, b/c, b/d)↓, max(…)↑]; inari's case
        // table for the rest (half-lines or ℝ when 0 ∈ [c, d]).
        let primal = self.primal / rhs.primal;
        match quotient_enclosure(self.range(), rhs.range()) {
            // The primal lies between the directed roundings already; the hull keeps the guarantee explicit, as
            // for inari's result (f64::min/max ignore a NaN primal, as the hull with the empty set does).
            Some((low, high)) => Self::from_bounds(primal, low.min(primal), high.max(primal)),
            None => Self::around(primal, self.enclosure() / rhs.enclosure()),
        }
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y
        let q = ((self.primal - c) / rhs.primal).round();
        let quotients = self.enclosure() / rhs.enclosure();
        if quotients.inf().trunc() != quotients.sup().trunc() {
            record(EventKind::UndecidedComparison); // the exact quotient may truncate to another integer
        }
        // Along the primal's path: X − q·Y.
        Self::around(c, self.enclosure() - point(q) * rhs.enclosure())
    }

    #[inline(always)]
    fn neg(self) -> Self {
        // −[a, b] = [−b, −a] (exact); the empty set (+∞, −∞) stays empty.
        Self { primal: -self.primal, inf: lower(-self.sup), sup: upper(-self.inf) }
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        let primal = self.primal.mul_add(a.primal, b.primal);
        Self::around(primal, self.enclosure().mul_add(a.enclosure(), b.enclosure()))
    }

    #[inline(always)]
    fn abs(self) -> Self {
        Self::of(self.primal.abs(), self.enclosure().abs())
    }

    crate::enclosed_functions!(
        unary: [sqrt cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos atan sinh cosh tanh],
        binary: [powf log atan2 hypot]
    );
}

crate::lens_scalar!(IntervalOf);

impl<const W: bool> core::fmt::Display for IntervalOf<W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{} ∈ [{:e}, {:e}]", self.primal, self.inf, self.sup)
    }
}

impl<const W: bool> Lens for IntervalOf<W> {
    const NAME: &'static str = if W { "interval" } else { "interval-unwatched" };
    const GUARANTEED: bool = true;
    super::variant_conversions!(IntervalOf { primal, inf, sup });

    fn error_estimate(self) -> f64 {
        self.error_bound().unwrap_or(f64::INFINITY)
    }

    fn error_bound(self) -> Option<f64> {
        if self.is_empty() {
            return Some(f64::INFINITY);
        }
        // max(primal − inf, sup − primal), each difference rounded up: `two_sum` gives its exact rounding error
        // (Knuth, TAOCP vol. 2, §4.2.2, from memory) and `round_up` steps to the next double when the error is
        // positive. Straight-line code, because the audit evaluates it for every cell after every step (inari's
        // interval subtraction switched the rounding mode per cell and was most of the measurement's cost).
        let below = {
            let (s, e) = two_sum(self.primal, -self.inf);
            round_up(s, e)
        };
        let above = {
            let (s, e) = two_sum(self.sup, -self.primal);
            round_up(s, e)
        };
        Some(below.max(above))
    }

    fn reference_value(self) -> f64 {
        self.enclosure().mid()
    }
}

#[cfg(test)]
mod tests {
    //! The round-to-nearest fast paths against inari's own operations (an independent IEEE 1788-2015
    //! implementation with hardware directed rounding): both must give the same tightest enclosure, bit for bit.

    use super::*;

    /// Endpoints that exercise the cases: signs, zeros, exact halves, values near the underflow margin and the
    /// overflow threshold, and pseudo-random doubles (a xorshift generator, common practice, no source).
    fn endpoints() -> Vec<f64> {
        let mut values = vec![0.0, -0.0, 1.0, -1.0, 0.1, -0.3, 3.0, 1e-300, -1e-280, 1e300, -1e308, f64::MAX];
        let mut state = 0x9E37_79B9_7F4A_7C15_u64;
        for _ in 0..60 {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let magnitude = f64::from_bits((state >> 12) | 0x3FF0_0000_0000_0000) - 1.0; // [0, 1)
            let exponent = ((state & 0xFF) as i32) - 128; // 2^-128 … 2^127
            values.push(if state & 0x100 == 0 { magnitude } else { -magnitude } * 2f64.powi(exponent));
        }
        values
    }

    fn intervals() -> Vec<inari::Interval> {
        let ends = endpoints();
        let mut out = vec![inari::Interval::EMPTY, inari::Interval::ENTIRE, interval(1.0, f64::INFINITY)];
        for (i, &x) in ends.iter().enumerate() {
            for &y in ends.iter().skip(i).step_by(7) {
                out.push(interval(x.min(y), x.max(y)));
            }
        }
        out
    }

    fn same(fast: Option<(f64, f64)>, reference: inari::Interval, what: &str) {
        if let Some((low, high)) = fast {
            let agree = low.to_bits() == reference.inf().to_bits() || (low == 0.0 && reference.inf() == 0.0);
            let agree =
                agree && (high.to_bits() == reference.sup().to_bits() || (high == 0.0 && reference.sup() == 0.0));
            assert!(agree, "{what}: fast [{low:e}, {high:e}] inari {reference:?}");
        }
    }

    #[test]
    fn fast_paths_give_inaris_enclosures() {
        let all = intervals();
        let mut taken = 0;
        for &x in &all {
            for &y in &all {
                let bounds = |v: inari::Interval| (v.inf(), v.sup());
                let ((a, b), (c, d)) = (bounds(x), bounds(y));
                same(sum_enclosure(a, c, b, d), x + y, &format!("{x:?} + {y:?}"));
                same(sum_enclosure(a, -d, b, -c), x - y, &format!("{x:?} - {y:?}"));
                let product = product_enclosure(bounds(x), bounds(y));
                taken += usize::from(product.is_some());
                same(product, x * y, &format!("{x:?} * {y:?}"));
                same(quotient_enclosure(bounds(x), bounds(y)), x / y, &format!("{x:?} / {y:?}"));
            }
        }
        // The check must not pass vacuously: most pairs of bounded intervals take the fast path.
        assert!(taken > all.len() * all.len() / 2, "{taken} of {}", all.len() * all.len());
    }

    /// A lens value on `x`, its primal at a point inside (the midpoint where it is finite).
    fn lens(x: inari::Interval) -> IntervalOf<false> {
        let primal = if x.is_empty() { f64::NAN } else { x.mid() };
        IntervalOf::new(primal, x)
    }

    /// Bit-identical bounds as inari's `inf()` and `sup()` report them (zero signs included).
    fn identical(ours: IntervalOf<false>, reference: inari::Interval, what: &str) {
        let theirs = (reference.inf().to_bits(), reference.sup().to_bits());
        assert_eq!((ours.inf.to_bits(), ours.sup.to_bits()), theirs, "{what}: ours {ours} inari {reference:?}");
        assert_eq!(ours.enclosure(), reference, "{what}");
    }

    #[test]
    fn lens_operations_keep_inaris_bounds() {
        let all = intervals();
        for &x in &all {
            identical(Core::neg(lens(x)), -x, &format!("-{x:?}"));
            identical(IntervalOf::<false>::exact(x.inf()), point(x.inf()), &format!("point {}", x.inf()));
            if !x.is_empty() {
                // A reference [down, up] = x around a primal that may lie outside it (the compiled double of a
                // literal is within one ulp of the reference, not always inside [down, up]).
                let reference = Reference { hi: x.inf(), lo: 0.0, err: 0.0, down: x.inf(), up: x.sup() };
                for primal in [x.inf(), x.sup(), 0.5, -3.0] {
                    let ours = IntervalOf::<false>::with_reference(primal, &reference);
                    identical(ours, x.convex_hull(point(primal)), &format!("{x:?} around {primal}"));
                }
            }
            for &y in &all {
                let (a, b) = (lens(x), lens(y));
                identical(Core::add(a, b), x + y, &format!("{x:?} + {y:?}"));
                identical(Core::sub(a, b), x - y, &format!("{x:?} - {y:?}"));
                identical(Core::mul(a, b), x * y, &format!("{x:?} * {y:?}"));
                // ÷ also holds the primal (hull), which the midpoints' quotient lies in already.
                identical(Core::div(a, b), (x / y).convex_hull(point(a.primal / b.primal)), &format!("{x:?} / {y:?}"));
            }
        }
    }

    #[test]
    fn unbounded_empty_and_zero_divisors_take_inaris_path() {
        let unit = (1.0, 2.0);
        assert!(product_enclosure((f64::NEG_INFINITY, 1.0), unit).is_none());
        // 0 ∈ divisor: half-lines or ℝ (IEEE 1788).
        assert!(quotient_enclosure(unit, (-1.0, 1.0)).is_none());
        // An empty divisor, then an empty operand: inari's inf/sup of the empty set are (+∞, −∞).
        assert!(quotient_enclosure((0.0, 0.0), (f64::INFINITY, f64::NEG_INFINITY)).is_none());
        assert!(sum_enclosure(f64::INFINITY, 1.0, f64::NEG_INFINITY, 2.0).is_none());
    }
}
