//! Lenses for formats of at most 24 bits with a binary64 reference: the primal rounds every operation to
//! binary32, bfloat16, binary16 or p bits exactly as the lenses of [`super::emulated`] do (the same
//! [`PrimalFormat`] arithmetic, so the same bits), and the reference runs the same operations in the hardware's
//! binary64 instead of a double-double.
//!
//! Why a second reference: for a primal of p ≤ 24 bits, binary64 rounds at least 2^29 times less than the primal
//! at each operation, so `|primal − reference|` estimates the primal's error to about 29 bits — the quality a
//! double-double shadow gives a binary64 primal is 53 bits, and a verdict needs two or three digits. The reference
//! is one double operation beside the primal's, not about twenty: the binary32 lens costs about a third of its
//! double-double twin, the bfloat16 and binary16 lenses (whose rounding to the format is most of their cost) a
//! little over half (the benchmark in `docs/lenses.md`).
//!
//! Its limit: the reference is itself a binary64 run of the program along the primal's path, so where binary64 is
//! far from exact (an ill-conditioned problem, an unstable recurrence) the estimate carries the binary64 error
//! too. The precision sweep uses these lenses only beside a binary64 run, measured with the double-double
//! shadow, and reruns a format with the double-double lens when binary64's own error is not small against the
//! format's ([`crate::sweep`], `docs/sweep.md`). Formats of more than 24 bits always take the double-double lens.
//!
//! Branches, `max`/`min` and index casts follow the emulated primal, and the reference records where binary64
//! could go otherwise, as in every lens. The elementary functions of the primal are the correctly rounded result
//! of the `f64` function (the assumption of [`super::emulated`]); the reference's are the platform's `f64`
//! functions, within an ulp or so of binary64.

use crate::events::{record, EventKind};
use crate::lens::format::{EmulatedBfloat16, EmulatedBinary16, EmulatedBinary32, EmulatedBits, PrimalFormat};
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use core::marker::PhantomData;

/// The emulated formats a binary64 reference is meant for (at most 24 bits), with the lens names.
pub trait NarrowFormat: PrimalFormat {
    /// The lens's name in traces and reports (watched variant).
    const NARROW_NAME: &'static str;
    /// The unwatched variant's name.
    const NARROW_UNWATCHED_NAME: &'static str;
}

macro_rules! narrow_format {
    ($($format:ident $name:literal),*) => {$(
        impl NarrowFormat for $format {
            const NARROW_NAME: &'static str = $name;
            const NARROW_UNWATCHED_NAME: &'static str = concat!($name, "-unwatched");
        }
    )*};
}
narrow_format!(EmulatedBinary32 "binary32-b64", EmulatedBfloat16 "bfloat16-b64", EmulatedBinary16 "binary16-b64",
    EmulatedBits "pbits-b64");

/// Whether the lens named `name` (in a trace) is one of these, whose reference is binary64 rather than a
/// double-double (the sweep's report says which reference each format's run had).
#[must_use]
pub fn has_binary64_reference(name: &str) -> bool {
    [
        <EmulatedBinary32 as NarrowFormat>::NARROW_NAME,
        <EmulatedBfloat16 as NarrowFormat>::NARROW_NAME,
        <EmulatedBinary16 as NarrowFormat>::NARROW_NAME,
        <EmulatedBits as NarrowFormat>::NARROW_NAME,
        <EmulatedBinary32 as NarrowFormat>::NARROW_UNWATCHED_NAME,
        <EmulatedBfloat16 as NarrowFormat>::NARROW_UNWATCHED_NAME,
        <EmulatedBinary16 as NarrowFormat>::NARROW_UNWATCHED_NAME,
        <EmulatedBits as NarrowFormat>::NARROW_UNWATCHED_NAME,
    ]
    .contains(&name)
}

/// A value computed in the emulated format `P`, with the same computation in binary64 as its reference.
#[derive(Clone, Copy, Debug)]
pub struct Narrowed<P, const WATCH: bool> {
    primal: f64,
    reference: f64,
    format: PhantomData<P>,
}

impl<P: NarrowFormat, const W: bool> Narrowed<P, W> {
    /// A primal (taken as a value of the format) with its binary64 reference.
    #[must_use]
    pub fn new(primal: f64, reference: f64) -> Self {
        Self::of(primal, reference)
    }

    #[inline(always)]
    fn of(primal: f64, reference: f64) -> Self {
        Self { primal, reference, format: PhantomData }
    }

    /// `primal − reference`.
    #[must_use]
    pub fn signed_error(self) -> f64 {
        self.primal - self.reference
    }

    /// The format the primal computes in.
    #[must_use]
    pub fn format() -> super::Format {
        P::format()
    }
}

/// The functions of one argument: the primal rounds the `f64` function of the primal, the reference is the `f64`
/// function of the reference.
macro_rules! narrow_functions {
    ($($name:ident)*) => {$(
        #[inline]
        fn $name(self) -> Self {
            Self::of(P::round(self.primal.$name()), self.reference.$name())
        }
    )*};
}

/// The functions of two arguments, likewise.
macro_rules! narrow_functions2 {
    ($($name:ident)*) => {$(
        #[inline]
        fn $name(self, other: Self) -> Self {
            Self::of(P::round(self.primal.$name(other.primal)), self.reference.$name(other.reference))
        }
    )*};
}

impl<P: NarrowFormat, const W: bool> Core for Narrowed<P, W> {
    super::primal_format_core!(P, W);

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self::of(P::round(value), value)
    }

    #[inline(always)]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        // The real number's nearest double is `hi` (the reference is a double-word with |lo| ≤ ulp(hi)/2).
        Self::of(P::round_reference(value, reference), reference.hi)
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        (self.reference, self.reference)
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        self.reference.partial_cmp(&rhs.reference).map_or(Orders::NONE, Orders::only)
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        Self::of(P::add(self.primal, rhs.primal), self.reference + rhs.reference)
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        Self::of(P::sub(self.primal, rhs.primal), self.reference - rhs.reference)
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        Self::of(P::mul(self.primal, rhs.primal), self.reference * rhs.reference)
    }

    #[inline(always)]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        if rhs.reference == 0.0 && rhs.primal != 0.0 {
            record::<Self>(EventKind::DivisorMayBeZero); // the reference divides by zero where the primal does not
        }
        Self::of(P::div(self.primal, rhs.primal), self.reference / rhs.reference)
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y with q = trunc(x/y), a value of the format
        let q = ((self.primal - c) / rhs.primal).round();
        // Along the primal's path: X − q·Y with one rounding in binary64.
        let reference = (-q).mul_add(rhs.reference, self.reference);
        let truncated = (self.reference / rhs.reference).trunc();
        if q.is_finite() && truncated.is_finite() && truncated != q {
            record::<Self>(EventKind::UndecidedComparison);
        }
        Self::of(c, reference)
    }

    #[inline(always)]
    fn neg(self) -> Self {
        Self::of(-self.primal, -self.reference)
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        Self::of(P::mul_add(self.primal, a.primal, b.primal), self.reference.mul_add(a.reference, b.reference))
    }

    #[inline(always)]
    fn abs(self) -> Self {
        Self::of(self.primal.abs(), self.reference.abs())
    }

    #[inline]
    fn sqrt(self) -> Self {
        Self::of(P::sqrt(self.primal), self.reference.sqrt())
    }

    narrow_functions! {
        cbrt exp exp2 exp_m1 ln ln_1p log2 log10 sin cos tan asin acos atan sinh cosh tanh
    }

    narrow_functions2! { powf log atan2 hypot }

    #[inline]
    fn powi(self, n: i32) -> Self {
        Self::of(P::powi(self.primal, n), self.reference.powi(n))
    }
}

impl<P: NarrowFormat, const W: bool> core::fmt::Display for Narrowed<P, W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{} (binary64 {:e})", self.primal, self.reference)
    }
}

super::estimate_lens!(Narrowed<NarrowFormat>, other: reference,
    name: if W { P::NARROW_NAME } else { P::NARROW_UNWATCHED_NAME }, native: false,
    reference: |x| x.reference);

/// binary32 with a binary64 reference.
pub type Binary32B64Of<const WATCH: bool> = Narrowed<EmulatedBinary32, WATCH>;
/// bfloat16 with a binary64 reference.
pub type Bfloat16B64Of<const WATCH: bool> = Narrowed<EmulatedBfloat16, WATCH>;
/// binary16 with a binary64 reference.
pub type Binary16B64Of<const WATCH: bool> = Narrowed<EmulatedBinary16, WATCH>;
/// The process's p-bit format (meant for p ≤ 24) with a binary64 reference.
pub type BitsB64Of<const WATCH: bool> = Narrowed<EmulatedBits, WATCH>;

super::watch_variants!(Binary32B64Of, Binary32B64, Binary32B64Unwatched);
super::watch_variants!(Bfloat16B64Of, Bfloat16B64, Bfloat16B64Unwatched);
super::watch_variants!(Binary16B64Of, Binary16B64, Binary16B64Unwatched);
super::watch_variants!(BitsB64Of, BitsB64, BitsB64Unwatched);

// As the double-double emulated lenses, these take plain `f32` operands and run the twins of `f32` kernels.
crate::lens_scalar!(Binary32B64Of, f32);
crate::lens_scalar!(Bfloat16B64Of, f32);
crate::lens_scalar!(Binary16B64Of, f32);
crate::lens_scalar!(BitsB64Of, f32);
