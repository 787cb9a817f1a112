//! The num-traits traits for every lens, so that kernels written over generic maths crates (2-D and 3-D vector
//! types, `T: num_traits::Float` helpers) run with a lens: `Num`, `NumCast`, `ToPrimitive`, `FromPrimitive`,
//! `Bounded`, `Signed`, `Float`, `FloatConst` (`Zero` and `One` are in [`scalar`](super::scalar), since `Real`
//! needs them; `num_traits::real::Real` follows from `Float`).
//!
//! Written once as [`lens_num_traits!`](crate::lens_num_traits), which the shared `lens_scalar!` invokes, so a new
//! lens gets them without a line of its own. Every method forwards to the lens's [`Real`](crate::Real) method of
//! the same meaning, so the primal is the one `f64` computes and the reference rides along; what `Real` lacks is
//! built from it:
//!
//! | method | how |
//! |---|---|
//! | `asinh`, `acosh`, `atanh` | `ln(x + √(x²+1))`, `ln(x + √(x²−1))`, `½·ln((1+x)/(1−x))` (Abramowitz & Stegun 4.6.20, 4.6.21, 4.6.22, from memory); the primal may differ from the platform's `f64::asinh` by an ulp, and an audit that compares with the original says so |
//! | `abs_sub` | `if x <= y { 0 } else { x − y }`, as num-traits has it for `f64` |
//! | `neg_zero`, `classify`, `is_normal`, `is_subnormal`, `integer_decode` | of the primal |
//! | `to_i64`, `to_u64`, … | the primal's conversion; a lens whose reference could convert to another integer records an undecided index, as `x as usize` does |
//! | `NumCast::from`, `FromPrimitive` | an integer is converted as `n as f64` is (rounded in the primal, exact in the reference); a float is an exact input |
//!
//! Why `Float` is not in a twin's `where` clause by default: `Real` and `Float` share method names (`sqrt`,
//! `max`, …), and with both bounds on `T` a kernel's `x.sqrt()` would be ambiguous (E0034). A kernel that calls
//! generic code needing `Float` names it: `#[twinstep::audit(bounds = [::twinstep::num_traits::Float])]`
//! (`docs/rewrite.md`). Calls into num-traits from generic code report events at that code's line: a trait method
//! reports its caller only when the trait declaration carries `#[track_caller]`, as `Real` does and `Float`
//! does not.

/// Implements the num-traits traits for a lens type `$lens<const W: bool>` that has [`crate::Real`].
#[macro_export]
#[doc(hidden)]
macro_rules! lens_num_traits {
    ($lens:ident) => {
        impl<const W: bool> ::num_traits::Num for $lens<W> {
            type FromStrRadixErr = <f64 as ::num_traits::Num>::FromStrRadixErr;
            /// The parsed double, taken as an exact input.
            fn from_str_radix(text: &str, radix: u32) -> Result<$lens<W>, Self::FromStrRadixErr> {
                <f64 as ::num_traits::Num>::from_str_radix(text, radix).map(<$lens<W> as $crate::Real>::from_f64)
            }
        }

        impl<const W: bool> ::num_traits::ToPrimitive for $lens<W> {
            #[track_caller]
            fn to_i64(&self) -> Option<i64> {
                $crate::lens::scalar::decide(*self, |x| ::num_traits::ToPrimitive::to_i64(&x),
                    $crate::events::EventKind::UndecidedIndex)
            }
            #[track_caller]
            fn to_u64(&self) -> Option<u64> {
                $crate::lens::scalar::decide(*self, |x| ::num_traits::ToPrimitive::to_u64(&x),
                    $crate::events::EventKind::UndecidedIndex)
            }
            #[track_caller]
            fn to_i128(&self) -> Option<i128> {
                $crate::lens::scalar::decide(*self, |x| ::num_traits::ToPrimitive::to_i128(&x),
                    $crate::events::EventKind::UndecidedIndex)
            }
            #[track_caller]
            fn to_u128(&self) -> Option<u128> {
                $crate::lens::scalar::decide(*self, |x| ::num_traits::ToPrimitive::to_u128(&x),
                    $crate::events::EventKind::UndecidedIndex)
            }
            fn to_f64(&self) -> Option<f64> {
                Some($crate::Real::primal(*self))
            }
            fn to_f32(&self) -> Option<f32> {
                ::num_traits::ToPrimitive::to_f32(&$crate::Real::primal(*self))
            }
        }

        impl<const W: bool> ::num_traits::NumCast for $lens<W> {
            fn from<N: ::num_traits::ToPrimitive>(n: N) -> Option<$lens<W>> {
                let value = n.to_f64()?;
                // An integer (its i128 rounds to the same double as its f64) keeps its exact value in the
                // reference, as `n as f64` does in a twin; anything else is an exact input.
                match n.to_i128() {
                    Some(integer) if integer as f64 == value => Some(<$lens<W> as $crate::Real>::from_i128(integer)),
                    _ => Some(<$lens<W> as $crate::Real>::from_f64(value)),
                }
            }
        }

        impl<const W: bool> ::num_traits::FromPrimitive for $lens<W> {
            fn from_i64(n: i64) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_i128(i128::from(n)))
            }
            fn from_u64(n: u64) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_u128(u128::from(n)))
            }
            fn from_i128(n: i128) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_i128(n))
            }
            fn from_u128(n: u128) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_u128(n))
            }
            fn from_f64(n: f64) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_f64(n))
            }
            fn from_f32(n: f32) -> Option<$lens<W>> {
                Some(<$lens<W> as $crate::Real>::from_f32(n))
            }
        }

        impl<const W: bool> ::num_traits::Bounded for $lens<W> {
            fn min_value() -> $lens<W> {
                <$lens<W> as $crate::Real>::min_value()
            }
            fn max_value() -> $lens<W> {
                <$lens<W> as $crate::Real>::max_value()
            }
        }

        impl<const W: bool> ::num_traits::Signed for $lens<W> {
            fn abs(&self) -> $lens<W> {
                <$lens<W> as $crate::Real>::abs(*self)
            }
            #[track_caller]
            fn abs_sub(&self, other: &$lens<W>) -> $lens<W> {
                <$lens<W> as ::num_traits::Float>::abs_sub(*self, *other)
            }
            #[track_caller]
            fn signum(&self) -> $lens<W> {
                <$lens<W> as $crate::Real>::signum(*self)
            }
            #[track_caller]
            fn is_positive(&self) -> bool {
                <$lens<W> as $crate::Real>::is_sign_positive(*self)
            }
            #[track_caller]
            fn is_negative(&self) -> bool {
                <$lens<W> as $crate::Real>::is_sign_negative(*self)
            }
        }

        impl<const W: bool> ::num_traits::Float for $lens<W> {
            $crate::lens_num_traits!(@same $lens: nan, infinity, neg_infinity, min_value, max_value, epsilon);
            fn neg_zero() -> $lens<W> {
                <$lens<W> as $crate::Real>::from_f64(-0.0)
            }
            fn min_positive_value() -> $lens<W> {
                <$lens<W> as $crate::Real>::min_positive()
            }
            $crate::lens_num_traits!(@unary $lens: floor, ceil, round, trunc, fract, abs, signum, recip, sqrt, exp,
                exp2, ln, log2, log10, cbrt, sin, cos, tan, asin, acos, atan, exp_m1, ln_1p, sinh, cosh, tanh,
                to_degrees, to_radians);
            $crate::lens_num_traits!(@binary $lens: powf, log, max, min, hypot, atan2, copysign);
            $crate::lens_num_traits!(@predicate $lens: is_nan, is_infinite, is_finite, is_sign_positive,
                is_sign_negative);
            fn is_normal(self) -> bool {
                $crate::Real::primal(self).is_normal()
            }
            fn is_subnormal(self) -> bool {
                $crate::Real::primal(self).is_subnormal()
            }
            fn classify(self) -> ::core::num::FpCategory {
                $crate::Real::primal(self).classify()
            }
            #[track_caller]
            fn mul_add(self, a: $lens<W>, b: $lens<W>) -> $lens<W> {
                <$lens<W> as $crate::Real>::mul_add(self, a, b)
            }
            #[track_caller]
            fn powi(self, n: i32) -> $lens<W> {
                <$lens<W> as $crate::Real>::powi(self, n)
            }
            #[track_caller]
            fn clamp(self, min: $lens<W>, max: $lens<W>) -> $lens<W> {
                <$lens<W> as $crate::Real>::clamp(self, min, max)
            }
            #[track_caller]
            fn abs_sub(self, other: $lens<W>) -> $lens<W> {
                // x <= y gives 0, else x − y (num-traits' Signed for f64; the deprecated f64::abs_sub is fdim).
                if self <= other { <$lens<W> as ::num_traits::Zero>::zero() } else { self - other }
            }
            #[track_caller]
            fn sin_cos(self) -> ($lens<W>, $lens<W>) {
                <$lens<W> as $crate::Real>::sin_cos(self)
            }
            #[track_caller]
            fn asinh(self) -> $lens<W> {
                // asinh x = sign(x)·ln(|x| + √(x² + 1)) (A&S 4.6.20), written for |x| so that the cancellation
                // of x + √(x² + 1) for negative x does not occur.
                let one = <$lens<W> as ::num_traits::One>::one();
                let magnitude = <$lens<W> as $crate::Real>::abs(self);
                let value = <$lens<W> as $crate::Real>::ln(
                    magnitude + <$lens<W> as $crate::Real>::sqrt(magnitude * magnitude + one));
                <$lens<W> as $crate::Real>::copysign(value, self)
            }
            #[track_caller]
            fn acosh(self) -> $lens<W> {
                // acosh x = ln(x + √(x² − 1)) for x ≥ 1 (A&S 4.6.21); NaN below 1, as f64::acosh.
                let one = <$lens<W> as ::num_traits::One>::one();
                <$lens<W> as $crate::Real>::ln(self + <$lens<W> as $crate::Real>::sqrt(self * self - one))
            }
            #[track_caller]
            fn atanh(self) -> $lens<W> {
                // atanh x = ½·ln((1 + x)/(1 − x)) for |x| < 1 (A&S 4.6.22).
                let one = <$lens<W> as ::num_traits::One>::one();
                let half = <$lens<W> as $crate::Real>::from_f64(0.5);
                half * <$lens<W> as $crate::Real>::ln((one + self) / (one - self))
            }
            fn integer_decode(self) -> (u64, i16, i8) {
                ::num_traits::Float::integer_decode($crate::Real::primal(self))
            }
        }

        impl<const W: bool> ::num_traits::FloatConst for $lens<W> {
            // The list of `with_constant_names!`, which cannot name this macro by path.
            $crate::lens_num_traits!(@constants PI, TAU, E, SQRT_2, LN_2, LN_10, LOG2_E, LOG10_E, LOG2_10, LOG10_2,
                FRAC_PI_2, FRAC_PI_3, FRAC_PI_4, FRAC_PI_6, FRAC_PI_8, FRAC_1_PI, FRAC_2_PI, FRAC_2_SQRT_PI,
                FRAC_1_SQRT_2);
        }
    };

    // The constant as a lens holds it (the real number, under the literal mode in force).
    (@constants $($c:ident),*) => {$(
        #[allow(non_snake_case)]
        fn $c() -> Self {
            <Self as $crate::Real>::constant($crate::Constant::$c)
        }
    )*};

    (@same $lens:ident: $($name:ident),*) => {$(
        fn $name() -> $lens<W> {
            <$lens<W> as $crate::Real>::$name()
        }
    )*};
    (@unary $lens:ident: $($name:ident),*) => {$(
        #[track_caller]
        fn $name(self) -> $lens<W> {
            <$lens<W> as $crate::Real>::$name(self)
        }
    )*};
    (@binary $lens:ident: $($name:ident),*) => {$(
        #[track_caller]
        fn $name(self, other: $lens<W>) -> $lens<W> {
            <$lens<W> as $crate::Real>::$name(self, other)
        }
    )*};
    (@predicate $lens:ident: $($name:ident),*) => {$(
        #[track_caller]
        fn $name(self) -> bool {
            <$lens<W> as $crate::Real>::$name(self)
        }
    )*};
}

#[cfg(test)]
mod tests {
    //! The lenses' num-traits answers against `f64`'s own (the primal is the float program's number), and the
    //! constants against `std::f64::consts`.
    use crate::lens::{Bound, Interval, Shadow};
    use crate::Real;
    use num_traits::{Float, FloatConst, NumCast, ToPrimitive};

    fn agrees_with_f64<L: Real + Float + FloatConst>() {
        for x in [0.3, -2.5, 7.0, 1.0e-310, 0.999] {
            let l = L::from_f64(x);
            // f64's own num-traits answers are the oracle: the primal must be the float program's number.
            assert_eq!(Float::sqrt(Real::abs(l)).primal().to_bits(), Float::sqrt(x.abs()).to_bits());
            assert_eq!(Float::max(l, L::from_f64(0.5)).primal().to_bits(), Float::max(x, 0.5).to_bits());
            assert_eq!(Float::floor(l).primal().to_bits(), Float::floor(x).to_bits());
            assert_eq!(Float::classify(l), Float::classify(x));
            assert_eq!(Float::integer_decode(l), Float::integer_decode(x));
            assert_eq!(l.to_i64(), x.to_i64());
            assert_eq!(Float::abs_sub(l, L::from_f64(0.5)).primal().to_bits(), f64::max(x - 0.5, 0.0).to_bits());
        }
        // 2^60 + 1 is an integer f64 cannot hold: NumCast rounds it in the primal as `as f64` does.
        let big: L = NumCast::from((1u64 << 60) + 1).expect("an integer converts");
        assert_eq!(big.primal(), ((1u64 << 60) + 1) as f64);
        assert_eq!(<L as FloatConst>::PI().primal(), std::f64::consts::PI);
        assert_eq!(<L as FloatConst>::TAU().primal(), std::f64::consts::TAU);
    }

    #[test]
    fn lenses_answer_num_traits_as_f64_does() {
        agrees_with_f64::<Bound>();
        agrees_with_f64::<Shadow>();
        agrees_with_f64::<Interval>();
    }

    #[test]
    fn the_inverse_hyperbolic_functions_are_close_to_the_platforms() {
        // The identities of A&S 4.6.20–22 computed in the lens, against the platform's libm: within a few ulps.
        for x in [0.25, 0.5, -0.75] {
            let l = Shadow::from_f64(x);
            for (lens, libm) in [(Float::asinh(l), x.asinh()), (Float::atanh(l), x.atanh())] {
                assert!((lens.primal() - libm).abs() <= 4.0 * f64::EPSILON * libm.abs(), "{x}: {lens} vs {libm}");
            }
        }
        let l = Shadow::from_f64(1.5);
        assert!((Float::acosh(l).primal() - 1.5f64.acosh()).abs() <= 4.0 * f64::EPSILON);
    }
}
