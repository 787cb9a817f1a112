//! The [`Real`] trait: everything a twin may do with a value of the float type it replaced.
//!
//! A twin is the user's kernel with `T: Real` in place of `f64` (or `f32`). The trait therefore mirrors the
//! inherent API of the primitive floats that stencil kernels use — operators, comparisons, the elementary
//! functions, `Sum` — plus the few entry points the rewrite needs: [`Real::lit`] for a float literal with the exact reference of its decimal,
//! [`Real::from_f64`] for an input value taken as exact, [`Real::constant`] for `std::f64::consts`, and
//! [`Real::primal`] for the number the float program itself computes (which branches and index casts follow).
//!
//! The implementations for `f64` and `f32` forward to the inherent methods, one to one, so that a twin run with
//! `T = f64` is bit-identical to the original kernel.

use crate::lens::reference::{LiteralMode, Reference};
use core::fmt::{Debug, Display};
use core::iter::{Product, Sum};
use core::ops::{Add, AddAssign, Div, DivAssign, Mul, MulAssign, Neg, Rem, RemAssign, Sub, SubAssign};

/// Calls the macro `$m!(PI, TAU, …)` with the name of every constant of `std::f64::consts` that twinstep knows,
/// so that each table over the constants (the enum, its conversions, a lens's enclosures, a test's oracle) is
/// written against one list.
#[macro_export]
#[doc(hidden)]
macro_rules! with_constant_names {
    ($m:ident) => {
        $m! {
            PI, TAU, E, SQRT_2, LN_2, LN_10, LOG2_E, LOG10_E, LOG2_10, LOG10_2, FRAC_PI_2, FRAC_PI_3, FRAC_PI_4,
            FRAC_PI_6, FRAC_PI_8, FRAC_1_PI, FRAC_2_PI, FRAC_2_SQRT_PI, FRAC_1_SQRT_2
        }
    };
}

macro_rules! declare_constants {
    ($($c:ident),*) => {
        /// The mathematical constants of `std::f64::consts` that the rewrite maps to [`Real::constant`].
        ///
        /// A lens holds them as the real numbers they name (π, not the nearest double), so the error of
        /// representing them is accounted for.
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
        #[allow(non_camel_case_types)]
        pub enum Constant {
            $($c),*
        }

        impl Constant {
            /// Every constant, in declaration order.
            pub const ALL: [Constant; [$(Constant::$c),*].len()] = [$(Constant::$c),*];

            /// The name as it appears in `std::f64::consts`.
            #[must_use]
            pub fn name(self) -> &'static str {
                match self { $(Constant::$c => stringify!($c)),* }
            }

            /// The constant rounded to nearest binary64, exactly as `std::f64::consts` has it.
            #[must_use]
            pub fn f64_value(self) -> f64 {
                match self { $(Constant::$c => std::f64::consts::$c),* }
            }

            /// The constant rounded to nearest binary32, exactly as `std::f32::consts` has it.
            #[must_use]
            pub fn f32_value(self) -> f32 {
                match self { $(Constant::$c => std::f32::consts::$c),* }
            }
        }
    };
}
with_constant_names!(declare_constants);

impl Constant {
    /// Looks a constant up by its `std::f64::consts` name.
    #[must_use]
    pub fn from_name(name: &str) -> Option<Constant> {
        Constant::ALL.into_iter().find(|c| c.name() == name)
    }
}

/// Operations of a plain base-float value (a value the rewrite left alone, such as a field of a solver struct outside the
/// annotated module) with a twin value on its right: `dx * u[i]`, `eps < x`.
///
/// Twins carry `f64: MixedOps<T>` (or `f32: MixedOps<T>`) in their `where` clause; the supertraits make the
/// operators available.
pub trait MixedOps<T>:
    Add<T, Output = T> + Sub<T, Output = T> + Mul<T, Output = T> + Div<T, Output = T> + PartialEq<T> + PartialOrd<T>
{
}

impl<T, F> MixedOps<T> for F where
    F: Add<T, Output = T> + Sub<T, Output = T> + Mul<T, Output = T> + Div<T, Output = T> + PartialEq<T> + PartialOrd<T>
{
}

/// Operations of a twin value with a plain value of the kernel's base float on its right: `u[i] * dx`.
///
/// Twins carry `T: BaseOps<f64>` (or `BaseOps<f32>` for an `f32` kernel) in their `where` clause.
pub trait BaseOps<B>:
    Sized
    + Add<B, Output = Self>
    + Sub<B, Output = Self>
    + Mul<B, Output = Self>
    + Div<B, Output = Self>
    + AddAssign<B>
    + SubAssign<B>
    + MulAssign<B>
    + DivAssign<B>
    + PartialEq<B>
    + PartialOrd<B>
{
}

impl<T, B> BaseOps<B> for T where
    T: Sized
        + Add<B, Output = Self>
        + Sub<B, Output = Self>
        + Mul<B, Output = Self>
        + Div<B, Output = Self>
        + AddAssign<B>
        + SubAssign<B>
        + MulAssign<B>
        + DivAssign<B>
        + PartialEq<B>
        + PartialOrd<B>
{
}

/// Operations on a borrowed twin value, as iterator chains produce them: `x * y` with `x, y: &T`.
///
/// Twins carry `for<'a> &'a T: RefOps<T>` in their `where` clause.
pub trait RefOps<T>:
    Sized
    + Add<T, Output = T>
    + Sub<T, Output = T>
    + Mul<T, Output = T>
    + Div<T, Output = T>
    + Neg<Output = T>
    + for<'b> Add<&'b T, Output = T>
    + for<'b> Sub<&'b T, Output = T>
    + for<'b> Mul<&'b T, Output = T>
    + for<'b> Div<&'b T, Output = T>
{
}

impl<T, R> RefOps<T> for R where
    R: Sized
        + Add<T, Output = T>
        + Sub<T, Output = T>
        + Mul<T, Output = T>
        + Div<T, Output = T>
        + Neg<Output = T>
        + for<'b> Add<&'b T, Output = T>
        + for<'b> Sub<&'b T, Output = T>
        + for<'b> Mul<&'b T, Output = T>
        + for<'b> Div<&'b T, Output = T>
{
}

/// A scalar a twin can run with: the primitive floats, and every lens.
///
/// Branches, comparisons and float→integer conversions follow [`Real::primal`]: the twin takes the path the float
/// program takes. A lens whose reference cannot decide a comparison or an integer conversion records an
/// undecided comparison at the caller's source location (the operator impls carry `#[track_caller]`).
pub trait Real:
    Copy
    + Send
    + Sync
    + 'static
    + Debug
    + Display
    + Default
    + PartialEq
    + PartialOrd
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Rem<Output = Self>
    + Neg<Output = Self>
    + for<'a> Add<&'a Self, Output = Self>
    + for<'a> Sub<&'a Self, Output = Self>
    + for<'a> Mul<&'a Self, Output = Self>
    + for<'a> Div<&'a Self, Output = Self>
    + AddAssign
    + SubAssign
    + MulAssign
    + DivAssign
    + RemAssign
    + for<'a> AddAssign<&'a Self>
    + for<'a> SubAssign<&'a Self>
    + Sum
    + Product
    + for<'a> Sum<&'a Self>
    + for<'a> Product<&'a Self>
    + num_traits::Zero
    + num_traits::One
{
    /// A float literal of the kernel whose decimal is not exactly a double: `value` is what the compiler made
    /// of it (the primal), `reference` the decimal number as written, which the rewrite computed exactly at
    /// expansion time and a lens's reference side holds, `mode` the thread's literal mode as the twin function
    /// read it at its entry ([`LiteralMode::AsCompiled`]: the reference is `value` itself). A literal that is
    /// exactly its double becomes [`Real::from_f64`].
    fn lit(value: f64, reference: Reference, mode: LiteralMode) -> Self;
    /// A float literal of an `f32` kernel, as [`Real::lit`].
    fn lit_f32(value: f32, reference: Reference, mode: LiteralMode) -> Self;
    /// An input value, taken as exact.
    fn from_f64(value: f64) -> Self;
    /// An `f32` input value, taken as exact.
    fn from_f32(value: f32) -> Self;
    /// An integer converted with `as`: rounded to nearest in the primal format, exact in the reference.
    fn from_i128(value: i128) -> Self;
    /// An unsigned integer converted with `as`, as [`Real::from_i128`].
    fn from_u128(value: u128) -> Self;
    /// A constant of `std::f64::consts`, as the real number it names.
    fn constant(c: Constant) -> Self;
    /// The number the float program computes.
    fn primal(self) -> f64;
    /// `self as usize` (and the other integer types): converts the primal with Rust's saturating `as`, and lets a
    /// lens record an undecided index when the reference could convert to another integer.
    #[track_caller]
    fn to_i128(self) -> i128;
    /// Same as [`Real::to_i128`] for conversions to unsigned types (saturating at 0 as `as` does).
    #[track_caller]
    fn to_u128(self) -> u128;

    /// `f64::EPSILON` of the primal format.
    fn epsilon() -> Self;
    /// `f64::MAX` of the primal format.
    fn max_value() -> Self;
    /// `f64::MIN` of the primal format.
    fn min_value() -> Self;
    /// `f64::MIN_POSITIVE` of the primal format.
    fn min_positive() -> Self;
    /// Positive infinity.
    fn infinity() -> Self;
    /// Negative infinity.
    fn neg_infinity() -> Self;
    /// Not a number.
    fn nan() -> Self;

    fn sqrt(self) -> Self;
    fn cbrt(self) -> Self;
    fn abs(self) -> Self;
    fn recip(self) -> Self;
    fn powi(self, n: i32) -> Self;
    fn powf(self, n: Self) -> Self;
    fn exp(self) -> Self;
    fn exp2(self) -> Self;
    fn exp_m1(self) -> Self;
    fn ln(self) -> Self;
    fn ln_1p(self) -> Self;
    fn log(self, base: Self) -> Self;
    fn log2(self) -> Self;
    fn log10(self) -> Self;
    fn sin(self) -> Self;
    fn cos(self) -> Self;
    fn tan(self) -> Self;
    fn sin_cos(self) -> (Self, Self);
    fn asin(self) -> Self;
    fn acos(self) -> Self;
    fn atan(self) -> Self;
    fn atan2(self, other: Self) -> Self;
    fn sinh(self) -> Self;
    fn cosh(self) -> Self;
    fn tanh(self) -> Self;
    fn hypot(self, other: Self) -> Self;
    fn mul_add(self, a: Self, b: Self) -> Self;
    #[track_caller]
    fn max(self, other: Self) -> Self;
    #[track_caller]
    fn min(self, other: Self) -> Self;
    #[track_caller]
    fn clamp(self, min: Self, max: Self) -> Self;
    #[track_caller]
    fn signum(self) -> Self;
    fn copysign(self, sign: Self) -> Self;
    #[track_caller]
    fn floor(self) -> Self;
    #[track_caller]
    fn ceil(self) -> Self;
    #[track_caller]
    fn round(self) -> Self;
    #[track_caller]
    fn trunc(self) -> Self;
    #[track_caller]
    fn fract(self) -> Self;
    fn to_degrees(self) -> Self;
    fn to_radians(self) -> Self;
    fn is_nan(self) -> bool;
    fn is_finite(self) -> bool;
    fn is_infinite(self) -> bool;
    #[track_caller]
    fn is_sign_negative(self) -> bool;
    #[track_caller]
    fn is_sign_positive(self) -> bool;
    #[track_caller]
    fn total_cmp(&self, other: &Self) -> core::cmp::Ordering;
}

/// Implements [`Real`] for a primitive float by forwarding every method to the inherent one of the same name.
macro_rules! primitive_real {
    ($float:ident, $lit:ident, $lit_other:ident, $other:ident, $from_own:ident, $from_other:ident, $value:ident) => {
        impl Real for $float {
            #[inline(always)]
            fn $lit(value: $float, _reference: Reference, _mode: LiteralMode) -> Self {
                value
            }
            #[inline(always)]
            fn $lit_other(value: $other, _reference: Reference, _mode: LiteralMode) -> Self {
                value as $float
            }
            #[inline(always)]
            fn $from_own(value: $float) -> Self {
                value
            }
            #[inline(always)]
            fn $from_other(value: $other) -> Self {
                value as $float
            }
            #[inline(always)]
            fn from_i128(value: i128) -> Self {
                value as $float
            }
            #[inline(always)]
            fn from_u128(value: u128) -> Self {
                value as $float
            }
            #[inline(always)]
            fn constant(c: Constant) -> Self {
                c.$value()
            }
            #[inline(always)]
            fn primal(self) -> f64 {
                self as f64
            }
            #[inline(always)]
            fn to_i128(self) -> i128 {
                self as i128
            }
            #[inline(always)]
            fn to_u128(self) -> u128 {
                self as u128
            }
            #[inline(always)]
            fn epsilon() -> Self {
                $float::EPSILON
            }
            #[inline(always)]
            fn max_value() -> Self {
                $float::MAX
            }
            #[inline(always)]
            fn min_value() -> Self {
                $float::MIN
            }
            #[inline(always)]
            fn min_positive() -> Self {
                $float::MIN_POSITIVE
            }
            #[inline(always)]
            fn infinity() -> Self {
                $float::INFINITY
            }
            #[inline(always)]
            fn neg_infinity() -> Self {
                $float::NEG_INFINITY
            }
            #[inline(always)]
            fn nan() -> Self {
                $float::NAN
            }
            primitive_real!(@unary $float: sqrt cbrt abs recip exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos
                atan sinh cosh tanh signum floor ceil round trunc fract to_degrees to_radians);
            primitive_real!(@binary $float: powf log atan2 hypot max min copysign);
            #[inline(always)]
            fn powi(self, n: i32) -> Self {
                $float::powi(self, n)
            }
            #[inline(always)]
            fn sin_cos(self) -> (Self, Self) {
                $float::sin_cos(self)
            }
            #[inline(always)]
            fn mul_add(self, a: Self, b: Self) -> Self {
                $float::mul_add(self, a, b)
            }
            #[inline(always)]
            fn clamp(self, min: Self, max: Self) -> Self {
                $float::clamp(self, min, max)
            }
            #[inline(always)]
            fn is_nan(self) -> bool {
                $float::is_nan(self)
            }
            #[inline(always)]
            fn is_finite(self) -> bool {
                $float::is_finite(self)
            }
            #[inline(always)]
            fn is_infinite(self) -> bool {
                $float::is_infinite(self)
            }
            #[inline(always)]
            fn is_sign_negative(self) -> bool {
                $float::is_sign_negative(self)
            }
            #[inline(always)]
            fn is_sign_positive(self) -> bool {
                $float::is_sign_positive(self)
            }
            #[inline(always)]
            fn total_cmp(&self, other: &Self) -> core::cmp::Ordering {
                $float::total_cmp(self, other)
            }
        }
    };
    (@unary $float:ident: $($name:ident)*) => {
        $(
            #[inline(always)]
            fn $name(self) -> Self {
                $float::$name(self)
            }
        )*
    };
    (@binary $float:ident: $($name:ident)*) => {
        $(
            #[inline(always)]
            fn $name(self, other: Self) -> Self {
                $float::$name(self, other)
            }
        )*
    };
}

primitive_real!(f64, lit, lit_f32, f32, from_f64, from_f32, f64_value);
primitive_real!(f32, lit_f32, lit, f64, from_f32, from_f64, f32_value);
