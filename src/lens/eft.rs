//! Error-free transformations and double-word ("double-double") arithmetic, the engine of [`super::Shadow`].
//!
//! A double-word number is an unevaluated sum `hi + lo` of two doubles with `|lo| ≤ ulp(hi)/2`, about 106
//! significant bits. The algorithms are the classic ones — TwoSum (Knuth, TAOCP vol. 2, §4.2.2), Fast2Sum
//! (Dekker 1971), TwoProd (by a fused multiply-add or by Dekker's product, see below) — the classical double-double sum (bound derived at
//! `dw_sum`), and the product, quotient and root analysed by Joldes, Muller and Popescu, "Tight and rigorous error
//! bounds for basic building blocks of double-word arithmetic", ACM TOMS 44(2), 2017 (algorithm numbers and bounds
//! below are from memory of that paper; u = 2^-53).
//!
//! The same transformations give the directed roundings [`round_down`] and [`round_up`] of a sum, product or
//! quotient without switching the rounding mode (the [`super::Interval`] lens's fast paths): the exact error
//! says on which side of the round-to-nearest result the exact value lies.
//!
//! Products are made exact in one of two ways, chosen at compile time ([`Products::NATIVE`]): with a fused
//! multiply-add ([`Products::Fused`]) where the target has one in hardware (x86-64 built with the `fma` target feature, e.g.
//! `-C target-cpu=native` on a Haswell or later; every AArch64), and by Veltkamp–Dekker splitting
//! ([`Products::Split`]) elsewhere — in particular on x86-64 with no special flags, where `f64::mul_add` is a call into a software
//! fused multiply-add, correct but about a hundred times slower than a multiplication. Both give exact
//! TwoProducts and residuals (the same doubles); where an algorithm uses a fused multiply-add only for accuracy
//! ([`Products::mul_acc`]), the split variant rounds once more, and the error bound beside each use covers both.
//! The choice is a value rather than a type parameter: the algorithms take it as an argument that is a constant in
//! the lenses' calls, so it folds away before the loops are vectorized (a type parameter measured 3.5× slower on
//! the Shadow's 1-D heat loop, whose products then kept a branch).
//! The program's own `mul_add` is never replaced: a lens's primal stays IEEE 754 fusedMultiplyAdd, bit for bit.
//!
//! Everything here is branch-free straight-line code on `f64` in round-to-nearest (the selects of × become blends
//! in vector code), so it inlines and vectorizes.
//!
//! Beside a non-finite `hi` the operations leave in `lo` whatever their correction terms made of it (∞ − ∞ is NaN):
//! an operation on a pair whose `hi` is not finite gives a NaN or an infinite `hi` whatever its `lo` is, so only
//! what *reads* a pair needs `lo = 0` there, and the readers ([`DoubleWord::to_f64`], [`DoubleWord::partial_cmp`],
//! [`DoubleWord::canonical`]) set it; the hot operations skip that mask.

/// A double-word number `hi + lo`.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct DoubleWord {
    pub hi: f64,
    pub lo: f64,
}

impl DoubleWord {
    /// A double as a double-word number (exact).
    #[inline(always)]
    #[must_use]
    pub const fn from_f64(x: f64) -> DoubleWord {
        DoubleWord { hi: x, lo: 0.0 }
    }

    /// The nearest double (to within the rounding of `hi + lo`); `hi` itself when it is not finite.
    #[inline(always)]
    #[must_use]
    pub fn to_f64(self) -> f64 {
        let DoubleWord { hi, lo } = self.canonical();
        hi + lo
    }

    /// The pair as readers see it: `lo = 0` beside a non-finite `hi` (see the module paragraph: the arithmetic
    /// leaves a NaN or ∞ correction there). Written with a bit mask rather than a branch, so that loops stay
    /// straight-line code.
    #[inline(always)]
    #[must_use]
    pub fn canonical(self) -> DoubleWord {
        let keep = u64::from(self.hi.abs() < f64::INFINITY).wrapping_neg(); // all ones when hi is finite, else 0
        DoubleWord { hi: self.hi, lo: f64::from_bits(self.lo.to_bits() & keep) }
    }

    /// `x · y` for a double `y`: DWTimesFP3 (JMP 2017, Algorithm 9, with FMA), relative error ≤ 2u²; see
    /// [`DoubleWord::mul_f64_with`].
    #[inline(always)]
    #[must_use]
    pub fn mul_f64(self, y: f64) -> DoubleWord {
        self.mul_f64_with(y, Products::NATIVE)
    }

    /// `x · y` for a double `y` with the given products. With [`Products::Fused`] this is DWTimesFP3 (JMP 2017,
    /// Algorithm 9), relative error ≤ 2u². With [`Products::Split`] the fused `xl·y + cl1` rounds twice; the extra rounding
    /// of `xl·y` is at most `u·|xl·y| ≤ u²·|xh·y|` and passes the final Fast2Sum unchanged, so the bound becomes
    /// `2u² + u²(1 + u) ≈ 3u²` relative (derived here from the FMA bound).
    #[inline(always)]
    #[must_use]
    pub fn mul_f64_with(self, y: f64, products: Products) -> DoubleWord {
        let (ch, cl1) = products.two_prod(self.hi, y);
        let cl3 = products.mul_acc(self.lo, y, cl1); // xl·y + error of xh·y
        let (hi, lo) = fast_two_sum(ch, cl3);
        DoubleWord { hi, lo }
    }

    /// `√x`: see [`DoubleWord::sqrt_with`].
    #[inline(always)]
    #[must_use]
    pub fn sqrt(self) -> DoubleWord {
        self.sqrt_with(Products::NATIVE)
    }

    /// `√x` with the given products: one Newton step from the double square root, `s + (x − s²)/(2s)` (Karp &
    /// Markstein 1997 style; common practice, about 104 correct bits). The residual `RN(x − s²)` is the same
    /// double with either ([`Products::residual`]).
    #[inline(always)]
    #[must_use]
    pub fn sqrt_with(self, products: Products) -> DoubleWord {
        let s = self.hi.sqrt();
        let e = products.residual(self.hi, s, s) + self.lo; // x − s², the residual
        let t = e / (2.0 * s);
        let (hi, lo) = fast_two_sum(s, t);
        // √0 = 0 and √∞ = ∞: the Newton correction would be 0/0 or ∞/∞ there.
        if s == 0.0 || s.is_infinite() {
            DoubleWord::from_f64(s)
        } else {
            DoubleWord { hi, lo }
        }
    }

    /// `a·b + c` in double-word arithmetic (one product, one sum).
    #[inline(always)]
    #[must_use]
    pub fn mul_add(self, b: DoubleWord, c: DoubleWord) -> DoubleWord {
        self * b + c
    }

    /// The ordering of two double-word values (`hi` first, then `lo`: valid for normalized pairs; two equal
    /// infinities are equal whatever their `lo`).
    #[inline(always)]
    #[must_use]
    pub fn partial_cmp(self, y: DoubleWord) -> Option<core::cmp::Ordering> {
        match self.hi.partial_cmp(&y.hi) {
            Some(core::cmp::Ordering::Equal) => self.canonical().lo.partial_cmp(&y.canonical().lo),
            other => other,
        }
    }

    /// Whether the value is `±2^k` or ±0 held exactly: `lo = 0`, a zero trailing significand field and an
    /// exponent field that is not all ones (IEEE 754-2019 §3.4: that field is zero exactly for the normal powers of
    /// two and the zeros; with all-ones exponent it would be ±∞). Bit tests, no branch.
    #[inline(always)]
    #[must_use]
    pub fn is_power_of_two(self) -> bool {
        const TRAILING_SIGNIFICAND: u64 = (1 << 52) - 1;
        const EXPONENT: u64 = 0x7ff << 52;
        let bits = self.hi.to_bits();
        (self.lo == 0.0) & (bits & TRAILING_SIGNIFICAND == 0) & (bits & EXPONENT != EXPONENT)
    }

    /// Whether the value is finite: `hi` is (beside a finite `hi` the operations leave a finite `lo`; beside a
    /// non-finite one `lo` is not read, see the module paragraph).
    #[inline(always)]
    #[must_use]
    pub fn is_finite(self) -> bool {
        self.hi.is_finite()
    }
}

impl core::ops::Neg for DoubleWord {
    type Output = DoubleWord;
    /// `−x`, exact.
    #[inline(always)]
    fn neg(self) -> DoubleWord {
        DoubleWord { hi: -self.hi, lo: -self.lo }
    }
}

impl core::ops::Add for DoubleWord {
    type Output = DoubleWord;
    /// `x + y`: see `dw_sum`.
    #[inline(always)]
    fn add(self, y: DoubleWord) -> DoubleWord {
        dw_sum(two_sum(self.hi, y.hi), self.lo + y.lo)
    }
}

impl core::ops::Sub for DoubleWord {
    type Output = DoubleWord;
    /// `x − y`: `dw_sum` of `x + (−y)`, same bound; [`two_diff`] and `xl − yl` give the doubles of `x + (−y)`
    /// bit for bit, without negating `y` first.
    #[inline(always)]
    fn sub(self, y: DoubleWord) -> DoubleWord {
        dw_sum(two_diff(self.hi, y.hi), self.lo - y.lo)
    }
}

/// The double-word sum `x + y` from `(sh, sl) = TwoSum(xh, yh)` and `v = RN(xl + yl)`: `w = RN(sl + v)`, then
/// `(zh, zl) = TwoSum(sh, w)` — the classical double-double addition (Dekker 1971's `add2`, from memory) with
/// TwoSum instead of its final Fast2Sum, so that no ordering of `sh` and `w` is needed (under cancellation `|w|`
/// may exceed `|sh|`, where Fast2Sum is not exact).
///
/// Error bound (derived here; u = 2^-53, normalized operands `|xl| ≤ u|xh|`, `|yl| ≤ u|yh|`, no overflow): the two
/// TwoSums are exact (they stay exact when results are subnormal), so the only errors are the roundings of `v`
/// and `w`, and `z − (x + y) = δ_w·(sl + v) + δ_v·(xl + yl)` with `|δ| ≤ u`. With `M = |xh| + |yh|`:
/// `|sl| ≤ u|sh| ≤ u(1 + u)M` and `|v| ≤ (1 + u)uM`, so
/// **`|z − (x + y)| ≤ (3 + 2u)·u²·(|xh| + |yh|)`**, and `z` is normalized (`|zl| ≤ ulp(zh)/2`, TwoSum).
/// The bound is relative to the *operands*: when `x + y` cancels, the result's own relative error can be large
/// (Joldes, Muller, Popescu 2017 show it for this kind of algorithm; their AccurateDWPlusDW bounds it by 3u²
/// relative to the result at 20 additions where this takes 14). For an estimate of the primal's error that is
/// enough: the primal's own rounding and propagated error in the same sum are of the order `u·M`, 2^53 times
/// larger. `tests/lens_shadow_sum.rs` checks the bound and the normalization in exact rationals, cancellation
/// included; `benches/lenses.rs` measured the 1-D heat kernel at 16.5–17× plain f64 with AccurateDWPlusDW and
/// 11.5× with this.
#[inline(always)]
fn dw_sum(parts: (f64, f64), v: f64) -> DoubleWord {
    dw_sum_bounded(parts, v).0
}

/// [`dw_sum`] together with `|v| + |w|`, whose product with u bounds its error a posteriori: the TwoSums are
/// exact, so `z − (x + y) = (w − (sl + v)) + (v − (xl + yl))`, and a round-to-nearest result r of an exact value
/// t has `|r − t| ≤ u·|r|` (IEEE 754-2019; exact in the subnormal range, where additions do not round). The bound
/// is 0 when the sum is exact with operands that are doubles (`xl = yl = sl = 0`), which the a-priori bound above is
/// not. Used by [`super::certified`]; the extra `abs` and add are dead code for [`dw_sum`] and are dropped.
#[inline(always)]
fn dw_sum_bounded((sh, sl): (f64, f64), v: f64) -> (DoubleWord, f64) {
    let w = sl + v;
    let (hi, lo) = two_sum(sh, w);
    (DoubleWord { hi, lo }, v.abs() + w.abs())
}

impl DoubleWord {
    /// `x + y` exactly as [`core::ops::Add`] computes it, and `e` with `|result − (x + y)| ≤ u·e`
    /// (see `dw_sum_bounded`).
    #[inline(always)]
    #[must_use]
    pub fn add_bounded(self, y: DoubleWord) -> (DoubleWord, f64) {
        dw_sum_bounded(two_sum(self.hi, y.hi), self.lo + y.lo)
    }

    /// `x − y` exactly as [`core::ops::Sub`] computes it, and `e` with `|result − (x − y)| ≤ u·e`.
    #[inline(always)]
    #[must_use]
    pub fn sub_bounded(self, y: DoubleWord) -> (DoubleWord, f64) {
        dw_sum_bounded(two_diff(self.hi, y.hi), self.lo - y.lo)
    }
}

impl core::ops::Mul for DoubleWord {
    type Output = DoubleWord;
    /// `x · y`: DWTimesDW3 (JMP 2017, Algorithm 12, with FMA), relative error ≤ 4u²; see
    /// [`DoubleWord::mul_with`].
    #[inline(always)]
    fn mul(self, y: DoubleWord) -> DoubleWord {
        self.mul_with(y, Products::NATIVE)
    }
}

impl DoubleWord {
    /// `x · y` with the given products. With [`Products::Fused`] this is DWTimesDW3 (JMP 2017, Algorithm 12),
    /// relative error ≤ 4u². With [`Products::Split`] its two fused operations `xh·yl + tl0` and `xl·yh + tl1` round twice; each
    /// extra rounding is of a product at most `u·|xh·yh|` in size, so it adds at most `u²·|xh·yh|`, carried
    /// through at most three more roundings: the bound becomes `4u² + 2u²(1 + u)³ ≈ 6u²` relative (derived here
    /// from the FMA bound; `tests/lens_eft_paths.rs` checks both in exact rationals).
    ///
    /// A left operand with `lo = 0` (a double: every literal that is exactly its double, every `f64` input or
    /// parameter) makes the terms with its `lo` vanish — for finite operands
    /// `cl2 = RN(0·yh + RN(xh·yl + 0·yl)) = RN(xh·yl)`, with either products — and the select on `xl = 0` below says
    /// so. It gives the algorithm's own values (up to the sign of a zero `lo`), and for a constant operand the
    /// compiler drops the dead terms. The same select for the right operand measured slower on every kernel of
    /// the benchmark (it costs a compare and a blend per product of two data values, and the kernels write
    /// literals first).
    ///
    /// A left operand `x = ±2^k` (or ±0) goes further: `xh·yh` is then exact, so `cl1 = 0`,
    /// `cl3 = cl2 = RN(xh·yl)` and the final Fast2Sum returns its operands unchanged (`|xh·yl| ≤ ulp(xh·yh)/2`
    /// when y is normalized, as every result of these operations is): the result is `(xh·yh, xh·yl)`, which the
    /// last select returns directly. The same doubles as the algorithm's whenever `xh·yh` neither overflows nor
    /// underflows (an overflow gives the exact ±∞ where the general path gives NaN). For a constant `2.0`, `4.0`
    /// or `0.5` this is two multiplications instead of 9 operations and a chain of six dependent roundings — the
    /// second difference `u[i-1] - 2.0 * u[i] + u[i+1]` of every diffusion stencil has one. Only the left operand
    /// is tested: every literal product in `fixtures/` and `examples/` is written literal-first, and for an
    /// operand that is not a constant each test costs a few instructions.
    #[inline(always)]
    #[must_use]
    pub fn mul_with(self, y: DoubleWord, products: Products) -> DoubleWord {
        let (ch, cl1) = products.two_prod(self.hi, y.hi);
        // tl1 = RN(xh·yl + RN(xl·yl)): xh·yl + xl·yl, one rounding after the product xl·yl
        let tl1 = products.mul_acc(self.hi, y.lo, self.lo * y.lo);
        // cl2 = RN(xl·yh + tl1)
        let cl2 = if self.lo == 0.0 { self.hi * y.lo } else { products.mul_acc(self.lo, y.hi, tl1) };
        let cl3 = cl1 + cl2;
        let (hi, lo) = fast_two_sum(ch, cl3);
        if self.is_power_of_two() {
            DoubleWord { hi: ch, lo: self.hi * y.lo } // exact scaling: (2^k·yh, 2^k·yl)
        } else {
            DoubleWord { hi, lo }
        }
    }

    /// `x / y` with the given products: DWDivDW2 (JMP 2017, Algorithm 17), relative error ≤ 15u² + 56u³ with
    /// [`Products::Fused`]. With [`Products::Split`] the product `y·th` inside it comes from [`DoubleWord::mul_f64_with`], whose
    /// bound grows from 2u² to about 3u² relative; that error enters the correction `x − y·th` once, so the
    /// quotient's bound grows by about u² (derived here; checked in exact rationals in
    /// `tests/lens_eft_paths.rs`).
    #[inline(always)]
    #[must_use]
    pub fn div_with(self, y: DoubleWord, products: Products) -> DoubleWord {
        let th = self.hi / y.hi;
        let r = y.mul_f64_with(th, products); // r ≈ y·th
        let pi_h = self.hi - r.hi; // exact by Sterbenz when th is close (JMP 2017)
        let delta_l = self.lo - r.lo;
        let delta = pi_h + delta_l;
        let tl = delta / y.hi; // correction (x − y·th)/y
        let (hi, lo) = fast_two_sum(th, tl);
        DoubleWord { hi, lo }
    }
}

impl core::ops::Div for DoubleWord {
    type Output = DoubleWord;
    /// `x / y`: DWDivDW2 (JMP 2017, Algorithm 17), relative error ≤ 15u² + 56u³; see
    /// [`DoubleWord::div_with`].
    #[inline(always)]
    fn div(self, y: DoubleWord) -> DoubleWord {
        self.div_with(y, Products::NATIVE)
    }
}

/// TwoSum (Knuth, TAOCP vol. 2, §4.2.2; Møller 1965): `s = fl(a + b)` and `e` with `s + e = a + b` exactly.
#[inline(always)]
#[must_use]
pub fn two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let bb = s - a;
    let e = (a - (s - bb)) + (b - bb); // a + b − s, exact
    (s, e)
}

/// TwoSum of `a` and `−b`: `s = fl(a − b)` and `e` with `s + e = a − b` exactly. The same operations as
/// `two_sum(a, -b)` with the negation folded in — `(−b) − bb = −(b + bb)` exactly, since negation is exact and
/// round-to-nearest is symmetric (IEEE 754-2019 §4.3.1) — so the same doubles, two instructions fewer.
#[inline(always)]
#[must_use]
pub fn two_diff(a: f64, b: f64) -> (f64, f64) {
    let s = a - b;
    let bb = s - a;
    let e = (a - (s - bb)) - (b + bb); // a − b − s, exact
    (s, e)
}

/// Fast2Sum (Dekker 1971), for `|a| ≥ |b|` (or a = 0): `s + e = a + b` exactly.
#[inline(always)]
#[must_use]
pub fn fast_two_sum(a: f64, b: f64) -> (f64, f64) {
    let s = a + b;
    let e = b - (s - a); // a + b − s, exact when |a| ≥ |b|
    (s, e)
}

/// TwoProd: `p = fl(a·b)` and `e = a·b − p` exactly (barring underflow and overflow), with the products of the
/// target ([`Products::NATIVE`]).
#[inline(always)]
#[must_use]
pub fn two_prod(a: f64, b: f64) -> (f64, f64) {
    Products::NATIVE.two_prod(a, b)
}

/// `a·b + c` with one rounding where the target has a hardware FMA, two where not ([`Products::mul_acc`] of
/// [`Products::NATIVE`]): for formulas whose error analysis covers both (the radii of [`super::Bound`]).
#[inline(always)]
#[must_use]
pub fn mul_acc(a: f64, b: f64, c: f64) -> f64 {
    Products::NATIVE.mul_acc(a, b, c)
}

/// The exact products an algorithm is built on — TwoProd, the residual of a product, and a multiply-add for terms
/// whose rounding the algorithm's error bound covers — made in one of two ways. [`Products::NATIVE`] is the one
/// this build uses; every algorithm of this module that multiplies takes the way as an argument (`mul_with`, …),
/// so that the tests run each both ways.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Products {
    /// By the fused multiply-add (IEEE 754-2019 fusedMultiplyAdd, one rounding).
    Fused,
    /// By Veltkamp splitting and Dekker's product, no fused multiply-add: 17 operations for a TwoProd instead of
    /// 2, but no call into a software `fma`.
    Split,
}

/// Veltkamp's splitting constant for binary64, 2^27 + 1 (p = 53, s = ⌈p/2⌉ = 27; Dekker 1971; Muller et al.,
/// *Handbook of Floating-Point Arithmetic*, 2nd ed., §4.4.1, from memory).
const VELTKAMP: f64 = 134_217_729.0; // 2^27 + 1
/// Up to this magnitude `VELTKAMP · a` stays finite ((2^27 + 1)·2^996 < 2^1024, the overflow threshold of
/// binary64); a larger factor is scaled by a power of two first.
const SPLIT_LIMIT: f64 = f64::from_bits((1023 + 996) << 52); // 2^996: biased exponent 1023 + 996, significand 1
/// The power of two moved between the factors when one exceeds [`SPLIT_LIMIT`]: 2^54 keeps the scaled-down
/// factor far from the subnormal range and the scaled-up one exact.
const SPLIT_SHIFT: f64 = f64::from_bits((1023 + 54) << 52); // 2^54
/// Above this magnitude a residual's product `x·y ≈ a` could round beyond the largest double: 2^1000.
const RESIDUAL_LIMIT: f64 = f64::from_bits((1023 + 1000) << 52);

/// Veltkamp's splitting: `a = hi + lo` exactly with `hi` on 26 bits and `lo` on 26 bits and a sign, for
/// `|a| ≤ 2^996` (Handbook of Floating-Point Arithmetic, §4.4.1, from memory).
#[inline(always)]
fn veltkamp(a: f64) -> (f64, f64) {
    let c = VELTKAMP * a;
    let hi = c - (c - a);
    (hi, a - hi)
}

/// Dekker's product (Dekker 1971; Handbook of Floating-Point Arithmetic, §4.4.2, from memory): with `a = ah + al`
/// and `b = bh + bl` split, every partial product is exact, and `e = ((ah·bh − p) + ah·bl + al·bh) + al·bl` is
/// `a·b − p` exactly when no underflow occurs. A factor above 2^996 is first scaled down by 2^54 and the other up
/// by 2^54 (powers of two scale exactly while the result stays normal, and `a·b` is unchanged); when both are that
/// large `a·b` overflows and `p` is infinite.
#[inline(always)]
fn dekker_product(a: f64, b: f64) -> (f64, f64) {
    let p = a * b;
    let (a, b) = if a.abs() > SPLIT_LIMIT {
        (a / SPLIT_SHIFT, b * SPLIT_SHIFT)
    } else if b.abs() > SPLIT_LIMIT {
        (a * SPLIT_SHIFT, b / SPLIT_SHIFT)
    } else {
        (a, b)
    };
    let (ah, al) = veltkamp(a);
    let (bh, bl) = veltkamp(b);
    let e = ((ah * bh - p) + ah * bl + al * bh) + al * bl;
    (p, e)
}

/// `(a − p) − e` with `p + e = x·y` exactly (Dekker's product): `a − p` is exact by Sterbenz's lemma (`p` is within
/// a factor of two of `a`), so the only rounding is the last one, of the exact `a − x·y` — the double the fused
/// operation gives. Near the overflow threshold `p` itself could overflow where the fused operation does not, so
/// an `a` above 2^1000 is scaled down by 2^54 first, with the larger factor (`a − x·y` scales with them, exactly:
/// nothing comes near the subnormal range).
#[inline(always)]
fn split_residual(a: f64, x: f64, y: f64) -> f64 {
    if a.abs() > RESIDUAL_LIMIT && a.is_finite() {
        let (x, y) = if x.abs() >= y.abs() { (x / SPLIT_SHIFT, y) } else { (x, y / SPLIT_SHIFT) };
        return split_residual(a / SPLIT_SHIFT, x, y) * SPLIT_SHIFT;
    }
    let (p, e) = dekker_product(x, y);
    (a - p) - e
}

impl Products {
    /// The products this build uses: [`Products::Fused`] where the target has a hardware fused multiply-add,
    /// [`Products::Split`] where `f64::mul_add` would be a software routine.
    pub const NATIVE: Products =
        if cfg!(any(target_feature = "fma", target_arch = "aarch64")) { Products::Fused } else { Products::Split };

    /// TwoProd: `p = RN(a·b)` and `e = a·b − p` exactly, when `a·b` neither overflows nor lies in the underflow
    /// margin (for both ways `e_a + e_b ≥ e_min + p − 1`, about `|a·b| ≥ 2^-969`, suffices: the error then lies on
    /// the grid of doubles — Handbook of Floating-Point Arithmetic, §4.4, from memory; the lenses keep a far wider
    /// margin, [`EFT_TINY`]).
    #[inline(always)]
    #[must_use]
    pub fn two_prod(self, a: f64, b: f64) -> (f64, f64) {
        match self {
            Products::Fused => {
                let p = a * b;
                (p, a.mul_add(b, -p)) // a·b − p, exact (IEEE 754-2019 fusedMultiplyAdd)
            }
            Products::Split => dekker_product(a, b),
        }
    }

    /// `RN(a − x·y)` for an `x·y` within a factor of two of `a` (a quotient's or a square root's residual), the
    /// same double both ways when TwoProd of `x·y` is exact; its sign is the sign of the exact `a − x·y`, which is
    /// all the directed roundings read.
    #[inline(always)]
    #[must_use]
    pub fn residual(self, a: f64, x: f64, y: f64) -> f64 {
        match self {
            Products::Fused => (-x).mul_add(y, a), // RN(a − x·y), one rounding
            Products::Split => split_residual(a, x, y),
        }
    }

    /// `a·b + c` rounded once ([`Products::Fused`]) or twice ([`Products::Split`]: `RN(RN(a·b) + c)`); only for
    /// terms whose error bound is derived for both.
    #[inline(always)]
    #[must_use]
    pub fn mul_acc(self, a: f64, b: f64, c: f64) -> f64 {
        match self {
            Products::Fused => a.mul_add(b, c),
            Products::Split => a * b + c,
        }
    }
}

// nextUp and nextDown (IEEE 754-2019) live in `twinstep-exact`, which the rewrite engine shares.
pub use twinstep_exact::{next_down, next_up};

/// `s` moved by `steps` ∈ {−1, 0, 1} units in the last place towards +∞ (−1: towards −∞), for a finite non-zero
/// `s`, as integer arithmetic on the bit pattern (IEEE 754-2019 §3.4: the encoding of same-signed doubles is
/// monotone in their magnitude, so a step away from zero adds one to it). `f64::MAX` steps to +∞, which is the
/// directed rounding of an overflow. Branch-free on purpose: whether a rounding error is positive is a coin
/// toss, and a branch on it mispredicts half the time.
#[inline(always)]
fn step(s: f64, steps: i64) -> f64 {
    let sign = (s.to_bits() >> 63) as i64; // 1 for negative s: a step towards +∞ shrinks the magnitude
    let delta = steps * (1 - 2 * sign);
    f64::from_bits(s.to_bits().wrapping_add(delta as u64))
}

/// The directed roundings of an exact value `s + e`, where `s` is its round-to-nearest double and `e` the exact
/// remainder (from an error-free transformation): roundTowardNegative is `s` unless `e < 0`, then the double
/// below `s`; roundTowardPositive likewise (IEEE 754-2019 §4.3.2). `e ≠ 0` implies `s ≠ 0` for the
/// transformations used here, so the one-ulp step on the bit pattern applies.
#[inline(always)]
#[must_use]
pub fn round_down(s: f64, e: f64) -> f64 {
    step(s, -i64::from(e < 0.0))
}

/// See [`round_down`]: `s + e` rounded towards +∞.
#[inline(always)]
#[must_use]
pub fn round_up(s: f64, e: f64) -> f64 {
    step(s, i64::from(e > 0.0))
}

/// Below this magnitude a product's or quotient's error term may underflow (its grid 2^(ea + eb − 104) would
/// drop below 2^-1074); 2^-900 keeps a wide margin, and such tiny values take the slow path.
pub const EFT_TINY: f64 = 1.0e-270; // ≈ 2^-897 > 2^-900

/// `a · b` as its round-to-nearest product and the exact error, or `None` when the error may not be exact
/// (non-finite product, or a product in the underflow margin [`EFT_TINY`] from non-zero factors).
#[inline(always)]
#[must_use]
pub fn exact_product(a: f64, b: f64) -> Option<(f64, f64)> {
    let (p, e) = two_prod(a, b);
    // An exact zero factor gives an exact zero product; otherwise |a·b| ≥ 2^-897 leaves the error on the grid. A
    // finite `e` rules out an overflow inside Dekker's partial products, whose high parts may exceed the factors.
    let exact = p.is_finite() && e.is_finite() && (p.abs() >= EFT_TINY || a == 0.0 || b == 0.0);
    exact.then_some((p, e))
}

/// `a / b` as its round-to-nearest quotient q and the sign of the exact remainder `a/b − q`, or `None` when the
/// residual may not be exact. The residual `a − q·b` is a double when nothing underflows (Bohlender, Walter,
/// Kornerup, Matula 1991, from memory), and [`Products::residual`] gives it exactly; `a/b − q = (a − q·b)/b`.
#[inline(always)]
#[must_use]
pub fn exact_quotient(a: f64, b: f64) -> Option<(f64, f64)> {
    let q = a / b;
    let residual = Products::NATIVE.residual(a, q, b); // a − q·b, exact
    let exact = q.is_finite()
        && b.is_finite()
        && b != 0.0
        && residual.is_finite()
        && (a == 0.0 || (q.abs() >= EFT_TINY && a.abs() >= EFT_TINY));
    // The remainder a/b − q has the sign of residual/b; its magnitude does not matter to the directed roundings.
    exact.then_some((q, if b > 0.0 { residual } else { -residual }))
}
