//! Conversion helpers that the rewrite emits in place of `as` casts.
//!
//! The rewrite cannot see types, so a cast `x as usize` in a kernel may convert an integer or a float. Both go
//! through [`IndexCast`]: integers convert exactly as `as` would, and a [`Real`] converts its primal (Rust's
//! saturating `as`) while a lens records an undecided index when its reference rounds to another integer. A cast
//! into the float type, `n as f64`, goes through [`IntoReal`]: integers round as `as` would in the primal format
//! and are exact in the reference. A bare constant name whose origin the rewrite cannot see (`PI` after a
//! file-level `use std::f64::consts::PI`) goes through [`math_constant`].

use crate::{Constant, Real};

/// A value a kernel converts into its float type with `as f64` (or `as f32`).
pub trait IntoReal {
    /// The conversion into a twin scalar.
    fn into_real<T: Real>(self) -> T;
}

macro_rules! into_real_signed {
    ($($int:ty)*) => {$(
        impl IntoReal for $int {
            #[inline(always)]
            fn into_real<T: Real>(self) -> T {
                T::from_i128(self as i128)
            }
        }
    )*};
}
macro_rules! into_real_unsigned {
    ($($int:ty)*) => {$(
        impl IntoReal for $int {
            #[inline(always)]
            fn into_real<T: Real>(self) -> T {
                T::from_u128(self as u128)
            }
        }
    )*};
}
into_real_signed!(i8 i16 i32 i64 i128 isize);
into_real_unsigned!(u8 u16 u32 u64 u128 usize);

impl IntoReal for bool {
    #[inline(always)]
    fn into_real<T: Real>(self) -> T {
        T::from_u128(self as u128)
    }
}

/// `x as f64` where `x` already is a float: a no-op cast in the original (`(h * 0.5) as f64`), or a plain `f64`
/// value (a struct field that stays `f64`) entering a twin. The identity when the value already is the twin's
/// scalar type, else the primal taken as an exact input.
impl<R: Real> IntoReal for R {
    #[inline(always)]
    fn into_real<T: Real>(self) -> T {
        match (&self as &dyn core::any::Any).downcast_ref::<T>() {
            Some(same) => *same,
            None => T::from_f64(self.primal()),
        }
    }
}

/// `x as f64` where `x` is already of the twin's scalar type: the identity (the original cast was a no-op).
#[inline(always)]
pub fn same<T: Real>(x: T) -> T {
    x
}

/// `n as f64` in a twin.
#[inline(always)]
pub fn to_real<T: Real, S: IntoReal>(s: S) -> T {
    s.into_real()
}

/// A value a kernel converts to an integer type with `as`.
///
/// The conversions return a 128-bit value and whether the source was a float: `as` truncates integers to the
/// target width but saturates floats at the target's range, so the final narrowing step differs.
pub trait IndexCast {
    /// The value as a signed 128-bit integer, and whether it came from a float.
    #[track_caller]
    fn index_i128(self) -> (i128, bool);
    /// The value as an unsigned 128-bit integer, and whether it came from a float.
    #[track_caller]
    fn index_u128(self) -> (u128, bool);
}

macro_rules! index_cast_int {
    ($($int:ty)*) => {$(
        impl IndexCast for $int {
            #[inline(always)]
            fn index_i128(self) -> (i128, bool) {
                (self as i128, false)
            }
            #[inline(always)]
            fn index_u128(self) -> (u128, bool) {
                (self as u128, false)
            }
        }
    )*};
}
index_cast_int!(i8 i16 i32 i64 i128 isize u8 u16 u32 u64 u128 usize bool char);

impl<T: Real> IndexCast for T {
    #[inline(always)]
    #[track_caller]
    fn index_i128(self) -> (i128, bool) {
        (self.to_i128(), true)
    }
    #[inline(always)]
    #[track_caller]
    fn index_u128(self) -> (u128, bool) {
        (self.to_u128(), true)
    }
}

macro_rules! index_targets {
    ($($name:ident: $int:ty, $via:ident, $wide:ty;)*) => {$(
        /// `x as` the integer type of the same name, in a twin.
        ///
        /// An integer converts exactly as `as` does (sign-extend or zero-extend to 128 bits, then truncate); a
        /// float converts its primal with the saturation of `as` (NaN gives 0).
        #[inline(always)]
        #[track_caller]
        pub fn $name<S: IndexCast>(s: S) -> $int {
            let (wide, from_float) = s.$via();
            if from_float {
                wide.clamp(<$int>::MIN as $wide, <$int>::MAX as $wide) as $int
            } else {
                wide as $int
            }
        }
    )*};
}
index_targets! {
    to_usize: usize, index_u128, u128;
    to_u8: u8, index_u128, u128;
    to_u16: u16, index_u128, u128;
    to_u32: u32, index_u128, u128;
    to_u64: u64, index_u128, u128;
    to_u128: u128, index_u128, u128;
    to_isize: isize, index_i128, i128;
    to_i8: i8, index_i128, i128;
    to_i16: i16, index_i128, i128;
    to_i32: i32, index_i128, i128;
    to_i64: i64, index_i128, i128;
    to_i128: i128, index_i128, i128;
}

/// A value that a bare constant name in a kernel may hold (`PI`, brought in by a `use` the attribute cannot see).
pub trait ConstantValue: Copy {
    /// Whether the value is, bit for bit, the constant as `std::f64::consts` (or `std::f32::consts`) has it.
    fn is_constant(self, c: Constant) -> bool;
    /// The value as an exact input.
    fn exact<T: Real>(self) -> T;
}

macro_rules! constant_value {
    ($($float:ty: $value:ident, $from:ident;)*) => {$(
        impl ConstantValue for $float {
            #[inline(always)]
            fn is_constant(self, c: Constant) -> bool {
                self.to_bits() == c.$value().to_bits()
            }
            #[inline(always)]
            fn exact<T: Real>(self) -> T {
                T::$from(self)
            }
        }
    )*};
}
constant_value! {
    f64: f64_value, from_f64;
    f32: f32_value, from_f32;
}

/// A bare `PI` (or another constant's name) in a twin, where the rewrite cannot see where the name comes from:
/// the constant itself (π, held exactly by a lens) when the value is the rounded constant bit for bit, otherwise the
/// value as an exact input (a user's own `const PI: f64 = 3.14;`). With `T = f64` both give the value unchanged.
#[inline(always)]
pub fn math_constant<T: Real, V: ConstantValue>(value: V, c: Constant) -> T {
    if value.is_constant(c) {
        T::constant(c)
    } else {
        value.exact()
    }
}

/// A struct or enum that carries `#[twinstep::audit]`, and so has a generic twin `NameTwin<T>` beside it. The
/// struct's attribute implements it; the twin of an annotated `impl` block checks it, so that an `impl` block
/// whose struct has no twin fails with this trait's message rather than only with "cannot find type".
#[diagnostic::on_unimplemented(
    message = "`{Self}` has no twin struct, so its annotated `impl` block cannot be twinned",
    label = "this type's struct carries no `#[twinstep::audit]`",
    note = "put `#[twinstep::audit]` on the struct as well: its twin `…Twin<T>` then holds the type parameter in \
            place of the float, and every method of the block becomes a method of it",
    note = "or keep the struct as it is with `#[twinstep::audit(methods_only)]` on the `impl` block: only the \
            methods that take a float then get a twin, named `…_twin`"
)]
pub trait TwinStruct {}

/// The check an annotated `impl` block's twin makes: `S` has a twin struct.
#[inline(always)]
pub fn needs_twin_struct<S: TwinStruct + ?Sized>() {}

/// The directory in which the build helper `twinstep-build` writes whole-file twins (`$OUT_DIR/twinstep-twins/…`).
pub const TWINS_DIR: &str = "twinstep-twins";

/// The file a site of twin code stands for: a whole-file twin written by the build helper keeps every token on
/// the line of the kernel file, at `…/twinstep-twins/src/solver.rs` for `src/solver.rs`, so the part after the
/// directory names the user's own file.
#[must_use]
pub fn source_file(file: &'static str) -> &'static str {
    let marker = ["/", TWINS_DIR, "/"].concat();
    let windows = ["\\", TWINS_DIR, "\\"].concat();
    file.rfind(&marker)
        .map(|at| &file[at + marker.len()..])
        .or_else(|| file.rfind(&windows).map(|at| &file[at + windows.len()..]))
        .unwrap_or(file)
}

/// A method call's receiver in a twin whose `bounds` add a trait sharing `Real`'s method names (`Float`): its
/// inherent methods win over the traits' and call `Real`'s, so `x.sqrt()` on `T: Real + Float` is not ambiguous
/// (see the engine's `methods` pass). For the integer types it has the methods integers share with `Real`'s
/// names; any other receiver is reached through `Deref`.
#[derive(Clone, Copy, Debug)]
pub struct ByReal<X>(pub X);

impl<X> core::ops::Deref for ByReal<X> {
    type Target = X;
    #[inline(always)]
    fn deref(&self) -> &X {
        &self.0
    }
}

macro_rules! by_real {
    (unary: $($name:ident -> $out:ty),*; binary: $($binary:ident),*) => {
        impl<R: Real> ByReal<R> {
            $(
                #[inline(always)]
                #[track_caller]
                #[must_use]
                pub fn $name(self) -> $out {
                    <R as Real>::$name(self.0)
                }
            )*
            $(
                #[inline(always)]
                #[track_caller]
                #[must_use]
                pub fn $binary(self, other: R) -> R {
                    <R as Real>::$binary(self.0, other)
                }
            )*
            /// `x.powi(n)`.
            #[inline(always)]
            #[track_caller]
            #[must_use]
            pub fn powi(self, n: i32) -> R {
                <R as Real>::powi(self.0, n)
            }
            /// `x.mul_add(a, b)`.
            #[inline(always)]
            #[track_caller]
            #[must_use]
            pub fn mul_add(self, a: R, b: R) -> R {
                <R as Real>::mul_add(self.0, a, b)
            }
            /// `x.clamp(lo, hi)`.
            #[inline(always)]
            #[track_caller]
            #[must_use]
            pub fn clamp(self, lo: R, hi: R) -> R {
                <R as Real>::clamp(self.0, lo, hi)
            }
        }
    };
}
by_real! {
    unary: sqrt -> R, cbrt -> R, abs -> R, recip -> R, exp -> R, exp2 -> R, exp_m1 -> R, ln -> R, ln_1p -> R,
        log2 -> R, log10 -> R, sin -> R, cos -> R, tan -> R, sin_cos -> (R, R), asin -> R, acos -> R, atan -> R,
        sinh -> R, cosh -> R, tanh -> R, signum -> R, floor -> R, ceil -> R, round -> R, trunc -> R, fract -> R,
        to_degrees -> R, to_radians -> R, is_nan -> bool, is_finite -> bool, is_infinite -> bool,
        is_sign_negative -> bool, is_sign_positive -> bool;
    binary: powf, log, atan2, hypot, max, min, copysign
}

macro_rules! by_real_integers {
    (ord: $($int:ty)*; signed: $($signed:ty)*) => {
        $(
            impl ByReal<$int> {
                /// The integer's own `max` (`Ord::max`).
                #[inline(always)]
                #[must_use]
                pub fn max(self, other: $int) -> $int {
                    Ord::max(self.0, other)
                }
                /// The integer's own `min` (`Ord::min`).
                #[inline(always)]
                #[must_use]
                pub fn min(self, other: $int) -> $int {
                    Ord::min(self.0, other)
                }
                /// The integer's own `clamp` (`Ord::clamp`).
                #[inline(always)]
                #[must_use]
                pub fn clamp(self, lo: $int, hi: $int) -> $int {
                    Ord::clamp(self.0, lo, hi)
                }
            }
        )*
        $(
            impl ByReal<$signed> {
                /// The integer's own `abs`.
                #[inline(always)]
                #[must_use]
                pub fn abs(self) -> $signed {
                    self.0.abs()
                }
                /// The integer's own `signum`.
                #[inline(always)]
                #[must_use]
                pub fn signum(self) -> $signed {
                    self.0.signum()
                }
            }
        )*
    };
}
by_real_integers! {
    ord: u8 u16 u32 u64 u128 usize i8 i16 i32 i64 i128 isize;
    signed: i8 i16 i32 i64 i128 isize
}
