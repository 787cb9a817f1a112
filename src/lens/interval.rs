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
#[derive(Clone, Copy, Debug)]
pub struct IntervalOf<const WATCH: bool> {
    primal: f64,
    enclosure: inari::Interval,
}

/// The lens as audits use it: every operation watches for NaN/∞ and records the event at the caller's line.
pub type Interval = IntervalOf<true>;

/// The same lens without the per-operation NaN/∞ test: the reference and every other event are the same, a
/// non-finite value still propagates (and shows in the field), but the operation producing it is not recorded.
/// Loops over it can vectorize; see the benchmark in `docs/lenses.md`.
pub type IntervalUnwatched = IntervalOf<false>;

impl<const W: bool> IntervalOf<W> {
    /// A primal with an enclosure (the enclosure is widened to hold the primal).
    #[must_use]
    pub fn new(primal: f64, enclosure: inari::Interval) -> Self {
        Self::around(primal, enclosure)
    }

    /// The enclosure of the exact value.
    #[must_use]
    pub fn enclosure(self) -> inari::Interval {
        self.enclosure
    }

    /// The primal with `out` widened to hold it.
    fn around(primal: f64, out: inari::Interval) -> Self {
        Self { primal, enclosure: out.convex_hull(point(primal)) }
    }
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
fn sum_enclosure(a: f64, c: f64, b: f64, d: f64) -> Option<inari::Interval> {
    let (low, low_error) = two_sum(a, c); // low + low_error = a + c exactly (Knuth)
    let (high, high_error) = two_sum(b, d);
    if !(low.is_finite() && high.is_finite()) {
        return None;
    }
    Some(interval(round_down(low, low_error), round_up(high, high_error)))
}

/// The fast path of ×: the four endpoint products with their exact errors (TwoProd by FMA), the least rounded
/// down and the greatest rounded up — the tightest enclosure, as inari's case table gives — or `None` when an
/// operand is unbounded or empty or a product leaves the range where its error is exact.
#[inline(always)]
fn product_enclosure((a, b): (f64, f64), (c, d): (f64, f64)) -> Option<inari::Interval> {
    let products = [exact_product(a, c)?, exact_product(a, d)?, exact_product(b, c)?, exact_product(b, d)?];
    Some(directed_hull(products))
}

/// The fast path of ÷ for a divisor enclosure that excludes 0: x/y is monotone in each argument there, so the
/// extremes are among the four endpoint quotients (each with the sign of its exact remainder); `None` when the
/// divisor holds 0, an operand is unbounded or empty, or a quotient leaves the range where its residual is exact.
#[inline(always)]
fn quotient_enclosure((a, b): (f64, f64), (c, d): (f64, f64)) -> Option<inari::Interval> {
    if !(c > 0.0 || d < 0.0) {
        return None;
    }
    let quotients = [exact_quotient(a, c)?, exact_quotient(a, d)?, exact_quotient(b, c)?, exact_quotient(b, d)?];
    Some(directed_hull(quotients))
}

/// `[min vᵢ↓, max vᵢ↑]` of exact values vᵢ = sᵢ + eᵢ given as round-to-nearest doubles and remainders: rounding
/// is monotone, so the rounded-down minimum is the minimum of the rounded-down values (likewise up).
#[inline(always)]
fn directed_hull(values: [(f64, f64); 4]) -> inari::Interval {
    let low = values.iter().map(|&(s, e)| round_down(s, e)).fold(f64::INFINITY, f64::min);
    let high = values.iter().map(|&(s, e)| round_up(s, e)).fold(f64::NEG_INFINITY, f64::max);
    interval(low, high)
}

impl<const W: bool> Core for IntervalOf<W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self { primal: value, enclosure: point(value) }
    }

    #[inline]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        Self::around(value, interval(reference.down, reference.up))
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        (self.enclosure.inf(), self.enclosure.sup())
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        if self.enclosure.is_empty() || rhs.enclosure.is_empty() {
            return Orders::NONE;
        }
        Orders::of_ranges(self.enclosure.inf(), self.enclosure.sup(), rhs.enclosure.inf(), rhs.enclosure.sup())
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        let ((a, b), (c, d)) = (self.range(), rhs.range());
        // [a, b] + [c, d] = [a+c↓, b+d↑]; inari (rounding-mode switch) for unbounded or empty operands.
        let fast = sum_enclosure(a, c, b, d);
        Self { primal: self.primal + rhs.primal, enclosure: fast.unwrap_or_else(|| self.enclosure + rhs.enclosure) }
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        let ((a, b), (c, d)) = (self.range(), rhs.range());
        // [a, b] − [c, d] = [a−d↓, b−c↑] = [a + (−d)↓, b + (−c)↑] (negation is exact)
        let fast = sum_enclosure(a, -d, b, -c);
        Self { primal: self.primal - rhs.primal, enclosure: fast.unwrap_or_else(|| self.enclosure - rhs.enclosure) }
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        // [a, b]·[c, d] = [min(ac, ad, bc, bd)↓, max(ac, ad, bc, bd)↑]; inari's case table where that fails.
        let fast = product_enclosure(self.range(), rhs.range());
        Self { primal: self.primal * rhs.primal, enclosure: fast.unwrap_or_else(|| self.enclosure * rhs.enclosure) }
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.enclosure.contains(0.0) && rhs.primal.is_finite() {
            record(EventKind::DivisionByZeroEnclosure);
        }
        // IEEE 1788 division: [a, b]/[c, d] with 0 ∉ [c, d] is [min(a/c, a/d, b/c, b/d)↓, max(…)↑]; inari's case
        // table for the rest (half-lines or ℝ when 0 ∈ [c, d]).
        let fast = quotient_enclosure(self.range(), rhs.range());
        Self::around(self.primal / rhs.primal, fast.unwrap_or_else(|| self.enclosure / rhs.enclosure))
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y
        let q = ((self.primal - c) / rhs.primal).round();
        let quotients = self.enclosure / rhs.enclosure;
        if quotients.inf().trunc() != quotients.sup().trunc() {
            record(EventKind::BranchInstability); // the exact quotient may truncate to another integer
        }
        // Along the primal's path: X − q·Y.
        Self::around(c, self.enclosure - point(q) * rhs.enclosure)
    }

    #[inline(always)]
    fn neg(self) -> Self {
        Self { primal: -self.primal, enclosure: -self.enclosure }
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        let primal = self.primal.mul_add(a.primal, b.primal);
        Self::around(primal, self.enclosure.mul_add(a.enclosure, b.enclosure))
    }

    #[inline(always)]
    fn abs(self) -> Self {
        Self { primal: self.primal.abs(), enclosure: self.enclosure.abs() }
    }

    crate::enclosed_functions!(
        unary: [sqrt cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos atan sinh cosh tanh],
        binary: [powf log atan2 hypot]
    );
}

crate::lens_scalar!(IntervalOf);

impl<const W: bool> core::fmt::Display for IntervalOf<W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{} ∈ [{:e}, {:e}]", self.primal, self.enclosure.inf(), self.enclosure.sup())
    }
}

impl<const W: bool> Lens for IntervalOf<W> {
    const NAME: &'static str = if W { "interval" } else { "interval-unwatched" };
    const GUARANTEED: bool = true;

    fn error_estimate(self) -> f64 {
        self.error_bound().unwrap_or(f64::INFINITY)
    }

    fn error_bound(self) -> Option<f64> {
        if self.enclosure.is_empty() {
            return Some(f64::INFINITY);
        }
        // max(primal − inf, sup − primal), rounded up by inari.
        Some((self.enclosure - point(self.primal)).mag())
    }

    fn reference_value(self) -> f64 {
        self.enclosure.mid()
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

    fn same(fast: Option<inari::Interval>, reference: inari::Interval, what: &str) {
        if let Some(fast) = fast {
            let agree = (fast.is_empty() && reference.is_empty())
                || (fast.inf() == reference.inf() && fast.sup() == reference.sup());
            assert!(agree, "{what}: fast {fast:?} inari {reference:?}");
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

    #[test]
    fn unbounded_empty_and_zero_divisors_take_inaris_path() {
        let unit = (1.0, 2.0);
        assert!(product_enclosure((f64::NEG_INFINITY, 1.0), unit).is_none());
        assert!(quotient_enclosure(unit, (-1.0, 1.0)).is_none()); // 0 ∈ divisor: half-lines or ℝ (IEEE 1788)
        assert!(quotient_enclosure((0.0, 0.0), (f64::INFINITY, f64::NEG_INFINITY)).is_none()); // empty divisor
                                                                                               // An empty operand: inari's inf/sup of the empty set are (+∞, −∞).
        assert!(sum_enclosure(f64::INFINITY, 1.0, f64::NEG_INFINITY, 2.0).is_none());
    }
}
