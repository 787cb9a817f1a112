//! Shared by the format tests: rounding a real number to an emulated format by the definition, in exact
//! rationals (dashu-ratio), independent of the emulation's code, and the operands the tests draw.

use dashu_int::{IBig, UBig};
use dashu_ratio::RBig;
use twinstep::lens::Format;

/// `2^k` as an exact rational.
pub fn two_to(k: i32) -> RBig {
    let power = RBig::from(UBig::ONE << k.unsigned_abs() as usize);
    if k >= 0 {
        power
    } else {
        RBig::ONE / power
    }
}

/// The exponent `e` with `2^e ≤ x < 2^(e+1)`, for a positive rational.
fn binade(x: &RBig) -> i32 {
    // Start from the double nearest x (within a factor 2 of the binade) and correct by exact comparisons.
    let guess = x.to_f64().value();
    let mut e = if guess.is_finite() && guess > 0.0 { guess.log2().floor() as i32 } else { -1100 };
    while &two_to(e) > x {
        e -= 1;
    }
    while &two_to(e + 1) <= x {
        e += 1;
    }
    e
}

/// The real number `x` rounded to `format` by the definition: the format's grid at `x` is
/// `2^(max(e, emin) − p + 1)` for `2^e ≤ |x| < 2^(e+1)` (IEEE 754-2019 §3.3), the nearest multiple of it with ties
/// to the even multiple (roundTiesToEven, §4.3.1), ±∞ past the largest finite value (§7.4), and a zero result
/// keeps the sign `negative` of `x` (§6.3).
pub fn nearest_real(format: Format, x: &RBig, negative: bool) -> f64 {
    let magnitude = if *x == RBig::ZERO {
        0.0
    } else {
        let exact = if negative { -x.clone() } else { x.clone() };
        let (p, emin) = (format.precision() as i32, format.emin());
        let quantum_exponent = binade(&exact).max(emin) - p + 1;
        let scaled = &exact / two_to(quantum_exponent);
        let (floor, fraction) = (scaled.floor(), scaled.fract());
        let half = RBig::ONE / RBig::from(2);
        let up = fraction > half || (fraction == half && (&floor % IBig::from(2)) != IBig::ZERO);
        let multiple = if up { floor + IBig::ONE } else { floor };
        let rounded = RBig::from(multiple) * two_to(quantum_exponent);
        if rounded > RBig::try_from(format.max_value()).expect("finite") {
            f64::INFINITY
        } else {
            rounded.to_f64().value() // a value of the format, so a double, exactly
        }
    };
    if negative {
        -magnitude
    } else {
        magnitude
    }
}

/// xorshift64 (Marsaglia 2003): a fixed sequence of operands; any fixed sequence would do.
pub struct Xorshift(pub u64);

impl Xorshift {
    pub fn next(&mut self) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0
    }

    /// A binary32 encoding drawn so that every class is frequent: random bits, subnormals, values near the
    /// overflow threshold, near 1, zeros, infinities and NaNs.
    pub fn binary32(&mut self) -> f32 {
        let r = self.next();
        let bits = (r >> 32) as u32;
        let sign = bits & 0x8000_0000;
        match r % 8 {
            0 => f32::from_bits(bits),
            1 => f32::from_bits(sign | (bits & 0x007f_ffff)), // subnormal
            2 => f32::from_bits(sign | 0x7f00_0000 | (bits & 0x007f_ffff)), // near overflow
            3 => f32::from_bits(sign | 0x3f80_0000 | (bits & 0x007f_ffff)), // [1, 2)
            4 => f32::from_bits(sign | 0x0080_0000 | (bits & 0x00ff_ffff)), // smallest normals
            5 => [0.0, -0.0, f32::INFINITY, f32::NEG_INFINITY, f32::NAN, f32::MAX, f32::MIN_POSITIVE]
                [(bits % 7) as usize],
            _ => f32::from_bits(sign | (0x3000_0000 + (bits & 0x1fff_ffff))), // moderate magnitudes
        }
    }
}
