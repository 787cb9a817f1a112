//! The scalar surface every lens shares, written once.
//!
//! A lens implements [`Core`]: the primitive operations whose reference side differs between lenses (the
//! arithmetic, the elementary functions, what exact arithmetic could say about an ordering). The macro
//! [`lens_scalar!`](crate::lens_scalar!) then gives it everything a twin needs: the operators between lens
//! values, borrowed values and plain `f64` on either side, compound assignment, comparisons with `f64` both ways,
//! `Sum`/`Product`, `Zero`/`One`/`Default` and the whole [`crate::Real`] trait. Operators and comparisons are `#[track_caller]` so
//! that events land at the user's own source line.
//!
//! Semantics shared by all lenses (docs/lenses.md, "Branches, integer conversions and events"): branches, `max`/`min`, rounding to integers and integer
//! conversions follow the primal; when the reference cannot decide them the same way, a
//! [`EventKind::UndecidedComparison`] or [`EventKind::UndecidedIndex`] is recorded, and the result continues
//! along the primal's path. An operation whose primal becomes NaN or infinite from finite operands records
//! [`EventKind::Nan`] / [`EventKind::Infinity`].

use crate::events::{record, EventKind};
use crate::lens::reference::Reference;
use core::cmp::Ordering;

/// What exact arithmetic could say about the ordering of two values: a set of possible outcomes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Orders(u8);

impl Orders {
    pub const NONE: Orders = Orders(0);
    pub const LESS: Orders = Orders(1);
    pub const EQUAL: Orders = Orders(2);
    pub const GREATER: Orders = Orders(4);

    /// The single outcome `order`.
    #[inline(always)]
    #[must_use]
    pub fn only(order: Ordering) -> Orders {
        match order {
            Ordering::Less => Orders::LESS,
            Ordering::Equal => Orders::EQUAL,
            Ordering::Greater => Orders::GREATER,
        }
    }

    /// The outcomes for two closed enclosures `[a_lo, a_hi]` and `[b_lo, b_hi]` (none if either is empty/NaN).
    #[inline(always)]
    #[must_use]
    pub fn of_ranges(a_lo: f64, a_hi: f64, b_lo: f64, b_hi: f64) -> Orders {
        let less = u8::from(a_lo < b_hi); // some x ∈ a, y ∈ b with x < y
        let greater = u8::from(a_hi > b_lo); // some x > y
        let equal = u8::from(a_lo <= b_hi && b_lo <= a_hi); // the enclosures meet
        Orders(less | (equal << 1) | (greater << 2))
    }

    /// Whether every possible outcome gives `predicate` the value `expected`.
    #[inline(always)]
    #[must_use]
    pub fn all_give(self, predicate: impl Fn(Ordering) -> bool, expected: bool) -> bool {
        let agrees = |bit: Orders, order: Ordering| self.0 & bit.0 == 0 || predicate(order) == expected;
        self.0 != 0
            && agrees(Orders::LESS, Ordering::Less)
            && agrees(Orders::EQUAL, Ordering::Equal)
            && agrees(Orders::GREATER, Ordering::Greater)
    }
}

/// The primitive operations of a lens. Everything else is derived by [`lens_scalar!`](crate::lens_scalar!).
///
/// `'static` because events are filed under the lens type that recorded them (`events::record::<Self>`), from
/// whichever thread computes.
///
/// Each operation computes the primal exactly as the float program would (`a + b`, `x.exp()` in `f64`) and the
/// lens's reference side alongside.
pub trait Core: Copy + Sized + 'static {
    /// Whether operations test their result for NaN/∞ and record the event at the caller (one predicted branch
    /// per operation, which keeps loops from vectorizing; see `docs/lenses.md`).
    const WATCH: bool = true;
    /// `EPSILON` of the primal's format (binary64's unless the lens emulates another format).
    #[must_use]
    fn format_epsilon() -> f64 {
        f64::EPSILON
    }
    /// `MAX` of the primal's format (`MIN` is its negation).
    #[must_use]
    fn format_max() -> f64 {
        f64::MAX
    }
    /// `MIN_POSITIVE` of the primal's format.
    #[must_use]
    fn format_min_positive() -> f64 {
        f64::MIN_POSITIVE
    }
    /// The number the float program computes.
    fn primal(self) -> f64;
    /// A double taken as exact (inputs, `f64` operands).
    fn exact(value: f64) -> Self;
    /// The primal `value` with the reference of the real number `reference` (literals, constants, integers).
    fn with_reference(value: f64, reference: &Reference) -> Self;
    /// A closed range of doubles holding the reference (the enclosure; for a point estimate, the doubles
    /// around it). Used to tell whether rounding to an integer or a sign test is decided.
    fn range(self) -> (f64, f64);
    /// The orderings of the exact values that the reference allows.
    fn orders(self, rhs: Self) -> Orders;

    fn add(self, rhs: Self) -> Self;
    fn sub(self, rhs: Self) -> Self;
    fn mul(self, rhs: Self) -> Self;
    #[track_caller]
    fn div(self, rhs: Self) -> Self;
    #[track_caller]
    fn rem(self, rhs: Self) -> Self;
    fn neg(self) -> Self;
    fn mul_add(self, a: Self, b: Self) -> Self;
    fn abs(self) -> Self;

    #[track_caller]
    fn sqrt(self) -> Self;
    #[track_caller]
    fn cbrt(self) -> Self;
    #[track_caller]
    fn exp(self) -> Self;
    #[track_caller]
    fn exp2(self) -> Self;
    #[track_caller]
    fn exp_m1(self) -> Self;
    #[track_caller]
    fn ln(self) -> Self;
    #[track_caller]
    fn ln_1p(self) -> Self;
    #[track_caller]
    fn log2(self) -> Self;
    #[track_caller]
    fn log10(self) -> Self;
    #[track_caller]
    fn sin(self) -> Self;
    #[track_caller]
    fn cos(self) -> Self;
    #[track_caller]
    fn tan(self) -> Self;
    #[track_caller]
    fn asin(self) -> Self;
    #[track_caller]
    fn acos(self) -> Self;
    #[track_caller]
    fn atan(self) -> Self;
    #[track_caller]
    fn sinh(self) -> Self;
    #[track_caller]
    fn cosh(self) -> Self;
    #[track_caller]
    fn tanh(self) -> Self;
    #[track_caller]
    fn powi(self, n: i32) -> Self;
    #[track_caller]
    fn powf(self, n: Self) -> Self;
    #[track_caller]
    fn log(self, base: Self) -> Self;
    #[track_caller]
    fn atan2(self, other: Self) -> Self;
    #[track_caller]
    fn hypot(self, other: Self) -> Self;

    /// `max`/`min` (`choose` is `f64::max` or `f64::min`). By default [`select`]: the operand the primal chooses,
    /// with an undecided comparison recorded when the reference could choose the other. A lens whose reference can
    /// follow the exact `max`/`min` without a decision (both are 1-Lipschitz) overrides it.
    #[inline]
    #[track_caller]
    fn select(self, other: Self, choose: fn(f64, f64) -> f64) -> Self {
        select(self, other, choose)
    }
}

/// Records NaN or an infinity that an operation produced from finite operands. The hot path is one test of the
/// result; the operands are looked at only on the cold path.
#[inline(always)]
#[track_caller]
pub fn watch<T: Core>(out: T, operands_finite: impl FnOnce() -> bool) -> T {
    if T::WATCH && !out.primal().is_finite() {
        non_finite::<T>(out.primal(), operands_finite());
    }
    out
}

#[cold]
#[inline(never)]
#[track_caller]
fn non_finite<T: Core>(value: f64, operands_finite: bool) {
    if operands_finite {
        record::<T>(if value.is_nan() { EventKind::Nan } else { EventKind::Infinity });
    }
}

/// In an unwatched lens, notes a NaN or infinite primal that a comparison, selection, integer conversion or
/// `is_nan`-style test may swallow (its answer need not carry the value on), so that the audit driver replays the step with the watched
/// lens, which records the line where the value arose. `finite` tells whether the operands are finite.
#[inline(always)]
#[doc(hidden)]
pub fn note_unseen<T: Core>(finite: bool) {
    if !T::WATCH && !finite {
        crate::events::note_unseen_non_finite::<T>();
    }
}

/// A comparison: the primal's answer, with an undecided comparison recorded when the reference could answer
/// otherwise.
#[inline(always)]
#[track_caller]
pub fn compare<T: Core>(a: T, b: T, predicate: fn(Ordering) -> bool) -> bool {
    note_unseen::<T>(a.primal().is_finite() && b.primal().is_finite());
    let Some(order) = a.primal().partial_cmp(&b.primal()) else {
        return false; // NaN compares false, as in f64; the NaN was reported where it arose
    };
    let answer = predicate(order);
    if !a.orders(b).all_give(predicate, answer) {
        record::<T>(EventKind::UndecidedComparison);
    }
    answer
}

/// `partial_cmp`: the primal's ordering, with an undecided comparison recorded when the reference allows another.
#[inline(always)]
#[track_caller]
pub fn order<T: Core>(a: T, b: T) -> Option<Ordering> {
    note_unseen::<T>(a.primal().is_finite() && b.primal().is_finite());
    let order = a.primal().partial_cmp(&b.primal())?;
    if !a.orders(b).all_give(|o| o == order, true) {
        record::<T>(EventKind::UndecidedComparison);
    }
    Some(order)
}

/// `max`/`min`: `f64`'s answer on the primals, then the operand that carries it (bit-identical primal); the
/// comparison records an undecided comparison when the reference could choose the other operand.
#[inline]
#[track_caller]
pub fn select<T: Core>(a: T, b: T, choose: fn(f64, f64) -> f64) -> T {
    let chosen = choose(a.primal(), b.primal());
    let _ = order(a, b);
    if chosen.to_bits() == a.primal().to_bits() {
        a
    } else {
        b
    }
}

/// A step function of the value (floor, sign, integer conversion): the primal's result, with `kind` recorded when
/// the reference range allows another result.
#[inline(always)]
#[track_caller]
pub fn decide<T: Core, R: PartialEq>(x: T, step: impl Fn(f64) -> R, kind: EventKind) -> R {
    let primal = step(x.primal());
    note_unseen::<T>(x.primal().is_finite());
    let (lo, hi) = x.range();
    if x.primal().is_finite() && (step(lo) != primal || step(hi) != primal) {
        record::<T>(kind);
    }
    primal
}

/// Implements the operators, comparisons, iterator folds, `num_traits` identities and [`crate::Real`] for a lens
/// type that implements [`Core`].
#[macro_export]
#[doc(hidden)]
macro_rules! lens_scalar {
    ($lens:ident) => {
        $crate::lens_scalar!(@binary $lens; Add add AddAssign add_assign, Sub sub SubAssign sub_assign,
            Mul mul MulAssign mul_assign, Div div DivAssign div_assign, Rem rem RemAssign rem_assign);
        $crate::lens_scalar!(@mixed $lens; f64; Add add AddAssign add_assign, Sub sub SubAssign sub_assign,
            Mul mul MulAssign mul_assign, Div div DivAssign div_assign, Rem rem RemAssign rem_assign);
        $crate::lens_scalar!(@compare $lens);
        $crate::lens_scalar!(@identities $lens);
        $crate::lens_scalar!(@real $lens);
        $crate::lens_num_traits!($lens);
    };

    // A lens that also runs the twins of `f32` kernels (`T: BaseOps<f32>`, `f32: MixedOps<T>`): the same, plus the
    // operations and comparisons with plain `f32` values. Only the lenses whose primal is binary32 or narrower take
    // it: with both `Mul<f64>` and `Mul<f32>` a float literal beside a lens value (`x * 2.0` in a user's harness)
    // no longer infers its type, so adding it to every lens would break code that compiles today.
    ($lens:ident, f32) => {
        $crate::lens_scalar!($lens);
        $crate::lens_scalar!(@mixed $lens; f32; Add add AddAssign add_assign, Sub sub SubAssign sub_assign,
            Mul mul MulAssign mul_assign, Div div DivAssign div_assign, Rem rem RemAssign rem_assign);
        $crate::lens_scalar!(@compare_mixed $lens, $lens<W>, f32, |x: &f32| <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(*x)), |x: &$lens<W>| *x);
        $crate::lens_scalar!(@compare_mixed $lens, f32, $lens<W>, |x: &$lens<W>| *x, |x: &f32| <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(*x)));
    };

    (@binary $lens:ident; $($trait:ident $method:ident $assign_trait:ident $assign:ident),*) => {$(
        impl<const W: bool> ::core::ops::$trait for $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: $lens<W>) -> $lens<W> {
                use $crate::lens::scalar::Core as _;
                let finite = || self.primal().is_finite() && rhs.primal().is_finite();
                $crate::lens::scalar::watch(<$lens<W> as $crate::lens::scalar::Core>::$method(self, rhs), finite)
            }
        }
        impl<'a, const W: bool> ::core::ops::$trait<&'a $lens<W>> for $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: &'a $lens<W>) -> $lens<W> {
                ::core::ops::$trait::$method(self, *rhs)
            }
        }
        impl<'a, const W: bool> ::core::ops::$trait<$lens<W>> for &'a $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: $lens<W>) -> $lens<W> {
                ::core::ops::$trait::$method(*self, rhs)
            }
        }
        impl<'a, 'b, const W: bool> ::core::ops::$trait<&'b $lens<W>> for &'a $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: &'b $lens<W>) -> $lens<W> {
                ::core::ops::$trait::$method(*self, *rhs)
            }
        }
        impl<const W: bool> ::core::ops::$assign_trait for $lens<W> {
            #[inline(always)]
            #[track_caller]
            fn $assign(&mut self, rhs: $lens<W>) {
                *self = ::core::ops::$trait::$method(*self, rhs);
            }
        }
        impl<'a, const W: bool> ::core::ops::$assign_trait<&'a $lens<W>> for $lens<W> {
            #[inline(always)]
            #[track_caller]
            fn $assign(&mut self, rhs: &'a $lens<W>) {
                *self = ::core::ops::$trait::$method(*self, *rhs);
            }
        }
    )*
        impl<const W: bool> ::core::ops::Neg for $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            fn neg(self) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::neg(self)
            }
        }
        impl<'a, const W: bool> ::core::ops::Neg for &'a $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            fn neg(self) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::neg(*self)
            }
        }
    };

    // Operations with a plain value of a base float (`f64`, or `f32` for the twins of `f32` kernels) on either
    // side: the value enters the lens as an exact input (`Core::exact`; every `f32` is exactly a double).
    (@mixed $lens:ident; $base:ty; $($trait:ident $method:ident $assign_trait:ident $assign:ident),*) => {$(
        impl<const W: bool> ::core::ops::$trait<$base> for $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: $base) -> $lens<W> {
                ::core::ops::$trait::$method(self, <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(rhs)))
            }
        }
        impl<'a, const W: bool> ::core::ops::$trait<$base> for &'a $lens<W> {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: $base) -> $lens<W> {
                ::core::ops::$trait::$method(*self, <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(rhs)))
            }
        }
        impl<const W: bool> ::core::ops::$trait<$lens<W>> for $base {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: $lens<W>) -> $lens<W> {
                ::core::ops::$trait::$method(<$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(self)), rhs)
            }
        }
        impl<'a, const W: bool> ::core::ops::$trait<&'a $lens<W>> for $base {
            type Output = $lens<W>;
            #[inline(always)]
            #[track_caller]
            fn $method(self, rhs: &'a $lens<W>) -> $lens<W> {
                ::core::ops::$trait::$method(<$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(self)), *rhs)
            }
        }
        impl<const W: bool> ::core::ops::$assign_trait<$base> for $lens<W> {
            #[inline(always)]
            #[track_caller]
            fn $assign(&mut self, rhs: $base) {
                *self = ::core::ops::$trait::$method(*self, rhs);
            }
        }
    )*};

    (@compare $lens:ident) => {
        impl<const W: bool> ::core::cmp::PartialEq for $lens<W> {
            #[inline(always)]
            #[track_caller]
            fn eq(&self, rhs: &$lens<W>) -> bool {
                $crate::lens::scalar::compare(*self, *rhs, ::core::cmp::Ordering::is_eq)
            }
            #[allow(clippy::partialeq_ne_impl)]
            #[inline(always)]
            #[track_caller]
            fn ne(&self, rhs: &$lens<W>) -> bool {
                !self.eq(rhs)
            }
        }
        impl<const W: bool> ::core::cmp::PartialOrd for $lens<W> {
            #[inline(always)]
            #[track_caller]
            fn partial_cmp(&self, rhs: &$lens<W>) -> Option<::core::cmp::Ordering> {
                $crate::lens::scalar::order(*self, *rhs)
            }
            #[inline(always)]
            #[track_caller]
            fn lt(&self, rhs: &$lens<W>) -> bool {
                $crate::lens::scalar::compare(*self, *rhs, ::core::cmp::Ordering::is_lt)
            }
            #[inline(always)]
            #[track_caller]
            fn le(&self, rhs: &$lens<W>) -> bool {
                $crate::lens::scalar::compare(*self, *rhs, ::core::cmp::Ordering::is_le)
            }
            #[inline(always)]
            #[track_caller]
            fn gt(&self, rhs: &$lens<W>) -> bool {
                $crate::lens::scalar::compare(*self, *rhs, ::core::cmp::Ordering::is_gt)
            }
            #[inline(always)]
            #[track_caller]
            fn ge(&self, rhs: &$lens<W>) -> bool {
                $crate::lens::scalar::compare(*self, *rhs, ::core::cmp::Ordering::is_ge)
            }
        }
        $crate::lens_scalar!(@compare_mixed $lens, $lens<W>, f64, |x: &f64| <$lens<W> as $crate::lens::scalar::Core>::exact(*x), |x: &$lens<W>| *x);
        $crate::lens_scalar!(@compare_mixed $lens, f64, $lens<W>, |x: &$lens<W>| *x, |x: &f64| <$lens<W> as $crate::lens::scalar::Core>::exact(*x));
    };

    (@compare_mixed $lens:ident, $left:ty, $right:ty, $lift_right:expr, $lift_left:expr) => {
        impl<const W: bool> ::core::cmp::PartialEq<$right> for $left {
            #[inline(always)]
            #[track_caller]
            fn eq(&self, rhs: &$right) -> bool {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a == b
            }
        }
        impl<const W: bool> ::core::cmp::PartialOrd<$right> for $left {
            #[inline(always)]
            #[track_caller]
            fn partial_cmp(&self, rhs: &$right) -> Option<::core::cmp::Ordering> {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a.partial_cmp(&b)
            }
            #[inline(always)]
            #[track_caller]
            fn lt(&self, rhs: &$right) -> bool {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a < b
            }
            #[inline(always)]
            #[track_caller]
            fn le(&self, rhs: &$right) -> bool {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a <= b
            }
            #[inline(always)]
            #[track_caller]
            fn gt(&self, rhs: &$right) -> bool {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a > b
            }
            #[inline(always)]
            #[track_caller]
            fn ge(&self, rhs: &$right) -> bool {
                let (a, b): ($lens<W>, $lens<W>) = (($lift_left)(self), ($lift_right)(rhs));
                a >= b
            }
        }
    };

    (@identities $lens:ident) => {
        impl<const W: bool> ::core::default::Default for $lens<W> {
            #[inline(always)]
            fn default() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(0.0)
            }
        }
        impl<const W: bool> ::num_traits::Zero for $lens<W> {
            #[inline(always)]
            fn zero() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(0.0)
            }
            #[inline(always)]
            fn is_zero(&self) -> bool {
                <$lens<W> as $crate::lens::scalar::Core>::primal(*self) == 0.0
            }
        }
        impl<const W: bool> ::num_traits::One for $lens<W> {
            #[inline(always)]
            fn one() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(1.0)
            }
        }
        // The folds start where `f64`'s do, so the primal of a sum is bit-identical to the float program's.
        impl<const W: bool> ::core::iter::Sum for $lens<W> {
            #[track_caller]
            fn sum<I: Iterator<Item = $lens<W>>>(iter: I) -> $lens<W> {
                let start = <$lens<W> as $crate::lens::scalar::Core>::exact(::core::iter::empty::<f64>().sum());
                iter.fold(start, |acc, x| acc + x)
            }
        }
        impl<'a, const W: bool> ::core::iter::Sum<&'a $lens<W>> for $lens<W> {
            #[track_caller]
            fn sum<I: Iterator<Item = &'a $lens<W>>>(iter: I) -> $lens<W> {
                iter.copied().sum()
            }
        }
        impl<const W: bool> ::core::iter::Product for $lens<W> {
            #[track_caller]
            fn product<I: Iterator<Item = $lens<W>>>(iter: I) -> $lens<W> {
                let start = <$lens<W> as $crate::lens::scalar::Core>::exact(::core::iter::empty::<f64>().product());
                iter.fold(start, |acc, x| acc * x)
            }
        }
        impl<'a, const W: bool> ::core::iter::Product<&'a $lens<W>> for $lens<W> {
            #[track_caller]
            fn product<I: Iterator<Item = &'a $lens<W>>>(iter: I) -> $lens<W> {
                iter.copied().product()
            }
        }
    };

    (@real $lens:ident) => {
        impl<const W: bool> $crate::Real for $lens<W> {
            #[inline(always)]
            fn lit(
                value: f64,
                reference: $crate::lens::reference::Reference,
                mode: $crate::lens::reference::LiteralMode,
            ) -> $lens<W> {
                // The reference is a constant the rewrite printed, the mode a local of the twin function: in a
                // loop both are the same in every iteration, so this folds into straight-line code.
                match mode {
                    $crate::lens::reference::LiteralMode::AsCompiled => {
                        <$lens<W> as $crate::lens::scalar::Core>::exact(value)
                    }
                    $crate::lens::reference::LiteralMode::AsWritten => {
                        <$lens<W> as $crate::lens::scalar::Core>::with_reference(value, &reference)
                    }
                }
            }
            #[inline(always)]
            fn lit_f32(
                value: f32,
                reference: $crate::lens::reference::Reference,
                mode: $crate::lens::reference::LiteralMode,
            ) -> $lens<W> {
                <$lens<W> as $crate::Real>::lit(f64::from(value), reference, mode)
            }
            #[inline(always)]
            fn from_f64(value: f64) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(value)
            }
            #[inline(always)]
            fn from_f32(value: f32) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from(value))
            }
            #[inline]
            fn from_i128(value: i128) -> $lens<W> {
                let reference = $crate::lens::reference::integer_reference(value);
                <$lens<W> as $crate::lens::scalar::Core>::with_reference(value as f64, &reference)
            }
            #[inline]
            fn from_u128(value: u128) -> $lens<W> {
                let reference = $crate::lens::reference::unsigned_reference(value);
                <$lens<W> as $crate::lens::scalar::Core>::with_reference(value as f64, &reference)
            }
            #[inline]
            fn constant(c: $crate::Constant) -> $lens<W> {
                use $crate::lens::reference as r;
                if r::literal_mode() == r::LiteralMode::AsCompiled {
                    <$lens<W> as $crate::lens::scalar::Core>::exact(c.f64_value())
                } else {
                    <$lens<W> as $crate::lens::scalar::Core>::with_reference(c.f64_value(), &r::constant_reference(c))
                }
            }
            #[inline(always)]
            fn primal(self) -> f64 {
                <$lens<W> as $crate::lens::scalar::Core>::primal(self)
            }
            #[inline]
            #[track_caller]
            fn to_i128(self) -> i128 {
                $crate::lens::scalar::decide(self, |x| x as i128, $crate::events::EventKind::UndecidedIndex)
            }
            #[inline]
            #[track_caller]
            fn to_u128(self) -> u128 {
                $crate::lens::scalar::decide(self, |x| x as u128, $crate::events::EventKind::UndecidedIndex)
            }
            $crate::lens_scalar!(@constants $lens: infinity INFINITY, neg_infinity NEG_INFINITY, nan NAN);
            // The limits of the primal's format: binary64's, or an emulated format's.
            #[inline(always)]
            fn epsilon() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(<$lens<W> as $crate::lens::scalar::Core>::format_epsilon())
            }
            #[inline(always)]
            fn max_value() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(<$lens<W> as $crate::lens::scalar::Core>::format_max())
            }
            #[inline(always)]
            fn min_value() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(-<$lens<W> as $crate::lens::scalar::Core>::format_max())
            }
            #[inline(always)]
            fn min_positive() -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::exact(<$lens<W> as $crate::lens::scalar::Core>::format_min_positive())
            }
            $crate::lens_scalar!(@unary $lens: sqrt cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos
                atan sinh cosh tanh);
            $crate::lens_scalar!(@binary_fn $lens: powf log atan2 hypot);
            #[inline(always)]
            fn abs(self) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::abs(self)
            }
            #[inline]
            #[track_caller]
            fn recip(self) -> $lens<W> {
                <$lens<W> as ::num_traits::One>::one() / self // f64::recip is 1/x
            }
            #[inline]
            #[track_caller]
            fn powi(self, n: i32) -> $lens<W> {
                let finite = || $crate::Real::primal(self).is_finite();
                $crate::lens::scalar::watch(<$lens<W> as $crate::lens::scalar::Core>::powi(self, n), finite)
            }
            #[inline]
            #[track_caller]
            fn sin_cos(self) -> ($lens<W>, $lens<W>) {
                (<$lens<W> as $crate::Real>::sin(self), <$lens<W> as $crate::Real>::cos(self))
            }
            #[inline(always)]
            #[track_caller]
            fn mul_add(self, a: $lens<W>, b: $lens<W>) -> $lens<W> {
                let finite = || $crate::Real::primal(self).is_finite() && $crate::Real::primal(a).is_finite() && $crate::Real::primal(b).is_finite();
                $crate::lens::scalar::watch(<$lens<W> as $crate::lens::scalar::Core>::mul_add(self, a, b), finite)
            }
            #[inline]
            #[track_caller]
            fn max(self, other: $lens<W>) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::select(self, other, f64::max)
            }
            #[inline]
            #[track_caller]
            fn min(self, other: $lens<W>) -> $lens<W> {
                <$lens<W> as $crate::lens::scalar::Core>::select(self, other, f64::min)
            }
            #[inline]
            #[track_caller]
            fn clamp(self, min: $lens<W>, max: $lens<W>) -> $lens<W> {
                // f64::clamp without its panic on min > max or NaN bounds: no panics on bad input.
                let low = if self < min { min } else { self };
                if low > max { max } else { low }
            }
            #[inline]
            #[track_caller]
            fn signum(self) -> $lens<W> {
                let s = $crate::lens::scalar::decide(self, |x| x.signum().to_bits(),
                    $crate::events::EventKind::UndecidedComparison);
                <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from_bits(s))
            }
            #[inline]
            #[track_caller]
            fn copysign(self, sign: $lens<W>) -> $lens<W> {
                let negative = <$lens<W> as $crate::Real>::is_sign_negative(sign);
                let magnitude = <$lens<W> as $crate::lens::scalar::Core>::abs(self);
                if negative { -magnitude } else { magnitude }
            }
            $crate::lens_scalar!(@step $lens: floor ceil round trunc);
            #[inline]
            #[track_caller]
            fn fract(self) -> $lens<W> {
                // x.fract() = x − x.trunc(), exact in f64 (the subtraction of the integer part cannot round).
                self - <$lens<W> as $crate::Real>::trunc(self)
            }
            #[inline]
            fn to_degrees(self) -> $lens<W> {
                // f64::to_degrees multiplies by fl(180/π); the reference multiplies by 180/π itself.
                self * <$lens<W> as $crate::lens::scalar::Core>::with_reference(
                    180.0f64 / ::core::f64::consts::PI, &$crate::lens::reference::degrees_per_radian())
            }
            #[inline]
            fn to_radians(self) -> $lens<W> {
                self * <$lens<W> as $crate::lens::scalar::Core>::with_reference(
                    ::core::f64::consts::PI / 180.0f64, &$crate::lens::reference::radians_per_degree())
            }
            #[inline(always)]
            fn is_nan(self) -> bool {
                // A kernel that tests for a non-finite value may replace it: the driver replays such a step.
                $crate::lens::scalar::note_unseen::<$lens<W>>($crate::Real::primal(self).is_finite());
                $crate::Real::primal(self).is_nan()
            }
            #[inline(always)]
            fn is_finite(self) -> bool {
                // A kernel that tests for a non-finite value may replace it: the driver replays such a step.
                $crate::lens::scalar::note_unseen::<$lens<W>>($crate::Real::primal(self).is_finite());
                $crate::Real::primal(self).is_finite()
            }
            #[inline(always)]
            fn is_infinite(self) -> bool {
                // A kernel that tests for a non-finite value may replace it: the driver replays such a step.
                $crate::lens::scalar::note_unseen::<$lens<W>>($crate::Real::primal(self).is_finite());
                $crate::Real::primal(self).is_infinite()
            }
            #[inline]
            #[track_caller]
            fn is_sign_negative(self) -> bool {
                $crate::lens::scalar::decide(self, f64::is_sign_negative, $crate::events::EventKind::UndecidedComparison)
            }
            #[inline]
            #[track_caller]
            fn is_sign_positive(self) -> bool {
                $crate::lens::scalar::decide(self, f64::is_sign_positive, $crate::events::EventKind::UndecidedComparison)
            }
            #[inline]
            #[track_caller]
            fn total_cmp(&self, other: &$lens<W>) -> ::core::cmp::Ordering {
                let _ = $crate::lens::scalar::order(*self, *other); // the undecided comparison, if any
                $crate::Real::primal(*self).total_cmp(&$crate::Real::primal(*other))
            }
        }
    };

    (@constants $lens:ident: $($name:ident $value:ident),*) => {$(
        #[inline(always)]
        fn $name() -> $lens<W> {
            <$lens<W> as $crate::lens::scalar::Core>::exact(f64::$value)
        }
    )*};

    (@unary $lens:ident: $($name:ident)*) => {$(
        #[inline]
        #[track_caller]
        fn $name(self) -> $lens<W> {
            let finite = || $crate::Real::primal(self).is_finite();
            $crate::lens::scalar::watch(<$lens<W> as $crate::lens::scalar::Core>::$name(self), finite)
        }
    )*};

    (@binary_fn $lens:ident: $($name:ident)*) => {$(
        #[inline]
        #[track_caller]
        fn $name(self, other: $lens<W>) -> $lens<W> {
            let finite = || $crate::Real::primal(self).is_finite() && $crate::Real::primal(other).is_finite();
            $crate::lens::scalar::watch(<$lens<W> as $crate::lens::scalar::Core>::$name(self, other), finite)
        }
    )*};

    // Rounding to an integer along the primal's path: the result is the primal's integer, taken as exact.
    (@step $lens:ident: $($name:ident)*) => {$(
        #[inline]
        #[track_caller]
        fn $name(self) -> $lens<W> {
            let n = $crate::lens::scalar::decide(self, |x| x.$name().to_bits(),
                $crate::events::EventKind::UndecidedComparison);
            <$lens<W> as $crate::lens::scalar::Core>::exact(f64::from_bits(n))
        }
    )*};
}
