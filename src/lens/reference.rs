//! Numbers as written: the reference value of a decimal literal, of an integer converted with `as`, and of the
//! `std::f64::consts` constants, plus the switch that lets the audit driver split representation error
//! (constants, inputs) from arithmetic error.
//!
//! A [`Reference`] describes a real number `x` to about 106 bits: its double-word value `hi + lo` with a bound
//! on `|x − (hi + lo)|`, and the two doubles `down ≤ x ≤ up` around it. Each lens builds its reference side
//! from it (a radius, an enclosure, a double-word).
//!
//! Decimal literals are parsed exactly (the text as a rational number, `dashu-ratio`) and rounded to the nearest
//! double twice (value, then remainder); the results are cached per literal site, since a literal in a loop is
//! evaluated once per cell and step. Constants are computed once per process at 256 bits with `dashu-float`.
//!
//! [`LiteralMode`] selects what a literal's reference holds: the decimal as written ([`LiteralMode::AsWritten`],
//! default) or the double the compiler made ([`LiteralMode::AsCompiled`]). Running an audit once in each mode
//! and comparing tells how much of the error is the representation of the constants rather than the arithmetic.

use crate::lens::eft::{next_down, next_up};
use crate::Constant;
use core::cell::{Cell, RefCell};
use core::hash::{BuildHasherDefault, Hasher};
use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use dashu_ratio::RBig;
use std::collections::HashMap;
use std::sync::OnceLock;

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
    static LITERALS: RefCell<HashMap<(usize, usize), Reference, BuildHasherDefault<SiteHasher>>> =
        RefCell::new(HashMap::default());
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

/// A real number `x` known to about 106 bits.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Reference {
    /// The nearest double to `x`.
    pub hi: f64,
    /// The nearest double to `x − hi`.
    pub lo: f64,
    /// An upper bound of `|x − (hi + lo)|` (0 when `hi + lo` is exactly `x`).
    pub err: f64,
    /// A double `≤ x`.
    pub down: f64,
    /// A double `≥ x`.
    pub up: f64,
}

impl Reference {
    /// Zero, exactly.
    const ZERO: Reference = Reference { hi: 0.0, lo: 0.0, err: 0.0, down: 0.0, up: 0.0 };

    /// A double, exactly.
    #[must_use]
    pub fn exact(x: f64) -> Reference {
        Reference { hi: x, lo: 0.0, err: 0.0, down: x, up: x }
    }

    /// The reference of an exact rational number: round to nearest, round the remainder to nearest.
    #[must_use]
    pub fn of_rational(q: &RBig) -> Reference {
        let hi = q.to_f64().value();
        let Ok(hi_exact) = RBig::try_from(hi) else {
            // Beyond the double range: the reference is the overflowed double, as `as` and the parser give.
            let down = if hi > 0.0 { f64::MAX } else { hi };
            let up = if hi < 0.0 { f64::MIN } else { hi };
            return Reference { hi, lo: 0.0, err: 0.0, down, up };
        };
        let remainder = q - hi_exact;
        let lo = remainder.to_f64().value();
        let exact_pair = RBig::try_from(lo).is_ok_and(|lo_exact| lo_exact == remainder);
        // |remainder − lo| ≤ u·|lo| + η/2 for a round-to-nearest `lo` (IEEE 754-2019 §4.3.1); 2^-52 doubles u.
        let err = if exact_pair { 0.0 } else { lo.abs() * f64::EPSILON + f64::from_bits(1) };
        let (down, up) = sided(hi, remainder.sign() == dashu_base::Sign::Positive, remainder == RBig::ZERO);
        Reference { hi, lo, err, down, up }
    }

    /// The reference of a 256-bit approximation of a constant whose error is far below 2^-200·|x|.
    fn of_approximation(x: &FBig<HalfEven>) -> Reference {
        let hi = x.to_f64().value();
        let remainder = x - FBig::<HalfEven>::try_from(hi).unwrap_or_default();
        let lo = remainder.to_f64().value();
        // Rounding `lo` costs u·|lo|; the approximation itself is within 2^-250·|x| (dashu-float's precision).
        let err = lo.abs() * f64::EPSILON + hi.abs() * 2f64.powi(-200);
        let (down, up) = sided(hi, lo > 0.0, lo == 0.0);
        Reference { hi, lo, err, down, up }
    }
}

/// The doubles around `x = hi + remainder` from the remainder's sign.
fn sided(hi: f64, above: bool, zero: bool) -> (f64, f64) {
    if zero {
        (hi, hi)
    } else if above {
        (hi, next_up(hi))
    } else {
        (next_down(hi), hi)
    }
}

/// Whether a literal is a number the compiled double holds exactly and that is recognised without parsing: an
/// integer below 2^53 (`2.0`, `1`, `100.`, `1e2`) or a multiple of 1/64 below 2^47 (`0.5`, `0.25`, `1.5`), written
/// in at most 15 characters. Such literals skip the parser and the cache.
///
/// The test looks at the value and the text's length only, not at its characters: a loop over the bytes, even
/// one the optimizer folds away for a constant text in the end, kept the loops of a kernel from vectorizing
/// (measured in `benches/lenses.rs`, 1-D heat). Why the length is enough: a text of at most 15 characters spells
/// d = D·10^q with D < 10^15 and, when q < 0 (a point or an exponent takes a character), D < 10^14. Let the
/// double v = M·2^-k with k ≤ 6 (M an integer). If d ≠ v, then d − v is a non-zero multiple of
/// 10^min(q, 0)·2^-k, while round-to-nearest moves d by at most half an ulp, |v|·2^-53. For q ≥ 0 that needs
/// |v| ≥ 2^(53 − k); for q < 0 it needs 10^q·2^-k ≤ |v|·2^-53 < 1.0001·10^(14 + q)·2^-53, i.e.
/// 2^(53 − k) < 1.0001·10^14, false for k ≤ 6. So below 2^(53 − k) — 2^53 for integers, 2^47 for multiples of
/// 1/64 — such a text *is* its double. The one exception is underflow: `1e-400` rounds to 0 from a non-zero
/// number, and needs at least 6 characters, so 0 counts as exact only from texts of at most 5.
#[inline(always)]
#[must_use]
pub fn is_exact_short_literal(value: f64, text: &str) -> bool {
    // Both tests are false for NaN and ±∞ (their fract is NaN).
    let integer = value.fract() == 0.0 && value.abs() < 9_007_199_254_740_992.0; // k = 0, |v| < 2^53
    let sixty_fourths = (value * 64.0).fract() == 0.0 && value.abs() < 140_737_488_355_328.0; // k ≤ 6, |v| < 2^47
    (integer || sixty_fourths) && text.len() <= 15 && (value != 0.0 || text.len() <= 5)
}

/// One entry of the per-thread direct-mapped cache of literal references: the site key (text address and length)
/// and its reference.
#[derive(Clone, Copy)]
struct RecentLiteral {
    address: usize,
    len: usize,
    reference: Reference,
}

/// Entries of the direct-mapped cache; a kernel has a handful of literal sites, so collisions are rare, and a
/// collision only costs the hash-map lookup behind it.
const RECENT_SLOTS: usize = 64;

thread_local! {
    /// The references of the literal sites used last, looked up on every evaluation of a literal (once per cell
    /// and step in a stencil loop): an index computation, one compare and a copy, instead of the `RefCell`
    /// borrow and hash-map probe of [`LITERALS`], which cost about 7 ns per evaluation (`benches/lenses.rs`).
    static RECENT: [Cell<RecentLiteral>; RECENT_SLOTS] = const {
        [const { Cell::new(RecentLiteral { address: 0, len: 0, reference: Reference::ZERO }) }; RECENT_SLOTS]
    };
}

/// The reference of a decimal literal as written, cached per literal site (the text's address).
#[inline]
#[must_use]
pub fn literal_reference(value: f64, text: &'static str) -> Reference {
    let (address, len) = (text.as_ptr() as usize, text.len());
    // Literal texts are distinct static strings at least a byte apart; mixing in the length separates a text
    // from a shorter one at the same address.
    let slot = ((address >> 1) ^ (address >> 7) ^ len) % RECENT_SLOTS;
    let recent = RECENT.with(|cache| cache[slot].get());
    if recent.address == address && recent.len == len {
        return recent.reference;
    }
    remember_literal(slot, value, text)
}

/// The cache miss of [`literal_reference`]: the hash map of all sites seen on this thread, else the exact parse.
#[cold]
#[inline(never)]
fn remember_literal(slot: usize, value: f64, text: &'static str) -> Reference {
    let key = (text.as_ptr() as usize, text.len());
    let known = LITERALS.with(|cache| cache.borrow().get(&key).copied());
    let reference = known.unwrap_or_else(|| {
        let parsed = parse_literal(value, text);
        LITERALS.with(|cache| cache.borrow_mut().insert(key, parsed));
        parsed
    });
    RECENT.with(|cache| cache[slot].set(RecentLiteral { address: key.0, len: key.1, reference }));
    reference
}

/// The exact decimal of a literal text (digits, optional point, optional exponent). A text the parser does not
/// take (it cannot come from the rewrite) falls back to the compiled value rather than failing the run.
#[cold]
fn parse_literal(value: f64, text: &str) -> Reference {
    // `2.` and `2.e3` are valid Rust literals; the rational parser wants digits after the point.
    let normalized = text.replace(".e", ".0e").replace(".E", ".0E");
    let normalized = if normalized.ends_with('.') { format!("{normalized}0") } else { normalized };
    match RBig::from_str_decimal(&normalized) {
        Ok(q) => Reference::of_rational(&q),
        Err(_) => Reference::exact(value),
    }
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
        let mut table: Vec<Reference> = Constant::ALL.iter().map(|&c| Reference::of_approximation(&value(c))).collect();
        table.push(Reference::of_approximation(&(number(180) / &pi))); // 180/π, for to_degrees
        table.push(Reference::of_approximation(&(&pi / number(180)))); // π/180, for to_radians
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

/// A hasher for literal sites: the key is already a unique address, so mixing it once is enough.
#[derive(Default)]
struct SiteHasher(u64);

impl Hasher for SiteHasher {
    fn finish(&self) -> u64 {
        self.0
    }
    fn write(&mut self, bytes: &[u8]) {
        for &b in bytes {
            self.write_u64(u64::from(b));
        }
    }
    fn write_usize(&mut self, n: usize) {
        self.write_u64(n as u64);
    }
    fn write_u64(&mut self, n: u64) {
        // Fibonacci hashing (Knuth, TAOCP vol. 3, §6.4): multiply by 2^64/φ and mix.
        self.0 = (self.0.rotate_left(5) ^ n).wrapping_mul(0x9E37_79B9_7F4A_7C15);
    }
}

#[cfg(test)]
mod tests {
    //! The per-thread literal cache under collisions: more sites than slots, looked up in an interleaved order,
    //! each must keep its own reference — checked against exact rational arithmetic (dashu-ratio).

    use super::*;

    /// Whether the decimal `text` is exactly the double `value`, by exact rational arithmetic (dashu-ratio).
    fn exactly(value: f64, text: &str) -> bool {
        let normalized = if text.ends_with('.') { format!("{text}0") } else { text.replace(".e", ".0e") };
        RBig::from_str_decimal(&normalized).expect("decimal text") == RBig::try_from(value).expect("finite")
    }

    #[test]
    fn short_literal_shortcut_takes_only_exact_texts() {
        // Texts that round to an integer double without being it (long, or underflowing), and exact ones.
        let tricky = [
            "0.99999999999999999999",
            "1.0000000000000001",
            "4503599627370496.5", // 2^52 + 0.5 rounds to the even 2^52 (IEEE 754-2019 ties-to-even)
            "9007199254740993.0", // 2^53 + 1 rounds to 2^53
            "1e-400",
            "2e-324", // below half the smallest subnormal: rounds to 0
            "2.0",
            "4.",
            "100.0",
            "1e2",
            "1.5e1",
            "0.0",
            "0e0",
            "123456789012345",
            "0.5",
            "2.5e-1",
            "0.50000000000000001", // rounds to 0.5, 19 characters
            "0.015625",            // 2^-6
            "0.0078125",           // 2^-7: exact, but outside the shortcut
            "0.1",
            "1.75",
            "140737488355327.5",
        ];
        for text in tricky {
            let value: f64 = text.parse().expect("decimal text");
            if is_exact_short_literal(value, text) {
                assert!(exactly(value, text), "{text} taken as the integer {value}");
            }
        }
        // The shortcut is taken for the integers kernels write (else it would not pay), and not for the rest.
        for text in ["2.0", "4.", "100.0", "1e2", "0.0", "1", "0.5", "0.25", "1.5", "2.5e-1", "0.015625"] {
            assert!(is_exact_short_literal(text.parse().unwrap(), text), "{text}");
        }
        for text in ["1e-400", "4503599627370496.5", "0.99999999999999999999", "0.50000000000000001", "0.1"] {
            assert!(!is_exact_short_literal(text.parse().unwrap(), text), "{text}");
        }
    }

    #[test]
    fn short_literal_shortcut_on_random_short_texts() {
        // Pseudo-random texts of up to 15 characters around integers (xorshift, common practice, no source):
        // digits, a point and an exponent; every text the shortcut takes must be exactly its value.
        let mut state = 0x2545_F491_4F6C_DD1D_u64;
        let mut next = |bound: u64| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state % bound
        };
        let mut taken = 0;
        for _ in 0..20_000 {
            let digits = 1 + next(9) as u32;
            let integer = next(10u64.pow(digits));
            let fraction = match next(4) {
                0 => String::new(),
                1 => ".0".to_string(),
                2 => [".5", ".25", ".125", ".75", ".015625", ".5000000001"][next(6) as usize].to_string(),
                _ => format!(".{}", next(1000)),
            };
            let exponent = if next(4) == 0 { format!("e{}", next(7) as i64 - 3) } else { String::new() };
            let text = format!("{integer}{fraction}{exponent}");
            let value: f64 = text.parse().expect("decimal text");
            if text.len() <= 15 && is_exact_short_literal(value, &text) {
                taken += 1;
                assert!(exactly(value, &text), "{text} taken as the integer {value}");
            }
        }
        assert!(taken > 1_000, "the shortcut was taken only {taken} times");
    }

    #[test]
    fn colliding_literal_sites_keep_their_own_references() {
        // 3·RECENT_SLOTS distinct texts, so some share a slot; leaked to get the `&'static str` of a literal site.
        let texts: Vec<&'static str> =
            (1..=3 * RECENT_SLOTS).map(|k| &*Box::leak(format!("{k}.{k}e-3").into_boxed_str())).collect();
        for round in 0..3 {
            for (i, &text) in texts.iter().enumerate().skip(round).step_by(2).chain(texts.iter().enumerate()) {
                let exact = RBig::from_str_decimal(text).expect("decimal text");
                let compiled: f64 = text.parse().expect("decimal text");
                let reference = literal_reference(compiled, text);
                // hi is the double nearest the decimal (dashu-ratio's round-to-nearest conversion) …
                assert_eq!(reference.hi, exact.to_f64().value(), "site {i}: {text}");
                // … and |x − (hi + lo)| ≤ err, evaluated exactly.
                let remainder = &exact - RBig::try_from(reference.hi).unwrap() - RBig::try_from(reference.lo).unwrap();
                let bound = RBig::try_from(reference.err).unwrap();
                assert!(-&bound <= remainder && remainder <= bound, "site {i}: {text}");
            }
        }
    }
}
