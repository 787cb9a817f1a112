//! The binary32 words of the `Bfloat16B32` and `Binary16B32` lenses, against outside references:
//!
//! - [`Format::round_in_binary32`] against the `half` crate's conversions from `f32` (crates.io `half` 2.7), over
//!   random binary32 encodings of every class and over every midpoint between two neighbouring values of each
//!   format together with its two binary32 neighbours (the cases a rounding gets wrong first);
//! - `+ − ×` of two values of the format, computed in binary32 and rounded to the format (what the lenses'
//!   primal does), against the exact result rounded by the definition in exact rationals (dashu-ratio), on random
//!   pairs from every class of the format — sums and products that land in the subnormals and past the largest
//!   value included — and `√` of *every* value of both formats against dashu-float's correctly rounded 200-bit
//!   root rounded by the same definition (a root of a value of the format is never a midpoint of it: a midpoint
//!   has `p + 1` significant bits, so its square has more than `p`);
//! - the same operations against the binary64 route of the lenses with binary64 words, bit for bit, on many more
//!   pairs.
//!
//! The operands come from a fixed xorshift64 sequence (Marsaglia 2003); any fixed sequence would do.

mod format_support;

use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use dashu_ratio::RBig;
use twinstep::lens::format::{EmulatedBfloat16, EmulatedBinary16};
use twinstep::lens::narrow::{InBinary32, NarrowFormat};
use twinstep::lens::{Bfloat16B32Unwatched, Binary16B32Unwatched, Format};
use twinstep::Real;

use format_support::Xorshift;

/// The value of a 16-bit encoding of the format, as binary32 (`half`'s decoding).
fn decode(format: Format, bits: u16) -> f32 {
    if format == Format::BFLOAT16 {
        half::bf16::from_bits(bits).to_f32()
    } else {
        half::f16::from_bits(bits).to_f32()
    }
}

/// A random finite value of the format, drawn so that every class is frequent: any encoding, subnormals, the top
/// binade, values near 1, and the binades whose products land in the subnormals.
fn draw(format: Format, rng: &mut Xorshift) -> f32 {
    let fraction_bits = format.precision() - 1;
    let r = rng.next();
    let sign = ((r >> 63) as u16) << 15;
    let fraction = (r >> 20) as u16 & ((1u16 << fraction_bits) - 1);
    let top = ((format.emax() - format.emin() + 1) as u16) << fraction_bits; // the biased exponent of the top binade
    let bits = match r % 6 {
        0 => (r >> 32) as u16,
        1 => sign | fraction,                                                  // subnormal
        2 => sign | top | fraction,                                            // largest binade
        3 => sign | ((format.emax() as u16) << fraction_bits) | fraction,      // [1, 2)
        4 => sign | (((r >> 40) as u16 % 12 + 1) << fraction_bits) | fraction, // small normals
        _ => sign | (((r >> 40) as u16 % (top >> fraction_bits)) << fraction_bits) | fraction,
    };
    let value = decode(format, bits);
    if value.is_finite() {
        value
    } else {
        1.5
    }
}

fn agree(ours: f32, theirs: f32) -> bool {
    ours.to_bits() == theirs.to_bits() || (ours.is_nan() && theirs.is_nan())
}

fn half_rounding(format: Format, x: f32) -> f32 {
    if format == Format::BFLOAT16 {
        half::bf16::from_f32(x).to_f32()
    } else {
        half::f16::from_f32(x).to_f32()
    }
}

#[test]
fn rounding_in_binary32_is_the_half_crates_conversion() {
    let mut rng = Xorshift(0xb32_0001);
    for format in [Format::BFLOAT16, Format::BINARY16] {
        assert!(format.fits_binary32());
        for _ in 0..200_000 {
            let x = rng.binary32();
            let (ours, theirs) = (format.round_in_binary32(x), half_rounding(format, x));
            assert!(
                agree(ours, theirs),
                "{} of {x:e} ({:#x}): ours {ours:e}, half {theirs:e}",
                format.name(),
                x.to_bits()
            );
        }
        // Every midpoint between two neighbouring values of the format, and its binary32 neighbours.
        let mut ties = 0;
        for bits in 0..=u16::MAX {
            let (low, high) = (decode(format, bits), decode(format, bits.wrapping_add(1)));
            if !low.is_finite() || !high.is_finite() || high.abs() <= low.abs() || (low < 0.0) != (high < 0.0) {
                continue;
            }
            let midpoint = (f64::from(low) + f64::from(high)) / 2.0; // exact: p + 1 bits
            let tie = midpoint as f32;
            assert_eq!(f64::from(tie), midpoint, "a midpoint of {} is a binary32 value", format.name());
            ties += 1;
            for x in [tie, f32::from_bits(tie.to_bits() - 1), f32::from_bits(tie.to_bits() + 1)] {
                let (ours, theirs) = (format.round_in_binary32(x), half_rounding(format, x));
                assert!(agree(ours, theirs), "{} of {x:e}: ours {ours:e}, half {theirs:e}", format.name());
            }
        }
        assert!(ties > 60_000, "{ties} midpoints");
        // The midpoint between the largest value and 2^(emax+1) rounds to ∞ (ties to even: the largest value's
        // last bit is odd; IEEE 754-2019 §4.3.1, §7.4); binary32's number below it, to the largest value.
        let largest = format.max_value();
        let overflow = (largest + 2f64.powi(format.emax() - format.precision() as i32)) as f32;
        for sign in [1.0f32, -1.0] {
            assert_eq!(format.round_in_binary32(sign * overflow), sign * f32::INFINITY, "{}", format.name());
            let below = f32::from_bits(overflow.to_bits() - 1);
            assert_eq!(
                f64::from(format.round_in_binary32(sign * below)),
                f64::from(sign) * largest,
                "{}",
                format.name()
            );
        }
    }
    // The formats whose exponents do not fit: more than 11 bits, or a top binade the adder cannot move up.
    assert!(!Format::BINARY32.fits_binary32());
    assert!(!Format::new(8, -100, 127).expect("a format").fits_binary32());
}

/// An operation of two binary32 words.
type BinaryOp = fn(f32, f32) -> f32;

/// The lens's primal operations (binary32 words) for one format.
fn operations<F: twinstep::lens::narrow::FitsBinary32>() -> [(&'static str, BinaryOp); 3] {
    [
        ("+", <InBinary32<F> as NarrowFormat>::add),
        ("−", <InBinary32<F> as NarrowFormat>::sub),
        ("×", <InBinary32<F> as NarrowFormat>::mul),
    ]
}

fn exact(x: f32) -> RBig {
    RBig::try_from(f64::from(x)).expect("finite")
}

fn check_pairs<F: twinstep::lens::narrow::FitsBinary32>(seed: u64, exact_pairs: usize, route_pairs: usize) {
    let format = F::format();
    let mut rng = Xorshift(seed);
    let mut subnormal_results = 0;
    let mut overflows = 0;
    for n in 0..route_pairs {
        let (a, b) = (draw(format, &mut rng), draw(format, &mut rng));
        let binary64_route: [f64; 3] = [
            F::add(f64::from(a), f64::from(b)),
            F::sub(f64::from(a), f64::from(b)),
            F::mul(f64::from(a), f64::from(b)),
        ];
        for ((name, op), route) in operations::<F>().into_iter().zip(binary64_route) {
            let ours = op(a, b);
            assert!(
                agree(ours, route as f32),
                "{} {a:e} {name} {b:e}: ours {ours:e}, binary64 route {route:e}",
                format.name()
            );
            if n < exact_pairs {
                let value = match name {
                    "+" => exact(a) + exact(b),
                    "−" => exact(a) - exact(b),
                    _ => exact(a) * exact(b),
                };
                // The sign of an exact zero: a sum of opposite numbers is +0 (IEEE 754-2019 §6.3), a product
                // takes the sign of the factors.
                let negative = if value == RBig::ZERO {
                    name == "×" && (a.is_sign_negative() != b.is_sign_negative())
                        || name != "×" && a.is_sign_negative() && (if name == "+" { b } else { -b }).is_sign_negative()
                } else {
                    value < RBig::ZERO
                };
                let reference = format_support::nearest_real(format, &value, negative);
                assert_eq!(
                    f64::from(ours).to_bits(),
                    reference.to_bits(),
                    "{} {a:e} {name} {b:e}: ours {ours:e}, exact {reference:e}",
                    format.name()
                );
                subnormal_results += usize::from(ours != 0.0 && f64::from(ours.abs()) < format.min_positive());
                overflows += usize::from(ours.is_infinite());
            }
        }
    }
    assert!(subnormal_results > 50, "{} subnormal results", subnormal_results);
    assert!(overflows > 50, "{} overflows", overflows);
}

#[test]
fn bfloat16_sums_and_products_in_binary32_are_correctly_rounded() {
    check_pairs::<EmulatedBfloat16>(0xbf16, 20_000, 400_000);
}

#[test]
fn binary16_sums_and_products_in_binary32_are_correctly_rounded() {
    check_pairs::<EmulatedBinary16>(0xf16, 20_000, 400_000);
}

#[test]
fn roots_of_every_value_are_correctly_rounded() {
    for format in [Format::BFLOAT16, Format::BINARY16] {
        let sqrt: fn(f32) -> f32 = if format == Format::BFLOAT16 {
            <InBinary32<EmulatedBfloat16> as NarrowFormat>::sqrt
        } else {
            <InBinary32<EmulatedBinary16> as NarrowFormat>::sqrt
        };
        for bits in 0..0x8000u16 {
            let x = decode(format, bits);
            let ours = sqrt(x);
            if !x.is_finite() {
                assert!(agree(ours, x.sqrt()), "√{x:e}");
                continue;
            }
            let root = FBig::<HalfEven>::try_from(f64::from(x)).expect("finite").with_precision(200).value().sqrt();
            let root = exact_of(&root);
            let reference = format_support::nearest_real(format, &root, false);
            assert_eq!(
                f64::from(ours).to_bits(),
                reference.to_bits(),
                "{}: √{x:e} ours {ours:e}, exact {reference:e}",
                format.name()
            );
        }
        // √−0 = −0 and the root of a negative number is NaN (IEEE 754-2019 §5.4.1, §7.2).
        assert_eq!(sqrt(-0.0).to_bits(), (-0.0f32).to_bits());
        assert!(sqrt(-1.0).is_nan());
    }
}

/// A binary float as an exact rational.
fn exact_of(x: &FBig<HalfEven>) -> RBig {
    let (significand, exponent) = x.repr().clone().into_parts();
    let value = RBig::from(significand);
    if exponent >= 0 {
        value * format_support::two_to(exponent as i32)
    } else {
        value / format_support::two_to((-exponent) as i32)
    }
}

#[test]
fn remainders_agree_with_the_binary64_words() {
    use twinstep::lens::{Bfloat16B64Unwatched, Binary16B64Unwatched, Lens};
    // x % y (truncating, as C's fmod) is exact in every binary format (common practice, no source), so
    // both words give the same primal, and the binary32 reference is the binary32 computation x − q·y.
    let mut rng = Xorshift(0x7e11);
    for _ in 0..20_000 {
        let (x, y) = (draw(Format::BFLOAT16, &mut rng), draw(Format::BFLOAT16, &mut rng));
        let (a, b) = (
            Bfloat16B32Unwatched::from_f32(x) % Bfloat16B32Unwatched::from_f32(y),
            Bfloat16B64Unwatched::from_f32(x) % Bfloat16B64Unwatched::from_f32(y),
        );
        assert!(agree(a.primal() as f32, b.primal() as f32), "{x:e} % {y:e}");
        assert!(agree(a.primal() as f32, x % y), "{x:e} % {y:e}: the hardware's remainder");
        let (x, y) = (draw(Format::BINARY16, &mut rng), draw(Format::BINARY16, &mut rng));
        let (a, b) = (
            Binary16B32Unwatched::from_f32(x) % Binary16B32Unwatched::from_f32(y),
            Binary16B64Unwatched::from_f32(x) % Binary16B64Unwatched::from_f32(y),
        );
        assert!(agree(a.primal() as f32, b.primal() as f32), "{x:e} % {y:e}");
        if y != 0.0 && x.is_finite() {
            let q = ((f64::from(x) - f64::from(x % y)) / f64::from(y)).round();
            assert!(agree(a.reference_value() as f32, (-(q as f32)).mul_add(y, x)), "{x:e} % {y:e}: reference");
        }
    }
}

#[test]
fn the_lenses_take_their_inputs_as_the_formats_would() {
    // An f64 input rounds to the format for the primal and to binary32 for the reference (`as f32`, to nearest).
    let third = 1.0f64 / 3.0;
    let b = Bfloat16B32Unwatched::from_f64(third);
    assert_eq!(b.primal(), Format::BFLOAT16.round(third));
    let h = Binary16B32Unwatched::from_f64(third);
    assert_eq!(h.primal(), Format::BINARY16.round(third));
    assert_eq!(twinstep::lens::Lens::reference_value(h), f64::from(third as f32));
}

/// Whole kernel runs: the lenses in binary32 words and in binary64 words give the same primal bit for bit at every
/// cell and step (the binary64 route is checked against exact rationals and dashu in `tests/format_oracles.rs`),
/// on kernels with every operation the stencils use: shallow water (÷, √, `max`, comparisons), an Arrhenius
/// front (`exp`, `powf`, `clamp`, `max`, a fused multiply-add) and the minmod limiter (`abs`, `min`, sign tests).
mod whole_kernels {
    use twinstep::lens::{Bfloat16B32, Bfloat16B64, Binary16B32, Binary16B64, Lens};
    use twinstep::{BaseOps, MixedOps, RefOps};
    use twinstep_fixtures::advection_minmod::minmod_step_twin;
    use twinstep_fixtures::reaction_diffusion::arrhenius_step_twin;
    use twinstep_fixtures::shallow_water::shallow_water_step_twin;

    /// A smooth bump of `n` values in `[base, base + height]`.
    fn bump(n: usize, base: f64, height: f64) -> Vec<f64> {
        (0..n).map(|i| base + height * (-((i as f64 - n as f64 / 3.0) / 5.0).powi(2)).exp()).collect()
    }

    fn primals<L: Lens>(values: &[L]) -> Vec<u64> {
        values.iter().map(|v| v.primal().to_bits()).collect()
    }

    fn compare<A, B>(steps: usize)
    where
        A: Lens + BaseOps<f64>,
        B: Lens + BaseOps<f64>,
        f64: MixedOps<A> + MixedOps<B> + MixedOps<f64>,
        for<'a> &'a A: RefOps<A>,
        for<'b> &'b B: RefOps<B>,
    {
        // Shallow water: a dam break onto a wet floor (depths 0.5–2, at rest), ratio Δt/Δx = 0.05.
        let (mut h_a, mut q_a): (Vec<A>, Vec<A>) =
            (bump(48, 0.5, 1.5).into_iter().map(A::from_f64).collect(), vec![A::zero(); 48]);
        let (mut h_b, mut q_b): (Vec<B>, Vec<B>) =
            (bump(48, 0.5, 1.5).into_iter().map(B::from_f64).collect(), vec![B::zero(); 48]);
        // The Arrhenius front and the limiter on values in [0, 1].
        let (mut u_a, mut u_b): (Vec<A>, Vec<B>) = (
            bump(40, 0.0, 0.9).into_iter().map(A::from_f64).collect(),
            bump(40, 0.0, 0.9).into_iter().map(B::from_f64).collect(),
        );
        let (mut w_a, mut w_b) = (u_a.clone(), u_b.clone());
        for step in 0..steps {
            let speed_a = shallow_water_step_twin::<A>(&mut h_a, &mut q_a, A::from_f64(0.05));
            let speed_b = shallow_water_step_twin::<B>(&mut h_b, &mut q_b, B::from_f64(0.05));
            assert_eq!(speed_a.primal().to_bits(), speed_b.primal().to_bits(), "{}: speed, step {step}", A::NAME);
            assert_eq!(primals(&h_a), primals(&h_b), "{}: depth, step {step}", A::NAME);
            assert_eq!(primals(&q_a), primals(&q_b), "{}: discharge, step {step}", A::NAME);
            let mut next_a = u_a.clone();
            let mut next_b = u_b.clone();
            arrhenius_step_twin::<A>(&u_a, &mut next_a, A::from_f64(0.02), A::from_f64(0.5), A::from_f64(2.0));
            arrhenius_step_twin::<B>(&u_b, &mut next_b, B::from_f64(0.02), B::from_f64(0.5), B::from_f64(2.0));
            (u_a, u_b) = (next_a, next_b);
            assert_eq!(primals(&u_a), primals(&u_b), "{}: front, step {step}", A::NAME);
            let mut next_a = w_a.clone();
            let mut next_b = w_b.clone();
            minmod_step_twin::<A>(&w_a, &mut next_a, A::from_f64(0.4));
            minmod_step_twin::<B>(&w_b, &mut next_b, B::from_f64(0.4));
            (w_a, w_b) = (next_a, next_b);
            assert_eq!(primals(&w_a), primals(&w_b), "{}: limiter, step {step}", A::NAME);
        }
        // The runs did move: the format's rounding changed the data.
        assert!(primals(&u_a) != primals(&bump(40, 0.0, 0.9).into_iter().map(A::from_f64).collect::<Vec<_>>()));
    }

    #[test]
    fn bfloat16_in_binary32_words_runs_the_binary64_words_primal() {
        compare::<Bfloat16B32, Bfloat16B64>(200);
    }

    #[test]
    fn binary16_in_binary32_words_runs_the_binary64_words_primal() {
        compare::<Binary16B32, Binary16B64>(200);
    }
}
