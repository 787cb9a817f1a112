//! [`Bound`]: the primal with a rigorous radius, `|primal − exact| ≤ radius` — midpoint-radius ("ball")
//! arithmetic in round-to-nearest, the fast default lens.
//!
//! The midpoint *is* the primal, so the float program's values are untouched and the radius is the guaranteed
//! error. The formulas follow the style of Rump, "Fast and parallel interval arithmetic", BIT 39(3), 1999 (from
//! memory): compute the midpoint as the float program does, bound the radius by the propagated input radii plus
//! the rounding of the midpoint, and make the radius computation itself safe without changing the rounding mode.
//!
//! Facts used (IEEE 754-2019 round-to-nearest; u = 2^-53, η = 2^-1074; Higham, "Accuracy and Stability of
//! Numerical Algorithms", 2nd ed., §2.2, from memory):
//! - rounding: `|fl(a∘b) − a∘b| ≤ u·|fl(a∘b)| + η/2` (the η term only for × and ÷ in the subnormal range);
//! - a formula of k operations on non-negative doubles evaluated in round-to-nearest is at least `(1 − u)^k`
//!   times its exact value (less k·η/2 for subnormal products), so scaling it by `1 + 16u` and adding a small
//!   normal floor at the end makes it an upper bound for k ≤ 10 — `radius_of`, two FMAs per operation.
//!
//! The hot operations are branch-free straight-line code (selects at most); with the per-operation NaN/∞ watch
//! switched off ([`BoundUnwatched`]) loops over them can vectorize.
//! Elementary functions go through [`super::elementary`] (libm plus a documented allowance).

use crate::events::{record, EventKind};
use crate::lens::eft::mul_acc;
use crate::lens::elementary::interval;
use crate::lens::enclosure::Enclosure;
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use crate::lens::Lens;

/// The unit roundoff of binary64, u = 2^-53.
const U: f64 = f64::EPSILON / 2.0;
/// The smallest positive subnormal, η = 2^-1074.
const ETA: f64 = f64::from_bits(1);
/// 1 + 2^-49 = 1 + 16u: covers up to 14 roundings (each at most a factor 1 − u) of a non-negative formula.
const INFLATION: f64 = 1.0 + 16.0 * U;

/// The radius of a result `c` rounded to nearest whose exact counterpart lies within `propagated` of the exact
/// operation on the primals: an upper bound of `u·|c| + η/2 + propagated`, where `propagated` is a formula of
/// non-negative terms evaluated in round-to-nearest with at most 10 roundings (and at most 10 subnormal
/// products, each off by ≤ η/2). Two multiply-adds ([`mul_acc`]): with a hardware FMA one rounding each,
/// `fl(2u·|c| + fl(propagated·(1 + 16u) + τ))` ≥ `(1 − u)²·(2u|c| + (1 − u)^10 (1 + 16u)·exact + τ)`, where
/// `(1 − u)^12·(1 + 16u) ≥ 1 + 4u`; without, two roundings each,
/// `fl(fl(2u·|c|) + fl(fl(propagated·(1 + 16u)) + τ))` ≥
/// `(1 − u)·(2u|c| − η/2) + (1 − u)^13 (1 + 16u)·exact + (1 − u)²·τ − η/2`, where `(1 − u)^13·(1 + 16u) ≥ 1 + 2u`
/// (the product `2u·|c|` is a power-of-two scaling, exact unless subnormal, and a subnormal
/// `propagated·(1 + 16u)` is off by at most η/2: τ covers both). Either way the result is at least
/// `u|c| + exact + 5η`, with τ = [`FLOOR`] ≥ 8η.
#[inline(always)]
fn radius_of(c: f64, propagated: f64) -> f64 {
    mul_acc(c.abs(), 2.0 * U, mul_acc(propagated, INFLATION, FLOOR))
}

/// The absolute term of every radius, 2^-1019: a *normal* number, far above the 8η the subnormal roundings need,
/// so that radii never become subnormal — subnormal operands cost a microcode assist of about a hundred cycles
/// per operation on x86 (measured in `benches/lenses.rs`: 30× slower with 8η). Its size, 2·10^-307, is far below
/// any radius a report shows.
const FLOOR: f64 = 8.0 * f64::MIN_POSITIVE;

/// A value with a guaranteed error radius: the exact result of the same computation in real arithmetic lies in
/// `[primal − radius, primal + radius]`.
#[derive(Clone, Copy, Debug)]
pub struct BoundOf<const WATCH: bool> {
    primal: f64,
    radius: f64,
}

super::watch_variants!(BoundOf, Bound, BoundUnwatched);

impl<const W: bool> BoundOf<W> {
    /// A value `primal` whose exact counterpart is known to lie within `radius` of it.
    #[must_use]
    pub fn new(primal: f64, radius: f64) -> Self {
        Self { primal, radius: radius.abs() }
    }

    /// The guaranteed radius (infinite once the bound is lost, e.g. after a division by an enclosure of zero).
    #[must_use]
    pub fn radius(self) -> f64 {
        if self.radius.is_nan() {
            f64::INFINITY
        } else {
            self.radius
        }
    }

    /// The enclosure `[primal − radius, primal + radius]`, rounded outward.
    #[must_use]
    pub fn enclosure(self) -> Enclosure {
        if self.radius == 0.0 {
            interval(self.primal, self.primal)
        } else {
            interval(self.primal, self.primal) + interval(-self.radius(), self.radius())
        }
    }

    /// The primal with the smallest radius whose ball contains the enclosure `out`: `max|out − primal|`,
    /// computed outward. An empty `out` (a domain error) loses the bound.
    fn around(primal: f64, out: Enclosure) -> Self {
        if out.is_empty() || !primal.is_finite() {
            return Self { primal, radius: f64::INFINITY };
        }
        Self { primal, radius: (out - interval(primal, primal)).mag() }
    }
}

impl<const W: bool> Core for BoundOf<W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self { primal: value, radius: 0.0 }
    }

    #[inline]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        // |value − x| ≤ |value − hi| + |lo| + |x − hi − lo|
        let radius = (value - reference.hi).abs() + reference.lo.abs() + reference.err;
        Self { primal: value, radius: if radius == 0.0 { 0.0 } else { radius_of(0.0, radius) } }
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        // Rounded outward by one relative ulp of the primal (common practice, no source); exact points stay points.
        let pad = if self.radius == 0.0 { 0.0 } else { self.radius * INFLATION + self.primal.abs() * f64::EPSILON };
        (self.primal - pad, self.primal + pad)
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        let (a_lo, a_hi) = self.range();
        let (b_lo, b_hi) = rhs.range();
        Orders::of_ranges(a_lo, a_hi, b_lo, b_hi)
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        let c = self.primal + rhs.primal;
        // |c − (X + Y)| ≤ u|c| + r + s  (addition is exact in the subnormal range, no η)
        Self { primal: c, radius: radius_of(c, self.radius + rhs.radius) }
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        let c = self.primal - rhs.primal;
        // |c − (X − Y)| ≤ u|c| + r + s
        Self { primal: c, radius: radius_of(c, self.radius + rhs.radius) }
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        let (x, r, y, s) = (self.primal, self.radius, rhs.primal, rhs.radius);
        let c = x * y;
        // |XY − xy| ≤ |x|s + r(|y| + s);  |c − xy| ≤ u|c| + η/2 (η inside `radius_of`). A left operand held
        // exactly (r = 0: a literal that is its double, an f64 input or parameter, as in `2.0 * u[i]` and
        // `r * (…)`) leaves |x|s; the select says so, and for a constant operand the compiler drops the other
        // terms (IEEE arithmetic cannot fold 0·(|y| + s) away by itself). 1-D heat: see docs/lenses.md, Cost.
        let propagated = if r == 0.0 { x.abs() * s } else { mul_acc(x.abs(), s, r * (y.abs() + s)) };
        Self { primal: c, radius: radius_of(c, propagated) }
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        let (r, y, s) = (self.radius, rhs.primal, rhs.radius);
        let c = self.primal / y;
        // |X/Y − x/y| ≤ (r + |x/y|·s)/(|y| − s) for |y| > s, with |x/y| ≤ |c|(1 + 2u) + η;
        // fl(|y| − s)·(1 − 4u) is a lower bound of |y| − s (one rounding down at most u, Higham §2.2).
        let denominator = (y.abs() - s) * (1.0 - 4.0 * U);
        let propagated = (r + (c.abs() * (1.0 + 2.0 * U) + ETA) * s) / denominator;
        let radius = radius_of(c, propagated);
        let divisor_holds_zero = denominator.is_nan() || denominator <= 0.0;
        if divisor_holds_zero && s > 0.0 {
            record::<Self>(EventKind::DivisorMayBeZero);
        }
        Self { primal: c, radius: if divisor_holds_zero { f64::INFINITY } else { radius } }
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let (x, r, y, s) = (self.primal, self.radius, rhs.primal, rhs.radius);
        let c = x % y; // exact in IEEE 754 (fmod): c = x − q·y with q = trunc(x/y)
                       // Along the primal's path the quotient q stays: |(X − qY) − c| ≤ r + |q|·s with |q| ≤ |x/y|.
        let quotient_bound = (x / y).abs() * (1.0 + 2.0 * U) + ETA;
        let quotients = self.enclosure() / rhs.enclosure();
        if (s > 0.0 || r > 0.0) && quotients.inf().trunc() != quotients.sup().trunc() {
            record::<Self>(EventKind::UndecidedComparison); // the exact quotient may truncate to another integer
        }
        Self { primal: c, radius: radius_of(0.0, r + quotient_bound * s) }
    }

    #[inline(always)]
    fn neg(self) -> Self {
        Self { primal: -self.primal, radius: self.radius }
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        let (x, r, y, s) = (self.primal, self.radius, a.primal, a.radius);
        let c = x.mul_add(y, b.primal);
        // one rounding: |c − (xy + z)| ≤ u|c| + η/2;  propagated |x|s + r(|y| + s) + t
        Self { primal: c, radius: radius_of(c, mul_acc(x.abs(), s, r * (y.abs() + s)) + b.radius) }
    }

    #[inline(always)]
    fn abs(self) -> Self {
        // | |X| − |x| | ≤ |X − x|: the radius carries over.
        Self { primal: self.primal.abs(), radius: self.radius }
    }

    #[inline(always)]
    #[track_caller]
    fn sqrt(self) -> Self {
        let (x, r) = (self.primal, self.radius);
        let c = x.sqrt(); // correctly rounded: |c − √x| ≤ u·c
                          // |√X − √x| = |X − x|/(√X + √x) ≤ r/√x, and ≤ √r always; √x ≥ c(1 − 2u).
        let propagated = (r / (c * (1.0 - 2.0 * U))).min(r.sqrt() * (1.0 + 2.0 * U));
        Self { primal: c, radius: radius_of(c, propagated) }
    }

    crate::enclosed_functions!(
        unary: [cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos atan sinh cosh tanh],
        binary: [powf log atan2 hypot]
    );
}

crate::lens_scalar!(BoundOf);

impl<const W: bool> core::fmt::Display for BoundOf<W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{} ± {:e}", self.primal, self.radius())
    }
}

impl<const W: bool> Lens for BoundOf<W> {
    const NAME: &'static str = if W { "bound" } else { "bound-unwatched" };
    const GUARANTEED: bool = true;
    super::variant_conversions!(BoundOf { primal, radius });

    fn error_estimate(self) -> f64 {
        self.radius()
    }

    fn error_bound(self) -> Option<f64> {
        Some(self.radius())
    }

    fn reference_value(self) -> f64 {
        self.primal
    }
}
