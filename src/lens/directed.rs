//! Directed roundings of single operations — IEEE 754-2019 roundTowardNegative and roundTowardPositive (§4.3.2)
//! of `a + b`, `a · b`, `a / b`, `√a` and `a · b + c` — computed in round-to-nearest, without switching the
//! rounding mode and without any CPU feature: an error-free transformation ([`super::eft`]) gives the exact error
//! of the round-to-nearest result, and its sign says whether the exact value lies below or above it
//! ([`round_down`], [`round_up`]). Where a transformation may not be exact — a product or quotient in the underflow
//! margin ([`EFT_TINY`]), a fused sum whose three parts do not settle — the operation is evaluated in exact
//! rationals (dashu-ratio) and rounded there: slow, and reached only by values below 10^-270 or by a few
//! cancellation patterns of `mul_add`.
//!
//! Operands may be infinite, as the endpoints of unbounded intervals are: an infinite endpoint stands for an
//! unbounded side (IEEE 1788-2015 §7, from memory), so a product of endpoints follows `0 · ∞ = 0` and a quotient
//! `finite / ∞ = 0`. The callers ([`super::enclosure`]) never form `∞ − ∞` or `∞ / ∞`, nor pass NaN.
//!
//! Everything here is what the inf–sup [`super::enclosure::Enclosure`] builds on; the [`super::Interval`] lens's
//! hot paths inline the common case of each function and leave the rest to the `#[cold]` parts.

use crate::lens::eft::{
    exact_product, exact_quotient, fast_two_sum, next_down, round_down, round_up, two_sum, Products, EFT_TINY,
};
use dashu_ratio::RBig;

/// An exact value's two directed roundings: the greatest double `≤` it and the least double `≥` it.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rounded {
    /// roundTowardNegative.
    pub down: f64,
    /// roundTowardPositive.
    pub up: f64,
}

impl Rounded {
    /// A value that is a double (or ±∞) exactly.
    #[inline(always)]
    #[must_use]
    pub const fn exact(x: f64) -> Rounded {
        Rounded { down: x, up: x }
    }

    /// The roundings of `s + e`, `s` its round-to-nearest double and `e` the exact remainder (any double of the
    /// remainder's sign will do: only the sign is read).
    #[inline(always)]
    #[must_use]
    pub fn of_remainder(s: f64, e: f64) -> Rounded {
        Rounded { down: round_down(s, e), up: round_up(s, e) }
    }

    /// A finite value beyond the largest double, of the sign of `overflowed` (the round-to-nearest ±∞): it lies
    /// between ±MAX and ±∞.
    #[cold]
    fn overflow(overflowed: f64) -> Rounded {
        if overflowed > 0.0 {
            Rounded { down: f64::MAX, up: f64::INFINITY }
        } else {
            Rounded { down: f64::NEG_INFINITY, up: f64::MIN }
        }
    }
}

/// The roundings of an exact rational, from its double nearest (dashu-ratio's `to_f64`) and one exact
/// comparison: the exact value lies between that double and its neighbour on the side the comparison shows. Only
/// faithful rounding of `to_f64` is needed for this to be tight: either neighbour of the exact value works.
#[cold]
#[must_use]
pub fn rational(q: &RBig) -> Rounded {
    let nearest = q.to_f64().value();
    if nearest.is_infinite() {
        return Rounded::overflow(nearest);
    }
    let as_rational = RBig::try_from(nearest).unwrap_or(RBig::ZERO); // finite here, so exact
    match as_rational.cmp(q) {
        core::cmp::Ordering::Equal => Rounded::exact(nearest),
        core::cmp::Ordering::Greater => Rounded { down: next_down(nearest), up: nearest },
        core::cmp::Ordering::Less => Rounded { down: nearest, up: twinstep_exact::next_up(nearest) },
    }
}

/// A finite double as an exact rational (every finite double is a dyadic rational, IEEE 754-2019 §3.2).
#[cold]
fn exactly(x: f64) -> RBig {
    RBig::try_from(x).unwrap_or(RBig::ZERO)
}

/// The sign of a product or quotient of two signed non-zero values, as ±∞.
fn signed_infinity(a: f64, b: f64) -> f64 {
    if a.is_sign_negative() == b.is_sign_negative() {
        f64::INFINITY
    } else {
        f64::NEG_INFINITY
    }
}

/// `a + b` rounded both ways; `a`, `b` are not opposite infinities.
///
/// TwoSum gives `a + b = s + e` exactly whenever nothing overflows (Knuth, TAOCP vol. 2, §4.2.2); the rest is
/// the `#[cold]` `sum_beyond`.
#[inline(always)]
#[must_use]
pub fn sum(a: f64, b: f64) -> Rounded {
    let (s, e) = two_sum(a, b);
    if s.is_finite() && e.is_finite() {
        return Rounded::of_remainder(s, e);
    }
    sum_beyond(a, b, s)
}

/// `a + b` when TwoSum did not finish finite: an infinite operand (the sum is that infinity, exactly), an
/// overflow, or an overflow inside TwoSum with a finite sum, where Fast2Sum with the larger magnitude first is
/// exact instead (Dekker 1971; its intermediates are bounded by the operands and the sum).
#[cold]
fn sum_beyond(a: f64, b: f64, s: f64) -> Rounded {
    if a.is_infinite() || b.is_infinite() {
        return Rounded::exact(if a.is_infinite() { a } else { b });
    }
    if s.is_infinite() {
        return Rounded::overflow(s);
    }
    let (big, small) = if a.abs() >= b.abs() { (a, b) } else { (b, a) };
    let (s, e) = fast_two_sum(big, small);
    Rounded::of_remainder(s, e)
}

/// `a · b` rounded both ways, with `0 · ∞ = 0` (endpoints, see the module paragraph).
#[inline(always)]
#[must_use]
pub fn product(a: f64, b: f64) -> Rounded {
    match exact_product(a, b) {
        Some((p, e)) => Rounded::of_remainder(p, e),
        None => product_beyond(a, b),
    }
}

/// `a · b` where TwoProd is not exact: a zero or infinite factor, an overflow, or the underflow margin (exact
/// rationals).
#[cold]
fn product_beyond(a: f64, b: f64) -> Rounded {
    if a == 0.0 || b == 0.0 {
        return Rounded::exact(0.0);
    }
    if a.is_infinite() || b.is_infinite() {
        return Rounded::exact(signed_infinity(a, b));
    }
    let p = a * b;
    if p.is_infinite() {
        return Rounded::overflow(p);
    }
    rational(&(exactly(a) * exactly(b)))
}

/// `a / b` rounded both ways, for `b ≠ 0` and not both infinite; `finite / ∞ = 0`.
#[inline(always)]
#[must_use]
pub fn quotient(a: f64, b: f64) -> Rounded {
    match exact_quotient(a, b) {
        Some((q, e)) => Rounded::of_remainder(q, e),
        None => quotient_beyond(a, b),
    }
}

/// `a / b` where the residual is not exact: an infinite operand, a zero dividend, an overflow, or the underflow
/// margin (exact rationals).
#[cold]
fn quotient_beyond(a: f64, b: f64) -> Rounded {
    if a.is_infinite() {
        return Rounded::exact(signed_infinity(a, b));
    }
    if b.is_infinite() || a == 0.0 {
        return Rounded::exact(0.0);
    }
    let q = a / b;
    if q.is_infinite() {
        return Rounded::overflow(q);
    }
    rational(&(exactly(a) / exactly(b)))
}

/// 2^600 and 2^-300: a square root's argument below [`EFT_TINY`] is scaled by the first, its root by the second
/// (√(x·2^600) = √x·2^300 exactly, and both scalings are exact: the argument moves up from the subnormal range,
/// the root √x ≥ 2^-537 stays normal).
const ROOT_SCALE_UP: f64 = f64::from_bits((1023 + 600) << 52);
const ROOT_SCALE_DOWN: f64 = f64::from_bits((1023 - 300) << 52);

/// `√x` rounded both ways, for `x ≥ 0` (or +∞).
///
/// `s = RN(√x)`, correctly rounded (IEEE 754-2019 §5.4.1); the residual `x − s²` has the sign of `√x − s`, and
/// [`Products::residual`] gives it with its sign exact when `x ≥ 2^-897` (the exact residual lies on the grid of
/// doubles there). Smaller arguments are scaled.
#[inline]
#[must_use]
pub fn square_root(x: f64) -> Rounded {
    let s = x.sqrt();
    if x == 0.0 || x == f64::INFINITY {
        return Rounded::exact(s); // √±0 = ±0, √∞ = ∞, exactly
    }
    if x >= EFT_TINY {
        return Rounded::of_remainder(s, Products::NATIVE.residual(x, s, s));
    }
    let Rounded { down, up } = square_root(x * ROOT_SCALE_UP);
    Rounded { down: down * ROOT_SCALE_DOWN, up: up * ROOT_SCALE_DOWN }
}

/// `a · b + c` rounded both ways (one rounding of the exact value, as IEEE 754-2019 fusedMultiplyAdd would in the
/// directed modes), with the endpoint conventions of [`product`] for the product; `a · b` and `c` are not
/// opposite infinities.
#[inline]
#[must_use]
pub fn fused(a: f64, b: f64, c: f64) -> Rounded {
    if a == 0.0 || b == 0.0 {
        return Rounded::exact(c); // 0·b + c = c, also for an infinite b (endpoint convention)
    }
    if a.is_infinite() || b.is_infinite() {
        return Rounded::exact(signed_infinity(a, b)); // ±∞ + c, c finite or of the same sign
    }
    if c.is_infinite() {
        return Rounded::exact(c);
    }
    fused_finite(a, b, c).unwrap_or_else(|| rational(&(exactly(a) * exactly(b) + exactly(c))))
}

/// `a · b + c` for finite non-zero `a`, `b` and finite `c`, or `None` where the exact rationals must decide.
///
/// `a·b = p + pe` exactly (TwoProd), then two TwoSums give `p + c = s + e₁`, `e₁ + pe = t + e₂`, and one more
/// `s + t = r + e₃`: the exact value is `r + w` with `w = e₃ + e₂`, and `RN(e₃ + e₂)` has the sign of `w` (a sum
/// of two doubles rounds to zero only when it is zero). When `|w|` is less than the gap from `r` to the next
/// double on `w`'s side, the exact value lies strictly between `r` and that neighbour, so the roundings are `r`
/// and the neighbour ([`Rounded::of_remainder`]). `|e₃|` is at most half that gap (`r` is `s + t` rounded to
/// nearest) and `e₂` is far smaller, so the test below — `|e₃| + |e₂|`, rounded to nearest, under ⅞ of the gap
/// (which leaves room for that rounding) — declines only in contrived cases. A step that overflows, or a product
/// in the underflow margin, gives `None` as well.
#[inline]
fn fused_finite(a: f64, b: f64, c: f64) -> Option<Rounded> {
    let (p, pe) = exact_product(a, b)?;
    let (s, e1) = two_sum(p, c);
    let (t, e2) = two_sum(e1, pe);
    let (r, e3) = two_sum(s, t);
    if !(s.is_finite() && e1.is_finite() && r.is_finite() && e3.is_finite()) {
        return None;
    }
    if r == 0.0 {
        // s + t = 0 exactly, so e₃ = 0 and the value is the double e₂.
        return Some(Rounded::exact(e2));
    }
    let w = e3 + e2;
    // The gap to the neighbour on w's side, exact (adjacent doubles differ by a power of two); +∞ above MAX,
    // where the rounding up is +∞ anyway.
    let gap = if w > 0.0 { twinstep_exact::next_up(r) - r } else { r - next_down(r) };
    (e3.abs() + e2.abs() < gap * 0.875).then(|| Rounded::of_remainder(r, w))
}

/// Pseudo-random doubles for the tests: `count` values `±m·2^e` with `m ∈ [1, 2)` and `|e| < 2^(bits − 1)`,
/// from a xorshift generator (Marsaglia 2003; common practice, no source) started at `seed`.
#[cfg(test)]
pub(crate) fn test_doubles(seed: u64, count: usize, bits: u32) -> Vec<f64> {
    let mut state = seed;
    (0..count)
        .map(|_| {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            let magnitude = f64::from_bits((state >> 12) | 0x3FF0_0000_0000_0000); // [1, 2)
            let exponent = (state & ((1 << bits) - 1)) as i32 - (1 << (bits - 1));
            let sign = if state & (1 << bits) == 0 { 1.0 } else { -1.0 };
            sign * magnitude * 2f64.powi(exponent)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    //! Every function against exact rationals (dashu-ratio): the result must be the tightest pair of doubles
    //! around the exact value — `down ≤ exact ≤ up` with `down = up` when the value is a double and `up` the next
    //! double after `down` otherwise (IEEE 754-2019 §4.3.2 defines the two directed roundings that way).

    use super::*;

    /// Whether `r` is the tightest pair around `exact`. Beyond ±MAX the pair is (MAX, +∞) or (−∞, MIN): the
    /// directed roundings of a finite value beyond the largest double (IEEE 754-2019 §4.3.2 and §7.4).
    fn tightest(r: Rounded, exact: &RBig) -> bool {
        if r.up == f64::INFINITY {
            return r.down == f64::MAX && *exact > exactly(f64::MAX);
        }
        if r.down == f64::NEG_INFINITY {
            return r.up == f64::MIN && *exact < exactly(f64::MIN);
        }
        let (down, up) = (exactly(r.down), exactly(r.up));
        let encloses = &down <= exact && exact <= &up;
        let adjacent = if down == *exact { r.up == r.down } else { r.up == twinstep_exact::next_up(r.down) };
        encloses && adjacent
    }

    /// Operands: signs, zeros, binade edges, the underflow margin, values near the overflow threshold, and
    /// pseudo-random doubles between 2^-512 and 2^512.
    fn operands() -> Vec<f64> {
        let mut values = vec![
            1.0,
            -1.0,
            0.1,
            -0.3,
            3.0,
            1.0 + f64::EPSILON,
            1.0 - f64::EPSILON / 2.0,
            1e-300,
            -3e-310,
            f64::from_bits(1),
            1e300,
            -1e308,
            f64::MAX,
            2f64.powi(996) * 1.5,
        ];
        values.extend(test_doubles(0x2545_F491_4F6C_DD1D, 40, 10));
        values
    }

    #[test]
    fn sums_products_and_quotients_are_tightest() {
        let values = operands();
        let mut checked = 0;
        for &a in &values {
            for &b in &values {
                let (x, y) = (exactly(a), exactly(b));
                assert!(tightest(sum(a, b), &(&x + &y)), "{a:e} + {b:e}: {:?}", sum(a, b));
                assert!(tightest(product(a, b), &(&x * &y)), "{a:e} * {b:e}: {:?}", product(a, b));
                assert!(tightest(quotient(a, b), &(&x / &y)), "{a:e} / {b:e}: {:?}", quotient(a, b));
                checked += 1;
            }
        }
        assert_eq!(checked, values.len() * values.len());
    }

    #[test]
    fn overflows_round_to_max_and_infinity() {
        // An exact value beyond ±MAX: roundTowardNegative of a positive one is MAX, roundTowardPositive +∞
        // (IEEE 754-2019 §7.4).
        let up = Rounded { down: f64::MAX, up: f64::INFINITY };
        let down = Rounded { down: f64::NEG_INFINITY, up: f64::MIN };
        assert_eq!(sum(f64::MAX, f64::MAX), up);
        assert_eq!(sum(-f64::MAX, -f64::MAX), down);
        assert_eq!(product(1e200, -1e200), down);
        assert_eq!(quotient(1e300, 1e-300), up);
        assert_eq!(fused(1e200, 1e200, -1.0), up);
        // MAX plus less than half an ulp rounds to MAX to nearest, but the exact value lies above it.
        assert_eq!(sum(f64::MAX, 1.0), Rounded { down: f64::MAX, up: f64::INFINITY });
    }

    #[test]
    fn infinite_operands_follow_the_endpoint_conventions() {
        let inf = f64::INFINITY;
        assert_eq!(product(0.0, inf), Rounded::exact(0.0)); // 0·∞ = 0 for endpoints
        assert_eq!(product(-2.0, inf), Rounded::exact(-inf));
        assert_eq!(quotient(3.0, -inf), Rounded::exact(0.0));
        assert_eq!(quotient(-inf, 2.0), Rounded::exact(-inf));
        assert_eq!(sum(-inf, 1e308), Rounded::exact(-inf));
        assert_eq!(fused(0.0, inf, 2.5), Rounded::exact(2.5));
        assert_eq!(fused(2.0, -inf, 1.0), Rounded::exact(-inf));
    }

    #[test]
    fn square_roots_are_tightest() {
        // [down, up] is the tightest pair around √x iff down² ≤ x ≤ up² with up the next double after down (or
        // down = up with down² = x), decided in exact rationals.
        for x in operands().into_iter().map(f64::abs).chain([2.0, 0.25, 1e-320, 4e-300, f64::MIN_POSITIVE]) {
            let r = square_root(x);
            let (down, up, exact) = (exactly(r.down), exactly(r.up), exactly(x));
            assert!(&down * &down <= exact && exact <= &up * &up, "sqrt {x:e}: {r:?}");
            let adjacent =
                if &down * &down == exact { r.up == r.down } else { r.up == twinstep_exact::next_up(r.down) };
            assert!(adjacent, "sqrt {x:e}: {r:?}");
        }
    }

    #[test]
    fn fused_sums_are_tightest() {
        let values = operands();
        let (mut fast, mut checked) = (0, 0);
        for &a in values.iter().step_by(3) {
            for &b in values.iter().step_by(2) {
                // c near −a·b cancels: the hard cases for the three-part sum.
                let p = a * b;
                for c in [0.5, -p, -p * (1.0 + f64::EPSILON), p * 1e-20, -3e-310] {
                    if !(p.is_finite() && c.is_finite()) {
                        continue;
                    }
                    let exact = exactly(a) * exactly(b) + exactly(c);
                    let r = fused(a, b, c);
                    checked += 1;
                    assert!(tightest(r, &exact), "{a:e} * {b:e} + {c:e}: {r:?}");
                    fast += usize::from(fused_finite(a, b, c).is_some());
                }
            }
        }
        // Nearly all cases settle without the rationals; the check would be vacuous for the fast part otherwise.
        assert!(fast * 10 > checked * 9, "{fast} of {checked}");
    }
}
