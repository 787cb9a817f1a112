//! The emulated formats against outside references, on random operands:
//!
//! - binary32 (`Format::BINARY32` and the `Binary32` lens's primal) against the hardware's `f32` arithmetic, bit for
//!   bit — `+ − × ÷ √` and the fused multiply-add, with subnormal operands and results, overflow, infinities and
//!   NaNs (IEEE 754-2019 §5.4.1, §5.4.2: the x86-64 SSE unit rounds each to nearest, ties to even);
//! - binary16 and bfloat16 roundings against the `half` crate's conversions from `f32` (crates.io `half` 2.7; its
//!   binary16 conversion is the F16C instruction on this machine) over random binary32 encodings of every class;
//! - p-bit operations, 2 ≤ p ≤ 52, against `dashu-float` at precision p with ties to even (`HalfEven`), the
//!   arbitrary-precision reference the project uses.
//!
//! The operands come from a fixed xorshift64 sequence (Marsaglia 2003); any fixed sequence would do.

mod format_support;

use dashu_float::round::mode::HalfEven;
use dashu_float::{Context, FBig};
use dashu_ratio::RBig;

use twinstep::lens::format::PrimalFormat;
use twinstep::lens::{Bfloat16Unwatched, Binary16Unwatched, Binary32Unwatched, Format};
use twinstep::Real;

use format_support::Xorshift;

/// The same binary32 datum as the hardware and the emulation see it, compared by encoding. A NaN result from a NaN
/// operand carries a payload IEEE 754-2019 §6.2.3 leaves to the implementation (which operand's, for an FMA), so
/// there NaN-ness is compared.
fn same(emulated: f64, hardware: f32, operands: &[f32]) -> bool {
    let narrowed = emulated as f32; // exact for a binary32 value; a NaN keeps its payload's leading bits
    if operands.iter().any(|x| x.is_nan()) && hardware.is_nan() {
        narrowed.is_nan()
    } else if cfg!(target_arch = "x86_64") {
        narrowed.to_bits() == hardware.to_bits()
    } else {
        // Elsewhere the default NaN's sign and payload differ by platform (IEEE 754-2019 §6.2.3): NaN-ness only.
        narrowed.to_bits() == hardware.to_bits() || (narrowed.is_nan() && hardware.is_nan())
    }
}

const DRAWS: usize = 200_000;

#[test]
fn binary32_matches_the_hardware_bit_for_bit() {
    let f = Format::BINARY32;
    let mut rng = Xorshift(0x1234_5678_9abc_def1);
    let mut classes = [0usize; 3]; // subnormal results, overflows, NaNs
    for _ in 0..DRAWS {
        let (a, b, c) = (rng.binary32(), rng.binary32(), rng.binary32());
        let (x, y, z) = (f64::from(a), f64::from(b), f64::from(c));
        let cases = [
            ("+", f.add(x, y), a + b),
            ("−", f.sub(x, y), a - b),
            ("×", f.mul(x, y), a * b),
            ("÷", f.div(x, y), a / b),
            ("√", f.sqrt(x), a.sqrt()),
            ("fma", f.mul_add(x, y, z), a.mul_add(b, c)),
        ];
        for (op, emulated, hardware) in cases {
            assert!(
                same(emulated, hardware, &[a, b, c]),
                "{a:e} {op} {b:e} (c = {c:e}): emulated {emulated:e}, f32 {hardware:e}"
            );
            classes[0] += usize::from(hardware != 0.0 && hardware.abs() < f32::MIN_POSITIVE);
            classes[1] += usize::from(hardware.is_infinite() && a.is_finite() && b.is_finite());
            classes[2] += usize::from(hardware.is_nan());
        }
    }
    // The draws reach every class the test names, often.
    assert!(classes.iter().all(|&n| n > 1000), "classes reached: {classes:?}");
}

#[test]
fn binary32_fused_multiply_add_breaks_an_f64_tie_by_the_remainder() {
    // 2^36 + 1 = 4097 · 16773121 (= (2^12 + 1)(2^24 − 2^12 + 1), the sum of cubes), so a = 4097·2^-12 and
    // b = 16773121·2^-48 are binary32 numbers with a·b = 2^-24 + 2^-60 exactly. Then a·b + 1 rounds in f64 to
    // 1 + 2^-24, a binary32 midpoint, and rounding that again would go to the even 1.0; the exact value is above the
    // midpoint, so the fused result is 1 + 2^-23, as the hardware's FMA says.
    let (a, b) = (4097.0f32 * 2f32.powi(-12), 16_773_121.0f32 * 2f32.powi(-48));
    for c in [1.0f32, -1.0] {
        let a = a * c; // the mirror image: −(a·b + 1)
        let hardware = a.mul_add(b, c);
        assert_eq!(hardware, c * (1.0 + f32::EPSILON));
        let emulated = Format::BINARY32.mul_add(f64::from(a), f64::from(b), f64::from(c));
        assert_eq!(emulated, f64::from(hardware));
        let [x, y, z] = [a, b, c].map(Binary32Unwatched::from_f32);
        assert_eq!(x.mul_add(y, z).primal(), f64::from(hardware));
    }
}

#[test]
fn binary32_lens_primal_matches_the_hardware() {
    let mut rng = Xorshift(0x0f0f_1234_5555_aaaa);
    for _ in 0..DRAWS / 4 {
        let (a, b, c) = (rng.binary32(), rng.binary32(), rng.binary32());
        let [x, y, z] = [a, b, c].map(Binary32Unwatched::from_f32);
        let cases = [
            ((x + y).primal(), a + b),
            ((x - y).primal(), a - b),
            ((x * y).primal(), a * b),
            ((x / y).primal(), a / b),
            (x.sqrt().primal(), a.sqrt()),
            (x.mul_add(y, z).primal(), a.mul_add(b, c)),
            ((x % y).primal(), a % b),
            ((x * 0.1f32).primal(), a * 0.1f32),
            (x.powi(3).primal(), a * a * a), // __powisf2 for n = 3: r = a, a², r·a² (compiler-rt, from memory)
        ];
        for (emulated, hardware) in cases {
            assert!(
                same(emulated, hardware, &[a, b, c]),
                "{a:e}, {b:e}, {c:e}: emulated {emulated:e}, f32 {hardware:e}"
            );
        }
    }
}

#[test]
fn binary32_rounds_doubles_as_the_hardware_conversion_does() {
    // IEEE 754-2019 §5.4.2 convertFormat: `as f32` rounds a double to nearest binary32, ties to even.
    let f = Format::BINARY32;
    let mut rng = Xorshift(77);
    for _ in 0..DRAWS {
        let r = rng.next();
        // Doubles of every magnitude binary32 meets, and some exact ties (low 29 bits = 1 << 28).
        let mut x = f64::from_bits((r & 0x800f_ffff_ffff_ffff) | ((0x300 + (r >> 40) % 0x200) << 52));
        if r % 5 == 0 {
            x = f64::from_bits((x.to_bits() & !0x1fff_ffff) | 0x1000_0000);
        }
        assert!(same(f.round(x), x as f32, &[]), "{x:e}");
    }
}

#[test]
fn binary16_and_bfloat16_round_as_the_half_crate_converts() {
    let mut rng = Xorshift(99);
    for _ in 0..DRAWS {
        let a = rng.binary32();
        let x = f64::from(a);
        let half = half::f16::from_f32(a).to_f64();
        let brain = half::bf16::from_f32(a).to_f64();
        let (h, b) = (Format::BINARY16.round(x), Format::BFLOAT16.round(x));
        let agree = |ours: f64, theirs: f64| ours.to_bits() == theirs.to_bits() || (ours.is_nan() && theirs.is_nan());
        assert!(agree(h, half), "binary16 of {a:e}: ours {h:e}, half {half:e}");
        assert!(agree(b, brain), "bfloat16 of {a:e}: ours {b:e}, half {brain:e}");
        // The lenses take an f32 input into their formats the same way.
        assert!(agree(Binary16Unwatched::from_f32(a).primal(), half));
        assert!(agree(Bfloat16Unwatched::from_f32(a).primal(), brain));
    }
}

/// Doubles for the roundings to binary16 and bfloat16: the binary32 draws with random low bits (so that most
/// are not binary32 values), the same draws moved onto a tie of the narrow format and one binary64 ulp to either
/// side of it, and doubles far outside both formats (beyond binary32's range, binary64 subnormals).
fn double_near_narrow_formats(rng: &mut Xorshift) -> f64 {
    let wide = f64::from(rng.binary32());
    let r = rng.next();
    let low = r & 0x1fff_ffff; // the 29 bits binary64 has beyond binary32
    match r >> 61 {
        0 | 1 => f64::from_bits(wide.to_bits() ^ low),
        2 => {
            // The tie halfway between two bfloat16 (7 fraction bits kept) or binary16 (10) numbers, then its
            // neighbours: the cases a double rounding gets wrong.
            let kept = if r & (1 << 40) == 0 { 7 } else { 10 };
            let tie = (wide.to_bits() & !((1u64 << (52 - kept)) - 1)) | (1u64 << (51 - kept));
            f64::from_bits(tie.wrapping_add((r >> 41) % 3).wrapping_sub(1))
        }
        3 => f64::from_bits(r & 0x800f_ffff_ffff_ffff), // binary64 subnormals
        4 => f64::from_bits((r & 0x800f_ffff_ffff_ffff) | ((1023 + 128 + (r >> 52) % 800) << 52)), // huge
        _ => f64::from_bits(r),                         // any encoding
    }
}

/// `x` rounded to `format` by the definition, in exact rationals (dashu-ratio): the format's grid at `x` is
/// `2^(max(e, emin) − p + 1)` for `2^e ≤ |x| < 2^(e+1)` (IEEE 754-2019 §3.3), the nearest multiple of it with ties to
/// the even multiple (roundTiesToEven, §4.3.1), ±∞ past the largest finite value (§7.4), and a zero keeps the sign
/// of `x` (§6.3). Independent of the emulation's code: the reference for doubles that are not binary32 values,
/// whose rounding no general-purpose crate here does correctly (half 2.7's `from_f64` drops the low 32 bits of the
/// double before it rounds, so it misplaces the ties).
fn nearest_in_format(format: Format, x: f64) -> f64 {
    if !x.is_finite() || x == 0.0 {
        return x;
    }
    let exact = RBig::try_from(x).expect("finite");
    format_support::nearest_real(format, &exact, x < 0.0)
}

#[test]
fn binary16_and_bfloat16_round_doubles_as_the_definition_says() {
    let mut rng = Xorshift(0x5eed_0ff6);
    let mut ties = 0usize;
    for _ in 0..DRAWS / 4 {
        let x = double_near_narrow_formats(&mut rng);
        for format in [Format::BINARY16, Format::BFLOAT16] {
            let (ours, reference) = (format.round(x), nearest_in_format(format, x));
            let agree = ours.to_bits() == reference.to_bits() || (ours.is_nan() && x.is_nan());
            assert!(agree, "{} of {x:e} ({:#x}): ours {ours:e}, exact {reference:e}", format.name(), x.to_bits());
            // Count the draws exactly halfway between two numbers of the format, so that the check cannot pass
            // without any: x reflected through itself from the result is then the other neighbour, a format value.
            let reflected = x - (ours - x);
            ties += usize::from(x.is_finite() && x != ours && format.round(reflected) == reflected);
        }
    }
    assert!(ties > 100, "{ties} exact ties among the draws");
}

/// The two ways [`Format::round`] has for formats other than binary32 — the adder's and the encoding's — give the
/// same doubles on every format both apply to, drawn at random (2 ≤ p ≤ 50, exponent ranges small and large),
/// and the adder's path is the one bfloat16 and binary16 take. The encoding's path is the one the p-bit formats
/// take, which `p_bits_match_dashu_at_precision_p` checks against dashu.
#[test]
fn the_adder_rounds_as_the_encoding_does() {
    assert!(Format::BFLOAT16.rounds_by_adder() && Format::BINARY16.rounds_by_adder());
    assert!(!Format::bits(24).expect("valid").rounds_by_adder()); // binary64's range leaves no room above
    let mut rng = Xorshift(0x0add_e700);
    let mut formats = 0;
    while formats < 400 {
        let r = rng.next();
        let p = 2 + (r % 49) as u32;
        let emax = 1 + ((r >> 8) % 900) as i32;
        let emin = -1 - ((r >> 20) % 1022) as i32;
        let Ok(f) = Format::new(p, emin, emax) else { continue };
        if !f.rounds_by_adder() {
            continue;
        }
        formats += 1;
        for _ in 0..2_000 {
            let r = rng.next();
            // Magnitudes around the format's range: near its least subnormal, its normals, its largest value.
            let e = emin - p as i32 - 2 + ((r >> 52) as i32 % (emax - emin + p as i32 + 6));
            let x = f64::from_bits((r & 0x800f_ffff_ffff_ffff) | (((e + 1023).clamp(0, 2046) as u64) << 52));
            let (adder, encoding) = (f.round_by_adder(x), f.round_by_encoding(x));
            assert!(
                adder.to_bits() == encoding.to_bits() || (adder.is_nan() && encoding.is_nan()),
                "{f:?}: {x:e} ({:#x}) by the adder {adder:e}, by the encoding {encoding:e}",
                x.to_bits()
            );
        }
        for x in [0.0, -0.0, f64::INFINITY, f64::NEG_INFINITY, f64::NAN, f64::MAX, -f64::MIN_POSITIVE, 5e-324] {
            let (adder, encoding) = (f.round_by_adder(x), f.round_by_encoding(x));
            assert!(adder.to_bits() == encoding.to_bits() || (adder.is_nan() && encoding.is_nan()), "{f:?}: {x:e}");
        }
    }
}

type Big = FBig<HalfEven>;

fn big(x: f64) -> Big {
    Big::try_from(x).expect("finite")
}

/// A random double of `p` significant bits with an exponent in −40..40, rounded to p bits by dashu.
fn operand(rng: &mut Xorshift, p: usize) -> f64 {
    let r = rng.next();
    let x = f64::from_bits((r & 0x800f_ffff_ffff_ffff) | ((1023 - 40 + (r >> 52) % 80) << 52));
    big(x).with_precision(p).value().to_f64().value()
}

#[test]
fn p_bits_match_dashu_at_precision_p() {
    let mut rng = Xorshift(0xdead_beef_cafe_f00d);
    for p in 2..=52usize {
        let f = Format::bits(p as u32).expect("2 ≤ p ≤ 52");
        // Each operation at 240 bits (exact for + − × and the fused multiply-add of these operands), then rounded
        // to p bits: a quotient or root of p-bit numbers is never within 2^-240 of a midpoint of p bits unless it
        // is one, so the second rounding is the correct rounding.
        let wide = Context::<HalfEven>::new(240);
        for k in 0..4000 {
            let (x, mut y, z) = (operand(&mut rng, p), operand(&mut rng, p), operand(&mut rng, p));
            if k % 4 == 0 {
                y = -x * (1.0 + f.epsilon() * ((k % 7) as f64)); // cancellation: y close to −x
                y = f.round(y);
            }
            let [bx, by, bz] = [x, y, z].map(big);
            let to_p = |v: Result<dashu_base::Approximation<Big, _>, _>| {
                v.expect("in range").value().with_precision(p).value().to_f64().value()
            };
            let product = wide.mul(bx.repr(), by.repr()).expect("in range").value();
            let cases = [
                ("+", f.add(x, y), to_p(wide.add(bx.repr(), by.repr()))),
                ("−", f.sub(x, y), to_p(wide.sub(bx.repr(), by.repr()))),
                ("×", f.mul(x, y), to_p(wide.mul(bx.repr(), by.repr()))),
                ("÷", f.div(x, y), to_p(wide.div(bx.repr(), by.repr()))),
                ("√", f.sqrt(x.abs()), to_p(wide.sqrt(big(x.abs()).repr()))),
                ("fma", f.mul_add(x, y, z), to_p(wide.add(product.repr(), bz.repr()))),
            ];
            for (op, ours, reference) in cases {
                // dashu has no signed zero: a zero result is compared by value (its IEEE sign is checked against
                // the hardware in the binary32 test).
                let agree = ours.to_bits() == reference.to_bits() || (ours == 0.0 && reference == 0.0);
                assert!(agree, "p = {p}: {x:e} {op} {y:e} (z = {z:e}): ours {ours:e}, dashu {reference:e}");
            }
        }
    }
}

#[test]
fn p_bits_subnormals_overflow_and_ties() {
    // A format of 5 bits with exponents −6..=7: largest (2 − 2^-4)·2^7 = 248, least subnormal 2^-10
    // (IEEE 754-2019 §3.3 with p = 5, emax = 7, emin = −6).
    let f = Format::new(5, -6, 7).expect("a valid format");
    assert_eq!(f.max_value(), 248.0);
    assert_eq!(f.min_subnormal(), 2f64.powi(-10));
    // Overflow: 248 + 4 is exactly halfway to 256, which is beyond the range: to nearest, ∞ (§7.4, §4.3.1).
    assert_eq!(f.round(252.0), f64::INFINITY);
    assert_eq!(f.round(251.9), 248.0);
    assert_eq!(f.add(248.0, 8.0), f64::INFINITY);
    // Subnormals: the grid is 2^-10 below 2^-6; 1.5·2^-10 is a tie between 2^-10 (odd) and 2^-9 (even).
    assert_eq!(f.round(1.5 * 2f64.powi(-10)), 2f64.powi(-9));
    assert_eq!(f.round(0.5 * 2f64.powi(-10)), 0.0); // a tie between 0 (even) and 2^-10
    assert_eq!(f.round_exact(0.5 * 2f64.powi(-10), 1e-300), 2f64.powi(-10)); // just above the tie
    assert_eq!(f.round(-0.4 * 2f64.powi(-10)).to_bits(), (-0.0f64).to_bits()); // underflow keeps the sign
                                                                               // 17 = 10001₂ has 5 bits; 17.5 is a tie between 17 (odd last bit) and 18 = 10010₂ (even); 33 is a tie
                                                                               // between 32 = 10000₂·2 (even) and 34 = 10001₂·2 (odd).
    assert_eq!(f.round(17.5), 18.0);
    assert_eq!(f.round(33.0), 32.0);
    assert_eq!(f.round_exact(33.0, 1e-9), 34.0);
    assert_eq!(f.round_exact(35.0, -1e-9), 34.0);
    assert!(f.round(f64::NAN).is_nan());
}

#[test]
fn lenses_take_literals_and_constants_from_their_exact_value() {
    use twinstep::lens::{LiteralMode, Reference};
    use twinstep::Constant;
    // std::f32::consts hold the nearest binary32 of each constant (Rust core library); the lens rounds the
    // constant's 256-bit value.
    for c in Constant::ALL {
        assert_eq!(Binary32Unwatched::constant(c).primal(), f64::from(c.f32_value()), "{}", c.name());
    }
    // 0.1 as written, in binary32, is 0.1f32 (Rust's literal parser rounds decimals correctly).
    let tenth = Reference::of_decimal("0.1").expect("a decimal");
    assert_eq!(Binary32Unwatched::lit(0.1, tenth, LiteralMode::AsWritten).primal(), f64::from(0.1f32));
    // binary16: 0.1 = 0x2E66 = 0.0999755859375 (IEEE 754 binary16 encoding, computed by hand: 1638/2^14).
    assert_eq!(Binary16Unwatched::lit(0.1, tenth, LiteralMode::AsWritten).primal(), 1638.0 / 16384.0);
    // The format's limits, from IEEE 754-2019 Table 3.5 via Rust's f32 constants.
    assert_eq!(Binary32Unwatched::epsilon().primal(), f64::from(f32::EPSILON));
    assert_eq!(Binary32Unwatched::max_value().primal(), f64::from(f32::MAX));
    assert_eq!(Binary32Unwatched::min_positive().primal(), f64::from(f32::MIN_POSITIVE));
    assert_eq!(<twinstep::lens::format::EmulatedBinary16 as PrimalFormat>::max_value(), 65504.0);
    // An f64 input is rounded into the format while the shadow keeps it: the representation error shows.
    let third = Binary32Unwatched::from_f64(1.0 / 3.0);
    assert_eq!(third.primal(), f64::from(1.0f32 / 3.0));
    use twinstep::lens::Lens;
    assert!((third.error_estimate() - (f64::from(1.0f32 / 3.0) - 1.0 / 3.0).abs()).abs() < 1e-24);
}
