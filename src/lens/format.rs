//! Emulated binary floating-point formats: binary32, bfloat16, binary16 and a p-bit format with a chosen exponent
//! range, each carried as the `f64` that holds its value exactly, every operation rounding its result to the
//! format with ties to even, the format's subnormals, overflow to ±∞ and its NaN rules (IEEE 754-2019 §4.3.1,
//! §7.4, §6.2).
//!
//! [`Format`] is the arithmetic (a precision `p` and an exponent range `emin..=emax`); [`PrimalFormat`] says how a
//! lens's primal computes — [`NativeBinary64`], which is the hardware's own `f64` arithmetic and nothing else, or
//! an emulated format ([`EmulatedBinary32`], [`EmulatedBfloat16`], [`EmulatedBinary16`], [`EmulatedBits`]).
//!
//! **Why the results are correctly rounded.** An operation first computes its result `x̂` in `f64` (round to
//! nearest), then rounds `x̂` to the format. Rounding twice gives the correctly rounded result for `+ − × ÷ √` of
//! p-bit operands only when `53 ≥ 2p + 2` (Figueroa, "When is double rounding innocuous?", SIGNUM Newsletter 30(3),
//! 1995, from memory), and never for a fused multiply-add. So the second rounding here does not round `x̂` alone: it
//! takes `x̂` together with the *sign of the exact remainder* `x − x̂`, from an error-free transformation (TwoSum for
//! a sum, TwoProd for a product, the FMA residual `a − q·b` for a quotient and `x − s²` for a root). With that sign
//! the rounding is exact ([`Format::round_exact`]): every point of the format's grid and every midpoint between two
//! of them is a double (p + 1 ≤ 53 bits), so no midpoint lies strictly between `x` and `x̂` (they are within half
//! an `f64` ulp), and `x̂` decides the result unless `x̂` is itself a midpoint — then the remainder's sign breaks the
//! tie, and only an exact tie (remainder 0) goes to even. This is an exact method, valid for every `2 ≤ p ≤ 52`;
//! round-to-odd (Boldo & Melquiond, IEEE Trans. Computers 57(4), 2008, from memory) would give the same results with
//! its `53 ≥ p + 2` condition, which fails at p = 52.
//!
//! Where Figueroa's condition holds and the format's exponent range keeps the `f64` intermediate exact or normal
//! (binary32, bfloat16, binary16: products of two format numbers are exact in `f64`, 2·24 ≤ 53), `+ − × √` round
//! `x̂` alone ([`Format::single_rounding`]); the quotient always carries its remainder, because Figueroa's theorem
//! says nothing about results in the format's subnormal range. The error-free transformations are exact except
//! when a product, quotient or root is so small that its error term underflows `f64` (below about 10^-270, far
//! below the subnormals of binary32, bfloat16 and binary16, but inside a p-bit format with binary64's exponent
//! range); there the remainder's sign comes from exact rationals (`dashu-ratio`) on a cold path, as does a fused
//! multiply-add whose product is not exact in `f64`.
//!
//! **Elementary functions** (exp, ln, sin, … and `powf`) are the `f64` function's value rounded to the format: the
//! correctly rounded result *if* the platform's `f64` function is within half an `f64` ulp of a value that rounds
//! the same way, which holds except for arguments whose true result lies within about 2^-53 relative of a midpoint
//! of the format. That is the assumption the emulation makes for them (the `f32` libm of a platform may round such
//! cases the other way: a binary32 twin of an `f32` kernel that calls `exp` can differ from it in the last bit).
//! `powi` repeats rounded multiplications in the order of LLVM's `__powisf2` (compiler-rt, from memory), so a
//! binary32 `powi` is what `f32::powi` computes when it is not constant-folded.
//!
//! **NaN.** A NaN result is a quiet NaN (IEEE 754-2019 §6.2.3 leaves its payload to the implementation). binary32
//! and the formats rounded by their encoding keep the format's `p − 1` leading fraction bits of the `f64` NaN (the
//! low bits cleared), as a conversion of an `f64` NaN to binary32 does on x86-64; bfloat16, binary16 and the other
//! formats rounded by the adder ([`Format::round_by_adder`]) leave the `f64` NaN's payload as it is, because
//! narrowing it cost a fifth of their lenses' time and nothing reads a payload (a NaN is reported as an event, with
//! its step and site).

use core::sync::atomic::{AtomicU64, Ordering as AtomicOrdering};
use std::sync::{Mutex, MutexGuard};

use crate::lens::eft::{two_diff, two_prod, two_sum, EFT_TINY};
use crate::lens::reference::Reference;
use dashu_ratio::RBig;

/// Sign bit of a binary64 encoding.
const SIGN: u64 = 1 << 63;
/// The encoding of +∞ (IEEE 754-2019 §3.4: exponent field all ones, trailing significand zero).
const INFINITY_BITS: u64 = 0x7ff0_0000_0000_0000;
/// The quiet bit of a binary64 NaN (the leading bit of the trailing significand, IEEE 754-2019 §6.2.1).
const QUIET: u64 = 1 << 51;

/// A binary floating-point format: `precision` significand bits (the hidden bit included) and normal exponents
/// `emin..=emax`, with subnormals below `2^emin` (IEEE 754-2019 §3.3). Every value of such a format is a binary64
/// double, so an emulated value is carried as one.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Format {
    precision: u32,
    emin: i32,
    emax: i32,
}

/// Why a format cannot be emulated.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum FormatError {
    /// The precision is outside `2..=52` (53 is binary64 itself, run natively).
    Precision { bits: u32 },
    /// The exponent range is not inside binary64's `-1022..=1023`, or does not hold 1 (`emin < 0 < emax`).
    ExponentRange { emin: i32, emax: i32 },
}

impl core::fmt::Display for FormatError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            FormatError::Precision { bits } => write!(
                f,
                "a p-bit format needs 2 ≤ p ≤ 52 significand bits, not {bits} (53 bits is binary64, which runs \
natively)"
            ),
            FormatError::ExponentRange { emin, emax } => write!(
                f,
                "exponent range {emin}..={emax} cannot be emulated: it must satisfy -1022 ≤ emin < 0 < emax ≤ 1023 \
(binary64's range holds every emulated value)"
            ),
        }
    }
}

impl std::error::Error for FormatError {}

impl Format {
    /// IEEE 754-2019 binary32: p = 24, emax = 127 (Table 3.5).
    pub const BINARY32: Format = Format { precision: 24, emin: -126, emax: 127 };
    /// bfloat16: binary32's exponent range with p = 8 (common practice, no source: the format of Google's TPUs
    /// and of the `half` crate's `bf16`).
    pub const BFLOAT16: Format = Format { precision: 8, emin: -126, emax: 127 };
    /// IEEE 754-2019 binary16: p = 11, emax = 15 (Table 3.5).
    pub const BINARY16: Format = Format { precision: 11, emin: -14, emax: 15 };
    /// binary64 itself (IEEE 754-2019 Table 3.5: p = 53, emax = 1023), the format of the native primal; rounding
    /// to it is the identity.
    pub const BINARY64: Format = Format { precision: 53, emin: -1022, emax: 1023 };
    /// binary64's exponent range (IEEE 754-2019 Table 3.5: emax = 1023, emin = 1 − emax).
    pub const BINARY64_EXPONENTS: (i32, i32) = (-1022, 1023);

    /// A p-bit format with binary64's exponent range.
    pub fn bits(precision: u32) -> Result<Format, FormatError> {
        Format::new(precision, Format::BINARY64_EXPONENTS.0, Format::BINARY64_EXPONENTS.1)
    }

    /// A format of `precision` bits with normal exponents `emin..=emax`.
    pub fn new(precision: u32, emin: i32, emax: i32) -> Result<Format, FormatError> {
        if !(2..=52).contains(&precision) {
            return Err(FormatError::Precision { bits: precision });
        }
        if !((-1022..0).contains(&emin) && (1..=1023).contains(&emax)) {
            return Err(FormatError::ExponentRange { emin, emax });
        }
        Ok(Format { precision, emin, emax })
    }

    /// Significand bits, the hidden bit included.
    #[inline(always)]
    #[must_use]
    pub const fn precision(self) -> u32 {
        self.precision
    }

    /// The least normal exponent.
    #[inline(always)]
    #[must_use]
    pub const fn emin(self) -> i32 {
        self.emin
    }

    /// The greatest exponent.
    #[inline(always)]
    #[must_use]
    pub const fn emax(self) -> i32 {
        self.emax
    }

    /// The largest finite value, `(2 − 2^(1−p))·2^emax`.
    #[inline(always)]
    #[must_use]
    pub fn max_value(self) -> f64 {
        (2.0 - pow2(1 - self.precision as i32)) * pow2(self.emax)
    }

    /// The smallest positive normal value, `2^emin`.
    #[inline(always)]
    #[must_use]
    pub fn min_positive(self) -> f64 {
        pow2(self.emin)
    }

    /// The smallest positive subnormal value, `2^(emin − p + 1)`.
    #[inline(always)]
    #[must_use]
    pub fn min_subnormal(self) -> f64 {
        pow2(self.emin - self.precision as i32 + 1)
    }

    /// The gap between 1 and the next value, `2^(1 − p)` (what `f64::EPSILON` is for binary64).
    #[inline(always)]
    #[must_use]
    pub fn epsilon(self) -> f64 {
        pow2(1 - self.precision as i32)
    }

    /// Whether a value of magnitude `|x|` is inside the format's range: at most its largest finite value (or not
    /// finite). Used to tell whether data fits an exponent range.
    #[must_use]
    pub fn holds_magnitude(self, x: f64) -> bool {
        !x.is_finite() || x.abs() <= self.max_value()
    }

    /// Whether `+ − × √` may round the `f64` result alone: Figueroa's condition `53 ≥ 2p + 2`, and an exponent
    /// range whose products are exact in `f64` (the square of the least subnormal, `2^(2(emin − p + 1))`, is a
    /// multiple of 2^-1074, and the square of the largest value does not overflow), so that no intermediate
    /// underflows or overflows.
    #[inline(always)]
    #[must_use]
    pub const fn single_rounding(self) -> bool {
        let p = self.precision as i32;
        2 * p + 2 <= 53 && 2 * (self.emin - p + 1) >= -1074 && 2 * (self.emax + 1) <= 1023
    }

    /// `x` rounded to the format, to nearest with ties to even: what [`Format::round_exact`] gives with no
    /// remainder, by a shorter path, because most operations (`+ − × √` of the fixed formats, the elementary
    /// functions) round a double alone and it is their whole cost. binary32 is the hardware conversion
    /// (IEEE 754-2019 §5.4.2 convertFormat, `as f32`); bfloat16, binary16 and every format whose range leaves room
    /// ([`Format::rounds_by_adder`]) let the hardware's adder round ([`Format::round_by_adder`]); the rest round the
    /// encoding as an integer ([`Format::round_by_encoding`]). Selects, no branches: the loops over a fixed format
    /// stay vector code.
    #[inline(always)]
    #[must_use]
    pub fn round(self, x: f64) -> f64 {
        if self == Format::BINARY32 {
            return (x as f32) as f64;
        }
        if self.precision >= 53 {
            return x; // binary64 itself (the description `NativeBinary64` gives): nothing to round
        }
        if self.rounds_by_adder() {
            self.round_by_adder(x)
        } else {
            self.round_by_encoding(x)
        }
    }

    /// Whether [`Format::round_by_adder`] applies: at least three bits between the format's last place and
    /// binary64's (`p ≤ 50`), and room above the format's largest binade to move it `53 − p` binades up
    /// (`emax + 53 − p ≤ 1023`). bfloat16 and binary16 qualify; a p-bit format with binary64's exponent range
    /// does not.
    #[inline(always)]
    #[must_use]
    pub const fn rounds_by_adder(self) -> bool {
        let p = self.precision as i32;
        p <= 50 && self.emax + 53 - p <= 1023
    }

    /// `x` rounded to the format by the hardware's own rounding of a sum (common practice, no source; derived
    /// here). For `x` in the binade of exponent `e` the format's grid is `q = 2^(max(e, emin) − p + 1)`, and
    /// `C = 1.5·2^(max(e, emin) − p + 53)` has q as its last place: `x + C` stays in C's binade
    /// (`|x| < 2^(e+1) ≤ 0.5·2^(e − p + 53)` as `53 − p ≥ 2`), so its round to nearest, ties to even, is
    /// `C + q·RNE(x/q)` (C is an even multiple of q), and `(x + C) − C` is exact (Sterbenz). C comes from `x`'s
    /// exponent field moved `53 − p` binades up, with the subnormal grid's C as its floor. Overflow is decided on
    /// `x` itself, beside the adder rather than after it (which keeps it off the chain of dependent operations
    /// that bounds the loops' speed): `|x| ≥ (2 − 2^-p)·2^emax`, the midpoint between the largest value and
    /// `2^(emax+1)`, rounds to ±∞ (to nearest, ties to even, the largest value's last bit being odd; IEEE
    /// 754-2019 §4.3.1, §7.4), and only such `x` can move C's field past binary64's range. Last, the sign of `x`
    /// goes onto a zero result (−0 stays −0). A NaN stays the quiet NaN the `f64` operations gave, payload and all
    /// (see the module paragraph). Eight vector instructions and no integer comparison (on x86-64 without
    /// AVX-512 a 64-bit comparison costs three or more). Measured alternatives: scaling the rounded value by
    /// `2^(1023 − emax)` and back, which overflows to ±∞ exactly when the format does, is one instruction fewer
    /// but lengthens the chain, 7 % slower on the 1-D heat loop timed in turn in one harness; clearing a NaN's low
    /// payload bits cost a fifth of the bfloat16 lens's time there.
    #[inline(always)]
    #[must_use]
    pub fn round_by_adder(self, x: f64) -> f64 {
        let drop = 53 - u64::from(self.precision);
        let bits = x.to_bits();
        let moved_up = f64::from_bits((bits & INFINITY_BITS) + ((drop << 52) | (1 << 51)));
        let floor = 1.5 * pow2(self.emin - self.precision as i32 + 53);
        // A comparison rather than f64::max, which would add a NaN test: a moved-up field that is NaN or has run
        // into the sign bit (x overflows the format, decided below) takes the floor.
        let c = if moved_up > floor { moved_up } else { floor };
        let rounded = (x + c) - c;
        let threshold = self.max_value() + pow2(self.emax - self.precision as i32);
        let rounded = if x.abs() >= threshold { f64::INFINITY } else { rounded };
        f64::from_bits(rounded.to_bits() | (bits & SIGN))
    }

    /// Whether the format's values and the arithmetic of [`Format::round_in_binary32`] fit binary32: at most 11
    /// bits (so that `24 ≥ 2p + 2`, Figueroa's condition for rounding a binary32 result of `+ − × √` of two values
    /// of the format to the format to be the correctly rounded result; Figueroa, "When is double rounding
    /// innocuous?", 1995, from memory), and either binary32's exponent range or one whose largest binade moved
    /// `24 − p` binades up stays inside it (the adder's `C`). bfloat16 and binary16.
    #[must_use]
    pub const fn fits_binary32(self) -> bool {
        let p = self.precision as i32;
        p <= 11 && self.emin >= -126 && (self.shares_binary32_exponents() || self.emax + 24 - p <= 127)
    }

    /// Whether the exponent range is binary32's own (bfloat16's).
    const fn shares_binary32_exponents(self) -> bool {
        self.emin == -126 && self.emax == 127
    }

    /// `x` rounded to the format, in binary32 (for a format that [`Format::fits_binary32`]): the result of
    /// [`Format::round`] on `f64::from(x)`, computed on binary32 lanes, which a vectorized loop packs twice as
    /// densely as binary64. A format with binary32's exponent range (bfloat16) rounds the encoding as an integer
    /// at a fixed position, `24 − p` bits up — adding `2^(23 − p) − 1` plus the last kept bit and clearing the
    /// dropped bits is to nearest with ties to even on normal and subnormal numbers alike, since the format's grid
    /// there is every `2^(24 − p)`-th binary32 encoding, and a carry out of the largest value gives the encoding
    /// of ∞ (common practice, no source). Any other (binary16) rounds by the adder, as [`Format::round_by_adder`]
    /// does in binary64: `C = 1.5·2^(max(e, emin) − p + 24)` from the exponent field, `(x + C) − C`, overflow
    /// decided on `|x| ≥ (2 − 2^-p)·2^emax`, the sign put back on a zero. A NaN stays a quiet NaN with its payload.
    #[inline(always)]
    #[must_use]
    pub fn round_in_binary32(self, x: f32) -> f32 {
        debug_assert!(self.fits_binary32(), "{} does not fit binary32 words", self.name());
        const SIGN32: u32 = 1 << 31;
        const INFINITY32: u32 = 0x7f80_0000;
        let bits = x.to_bits();
        let drop = 24 - self.precision;
        if self.shares_binary32_exponents() {
            let half = (1u32 << (drop - 1)) - 1;
            let rounded = bits.wrapping_add(half + ((bits >> drop) & 1)) & !((1u32 << drop) - 1);
            let nan = (bits & !SIGN32) > INFINITY32;
            return f32::from_bits(if nan { bits | (1 << 22) } else { rounded });
        }
        let moved_up = f32::from_bits((bits & INFINITY32) + ((drop << 23) | (1 << 22)));
        let floor = (1.5 * pow2(self.emin - self.precision as i32 + 24)) as f32;
        // As in `round_by_adder`: a moved-up field that is NaN or ran into the sign bit (x overflows) takes the
        // floor, and overflow is decided below.
        let c = if moved_up > floor { moved_up } else { floor };
        let rounded = (x + c) - c;
        let threshold = (self.max_value() + pow2(self.emax - self.precision as i32)) as f32;
        let rounded = if x.abs() >= threshold { f32::INFINITY } else { rounded };
        f32::from_bits(rounded.to_bits() | (bits & SIGN32))
    }

    /// `x` rounded to the format by rounding its encoding: at and above `2^emin` the encoding is rounded as an
    /// integer at a fixed position, `53 − p` bits up — adding `2^(52 − p) − 1` plus the last kept bit and
    /// clearing the dropped bits is to nearest with ties to even (common practice, no source) — and below `2^emin`
    /// the subnormal grid `q = 2^(emin − p + 1)` is the last place of `C = 1.5·2^(emin − p + 53)`, so the hardware's
    /// own rounding of `|x| + C` (to nearest, ties to even; `|x| + C` stays in C's binade as `|x| < 2^emin`) rounds
    /// `|x|` to a multiple of q. For every format of 2 to 52 bits.
    #[inline(always)]
    #[must_use]
    pub fn round_by_encoding(self, x: f64) -> f64 {
        let bits = x.to_bits();
        let sign = bits & SIGN;
        let magnitude = bits & !SIGN;
        let shift = 53 - self.precision as u64;
        let odd = (magnitude >> shift) & 1;
        let normal = (magnitude + ((1u64 << (shift - 1)) - 1) + odd) & !((1u64 << shift) - 1);
        let c = 1.5 * pow2(self.emin - self.precision as i32 + 53);
        let subnormal = ((x.abs() + c) - c).to_bits();
        let rounded = if magnitude < self.min_positive().to_bits() { subnormal } else { normal };
        let rounded = if rounded > self.max_value().to_bits() { INFINITY_BITS } else { rounded };
        let nan = (magnitude & !((1u64 << shift) - 1)) | QUIET;
        let result = if magnitude > INFINITY_BITS { nan } else { rounded };
        f64::from_bits(sign | result)
    }

    /// The exact value `x + r` rounded to the format, to nearest with ties to even, where `x` is a double within
    /// half an `f64` ulp of it (its `f64` rounding) and only the *sign* of `r` is used (0: `x` is exact). See the
    /// module paragraph for why this is exact.
    ///
    /// Bit arithmetic on the encoding, without branches, so that loops over emulated values can vectorize: in a
    /// binade of exponent `e` the `f64` grid is `2^(e − 52)` and the format's is `2^(e − p + 1)` for `e ≥ emin`,
    /// `2^(emin − p + 1)` below (subnormals), so `drop = 53 − p + max(0, emin − e)` low bits of the encoding go.
    /// Rounding the encoding as an integer is rounding the value, a carry into the exponent field included
    /// (IEEE 754-2019 §3.4: the encoding is monotone in the magnitude), while `drop ≤ 52`; beyond, `|x|` is
    /// below the least subnormal and the result is 0 or the least subnormal.
    #[inline(always)]
    #[must_use]
    pub fn round_exact(self, x: f64, r: f64) -> f64 {
        if self.precision >= 53 {
            return x;
        }
        let bits = x.to_bits();
        let sign = bits & SIGN;
        let magnitude = bits & !SIGN;
        let p = self.precision as i64;
        // The exponent of the binade of the f64 grid x lies on (f64 subnormals share the grid of exponent −1022).
        let e = ((magnitude >> 52) as i64).max(1) - 1023;
        let drop = 53 - p + (i64::from(self.emin) - e).max(0);
        let shift = drop.min(52) as u64;
        let half = 1u64 << (shift - 1);
        let low = magnitude & ((1u64 << shift) - 1);
        // The exact value is beyond x in magnitude when the remainder has x's sign, short of it otherwise.
        let beyond = r != 0.0 && (r.to_bits() & SIGN) == sign;
        let short = r != 0.0 && !beyond;
        let odd = (magnitude >> shift) & 1 == 1;
        let up = low > half || (low == half && (beyond || (!short && odd)));
        let rounded = (magnitude - low) + (u64::from(up) << shift);
        // Below the least subnormal s: 0, or s when the value is above s/2 (s/2 itself is a tie, to even: 0).
        let least = self.min_subnormal().to_bits();
        let half_least = (self.min_subnormal() * 0.5).to_bits();
        let tiny = if magnitude > half_least || (magnitude == half_least && beyond) { least } else { 0 };
        let rounded = if drop > 52 { tiny } else { rounded };
        // Overflow: a rounded magnitude above the largest value is ±∞ (IEEE 754-2019 §7.4, to nearest).
        let rounded = if rounded > self.max_value().to_bits() { INFINITY_BITS } else { rounded };
        // NaN: quiet, the payload's low 53 − p bits cleared (the conversion of a binary64 NaN, see the module).
        let nan = (magnitude & !((1u64 << (53 - p)) - 1)) | QUIET;
        let result = if magnitude > INFINITY_BITS { nan } else { rounded };
        f64::from_bits(sign | result)
    }

    /// `a + b` in the format.
    #[inline(always)]
    #[must_use]
    pub fn add(self, a: f64, b: f64) -> f64 {
        if self.single_rounding() {
            self.round(a + b)
        } else {
            let (s, e) = two_sum(a, b); // a + b = s + e exactly (TwoSum; e is NaN only when s is not finite)
            self.round_exact(s, e)
        }
    }

    /// `a − b` in the format.
    #[inline(always)]
    #[must_use]
    pub fn sub(self, a: f64, b: f64) -> f64 {
        if self.single_rounding() {
            self.round(a - b)
        } else {
            let (s, e) = two_diff(a, b);
            self.round_exact(s, e)
        }
    }

    /// `a · b` in the format.
    #[inline(always)]
    #[must_use]
    pub fn mul(self, a: f64, b: f64) -> f64 {
        if self.single_rounding() {
            return self.round(a * b); // exact in f64: 2p ≤ 53 bits, no underflow (see single_rounding)
        }
        let (p, e) = two_prod(a, b); // a·b = p + e exactly unless the product is tiny
        if p.abs() >= EFT_TINY || !p.is_finite() || a == 0.0 || b == 0.0 {
            self.round_exact(p, e)
        } else {
            self.round_exact(p, exact_remainder(p, || rational(a) * rational(b)))
        }
    }

    /// `a / b` in the format. The remainder `a/b − q` has the sign of `(a − q·b)/b`, and the residual `a − q·b` is
    /// a double computed exactly by one FMA when nothing underflows (Bohlender, Walter, Kornerup, Matula 1991, from
    /// memory).
    #[inline(always)]
    #[must_use]
    pub fn div(self, a: f64, b: f64) -> f64 {
        let q = a / b;
        let residual = (-q).mul_add(b, a);
        let exact =
            self.single_rounding() || a == 0.0 || !q.is_finite() || (q.abs() >= EFT_TINY && a.abs() >= EFT_TINY);
        if exact {
            let r = if b < 0.0 { -residual } else { residual };
            self.round_exact(q, r)
        } else {
            self.round_exact(q, exact_remainder(q, || rational(a) / rational(b)))
        }
    }

    /// `√x` in the format: the remainder `√x − s` has the sign of `x − s²`, computed exactly by one FMA when
    /// nothing underflows (the residual of a correctly rounded root is a double; common practice, no source).
    #[inline(always)]
    #[must_use]
    pub fn sqrt(self, x: f64) -> f64 {
        let s = x.sqrt();
        if self.single_rounding() {
            return self.round(s);
        }
        // A root of 0, of a negative number, of ∞ or NaN needs no remainder (exact, or not a number).
        if x >= EFT_TINY || x <= 0.0 || x.is_nan() || !x.is_finite() {
            self.round_exact(s, (-s).mul_add(s, x))
        } else {
            // x − s² in exact rationals has the sign of √x − s.
            let residual = rational(x) - rational(s) * rational(s);
            self.round_exact(s, sign_of(&residual))
        }
    }

    /// `a·b + c` with one rounding, in the format (IEEE 754-2019 fusedMultiplyAdd). When the product is exact in
    /// `f64` (always for binary32, bfloat16 and binary16), TwoSum of the product and `c` gives the exact result as
    /// a sum and its remainder; otherwise exact rationals do (a cold path).
    #[inline(always)]
    #[must_use]
    pub fn mul_add(self, a: f64, b: f64, c: f64) -> f64 {
        let (p, e) = two_prod(a, b);
        let product_exact = self.single_rounding() || (e == 0.0 && (p.abs() >= EFT_TINY || a == 0.0 || b == 0.0));
        if product_exact || !p.is_finite() || !c.is_finite() {
            let (s, t) = two_sum(p, c);
            self.round_exact(s, t)
        } else {
            self.fused_exactly(a, b, c)
        }
    }

    #[cold]
    #[inline(never)]
    fn fused_exactly(self, a: f64, b: f64, c: f64) -> f64 {
        let exact = rational(a) * rational(b) + rational(c);
        let nearest = Reference::of_rational(&exact);
        if exact == RBig::ZERO {
            // An exact zero sum is +0 in round to nearest unless both addends are −0 (IEEE 754-2019 §6.3).
            return a.mul_add(b, c);
        }
        self.round_exact(nearest.hi, exact_remainder(nearest.hi, || exact.clone()))
    }

    /// `xⁿ` by repeated rounded multiplication, in the order of compiler-rt's `__powisf2`/`__powidf2` (from
    /// memory): `r = 1; loop { if n odd: r·= a; n /= 2; if n = 0 break; a·= a }`, and `1/r` for a negative `n`.
    #[must_use]
    pub fn powi(self, x: f64, n: i32) -> f64 {
        let (mut a, mut k, mut r) = (x, n, 1.0);
        loop {
            if k % 2 != 0 {
                r = self.mul(r, a);
            }
            k /= 2;
            if k == 0 {
                break;
            }
            a = self.mul(a, a);
        }
        if n < 0 {
            self.div(1.0, r)
        } else {
            r
        }
    }

    /// The format value nearest the real number `reference` describes (its `hi`, with the remainder's sign from
    /// `lo` or, when `lo` is 0, from the doubles around it).
    #[inline(always)]
    #[must_use]
    pub fn round_reference(self, reference: &Reference) -> f64 {
        let r = if reference.lo != 0.0 {
            reference.lo
        } else if reference.up > reference.hi {
            1.0
        } else if reference.down < reference.hi {
            -1.0
        } else {
            0.0
        };
        self.round_exact(reference.hi, r)
    }

    /// A short name: `binary32`, `bfloat16`, `binary16`, or `p24` style for other precisions (with the exponent
    /// range when it is not binary64's: `p24[-126,127]`).
    #[must_use]
    pub fn name(self) -> String {
        match self {
            Format::BINARY32 => "binary32".into(),
            Format::BFLOAT16 => "bfloat16".into(),
            Format::BINARY16 => "binary16".into(),
            Format { precision: 53, emin: -1022, emax: 1023 } => "binary64".into(),
            Format { precision, emin: -1022, emax: 1023 } => format!("p{precision}"),
            Format { precision, emin, emax } => format!("p{precision}[{emin},{emax}]"),
        }
    }

    /// The format packed into one word, for the process-wide setting of [`EmulatedBits`].
    const fn pack(self) -> u64 {
        (self.precision as u64) | (((self.emin as u16) as u64) << 8) | (((self.emax as u16) as u64) << 24)
    }

    const fn unpack(word: u64) -> Format {
        Format {
            precision: (word & 0xff) as u32,
            emin: ((word >> 8) & 0xffff) as u16 as i16 as i32,
            emax: ((word >> 24) & 0xffff) as u16 as i16 as i32,
        }
    }
}

/// `2^k` for `-1074 ≤ k ≤ 1023`, exactly.
#[inline(always)]
const fn pow2(k: i32) -> f64 {
    if k >= -1022 {
        f64::from_bits(((k + 1023) as u64) << 52)
    } else {
        f64::from_bits(1u64 << (k + 1074)) // a subnormal: 2^-1074 · 2^(k + 1074)
    }
}

/// A finite double as an exact rational.
fn rational(x: f64) -> RBig {
    RBig::try_from(x).unwrap_or(RBig::ZERO)
}

/// −1, 0 or 1 as the sign of a rational.
fn sign_of(x: &RBig) -> f64 {
    match x.partial_cmp(&RBig::ZERO) {
        Some(core::cmp::Ordering::Greater) => 1.0,
        Some(core::cmp::Ordering::Less) => -1.0,
        _ => 0.0,
    }
}

/// The sign of `exact − x` for the exact value of a tiny result (the cold path of the error-free transformations).
#[cold]
#[inline(never)]
fn exact_remainder(x: f64, exact: impl FnOnce() -> RBig) -> f64 {
    sign_of(&(exact() - rational(x)))
}

/// Default methods of [`PrimalFormat`] that do what the [`Format`] of the same name does.
macro_rules! delegate_to_format {
    ($($name:ident($($arg:ident),*);)*) => {$(
        #[inline(always)]
        #[must_use]
        fn $name($($arg: f64),*) -> f64 {
            Self::format().$name($($arg),*)
        }
    )*};
}

/// How a lens's primal computes: the hardware's binary64, or an emulated format. The lenses of
/// [`super::emulated`] and [`super::Shadow`] share one implementation over this trait.
pub trait PrimalFormat: Copy + core::fmt::Debug + Default + Send + Sync + 'static {
    /// The lens's name in traces and reports (watched variant).
    const LENS_NAME: &'static str;
    /// The unwatched variant's name.
    const UNWATCHED_NAME: &'static str;
    /// Whether the primal is binary64 computed by the hardware (bit-identical to the `f64` program).
    const NATIVE: bool;
    /// The format the primal rounds to.
    fn format() -> Format;

    /// A double rounded to the format.
    #[inline(always)]
    #[must_use]
    fn round(x: f64) -> f64 {
        Self::format().round(x)
    }
    /// The value a reference describes, rounded to the format.
    #[inline(always)]
    #[must_use]
    fn round_reference(value: f64, reference: &Reference) -> f64 {
        let _ = value;
        Self::format().round_reference(reference)
    }
    // + − × ÷ √ and the fused multiply-add in the format, and its limits (what EPSILON, MAX and MIN_POSITIVE are
    // for binary64).
    delegate_to_format! {
        add(a, b);
        sub(a, b);
        mul(a, b);
        div(a, b);
        sqrt(x);
        mul_add(a, b, c);
        epsilon();
        max_value();
        min_positive();
    }
    #[inline]
    #[must_use]
    fn powi(x: f64, n: i32) -> f64 {
        Self::format().powi(x, n)
    }
}

/// The hardware's binary64: every operation is the `f64` operation itself.
#[derive(Clone, Copy, Debug, Default)]
pub struct NativeBinary64;

impl PrimalFormat for NativeBinary64 {
    const LENS_NAME: &'static str = "shadow";
    const UNWATCHED_NAME: &'static str = "shadow-unwatched";
    const NATIVE: bool = true;
    fn format() -> Format {
        // binary64 itself, which `Format::new` does not make (it is not emulated): its roundings are the identity.
        Format::BINARY64
    }
    #[inline(always)]
    fn round(x: f64) -> f64 {
        x
    }
    #[inline(always)]
    fn round_reference(value: f64, _reference: &Reference) -> f64 {
        value
    }
    #[inline(always)]
    fn add(a: f64, b: f64) -> f64 {
        a + b
    }
    #[inline(always)]
    fn sub(a: f64, b: f64) -> f64 {
        a - b
    }
    #[inline(always)]
    fn mul(a: f64, b: f64) -> f64 {
        a * b
    }
    #[inline(always)]
    fn div(a: f64, b: f64) -> f64 {
        a / b
    }
    #[inline(always)]
    fn sqrt(x: f64) -> f64 {
        x.sqrt()
    }
    #[inline(always)]
    fn mul_add(a: f64, b: f64, c: f64) -> f64 {
        a.mul_add(b, c)
    }
    #[inline]
    fn powi(x: f64, n: i32) -> f64 {
        x.powi(n)
    }
    #[inline(always)]
    fn epsilon() -> f64 {
        f64::EPSILON
    }
    #[inline(always)]
    fn max_value() -> f64 {
        f64::MAX
    }
    #[inline(always)]
    fn min_positive() -> f64 {
        f64::MIN_POSITIVE
    }
}

/// Declares a fixed emulated format as a [`PrimalFormat`].
macro_rules! fixed_format {
    ($(#[$doc:meta])* $name:ident, $format:expr, $lens:literal) => {
        $(#[$doc])*
        #[derive(Clone, Copy, Debug, Default)]
        pub struct $name;

        impl PrimalFormat for $name {
            const LENS_NAME: &'static str = $lens;
            const UNWATCHED_NAME: &'static str = concat!($lens, "-unwatched");
            const NATIVE: bool = false;
            #[inline(always)]
            fn format() -> Format {
                $format
            }
        }
    };
}

fixed_format!(
    /// IEEE 754-2019 binary32, emulated.
    EmulatedBinary32, Format::BINARY32, "binary32"
);
fixed_format!(
    /// bfloat16, emulated.
    EmulatedBfloat16, Format::BFLOAT16, "bfloat16"
);
fixed_format!(
    /// IEEE 754-2019 binary16, emulated.
    EmulatedBinary16, Format::BINARY16, "binary16"
);

/// The process-wide p-bit format of [`EmulatedBits`] (packed; binary32 until set).
static BITS_FORMAT: AtomicU64 = AtomicU64::new(Format::BINARY32.pack());
/// Held while a p-bit format is in force, so that two audits in one process cannot change it under each other.
static BITS_LOCK: Mutex<()> = Mutex::new(());

/// A p-bit format chosen at run time ([`bits_format_scope`]), so that a precision sweep needs one lens type, not
/// one per precision. The format is process-wide rather than per thread, because kernels may run on threads the
/// audit does not know (a parallel iterator's); a scope holds a lock, so one p-bit format is in force at a time.
/// Each operation reads the format (one relaxed atomic load): the p-bit lens is slower than the fixed formats,
/// whose parameters are constants.
#[derive(Clone, Copy, Debug, Default)]
pub struct EmulatedBits;

impl PrimalFormat for EmulatedBits {
    const LENS_NAME: &'static str = "pbits";
    const UNWATCHED_NAME: &'static str = "pbits-unwatched";
    const NATIVE: bool = false;
    #[inline(always)]
    fn format() -> Format {
        Format::unpack(BITS_FORMAT.load(AtomicOrdering::Relaxed))
    }
}

/// While alive, the p-bit format every [`EmulatedBits`] value computes in. Dropping it releases the lock.
#[derive(Debug)]
pub struct BitsFormatScope {
    _lock: MutexGuard<'static, ()>,
}

/// Sets the format of [`EmulatedBits`] until the returned scope is dropped, waiting for any other scope to end.
#[must_use]
pub fn bits_format_scope(format: Format) -> BitsFormatScope {
    // A poisoned lock only means a panic happened while another format was in force; the format is set anew.
    let lock = BITS_LOCK.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
    BITS_FORMAT.store(format.pack(), AtomicOrdering::Relaxed);
    BitsFormatScope { _lock: lock }
}

/// The format [`EmulatedBits`] computes in now.
#[must_use]
pub fn bits_format() -> Format {
    EmulatedBits::format()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn packing_round_trips() {
        for format in [Format::BINARY32, Format::BINARY16, Format::new(40, -1022, 1023).unwrap()] {
            assert_eq!(Format::unpack(format.pack()), format);
        }
    }

    #[test]
    fn constants_of_binary32_and_binary16() {
        // IEEE 754-2019 Table 3.5 and the f32 constants of Rust's core library.
        assert_eq!(Format::BINARY32.max_value(), f64::from(f32::MAX));
        assert_eq!(Format::BINARY32.min_positive(), f64::from(f32::MIN_POSITIVE));
        assert_eq!(Format::BINARY32.epsilon(), f64::from(f32::EPSILON));
        assert_eq!(Format::BINARY32.min_subnormal(), f64::from(f32::from_bits(1)));
        // binary16: largest 65504, least subnormal 2^-24 (IEEE 754-2019 Table 3.5, from memory).
        assert_eq!(Format::BINARY16.max_value(), 65504.0);
        assert_eq!(Format::BINARY16.min_subnormal(), 2f64.powi(-24));
    }

    #[test]
    fn bad_formats_are_errors() {
        assert_eq!(Format::bits(1), Err(FormatError::Precision { bits: 1 }));
        assert_eq!(Format::bits(53), Err(FormatError::Precision { bits: 53 }));
        assert!(Format::new(24, -1023, 127).is_err());
        assert!(Format::new(24, 5, 127).is_err());
        assert!(Format::bits(2).is_ok() && Format::bits(52).is_ok());
        // binary64 describes the native primal: rounding to it changes nothing.
        let third = 1.0f64 / 3.0;
        assert_eq!(Format::BINARY64.round(third), third);
        assert_eq!(Format::BINARY64.round_exact(third, -1e-30), third);
        assert_eq!(Format::BINARY64.name(), "binary64");
    }
}
