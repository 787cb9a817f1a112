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
        Self { primal: self.primal + rhs.primal, enclosure: self.enclosure + rhs.enclosure }
        // [a+c↓, b+d↑]
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        Self { primal: self.primal - rhs.primal, enclosure: self.enclosure - rhs.enclosure }
        // [a−d↓, b−c↑]
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        // [min(ac, ad, bc, bd)↓, max(…)↑] (inari's case table)
        Self { primal: self.primal * rhs.primal, enclosure: self.enclosure * rhs.enclosure }
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.enclosure.contains(0.0) && rhs.primal.is_finite() {
            record(EventKind::DivisionByZeroEnclosure);
        }
        // IEEE 1788 division: [a, b]/[c, d] with 0 ∉ [c, d] by the case table; half-lines or ℝ when 0 ∈ [c, d].
        Self::around(self.primal / rhs.primal, self.enclosure / rhs.enclosure)
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
