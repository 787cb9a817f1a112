//! Lenses for formats of at most 24 bits with a cheaper reference than the double-double: the primal rounds every
//! operation to binary32, bfloat16, binary16 or p bits exactly as the lenses of [`super::emulated`] do (the same
//! bits), and the reference runs the same operations in a hardware format — binary64 (`Binary32B64`,
//! `Bfloat16B64`, `Binary16B64`, `BitsB64`), or binary32 for bfloat16 and binary16 (`Bfloat16B32`, `Binary16B32`),
//! whose primal then computes in binary32 too. One implementation, [`Narrowed`], over a [`NarrowFormat`]: the
//! format of the primal and the *word* both numbers are kept in.
//!
//! Why a second and a third reference: for a primal of p ≤ 24 bits, binary64 rounds at least 2^29 times less than
//! the primal at each operation, so `|primal − reference|` estimates the primal's error to about 29 bits — the
//! quality a double-double shadow gives a binary64 primal is 53 bits, and a verdict needs two or three digits. The
//! reference is one double operation beside the primal's, not about twenty: the binary32 lens costs about a third
//! of its double-double twin. For bfloat16 and binary16, whose rounding to the format is most of what remains,
//! binary32 words halve the value to 8 bytes, so a vectorized loop carries twice the cells per instruction: about
//! a third again (the benchmark in `docs/lenses.md`). binary32 still rounds 2^16 (bfloat16) and 2^13 (binary16)
//! times less than the primal. In binary32 words `+ − × √` are binary32's operations rounded to the format, the
//! correctly rounded result (see [`InBinary32`]); ÷, the fused multiply-add, `powi` and the functions are the
//! format's own in binary64.
//!
//! Their limit: the reference is itself a binary64 (binary32) run of the program along the primal's path, so
//! where that format is far from exact (an ill-conditioned problem, an unstable recurrence) the estimate carries
//! its error too. The precision sweep uses these lenses only beside a binary64 (binary32) run, which measures that
//! error, and reruns a format with the next reference when the measured error is not small against the format's
//! ([`crate::sweep`], `docs/sweep.md`). Formats of more than 24 bits always take the double-double lens.
//!
//! Branches, `max`/`min` and index casts follow the emulated primal, and the reference records where its format
//! could go otherwise, as in every lens. The elementary functions of the primal are the correctly rounded result
//! of the `f64` function (the assumption of [`super::emulated`]); the reference's are the platform's `f64`
//! functions, within an ulp or so of binary64, rounded to the word.

use crate::events::{record, EventKind};
use crate::lens::format::{EmulatedBfloat16, EmulatedBinary16, EmulatedBinary32, EmulatedBits, Format, PrimalFormat};
use crate::lens::reference::Reference;
use crate::lens::scalar::{Core, Orders};
use core::marker::PhantomData;

/// The word a narrow lens keeps its primal and its reference in, and computes the reference with: binary64, or
/// binary32 for formats of at most 11 bits.
pub trait NarrowWord:
    Copy
    + core::fmt::Debug
    + core::fmt::Display
    + core::fmt::LowerExp
    + PartialOrd
    + core::ops::Add<Output = Self>
    + core::ops::Sub<Output = Self>
    + core::ops::Mul<Output = Self>
    + core::ops::Div<Output = Self>
    + core::ops::Rem<Output = Self>
    + core::ops::Neg<Output = Self>
    + Send
    + Sync
    + 'static
{
    /// The word's name in a lens's `Display` ("binary64").
    const NAME: &'static str;
    /// Zero.
    const ZERO: Self;
    /// A double rounded to the word (to nearest, ties to even; exact for a value of the word).
    fn from_f64(x: f64) -> Self;
    /// The word as a double (exact).
    fn to_f64(self) -> f64;
    /// The real number a literal's reference describes, in the word: binary64's nearest double `hi` (the
    /// reference is a double-word with `|lo| ≤ ulp(hi)/2`); binary32's correctly rounded value, as the `f32`
    /// program's literal is.
    fn from_reference(reference: &Reference) -> Self;
    /// `|x|`.
    fn abs(self) -> Self;
    /// `√x`, correctly rounded.
    fn sqrt(self) -> Self;
    /// `x·a + b` with one rounding.
    fn mul_add(self, a: Self, b: Self) -> Self;
    /// `xⁿ` as the word's `powi` computes it.
    fn powi(self, n: i32) -> Self;
}

macro_rules! narrow_word {
    ($($word:ident $name:literal),*) => {$(
        impl NarrowWord for $word {
            const NAME: &'static str = $name;
            const ZERO: Self = 0.0;
            #[inline(always)]
            fn from_f64(x: f64) -> Self {
                x as $word
            }
            #[inline(always)]
            fn to_f64(self) -> f64 {
                f64::from(self)
            }
            #[inline(always)]
            fn from_reference(reference: &Reference) -> Self {
                <$word as FromReference>::from_reference(reference)
            }
            #[inline(always)]
            fn abs(self) -> Self {
                $word::abs(self)
            }
            #[inline(always)]
            fn sqrt(self) -> Self {
                $word::sqrt(self)
            }
            #[inline(always)]
            fn mul_add(self, a: Self, b: Self) -> Self {
                $word::mul_add(self, a, b)
            }
            #[inline]
            fn powi(self, n: i32) -> Self {
                $word::powi(self, n)
            }
        }
    )*};
}
narrow_word!(f64 "binary64", f32 "binary32");

/// Which word a reference describes, per word (see [`NarrowWord::from_reference`]).
trait FromReference {
    fn from_reference(reference: &Reference) -> Self;
}

impl FromReference for f64 {
    #[inline(always)]
    fn from_reference(reference: &Reference) -> f64 {
        reference.hi
    }
}

impl FromReference for f32 {
    #[inline(always)]
    fn from_reference(reference: &Reference) -> f32 {
        Format::BINARY32.round_reference(reference) as f32
    }
}

/// How a narrow lens computes: the emulated format of its primal, the word it keeps both numbers in, and its
/// `+ − × √` in that word. The operations the word does not serve (÷, the fused multiply-add, `powi` and the
/// functions) are the format's own in binary64 ([`PrimalFormat`]), their result (a value of the format) stored in
/// the word exactly.
pub trait NarrowFormat: Copy + core::fmt::Debug + Default + Send + Sync + 'static {
    /// The primal's format.
    type Format: PrimalFormat;
    /// The word of the primal and the reference.
    type Word: NarrowWord;
    /// The lens's name in traces and reports (watched variant).
    const NARROW_NAME: &'static str;
    /// The unwatched variant's name.
    const NARROW_UNWATCHED_NAME: &'static str;
    /// `a + b` in the format.
    fn add(a: Self::Word, b: Self::Word) -> Self::Word;
    /// `a − b` in the format.
    fn sub(a: Self::Word, b: Self::Word) -> Self::Word;
    /// `a·b` in the format.
    fn mul(a: Self::Word, b: Self::Word) -> Self::Word;
    /// `√x` in the format.
    fn sqrt(x: Self::Word) -> Self::Word;
}

/// A format whose lens keeps binary64 words: every operation is the format's own ([`PrimalFormat`]).
macro_rules! narrow_in_binary64 {
    ($($format:ident $name:literal),*) => {$(
        impl NarrowFormat for $format {
            type Format = $format;
            type Word = f64;
            const NARROW_NAME: &'static str = $name;
            const NARROW_UNWATCHED_NAME: &'static str = concat!($name, "-unwatched");
            #[inline(always)]
            fn add(a: f64, b: f64) -> f64 {
                <$format as PrimalFormat>::add(a, b)
            }
            #[inline(always)]
            fn sub(a: f64, b: f64) -> f64 {
                <$format as PrimalFormat>::sub(a, b)
            }
            #[inline(always)]
            fn mul(a: f64, b: f64) -> f64 {
                <$format as PrimalFormat>::mul(a, b)
            }
            #[inline(always)]
            fn sqrt(x: f64) -> f64 {
                <$format as PrimalFormat>::sqrt(x)
            }
        }
    )*};
}
narrow_in_binary64!(EmulatedBinary32 "binary32-b64", EmulatedBfloat16 "bfloat16-b64", EmulatedBinary16 "binary16-b64",
    EmulatedBits "pbits-b64");

/// The formats of at most 11 bits whose lens can keep binary32 words ([`Format::fits_binary32`]): bfloat16 and
/// binary16.
pub trait FitsBinary32: PrimalFormat {
    /// The lens's name with a binary32 reference (watched variant).
    const BINARY32_NAME: &'static str;
    /// The unwatched variant's name.
    const BINARY32_UNWATCHED_NAME: &'static str;
}

impl FitsBinary32 for EmulatedBfloat16 {
    const BINARY32_NAME: &'static str = "bfloat16-b32";
    const BINARY32_UNWATCHED_NAME: &'static str = "bfloat16-b32-unwatched";
}

impl FitsBinary32 for EmulatedBinary16 {
    const BINARY32_NAME: &'static str = "binary16-b32";
    const BINARY32_UNWATCHED_NAME: &'static str = "binary16-b32-unwatched";
}

/// The format `F` computed in binary32 words, with a binary32 reference: `+ − × √` are binary32's own
/// operations, their result rounded to `F` ([`Format::round_in_binary32`]). That is the correctly rounded result:
/// Figueroa's `24 ≥ 2p + 2` in the normal range; below it a sum of two values of `F` is exact (both are
/// multiples of its least subnormal, and so is their sum), a product of two `p`-bit significands has at most
/// `2p` bits, so binary32 rounds it only where `F` rounds it to 0 or where the nearest midpoint of `F` is more
/// than 17 bits (bfloat16; binary16 products never leave binary32's normal range) from its last bit, and a root
/// of a value of `F` is never below `F`'s normal range. The division is not among them (Figueroa says nothing
/// about quotients below the normal range): it is the format's own in binary64, as for the binary64-word lenses.
/// Checked against the binary64 route and against exact rationals in `tests/format_binary32_word.rs`.
#[derive(Clone, Copy, Debug, Default)]
pub struct InBinary32<F>(PhantomData<F>);

impl<F: FitsBinary32> NarrowFormat for InBinary32<F> {
    type Format = F;
    type Word = f32;
    const NARROW_NAME: &'static str = F::BINARY32_NAME;
    const NARROW_UNWATCHED_NAME: &'static str = F::BINARY32_UNWATCHED_NAME;
    #[inline(always)]
    fn add(a: f32, b: f32) -> f32 {
        F::format().round_in_binary32(a + b)
    }
    #[inline(always)]
    fn sub(a: f32, b: f32) -> f32 {
        F::format().round_in_binary32(a - b)
    }
    #[inline(always)]
    fn mul(a: f32, b: f32) -> f32 {
        F::format().round_in_binary32(a * b)
    }
    #[inline(always)]
    fn sqrt(x: f32) -> f32 {
        F::format().round_in_binary32(x.sqrt())
    }
}

/// The names of the lenses with a binary64 or a binary32 reference, watched and unwatched.
const NARROW_NAMES: [(&str, &str); 12] = [
    (<EmulatedBinary32 as NarrowFormat>::NARROW_NAME, "binary64"),
    (<EmulatedBfloat16 as NarrowFormat>::NARROW_NAME, "binary64"),
    (<EmulatedBinary16 as NarrowFormat>::NARROW_NAME, "binary64"),
    (<EmulatedBits as NarrowFormat>::NARROW_NAME, "binary64"),
    (<EmulatedBinary32 as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary64"),
    (<EmulatedBfloat16 as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary64"),
    (<EmulatedBinary16 as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary64"),
    (<EmulatedBits as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary64"),
    (<InBinary32<EmulatedBfloat16> as NarrowFormat>::NARROW_NAME, "binary32"),
    (<InBinary32<EmulatedBinary16> as NarrowFormat>::NARROW_NAME, "binary32"),
    (<InBinary32<EmulatedBfloat16> as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary32"),
    (<InBinary32<EmulatedBinary16> as NarrowFormat>::NARROW_UNWATCHED_NAME, "binary32"),
];

/// The reference of the lens named `name` (in a trace): "binary64" or "binary32" for these lenses, `None` for
/// any other (whose reference is a double-double, an enclosure or a ball). The sweep's report says which reference
/// each format's run had.
#[must_use]
pub fn narrow_reference(name: &str) -> Option<&'static str> {
    NARROW_NAMES.iter().find(|(lens, _)| *lens == name).map(|&(_, word)| word)
}

/// Whether the lens named `name` (in a trace) has a binary64 reference rather than a double-double.
#[must_use]
pub fn has_binary64_reference(name: &str) -> bool {
    narrow_reference(name) == Some("binary64")
}

/// A value computed in the emulated format of `P`, with the same computation in `P`'s word (binary64 or binary32)
/// as its reference.
#[derive(Clone, Copy, Debug)]
pub struct Narrowed<P: NarrowFormat, const WATCH: bool> {
    primal: P::Word,
    reference: P::Word,
    format: PhantomData<P>,
}

impl<P: NarrowFormat, const W: bool> Narrowed<P, W> {
    /// A primal (taken as a value of the format) with its reference, as doubles (each rounded to the word: exact
    /// for the primal).
    #[must_use]
    pub fn new(primal: f64, reference: f64) -> Self {
        Self::of(P::Word::from_f64(primal), P::Word::from_f64(reference))
    }

    #[inline(always)]
    fn of(primal: P::Word, reference: P::Word) -> Self {
        Self { primal, reference, format: PhantomData }
    }

    /// A result of the format's own binary64 arithmetic (a value of the format), in the word.
    #[inline(always)]
    fn rounded(x: f64) -> P::Word {
        P::Word::from_f64(x)
    }

    /// `primal − reference`.
    #[must_use]
    pub fn signed_error(self) -> f64 {
        self.primal.to_f64() - self.reference.to_f64()
    }

    /// The format the primal computes in.
    #[must_use]
    pub fn format() -> Format {
        P::Format::format()
    }
}

/// The functions of one argument: the primal rounds the `f64` function of the primal, the reference is the `f64`
/// function of the reference.
macro_rules! narrow_functions {
    ($($name:ident)*) => {$(
        #[inline]
        fn $name(self) -> Self {
            let (primal, reference) = (self.primal.to_f64(), self.reference.to_f64());
            Self::of(Self::rounded(P::Format::round(primal.$name())), P::Word::from_f64(reference.$name()))
        }
    )*};
}

/// The functions of two arguments, likewise.
macro_rules! narrow_functions2 {
    ($($name:ident)*) => {$(
        #[inline]
        fn $name(self, other: Self) -> Self {
            let (primal, reference) = (self.primal.to_f64(), self.reference.to_f64());
            let value = P::Format::round(primal.$name(other.primal.to_f64()));
            Self::of(Self::rounded(value), P::Word::from_f64(reference.$name(other.reference.to_f64())))
        }
    )*};
}

impl<P: NarrowFormat, const W: bool> Core for Narrowed<P, W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn format_epsilon() -> f64 {
        P::Format::epsilon()
    }

    #[inline(always)]
    fn format_max() -> f64 {
        P::Format::max_value()
    }

    #[inline(always)]
    fn format_min_positive() -> f64 {
        P::Format::min_positive()
    }

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal.to_f64()
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self::of(Self::rounded(P::Format::round(value)), P::Word::from_f64(value))
    }

    #[inline(always)]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        Self::of(Self::rounded(P::Format::round_reference(value, reference)), P::Word::from_reference(reference))
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        let reference = self.reference.to_f64();
        (reference, reference)
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
        if rhs.reference == P::Word::ZERO && rhs.primal != P::Word::ZERO {
            record::<Self>(EventKind::DivisorMayBeZero); // the reference divides by zero where the primal does not
        }
        let primal = P::Format::div(self.primal.to_f64(), rhs.primal.to_f64());
        Self::of(Self::rounded(primal), self.reference / rhs.reference)
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y with q = trunc(x/y), a value of the format
                                          // The quotient in binary64, where x − c = q·y is exact while q < 2^29 (q·y then has at most 29 + 24 bits).
        let (x, y) = (self.primal.to_f64(), rhs.primal.to_f64());
        let q = ((x - c.to_f64()) / y).round();
        // Along the primal's path: X − q·Y with one rounding in the word.
        let reference = P::Word::from_f64(-q).mul_add(rhs.reference, self.reference);
        let truncated = (self.reference.to_f64() / rhs.reference.to_f64()).trunc();
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
        let primal = P::Format::mul_add(self.primal.to_f64(), a.primal.to_f64(), b.primal.to_f64());
        Self::of(Self::rounded(primal), self.reference.mul_add(a.reference, b.reference))
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
        Self::of(Self::rounded(P::Format::powi(self.primal.to_f64(), n)), self.reference.powi(n))
    }
}

impl<P: NarrowFormat, const W: bool> core::fmt::Display for Narrowed<P, W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        write!(f, "{} ({} {:e})", self.primal, P::Word::NAME, self.reference)
    }
}

super::estimate_lens!(Narrowed<NarrowFormat>, other: reference,
    name: if W { P::NARROW_NAME } else { P::NARROW_UNWATCHED_NAME }, native: false,
    reference: |x| x.reference.to_f64());

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

/// bfloat16 computed in binary32 words, with a binary32 reference.
pub type Bfloat16B32Of<const WATCH: bool> = Narrowed<InBinary32<EmulatedBfloat16>, WATCH>;
/// binary16 computed in binary32 words, with a binary32 reference.
pub type Binary16B32Of<const WATCH: bool> = Narrowed<InBinary32<EmulatedBinary16>, WATCH>;

super::watch_variants!(Bfloat16B32Of, Bfloat16B32, Bfloat16B32Unwatched);
super::watch_variants!(Binary16B32Of, Binary16B32, Binary16B32Unwatched);

// As the double-double emulated lenses, these take plain `f32` operands and run the twins of `f32` kernels.
crate::lens_scalar!(Binary32B64Of, f32);
crate::lens_scalar!(Bfloat16B64Of, f32);
crate::lens_scalar!(Binary16B64Of, f32);
crate::lens_scalar!(BitsB64Of, f32);
crate::lens_scalar!(Bfloat16B32Of, f32);
crate::lens_scalar!(Binary16B32Of, f32);
