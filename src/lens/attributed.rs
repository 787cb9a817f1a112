//! [`Attributed`]: the primal with a double-word shadow, as [`super::Shadow`] has it, and per operation site the
//! part of `primal − shadow` that the site's roundings caused — the lens behind [`crate::attribution`].
//!
//! Each value carries a vector of contributions `δ_S`, one slot per source site `S` (the operator's file, line
//! and column, from `#[track_caller]`; a per-thread table of the sites gives each its slot). An
//! operation propagates its operands' contributions and adds its own exact rounding error `ρ` (from the
//! error-free transformations of [`super::eft`]) to its own slot. With `e(v) = ṽ − v` the error of a value
//! (primal minus exact), the propagation rules are exact identities, not linearizations, for the four
//! operations:
//!
//! - `x ± y`:  `e(z) = e(x) ± e(y) + ρ`
//! - `x · y`:  `x̃ỹ − xy = ỹ·e(x) + x·e(y)`, so `δ_S(z) = ỹ·δ_S(x) + x·δ_S(y)` (+ ρ on the own slot)
//! - `x / y`:  `x̃/ỹ − x/y = (e(x) − (x/y)·e(y)) / ỹ`
//! - `x·a + b` (fused): `ã·e(x) + x·e(a) + e(b)`
//!
//! with the exact values `x`, `x/y` taken from the shadow (so the identities hold to the shadow's precision).
//! The elementary functions propagate with their derivative at the shadow, `e(f(x)) ≈ f′(x)·e(x)` (first order;
//! the derivative by a central difference of the shadow's function with step `2^-26·|x|`, whose truncation error
//! is of relative order `2^-52` — common practice, no source). So the contributions of all sites sum, to first
//! order, to `primal − shadow`: `docs/attribution.md` states the tolerance the tests hold them to.
//!
//! The primal is stored as a double-word too, with `lo = 0` as long as every rounding happens: then every
//! operation computes the primal exactly as `f64` does (bit-identical). A site marked exact in the table
//! (ablation) keeps its result at the shadow's precision instead; the operations after it round their result
//! to the nearest double, as the program would round the exact result of the operands it has.
//!
//! Branches and integer conversions follow the primal, as in every lens; the events are the shadow's.

use core::panic::Location;

use crate::attribution::table::{self, Op, SumFacts, SLOTS};
use crate::lens::eft::{exact_product, exact_quotient, two_diff, two_sum, DoubleWord};
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use crate::lens::shadow::ShadowUnwatched;
use crate::lens::Lens;

/// Per slot, the part of a value's error that one site's roundings caused.
pub type Contributions = [f64; SLOTS];

/// A value with a double-word shadow and the contribution of every operation site to its error.
#[derive(Clone, Copy, Debug)]
pub struct AttributedOf<const WATCH: bool> {
    primal: DoubleWord,
    shadow: DoubleWord,
    tag: Provenance,
    parts: Contributions,
}

/// Where a value comes from, for the per-field facts and the long-sum test.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Provenance {
    /// The table id of the site that produced the value (0: an input or constant).
    origin: u32,
    /// The step in which it was produced (the runner tells the site table when a step begins).
    born: u32,
    /// How many sums in a row this same site made of it within the step: `s += x` in a loop counts up, a sum of
    /// unrelated values starts at 0.
    chain: u32,
    /// Bit `i`: the value depends on field `i` as it stood at the start of the step (the runner seeds each
    /// field's cells with its bit).
    fields: u64,
}

impl Provenance {
    /// The provenance of the result of site `id` in `step` from `operands`; `summing` for sums and
    /// differences, which continue a chain of their own site.
    #[inline(always)]
    fn of(id: u32, step: u32, operands: &[Provenance], summing: bool) -> Provenance {
        let fields = operands.iter().fold(0, |mask, o| mask | o.fields);
        let continued = operands.iter().filter(|o| summing && o.origin == id && o.born == step).map(|o| o.chain + 1);
        Provenance { origin: id, born: step, chain: continued.max().unwrap_or(0), fields }
    }
}

super::watch_variants!(AttributedOf, Attributed, AttributedUnwatched);

/// Relative step of the central differences that give the derivative of an elementary function: about the cube
/// root of the shadow's unit roundoff 2^-106 balances truncation (`h²`) against the shadow's rounding (`u²/h`);
/// 2^-26 leaves both near 2^-52 (common practice, no source).
const DERIVATIVE_STEP: f64 = 1.0 / (1u64 << 26) as f64;

/// The four operations with error-free transformations.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Arith {
    Add,
    Sub,
    Mul,
    Div,
}

impl Arith {
    fn op(self) -> Op {
        match self {
            Arith::Add => Op::Add,
            Arith::Sub => Op::Sub,
            Arith::Mul => Op::Mul,
            Arith::Div => Op::Div,
        }
    }

    /// The operation in double-word arithmetic.
    #[inline(always)]
    fn on_pairs(self, x: DoubleWord, y: DoubleWord) -> DoubleWord {
        match self {
            Arith::Add => x + y,
            Arith::Sub => x - y,
            Arith::Mul => x * y,
            Arith::Div => x / y,
        }
    }

    /// The round-to-nearest result of the operation on two doubles, as `f64` computes it, and its exact rounding
    /// error `ρ = result − exact` (0 where the result is not finite). TwoSum gives `s + e = a + b` exactly, so
    /// `ρ = −e`; TwoProd likewise; for the quotient `a/b − q = residual/b` with `residual = a − q·b` exact
    /// (see [`exact_quotient`]). Where a transformation may not be exact (underflow margin), the double-word
    /// operation gives `ρ` to about `u²` of the result.
    #[inline(always)]
    fn rounded(self, a: f64, b: f64) -> (f64, f64) {
        let (result, rounding) = match self {
            Arith::Add => {
                let (s, e) = two_sum(a, b);
                (s, -e)
            }
            Arith::Sub => {
                let (s, e) = two_diff(a, b);
                (s, -e)
            }
            Arith::Mul => match exact_product(a, b) {
                Some((p, e)) => (p, -e),
                None => {
                    (a * b, rounding_against(a * b, self.on_pairs(DoubleWord::from_f64(a), DoubleWord::from_f64(b))))
                }
            },
            Arith::Div => match exact_quotient(a, b) {
                // The remainder comes with the sign of residual/b: ρ = q − a/b = −remainder/|b|.
                Some((q, remainder)) => (q, -remainder / b.abs()),
                None => {
                    (a / b, rounding_against(a / b, self.on_pairs(DoubleWord::from_f64(a), DoubleWord::from_f64(b))))
                }
            },
        };
        (result, if result.is_finite() { rounding } else { 0.0 })
    }
}

/// `result − exact` for a double `result` and a double-word `exact`: `(result − hi) − lo` (the subtraction is
/// exact when the two are within a factor of two, Sterbenz); 0 where either is not finite.
#[inline(always)]
fn rounding_against(result: f64, exact: DoubleWord) -> f64 {
    let rounding = (result - exact.hi) - exact.lo;
    if rounding.is_finite() {
        rounding
    } else {
        0.0
    }
}

/// A double-word result rounded to the nearest double, as the program rounds every result, and the rounding.
#[inline(always)]
fn round(exact: DoubleWord) -> (DoubleWord, f64) {
    let nearest = exact.to_f64();
    (DoubleWord::from_f64(nearest), rounding_against(nearest, exact))
}

/// `a ← ca·a + cb·b`, slot by slot (in place: a value is 296 bytes, and every copy of it costs).
#[inline(always)]
fn combine_into(a: &mut Contributions, ca: f64, b: &Contributions, cb: f64) {
    for (x, y) in a.iter_mut().zip(b) {
        *x = ca * *x + cb * y;
    }
}

impl<const W: bool> AttributedOf<W> {
    /// `primal − shadow`, to double precision.
    #[must_use]
    pub fn signed_error(self) -> f64 {
        let (p, s) = (self.primal.canonical(), self.shadow.canonical());
        (p.hi - s.hi) + (p.lo - s.lo)
    }

    /// Per slot, the propagated part of [`Self::signed_error`] that one site's roundings caused (slot 0: the
    /// representation of constants; see [`crate::attribution::SLOTS`]).
    #[must_use]
    pub fn contributions(&self) -> &Contributions {
        &self.parts
    }

    /// The same value, marked as depending on field `field` alone (the runner seeds every cell of field `i` with
    /// `i` at the start of each step; fields past the 64th are not told apart).
    #[must_use]
    pub fn of_field(self, field: usize) -> Self {
        let fields = if field < 64 { 1 << field } else { 0 };
        Self { tag: Provenance { fields, ..self.tag }, ..self }
    }

    /// The shadow as the pair `(hi, lo)`.
    #[must_use]
    pub fn shadow(self) -> (f64, f64) {
        let DoubleWord { hi, lo } = self.shadow.canonical();
        (hi, lo)
    }

    /// The primal as a pair `(hi, lo)`: `lo = 0` unless a site upstream was computed exactly.
    #[must_use]
    pub fn primal_pair(self) -> (f64, f64) {
        let DoubleWord { hi, lo } = self.primal.canonical();
        (hi, lo)
    }

    /// The value as a [`super::Shadow`] value: the same primal (its `hi`) and shadow.
    fn as_shadow(self) -> ShadowUnwatched {
        ShadowUnwatched::new(self.primal.hi, self.shadow.hi, self.shadow.lo)
    }

    /// The primal at the shadow's precision, as a [`super::Shadow`] value whose shadow is the primal itself: the
    /// shadow's functions evaluated at the primal's operands.
    fn primal_as_shadow(self) -> ShadowUnwatched {
        ShadowUnwatched::new(self.primal.hi, self.primal.hi, self.primal.lo)
    }

    fn is_double(self) -> bool {
        self.primal.lo == 0.0
    }

    /// `x ∘ y` for one of the four operations, at the site `location`.
    #[inline(always)]
    fn arith(self, y: Self, op: Arith, location: &'static Location<'static>) -> Self {
        let x = self;
        let shadow = op.on_pairs(x.shadow, y.shadow);
        let site = table::site(location, op.op());
        {
            let (a, b) = (x.primal, y.primal);
            let (primal, rounding) = if site.exact {
                (op.on_pairs(a, b), 0.0)
            } else if x.is_double() && y.is_double() {
                let (result, rounding) = op.rounded(a.hi, b.hi);
                (DoubleWord::from_f64(result), rounding)
            } else {
                round(op.on_pairs(a, b))
            };
            let (ca, cb) = match op {
                Arith::Add => (1.0, 1.0),                 // e(x + y) = e(x) + e(y) + ρ
                Arith::Sub => (1.0, -1.0),                // e(x − y) = e(x) − e(y) + ρ
                Arith::Mul => (b.hi + b.lo, x.shadow.hi), // x̃ỹ − xy = ỹ·e(x) + x·e(y)
                Arith::Div => {
                    let divisor = b.hi + b.lo;
                    (1.0 / divisor, -shadow.hi / divisor) // x̃/ỹ − x/y = (e(x) − (x/y)·e(y))/ỹ
                }
            };
            let mut out = Self { primal, shadow, tag: Provenance::default(), parts: x.parts };
            combine_into(&mut out.parts, ca, &y.parts, cb);
            out.parts[site.slot] += rounding;
            let summing = matches!(op, Arith::Add | Arith::Sub);
            out.tag = Provenance::of(site.id, site.step, &[x.tag, y.tag], summing);
            let sum = summing.then(|| {
                let addend = if op == Arith::Sub { -b.hi } else { b.hi };
                SumFacts::of(a.hi, addend, primal.hi, out.tag.chain)
            });
            table::note(site, out.tag.fields, rounding, sum);
            out
        }
    }

    /// An elementary function of `N` arguments at the site `location`: `f` is the [`super::Shadow`] lens's
    /// function, which gives both the primal (`f64`'s function of the primals) and the shadow.
    #[inline(never)]
    fn function<const N: usize>(
        args: [Self; N],
        name: &'static str,
        f: impl Fn([ShadowUnwatched; N]) -> ShadowUnwatched,
        location: &'static Location<'static>,
    ) -> Self {
        let at_shadow = f(args.map(Self::as_shadow));
        let (hi, lo) = at_shadow.shadow();
        let shadow = DoubleWord { hi, lo };
        let at_primal = f(args.map(Self::primal_as_shadow)).shadow();
        let at_primal = DoubleWord { hi: at_primal.0, lo: at_primal.1 };
        // ∂f/∂x_i at the shadow: (f(x + h) − f(x − h)) / (2h), the step difference exact by Sterbenz.
        let slopes: [f64; N] = core::array::from_fn(|i| {
            let x = args[i].shadow.hi;
            let h = if x == 0.0 { DERIVATIVE_STEP } else { x.abs() * DERIVATIVE_STEP };
            let (up, down) = (x + h, x - h);
            let at = |point: f64| {
                let shifted = core::array::from_fn(|j| {
                    if j == i {
                        ShadowUnwatched::new(point, point, 0.0)
                    } else {
                        args[j].as_shadow()
                    }
                });
                let (hi, lo) = f(shifted).shadow();
                DoubleWord { hi, lo }
            };
            let slope = (at(up) - at(down)).to_f64() / (up - down);
            if slope.is_finite() {
                slope
            } else {
                0.0
            }
        });
        let site = table::site(location, Op::Function(name));
        {
            let (primal, rounding) = if site.exact {
                (at_primal, 0.0)
            } else if args.iter().all(|a| a.is_double()) {
                let result = Core::primal(at_shadow); // f64's own function of the primals, bit for bit
                (DoubleWord::from_f64(result), rounding_against(result, at_primal))
            } else {
                round(at_primal)
            };
            let mut parts = [0.0; SLOTS];
            for (arg, slope) in args.iter().zip(slopes) {
                combine_into(&mut parts, 1.0, &arg.parts, slope); // e(f) ≈ Σ ∂f/∂x_i · e(x_i)
            }
            parts[site.slot] += rounding;
            let tag = Provenance::of(site.id, site.step, &args.map(|a| a.tag), false);
            table::note(site, tag.fields, rounding, None);
            Self { primal, shadow, tag, parts }
        }
    }
}

/// `+`, `−`, `×` through [`AttributedOf::arith`] at the caller's site.
macro_rules! attributed_arithmetic {
    ($($name:ident $op:ident),*) => {$(
        #[inline(always)]
        #[track_caller]
        fn $name(self, rhs: Self) -> Self {
            self.arith(rhs, Arith::$op, Location::caller())
        }
    )*};
}

/// The unary elementary functions, each through [`AttributedOf::function`] with the shadow lens's function.
macro_rules! attributed_functions {
    ($($name:ident)*) => {$(
        #[track_caller]
        fn $name(self) -> Self {
            Self::function([self], stringify!($name), |[x]| Core::$name(x), Location::caller())
        }
    )*};
}

/// The binary elementary functions likewise.
macro_rules! attributed_binary_functions {
    ($($name:ident)*) => {$(
        #[track_caller]
        fn $name(self, other: Self) -> Self {
            Self::function([self, other], stringify!($name), |[x, y]| Core::$name(x, y), Location::caller())
        }
    )*};
}

impl<const W: bool> Core for AttributedOf<W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal.hi
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        let pair = DoubleWord::from_f64(value);
        Self { primal: pair, shadow: pair, tag: Provenance::default(), parts: [0.0; SLOTS] }
    }

    #[inline(always)]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        let real = DoubleWord { hi: reference.hi, lo: reference.lo };
        let representation = rounding_against(value, real);
        if representation == 0.0 {
            return Self::exact(value); // the double is the number as written
        }
        let site = table::representation();
        if site.exact {
            return Self { primal: real, shadow: real, tag: Provenance::default(), parts: [0.0; SLOTS] };
        }
        table::note(site, 0, representation, None);
        let mut parts = [0.0; SLOTS];
        parts[site.slot] = representation;
        Self { primal: DoubleWord::from_f64(value), shadow: real, tag: Provenance::default(), parts }
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        self.as_shadow().range()
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        self.as_shadow().orders(rhs.as_shadow())
    }

    attributed_arithmetic! { add Add, sub Sub, mul Mul }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        // The shadow divides by zero where the primal does not: the shadow lens's event.
        if rhs.shadow.hi == 0.0 && rhs.primal.hi != 0.0 {
            crate::events::record::<Self>(crate::events::EventKind::DivisorMayBeZero);
        }
        self.arith(rhs, Arith::Div, Location::caller())
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        // The shadow lens's remainder: x − q·y along the primal's quotient q, with its branch-instability event.
        let along = Core::rem(self.as_shadow(), rhs.as_shadow());
        let (hi, lo) = along.shadow();
        let c = Core::primal(along);
        let q = ((self.primal.hi - c) / rhs.primal.hi).round();
        let site = table::site(Location::caller(), Op::Rem);
        {
            // fmod of doubles is exact (IEEE 754-2019 §5.3.1 remainder is exact; fmod likewise); with a
            // double-word operand the remainder is taken along the same quotient and rounded.
            let exact = self.primal - rhs.primal.mul_f64(q);
            let (primal, rounding) = if site.exact {
                (exact, 0.0)
            } else if self.is_double() && rhs.is_double() {
                (DoubleWord::from_f64(c), 0.0)
            } else {
                round(exact)
            };
            let mut parts = self.parts;
            combine_into(&mut parts, 1.0, &rhs.parts, -q); // e(x − q·y) = e(x) − q·e(y)
            parts[site.slot] += rounding;
            let tag = Provenance::of(site.id, site.step, &[self.tag, rhs.tag], false);
            table::note(site, tag.fields, rounding, None);
            Self { primal, shadow: DoubleWord { hi, lo }, tag, parts }
        }
    }

    #[inline(always)]
    fn neg(self) -> Self {
        Self { primal: -self.primal, shadow: -self.shadow, parts: self.parts.map(|p| -p), ..self }
    }

    #[inline]
    #[track_caller]
    fn mul_add(self, a: Self, b: Self) -> Self {
        let x = self;
        let shadow = x.shadow.mul_add(a.shadow, b.shadow);
        let site = table::site(Location::caller(), Op::MulAdd);
        {
            let exact = x.primal.mul_add(a.primal, b.primal);
            let (primal, rounding) = if site.exact {
                (exact, 0.0)
            } else if x.is_double() && a.is_double() && b.is_double() {
                let fused = x.primal.hi.mul_add(a.primal.hi, b.primal.hi); // one rounding, as f64::mul_add
                (DoubleWord::from_f64(fused), rounding_against(fused, exact))
            } else {
                round(exact)
            };
            // x̃ã + b̃ − (xa + b) = ã·e(x) + x·e(a) + e(b)
            let mut parts = b.parts;
            combine_into(&mut parts, 1.0, &x.parts, a.primal.hi);
            combine_into(&mut parts, 1.0, &a.parts, x.shadow.hi);
            parts[site.slot] += rounding;
            let tag = Provenance::of(site.id, site.step, &[x.tag, a.tag, b.tag], true);
            let sum = SumFacts::of(x.primal.hi * a.primal.hi, b.primal.hi, primal.hi, tag.chain);
            table::note(site, tag.fields, rounding, Some(sum));
            Self { primal, shadow, tag, parts }
        }
    }

    #[inline(always)]
    fn abs(self) -> Self {
        // |x̃| − |x| = sign(x)·e(x) while the primal and the exact value have one sign.
        if self.shadow.hi < 0.0 {
            Self { primal: abs_pair(self.primal), ..self.neg() }
        } else {
            Self { primal: abs_pair(self.primal), ..self }
        }
    }

    attributed_functions! {
        sqrt cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos atan sinh cosh tanh
    }

    attributed_binary_functions! { powf log atan2 hypot }

    #[track_caller]
    fn powi(self, n: i32) -> Self {
        Self::function([self], "powi", |[x]| Core::powi(x, n), Location::caller())
    }
}

/// `|x|` of a pair whose `hi` carries the sign (normalized pairs).
fn abs_pair(x: DoubleWord) -> DoubleWord {
    if x.hi < 0.0 {
        -x
    } else {
        x
    }
}

crate::lens_scalar!(AttributedOf);

impl<const W: bool> core::fmt::Display for AttributedOf<W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let (hi, lo) = self.shadow();
        write!(f, "{} (shadow {:e} {:+e})", self.primal.hi, hi, lo)
    }
}

impl<const W: bool> Lens for AttributedOf<W> {
    const NAME: &'static str = if W { "attributed" } else { "attributed-unwatched" };
    const GUARANTEED: bool = false;
    super::variant_conversions!(AttributedOf { primal, shadow, tag, parts });

    fn error_estimate(self) -> f64 {
        self.signed_error().abs()
    }

    fn error_bound(self) -> Option<f64> {
        None
    }

    fn reference_value(self) -> f64 {
        self.shadow.to_f64()
    }
}
