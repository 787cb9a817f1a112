//! [`Shadow`]: the primal with a double-word (≈106-bit) shadow running the same operations — a tight *estimate*
//! of the primal's true error, not a guarantee (`error_bound` is `None`).
//!
//! The shadow follows the primal's path (branches and integer conversions are the primal's) and rounds about
//! 2^53 times less than the primal at each operation, so `|primal − shadow|` estimates `|primal − exact|` until
//! the shadow's own error catches up (ill-conditioned problems such as Rump's polynomial can defeat it: that is
//! what [`super::Bound`] and [`super::Interval`] are for).
//!
//! Sum, difference, product, quotient, √ and `mul_add` are the double-word algorithms of [`super::eft`]: the
//! classical double-double sum (its error bound is relative to the operands, derived there) and the product,
//! quotient and root analysed by Joldes, Muller, Popescu (ACM TOMS 2017). The other elementary functions are the double-word ones of [`super::dwmath`];
//! for the arguments those decline they evaluate the double-word value at 160 bits with `dashu-float` and round
//! back to double-word: slower, but accurate far beyond the shadow's own precision.

use crate::events::{record, EventKind};
use crate::lens::dwmath;
use crate::lens::eft::{next_down, next_up, DoubleWord};
use crate::lens::format::{NativeBinary64, PrimalFormat};
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use core::marker::PhantomData;
use core::ops::{Add, Div, Mul, Neg, Sub};
use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;

/// A value with a double-word shadow of the same computation, its primal computed as `P` says: the hardware's
/// binary64 ([`ShadowOf`], the `Shadow` lens) or an emulated format (the lenses of [`super::emulated`]). One
/// implementation serves them all; only the primal's arithmetic differs.
#[derive(Clone, Copy, Debug)]
pub struct Shadowed<P, const WATCH: bool> {
    primal: f64,
    shadow: DoubleWord,
    format: PhantomData<P>,
}

/// The primal as the `f64` program computes it, with a double-word shadow.
pub type ShadowOf<const WATCH: bool> = Shadowed<NativeBinary64, WATCH>;

super::watch_variants!(ShadowOf, Shadow, ShadowUnwatched);

impl<P: PrimalFormat, const W: bool> Shadowed<P, W> {
    /// A primal with an explicit shadow `hi + lo` (the primal taken as it is: a value of the format).
    #[must_use]
    pub fn new(primal: f64, hi: f64, lo: f64) -> Self {
        Self::of(primal, DoubleWord { hi, lo })
    }

    #[inline(always)]
    fn of(primal: f64, shadow: DoubleWord) -> Self {
        Self { primal, shadow, format: PhantomData }
    }

    /// The shadow as the pair `(hi, lo)` (`lo = 0` beside a non-finite `hi`).
    #[must_use]
    pub fn shadow(self) -> (f64, f64) {
        let DoubleWord { hi, lo } = self.shadow.canonical();
        (hi, lo)
    }

    /// `primal − shadow`, to double precision: `(primal − hi) − lo` (the first subtraction is exact when the
    /// two are within a factor of two, Sterbenz).
    #[must_use]
    pub fn signed_error(self) -> f64 {
        let DoubleWord { hi, lo } = self.shadow.canonical();
        (self.primal - hi) - lo
    }

    /// The estimate of the relative error `|primal − exact| / |exact|` (infinite when the shadow is 0 and the
    /// primal is not).
    #[must_use]
    pub fn relative_error(self) -> f64 {
        let error = self.signed_error().abs();
        if error == 0.0 {
            0.0
        } else {
            error / self.shadow.to_f64().abs()
        }
    }

    /// The result of a function on the shadow: the double-word evaluation `fast` of [`super::dwmath`] when it
    /// took the argument, else the function at [`BITS`] bits with `dashu-float`, else (outside the domain or the
    /// double range) the `f64` fallback — the primal records the event.
    fn high_precision(
        primal: f64,
        x: DoubleWord,
        fast: Option<DoubleWord>,
        inside: bool,
        f: impl Fn(&Big) -> Big,
        fallback: fn(f64) -> f64,
    ) -> Self {
        if let Some(shadow) = fast {
            return Self::of(primal, shadow);
        }
        let shadow = match big(x) {
            Some(value) if inside => double_word(&f(&value)),
            _ => DoubleWord::from_f64(fallback(x.to_f64())),
        };
        Self::of(primal, shadow)
    }
}

pub(crate) type Big = FBig<HalfEven>;
/// Working precision of the shadow's elementary functions.
pub(crate) const BITS: usize = 160;

/// A finite double-word value as a `dashu-float` number, rounded to [`BITS`] bits (exact when `hi` and `lo` fit
/// in them; within 2^-160 relative otherwise).
pub(crate) fn big(x: DoubleWord) -> Option<Big> {
    if !x.is_finite() || !x.lo.is_finite() {
        return None;
    }
    let hi = Big::try_from(x.hi).ok()?.with_precision(BITS).value();
    let lo = Big::try_from(x.lo).ok()?;
    Some(hi + lo)
}

/// The nearest double-word value of a `dashu-float` number: round to nearest, then the remainder.
pub(crate) fn double_word(x: &Big) -> DoubleWord {
    let hi = x.to_f64().value();
    match Big::try_from(hi) {
        Ok(hi_big) if hi.is_finite() => DoubleWord { hi, lo: (x - hi_big).to_f64().value() },
        _ => DoubleWord::from_f64(hi),
    }
}

/// `ln 2`, `ln 10` at the working precision.
fn ln_of(n: u32) -> Big {
    Big::from(n).with_precision(BITS).value().ln()
}

/// The unary elementary functions of the shadow: `name: |x| domain test on the shadow x, 160-bit evaluation;`.
/// Each tries the double-word function of [`dwmath`] first (see [`Shadow::high_precision`]).
macro_rules! shadow_functions {
    ($($name:ident: |$x:ident| $inside:expr, $big:expr;)*) => {$(
        fn $name(self) -> Self {
            let $x = self.shadow;
            Self::high_precision(P::round(self.primal.$name()), $x, dwmath::$name($x), $inside, $big, f64::$name)
        }
    )*};
}

impl<P: PrimalFormat, const W: bool> Core for Shadowed<P, W> {
    super::primal_format_core!(P, W);

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self::of(P::round(value), DoubleWord::from_f64(value))
    }

    #[inline(always)]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        Self::of(P::round_reference(value, reference), DoubleWord { hi: reference.hi, lo: reference.lo })
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        // The doubles around hi + lo: hi itself when lo = 0, else hi and its neighbour on lo's side.
        let DoubleWord { hi, lo } = self.shadow.canonical();
        if lo > 0.0 {
            (hi, next_up(hi))
        } else if lo < 0.0 {
            (next_down(hi), hi)
        } else {
            (hi, hi)
        }
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        self.shadow.partial_cmp(rhs.shadow).map_or(Orders::NONE, Orders::only)
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        Self::of(P::add(self.primal, rhs.primal), self.shadow.add(rhs.shadow))
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        Self::of(P::sub(self.primal, rhs.primal), self.shadow.sub(rhs.shadow))
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        Self::of(P::mul(self.primal, rhs.primal), self.shadow.mul(rhs.shadow))
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.shadow.hi == 0.0 && rhs.primal != 0.0 {
            record::<Self>(EventKind::DivisorMayBeZero); // the shadow divides by zero where the primal does not
        }
        Self::of(P::div(self.primal, rhs.primal), self.shadow.div(rhs.shadow))
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y with q = trunc(x/y)
        let q = ((self.primal - c) / rhs.primal).round();
        // Along the primal's path: X − q·Y in double-word arithmetic.
        let shadow = self.shadow.sub(rhs.shadow.mul_f64(q));
        let quotient = self.shadow.div(rhs.shadow);
        let truncated = {
            let t = quotient.hi.trunc();
            // hi an integer with lo pulling towards zero: the shadow quotient truncates one step closer to 0.
            if t == quotient.hi && quotient.lo != 0.0 && (quotient.lo < 0.0) == (quotient.hi > 0.0) {
                t - quotient.hi.signum()
            } else {
                t
            }
        };
        if q.is_finite() && quotient.is_finite() && truncated != q {
            record::<Self>(EventKind::UndecidedComparison);
        }
        Self::of(c, shadow)
    }

    #[inline(always)]
    fn neg(self) -> Self {
        Self::of(-self.primal, self.shadow.neg())
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        Self::of(P::mul_add(self.primal, a.primal, b.primal), self.shadow.mul_add(a.shadow, b.shadow))
    }

    #[inline(always)]
    fn abs(self) -> Self {
        let shadow = if self.shadow.hi < 0.0 { self.shadow.neg() } else { self.shadow };
        Self::of(self.primal.abs(), shadow)
    }

    #[inline]
    fn sqrt(self) -> Self {
        Self::of(P::sqrt(self.primal), self.shadow.sqrt())
    }

    fn cbrt(self) -> Self {
        // One Newton step y + (x − y³)/(3y²) from the double cube root, in double-word arithmetic.
        let x = self.shadow;
        let y = x.hi.cbrt();
        let shadow = if y == 0.0 || !y.is_finite() {
            DoubleWord::from_f64(y)
        } else {
            let yy = DoubleWord::from_f64(y);
            let residual = x.sub(yy.mul(yy).mul(yy));
            yy.add(residual.div(yy.mul(yy).mul_f64(3.0)))
        };
        Self::of(P::round(self.primal.cbrt()), shadow)
    }

    shadow_functions! {
        exp: |x| true, Big::exp;
        exp2: |x| true, |b: &Big| (b * ln_of(2)).exp(); // 2ˣ = e^{x ln 2}
        exp_m1: |x| true, Big::exp_m1;
        ln: |x| x.hi > 0.0, Big::ln;
        ln_1p: |x| x.hi > -1.0 || (x.hi == -1.0 && x.lo > 0.0), Big::ln_1p;
        log2: |x| x.hi > 0.0, |b: &Big| b.ln() / ln_of(2); // log₂ x = ln x / ln 2
        log10: |x| x.hi > 0.0, |b: &Big| b.ln() / ln_of(10);
        sin: |x| true, Big::sin;
        cos: |x| true, Big::cos;
        tan: |x| true, Big::tan;
        asin: |x| x.hi.abs() < 1.0, Big::asin;
        acos: |x| x.hi.abs() < 1.0, Big::acos;
        atan: |x| true, Big::atan;
        sinh: |x| true, Big::sinh;
        cosh: |x| true, Big::cosh;
        tanh: |x| true, Big::tanh;
    }

    fn powi(self, n: i32) -> Self {
        // Binary powering in double-word arithmetic; x⁻ⁿ = 1/xⁿ.
        let mut base = self.shadow;
        let mut result = DoubleWord::from_f64(1.0);
        let mut k = n.unsigned_abs();
        while k > 0 {
            if k & 1 == 1 {
                result = result.mul(base);
            }
            base = base.mul(base);
            k >>= 1;
        }
        let shadow = if n < 0 { DoubleWord::from_f64(1.0).div(result) } else { result };
        Self::of(P::powi(self.primal, n), shadow)
    }

    fn powf(self, n: Self) -> Self {
        let primal = P::round(self.primal.powf(n.primal));
        let exponent = n.shadow;
        if exponent.lo == 0.0 && exponent.hi.fract() == 0.0 && exponent.hi.abs() <= f64::from(i32::MAX) {
            let integer = Core::powi(self, exponent.hi as i32);
            return Self::of(primal, integer.shadow);
        }
        if let Some(shadow) = dwmath::powf(self.shadow, exponent) {
            return Self::of(primal, shadow);
        }
        let shadow = match (big(self.shadow), big(exponent)) {
            (Some(x), Some(y)) if self.shadow.hi > 0.0 => double_word(&x.powf(&y)),
            _ => DoubleWord::from_f64(self.shadow.to_f64().powf(exponent.to_f64())),
        };
        Self::of(primal, shadow)
    }

    fn log(self, base: Self) -> Self {
        let primal = P::round(self.primal.log(base.primal));
        if let Some(shadow) = dwmath::log(self.shadow, base.shadow) {
            return Self::of(primal, shadow);
        }
        let shadow = match (big(self.shadow), big(base.shadow)) {
            (Some(x), Some(b))
                if self.shadow.hi > 0.0 && base.shadow.hi > 0.0 && base.shadow != DoubleWord::from_f64(1.0) =>
            {
                double_word(&(x.ln() / b.ln())) // log_b x = ln x / ln b
            }
            _ => DoubleWord::from_f64(self.shadow.to_f64().log(base.shadow.to_f64())),
        };
        Self::of(primal, shadow)
    }

    fn atan2(self, other: Self) -> Self {
        let primal = P::round(self.primal.atan2(other.primal));
        if let Some(shadow) = dwmath::atan2(self.shadow, other.shadow) {
            return Self::of(primal, shadow);
        }
        let shadow = match (big(self.shadow), big(other.shadow)) {
            (Some(y), Some(x)) if self.shadow.hi != 0.0 || other.shadow.hi != 0.0 => double_word(&y.atan2(&x)),
            _ => DoubleWord::from_f64(self.shadow.to_f64().atan2(other.shadow.to_f64())),
        };
        Self::of(primal, shadow)
    }

    fn hypot(self, other: Self) -> Self {
        let primal = P::round(self.primal.hypot(other.primal));
        // √(x² + y²) in double-word arithmetic; at the edges of the range, 160-bit dashu-float.
        let (x, y) = (self.shadow, other.shadow);
        let direct = x.mul(x).add(y.mul(y)).sqrt();
        let shadow = if direct.is_finite() && direct.hi > 1e-290 {
            direct
        } else {
            match (big(x), big(y)) {
                (Some(a), Some(b)) => double_word(&a.hypot(&b)),
                _ => DoubleWord::from_f64(x.to_f64().hypot(y.to_f64())),
            }
        };
        Self::of(primal, shadow)
    }
}

crate::lens_scalar!(ShadowOf);

impl<P: PrimalFormat, const W: bool> core::fmt::Display for Shadowed<P, W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let (hi, lo) = self.shadow();
        write!(f, "{} (shadow {:e} {:+e})", self.primal, hi, lo)
    }
}

super::estimate_lens!(Shadowed<PrimalFormat>, other: shadow,
    name: if W { P::LENS_NAME } else { P::UNWATCHED_NAME }, native: P::NATIVE,
    reference: |x| x.shadow.to_f64());
