//! [`Interval`]: the primal with an inf–sup enclosure of the exact result, in IEEE 1788-2015 set-based interval
//! arithmetic ([`Enclosure`], pure Rust: directed roundings by error-free transformations, no rounding-mode
//! switch, no CPU feature).
//!
//! The enclosure contains the exact result of the computation along the primal's path, and always the primal
//! itself: + − × ÷ √ and `mul_add` round outward from enclosures that contain the primal operands, so they contain
//! the round-to-nearest primal result too (it lies between the downward and upward roundings); the elementary
//! functions ([`super::elementary`]) take the hull with the primal explicitly. Hence
//! `|primal − exact| ≤ max(primal − inf, sup − primal)`.

use crate::events::{record, EventKind};
use crate::lens::eft::{round_up, two_sum};
use crate::lens::enclosure::{lower, upper, Enclosure};
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use crate::lens::Lens;

/// A value with a guaranteed enclosure `[inf, sup]` of its exact counterpart.
///
/// The bounds are kept as the two doubles [`Enclosure::inf`] and [`Enclosure::sup`] return (a zero lower bound as
/// −0, a zero upper bound as +0, the empty set as (+∞, −∞)), so the hot operations read and write them directly.
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
    pub fn new(primal: f64, enclosure: Enclosure) -> Self {
        Self::around(primal, enclosure)
    }

    /// The enclosure of the exact value.
    #[inline(always)]
    #[must_use]
    pub fn enclosure(self) -> Enclosure {
        Enclosure::stored(self.inf, self.sup)
    }

    /// The primal with `out` widened to hold it.
    #[inline(always)]
    fn around(primal: f64, out: Enclosure) -> Self {
        Self::of(primal, out.hull_with(primal))
    }

    /// The primal with the enclosure `out` as it is.
    #[inline(always)]
    fn of(primal: f64, out: Enclosure) -> Self {
        Self { primal, inf: out.inf(), sup: out.sup() }
    }

    /// Whether the enclosure is the empty set (a domain error upstream).
    #[inline(always)]
    fn is_empty(self) -> bool {
        self.inf > self.sup
    }
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
            Self::of(value, Enclosure::point(value))
        }
    }

    #[inline]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        Self::around(value, Enclosure::between(reference.down, reference.up))
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
        // [a, b] + [c, d] = [a+c↓, b+d↑] (Enclosure's fast path inlined, its case table cold).
        Self::of(self.primal + rhs.primal, self.enclosure() + rhs.enclosure())
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        // [a, b] − [c, d] = [a−d↓, b−c↑]
        Self::of(self.primal - rhs.primal, self.enclosure() - rhs.enclosure())
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        // [a, b]·[c, d] = [min(ac, ad, bc, bd)↓, max(ac, ad, bc, bd)↑]
        Self::of(self.primal * rhs.primal, self.enclosure() * rhs.enclosure())
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.inf <= 0.0 && 0.0 <= rhs.sup && rhs.primal.is_finite() {
            record::<Self>(EventKind::DivisorMayBeZero);
        }
        // IEEE 1788 division: [a, b]/[c, d] with 0 ∉ [c, d] is [min(a/c, a/d, b/c, b/d)↓, max(…)↑]; half-lines or
        // ℝ when 0 ∈ [c, d]. The primal lies between the directed roundings already; the hull keeps the guarantee
        // explicit for the case table's results.
        Self::around(self.primal / rhs.primal, self.enclosure() / rhs.enclosure())
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y
        let q = ((self.primal - c) / rhs.primal).round();
        let quotients = self.enclosure() / rhs.enclosure();
        if quotients.inf().trunc() != quotients.sup().trunc() {
            record::<Self>(EventKind::UndecidedComparison); // the exact quotient may truncate to another integer
        }
        // Along the primal's path: X − q·Y.
        Self::around(c, self.enclosure() - Enclosure::point(q) * rhs.enclosure())
    }

    #[inline(always)]
    fn neg(self) -> Self {
        // −[a, b] = [−b, −a] (exact); the empty set (+∞, −∞) stays empty.
        Self::of(-self.primal, -self.enclosure())
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
        // positive. Straight-line code, because the audit evaluates it for every cell after every step (an interval
        // subtraction that switched the rounding mode per cell was once most of the measurement's cost).
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
    //! The lens's bounds are its enclosure's: each operation gives the [`Enclosure`] result of the operands'
    //! enclosures (checked against exact rationals in `src/lens/enclosure.rs`), widened to hold the primal.

    use super::*;

    /// Endpoints with signs, zeros, tiny and huge values.
    fn intervals() -> Vec<Enclosure> {
        let ends = [0.0, -0.0, 1.0, -1.0, 0.1, -0.3, 3.0, 1e-300, -1e-280, 1e300, -1e308, f64::MAX, f64::INFINITY];
        let mut out = vec![Enclosure::EMPTY, Enclosure::ENTIRE];
        for (i, &x) in ends.iter().enumerate() {
            for &y in &ends[i..] {
                out.push(Enclosure::between(x.min(y), x.max(y)));
                out.push(Enclosure::between(-x.max(y), -x.min(y)));
            }
        }
        out
    }

    /// A lens value on `x`, its primal at a point inside (the midpoint where it is finite).
    fn lens(x: Enclosure) -> IntervalOf<false> {
        IntervalOf::new(x.mid(), x)
    }

    /// Bit-identical bounds (zero signs included).
    fn identical(ours: IntervalOf<false>, expected: Enclosure, what: &str) {
        let theirs = (expected.inf().to_bits(), expected.sup().to_bits());
        assert_eq!((ours.inf.to_bits(), ours.sup.to_bits()), theirs, "{what}: ours {ours} expected {expected:?}");
    }

    #[test]
    fn lens_operations_keep_the_enclosures_bounds() {
        let all = intervals();
        for &x in &all {
            identical(Core::neg(lens(x)), -x, &format!("-{x:?}"));
            identical(IntervalOf::<false>::exact(x.inf()), Enclosure::point(x.inf()), &format!("point {}", x.inf()));
            if !x.is_empty() && x.inf().is_finite() && x.sup().is_finite() {
                // A reference [down, up] = x around a primal that may lie outside it (the compiled double of a
                // literal is within one ulp of the reference, not always inside [down, up]).
                let reference = Reference { hi: x.inf(), lo: 0.0, err: 0.0, down: x.inf(), up: x.sup() };
                for primal in [x.inf(), x.sup(), 0.5, -3.0] {
                    let ours = IntervalOf::<false>::with_reference(primal, &reference);
                    identical(ours, x.hull_with(primal), &format!("{x:?} around {primal}"));
                }
            }
            for &y in &all {
                let (a, b) = (lens(x), lens(y));
                // The midpoints' results lie in the enclosures' already, so the hull with the primal adds nothing.
                identical(Core::add(a, b), x + y, &format!("{x:?} + {y:?}"));
                identical(Core::sub(a, b), x - y, &format!("{x:?} - {y:?}"));
                identical(Core::mul(a, b), x * y, &format!("{x:?} * {y:?}"));
                identical(Core::div(a, b), (x / y).hull_with(a.primal / b.primal), &format!("{x:?} / {y:?}"));
            }
        }
    }

    #[test]
    fn error_bounds_reach_the_farther_endpoint() {
        // [1, 4] around 1.5: the exact value may be 4, 2.5 away (exact in binary64).
        assert_eq!(IntervalOf::<true>::new(1.5, Enclosure::between(1.0, 4.0)).error_bound(), Some(2.5));
        assert_eq!(IntervalOf::<true>::new(1.0, Enclosure::EMPTY).error_bound(), Some(0.0));
    }
}
