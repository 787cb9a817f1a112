//! Numbers as written: the reference value of a decimal literal, of an integer converted with `as`, and of the
//! `std::f64::consts` constants, plus the switch that lets the audit driver split representation error
//! (constants, inputs) from arithmetic error.
//!
//! A [`Reference`] describes a real number `x` to about 106 bits: its double-word value `hi + lo` with a bound
//! on `|x − (hi + lo)|`, and the two doubles `down ≤ x ≤ up` around it. Each lens builds its reference side
//! from it (a radius, an enclosure, a double-word). The type and the exact rounding of a rational into it live in
//! the `twinstep-exact` crate, which the rewrite engine shares.
//!
//! Decimal literals get their reference at expansion time: the engine reads the text as an exact rational and
//! prints the rounded doubles into the twin as a constant (`Real::lit(0.1f64, Reference { … }, mode)`), so a literal
//! in a stencil loop costs no parsing or lookup at run time. (Looking the reference up at run time, in a
//! per-thread cache, kept a 1-D heat loop with `r = 0.1` from vectorizing: Bound 17× and Shadow 55× slower than
//! f64, against 6.9× and 20.9× with `r` a variable, `benches/lenses.rs`.) Integers converted with `as` beyond
//! 2^53 go through the same rational rounding at run time; constants are computed once per process at 256 bits
//! with `dashu-float`.
//!
//! [`LiteralMode`] selects what a literal's reference holds: the decimal as written ([`LiteralMode::AsWritten`],
//! default) or the double the compiler made ([`LiteralMode::AsCompiled`]). Running an audit once in each mode
//! and comparing tells how much of the error is the representation of the constants rather than the arithmetic.
//! The mode is a per-thread value; a twin function reads it once, at its entry, and passes it to every
//! `Real::lit` of its body (a thread-local read inside `lit`, once per evaluation, kept loops from vectorizing),
//! so closures of the kernel that run on other threads follow the caller's mode too.

use crate::Constant;
use core::cell::Cell;
use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use dashu_ratio::RBig;
use std::sync::OnceLock;

pub use twinstep_exact::Reference;

/// What the reference side of a literal or a `std::f64::consts` constant holds.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub enum LiteralMode {
    /// The decimal number as written (`0.1` is one tenth) and the real constant (π): the audit's error includes
    /// the representation error of the program's constants.
    #[default]
    AsWritten,
    /// The double the compiler made of the literal, and the `f64` constant: the audit measures arithmetic error
    /// only.
    AsCompiled,
}

thread_local! {
    static MODE: Cell<LiteralMode> = const { Cell::new(LiteralMode::AsWritten) };
}

/// The literal mode of this thread (each lens of an audit runs on its own thread).
#[inline]
#[must_use]
pub fn literal_mode() -> LiteralMode {
    MODE.with(Cell::get)
}

/// Sets this thread's literal mode and returns the previous one.
pub fn set_literal_mode(mode: LiteralMode) -> LiteralMode {
    MODE.with(|m| m.replace(mode))
}

/// Runs `f` with `mode` as this thread's literal mode and restores the previous mode afterwards, even if `f`
/// unwinds.
pub fn with_literal_mode<R>(mode: LiteralMode, f: impl FnOnce() -> R) -> R {
    struct Restore(LiteralMode);
    impl Drop for Restore {
        fn drop(&mut self) {
            set_literal_mode(self.0);
        }
    }
    let _restore = Restore(set_literal_mode(mode));
    f()
}

/// The reference of a 256-bit approximation of a constant whose error is far below 2^-200·|x|.
fn of_approximation(x: &FBig<HalfEven>) -> Reference {
    let hi = x.to_f64().value();
    let remainder = x - FBig::<HalfEven>::try_from(hi).unwrap_or_default();
    let lo = remainder.to_f64().value();
    // Rounding `lo` costs u·|lo|; the approximation itself is within 2^-250·|x| (dashu-float's precision).
    let err = lo.abs() * f64::EPSILON + hi.abs() * 2f64.powi(-200);
    Reference::from_parts(hi, lo, err, lo.partial_cmp(&0.0).unwrap_or(core::cmp::Ordering::Equal))
}

/// The reference of an integer converted with `as`: exact below 2^53, otherwise through the rational path.
#[must_use]
pub fn integer_reference(value: i128) -> Reference {
    if value.unsigned_abs() < (1u128 << 53) {
        Reference::exact(value as f64)
    } else {
        Reference::of_rational(&RBig::from(value))
    }
}

/// The reference of an unsigned integer converted with `as`.
#[must_use]
pub fn unsigned_reference(value: u128) -> Reference {
    if value < (1u128 << 53) {
        Reference::exact(value as f64)
    } else {
        Reference::of_rational(&RBig::from(value))
    }
}

/// Index of the degree↔radian factors after the `std::f64::consts` constants in the table.
const DEGREES_PER_RADIAN: usize = Constant::ALL.len();
const RADIANS_PER_DEGREE: usize = Constant::ALL.len() + 1;

/// The constants at 256 bits, computed once per process.
fn constant_table() -> &'static [Reference] {
    static TABLE: OnceLock<Vec<Reference>> = OnceLock::new();
    TABLE.get_or_init(|| {
        const BITS: usize = 256;
        let number = |n: u32| FBig::<HalfEven>::from(n).with_precision(BITS).value();
        let pi = FBig::<HalfEven>::pi(BITS);
        let e = FBig::<HalfEven>::e(BITS);
        let ln2 = number(2).ln();
        let ln10 = number(10).ln();
        let sqrt2 = number(2).sqrt();
        let one = number(1);
        let value = |c: Constant| -> FBig<HalfEven> {
            match c {
                Constant::PI => pi.clone(),
                Constant::TAU => &pi * number(2),
                Constant::E => e.clone(),
                Constant::SQRT_2 => sqrt2.clone(),
                Constant::LN_2 => ln2.clone(),
                Constant::LN_10 => ln10.clone(),
                Constant::LOG2_E => &one / &ln2,   // log2 e = 1 / ln 2
                Constant::LOG10_E => &one / &ln10, // log10 e = 1 / ln 10
                Constant::LOG2_10 => &ln10 / &ln2, // log2 10 = ln 10 / ln 2
                Constant::LOG10_2 => &ln2 / &ln10, // log10 2 = ln 2 / ln 10
                Constant::FRAC_PI_2 => &pi / number(2),
                Constant::FRAC_PI_3 => &pi / number(3),
                Constant::FRAC_PI_4 => &pi / number(4),
                Constant::FRAC_PI_6 => &pi / number(6),
                Constant::FRAC_PI_8 => &pi / number(8),
                Constant::FRAC_1_PI => &one / &pi,
                Constant::FRAC_2_PI => number(2) / &pi,
                Constant::FRAC_2_SQRT_PI => number(2) / pi.sqrt(),
                Constant::FRAC_1_SQRT_2 => &one / &sqrt2,
            }
        };
        let mut table: Vec<Reference> = Constant::ALL.iter().map(|&c| of_approximation(&value(c))).collect();
        table.push(of_approximation(&(number(180) / &pi))); // 180/π, for to_degrees
        table.push(of_approximation(&(&pi / number(180)))); // π/180, for to_radians
        table
    })
}

/// The reference of a `std::f64::consts` constant: the real number it names.
#[must_use]
pub fn constant_reference(c: Constant) -> Reference {
    constant_table()[c as usize]
}

/// 180/π, the factor of `to_degrees`.
#[must_use]
pub fn degrees_per_radian() -> Reference {
    constant_table()[DEGREES_PER_RADIAN]
}

/// π/180, the factor of `to_radians`.
#[must_use]
pub fn radians_per_degree() -> Reference {
    constant_table()[RADIANS_PER_DEGREE]
}
