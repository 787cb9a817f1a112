//! [`Certified`]: the primal, the double-word shadow of [`super::Shadow`], and a *rigorous* bound of how far the
//! shadow is from exact arithmetic — a guarantee meant to last the whole time loop, when the
//! [`crate::certificate`] runner condenses it once per step.
//!
//! Within one step every value carries an *affine form* over the step's inputs (docs/lenses.md,
//! "Certified"): with `s` the inputs' shadows, `D` rigorous radii `|s_j − u_j| ≤ D_j` of the exact inputs `u`, and
//! `δ_j = ξ_j − s_j` for any `ξ` in the ball `B = {|ξ_j − s_j| ≤ D_j}`,
//!
//! `v(ξ) = ṽ + Σ_j c̃_j·δ_j + ε(ξ)`,  `|ε(ξ)| ≤ M`  for every `ξ ∈ B`,
//!
//! where `v(ξ)` is what exact arithmetic computes from the inputs `ξ` along the primal's path, `ṽ` the shadow,
//! `c̃_j` signed coefficients in `f64` (a list of at most `K` entries keyed by input id), and `M` (the
//! *remainder*) covers the shadow's own rounding, the rounding of the coefficients, the second-order terms of
//! nonlinear operations over the ball and the entries a full list had to drop. A second number `A ≥ Σ_j |c̃_j| D_j`
//! (the *linear spread*) gives the ball radius `R = A + M ≥ sup_B |v(ξ) − ṽ|` that decides comparisons. At the end
//! of a step the runner condenses each value: `|ṽ − v(u)| ≤ M + Σ_j |c̃_j|·D_j` — the coefficients of one input are
//! summed (with their signs) *before* the absolute value is taken, which is what keeps the bound from growing by
//! `1 + 4r` per step on `u[i] + r(u[i−1] − 2u[i] + u[i+1])`.
//!
//! Without the runner (no seeding), every list is empty and the lens is a rigorous midpoint–radius lens around the
//! shadow: valid, but with the dependency effect of [`super::Bound`].
//!
//! **The lists.** `K` slots; the runner gives every input a slot by a colouring of the grid (neighbours in a
//! stencil get different slots), so operations combine lists slot by slot, branch-free: the same id adds, an empty
//! slot takes the other's entry, and two different ids in one slot (a *clash*: the list is full for that colour)
//! keep the left entry and charge the right operand's whole spread `|β|·A_y` to the remainder — rigorous, and
//! costless in tightness unless the dropped input meets its own coefficient again later.
//!
//! **Rounding of the bounds.** `M` and `A` are formulas of non-negative doubles evaluated in round-to-nearest and
//! finished by `up`, which inflates them to upper bounds (the style of `Bound`'s `radius_of`, see
//! docs/lenses.md). The shadow's errors: sum and difference a posteriori (`eft::DoubleWord::add_bounded`), product
//! ≤ 6u² and quotient ≤ 24u² relative (Joldes, Muller, Popescu 2017 prove 4u² for DWTimesDW3 and 15u² + 56u³ for
//! DWDivDW2 — from memory, so with a margin, and checked on random and adversarial operands in exact rationals in
//! `tests/certified_ops.rs`), √ a posteriori from its exact residual, and the elementary functions evaluated at
//! 160 bits with dashu-float (correctly rounded: dashu-float 0.6 certifies its transcendentals with a Ziv loop over
//! proven error radii — the one assumption, stated in docs/lenses.md).
//!
//! **Decisions.** Comparisons, integer conversions, `floor` and the other step functions are decided on the ball
//! `ṽ ± R`; an undecided one records a `undecided_comparison` / `undecided_index` event at the caller's line, which
//! ends the certificate (the runner reads the events). `max`, `min` and `abs` need no decision: undecided, they
//! keep a rigorous value without coefficients (both are 1-Lipschitz), see [`CertifiedOf::select`].

use crate::events::{record, EventKind};
use crate::lens::eft::{mul_acc, next_down, next_up, two_prod, DoubleWord};
use crate::lens::reference::{constant_reference, Reference};
use crate::lens::scalar::{Core, Orders};
use crate::lens::shadow::{big, double_word, Big, ShadowOf};
use crate::lens::Lens;
use crate::Constant;

/// The unit roundoff of binary64, u = 2^-53.
const U: f64 = f64::EPSILON / 2.0;
/// u², the scale of the shadow's errors.
const U2: f64 = U * U;
/// 1 + 64u: with the final multiply-add of [`up`] (one rounding where the target has a hardware FMA, two where
/// not: `eft::mul_acc`), an upper bound of any non-negative formula of at most 60 roundings
/// ((1 − u)^62·(1 + 64u) ≥ (1 − 62u)(1 + 64u) > 1; Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd
/// ed., §3.1, from memory).
///
/// Every multiply-add of the bounds and coefficients below is `mul_acc`, whose analysis covers both ways: a build
/// with no `-C target-cpu` flag has no hardware FMA, and `f64::mul_add` there is a call into a software `fma`
/// (measured: an eighth of a certified audit of the demo).
const INFLATION: f64 = 1.0 + 64.0 * U;
/// The absolute term of every bound with a non-zero ingredient, 2^-1019: covers the η/2 = 2^-1075 an underflowing
/// product may lose at each of those 62 roundings, and stays normal (subnormal bounds cost a microcode assist, see
/// `Bound`'s floor).
const FLOOR: f64 = 8.0 * f64::MIN_POSITIVE;
/// Relative accuracy allowed for a 160-bit evaluation and its argument's rounding to 160 bits (2^-160 each; the
/// allowance is 2^-150).
const HIGH_PRECISION: f64 = 7.888609052210118e-31; // 2^-100 · 2^-50 = 2^-150

/// An upper bound of a non-negative formula `total` evaluated in round-to-nearest with at most 60 roundings.
/// `ingredients` is a sum of the formula's non-negative inputs: when it is 0 every input is 0, so the exact formula
/// is 0 and so is the bound (an operation on exact values stays exact).
#[inline(always)]
fn up(total: f64, ingredients: f64) -> f64 {
    let bound = mul_acc(total, INFLATION, FLOOR);
    if ingredients == 0.0 {
        0.0
    } else {
        bound
    }
}

/// The next double above a non-negative `x` that is not NaN (`next_up` without its branches for NaN, zero and
/// negative numbers: one step up the encoding, IEEE 754-2019 §3.4; +∞ stays +∞).
#[inline(always)]
fn next_up_nonnegative(x: f64) -> f64 {
    debug_assert!(x >= 0.0, "{x}");
    if x < f64::INFINITY {
        f64::from_bits(x.to_bits() + 1)
    } else {
        x
    }
}

/// The next double below `x` when `x > 0`, else 0: `max(next_down(x), 0)` for an `x` that is not NaN.
#[inline(always)]
fn next_down_to_nonnegative(x: f64) -> f64 {
    if x > 0.0 {
        // x = +∞ steps to the largest double, as nextDown does.
        f64::from_bits(x.to_bits() - 1)
    } else {
        0.0
    }
}

/// A NaN bound (∞ − ∞, 0·∞) is a lost one.
#[inline(always)]
fn lost_if_nan(bound: f64) -> f64 {
    if bound.is_nan() {
        f64::INFINITY
    } else {
        bound
    }
}

/// A value with its double-word shadow and the affine form that bounds the shadow's distance from exact arithmetic
/// (see the module paragraph). `K` is the number of list slots.
#[derive(Clone, Copy, Debug)]
pub struct CertifiedOf<const K: usize, const WATCH: bool> {
    primal: f64,
    shadow: DoubleWord,
    /// M: `|v(ξ) − ṽ − Σ c̃_j δ_j| ≤ M` over the ball.
    remainder: f64,
    /// A: `Σ_j |c̃_j|·D_j ≤ A`.
    linear: f64,
    /// The input id of each slot (meaningless where the coefficient is 0).
    ids: [u32; K],
    /// The coefficient of each slot; 0 marks an empty slot.
    coefs: [f64; K],
}

/// The lens with 8 slots, watching every operation for NaN/∞ (the variant to name in an audit).
pub type Certified = CertifiedOf<8, true>;
/// The lens with 8 slots, unwatched (what a runner executes; loops carry no per-operation NaN test).
pub type CertifiedUnwatched = CertifiedOf<8, false>;
/// 4 slots: enough for 1-D stencils of one field and three points (the benchmark's heat kernel).
pub type Certified4 = CertifiedOf<4, true>;
/// 4 slots, unwatched.
pub type Certified4Unwatched = CertifiedOf<4, false>;
/// 16 slots: wide 2-D stencils or several fields.
pub type Certified16 = CertifiedOf<16, true>;
/// 16 slots, unwatched.
pub type Certified16Unwatched = CertifiedOf<16, false>;

/// The operator surface of [`crate::lens_scalar!`] is written for a type `Lens<W>`; one alias per capacity.
pub type Certified4Of<const W: bool> = CertifiedOf<4, W>;
/// See [`Certified4Of`].
pub type Certified8Of<const W: bool> = CertifiedOf<8, W>;
/// See [`Certified4Of`].
pub type Certified16Of<const W: bool> = CertifiedOf<16, W>;

/// A smooth function of one variable, as the lens linearizes it.
struct Smooth {
    /// Whether the ball `[lo, hi]` lies where the function is smooth and the 160-bit evaluation is affordable
    /// (checked before evaluating: dashu-float would panic on a logarithm of a negative number).
    domain: fn(lo: f64, hi: f64) -> bool,
    /// f(x) and f′(x) at 160 bits.
    eval: fn(&Big) -> (Big, Big),
    /// An upper bound of |f″| over `[lo, hi]` for a ball of radius `radius` around a point where `|f| ≈ value`, or
    /// `None` when the ball leaves the domain (exact arithmetic could fail there).
    curvature: fn(lo: f64, hi: f64, radius: f64, value: f64) -> Option<f64>,
}

impl<const K: usize, const W: bool> CertifiedOf<K, W> {
    /// A primal with an explicit shadow `hi + lo` taken as exact (no coefficients, no remainder). The pair is
    /// normalized first (TwoSum, exact): the error bounds of the double-word product and quotient assume
    /// `|lo| ≤ ulp(hi)/2`.
    #[must_use]
    pub fn new(primal: f64, hi: f64, lo: f64) -> Self {
        let (hi, lo) = crate::lens::eft::two_sum(hi, lo);
        Self { primal, shadow: DoubleWord { hi, lo }, remainder: 0.0, linear: 0.0, ids: [0; K], coefs: [0.0; K] }
    }

    /// The primal and shadow as a [`ShadowOf`] value: its readers serve this lens too.
    #[inline(always)]
    fn as_shadow(self) -> ShadowOf<W> {
        ShadowOf::new(self.primal, self.shadow.hi, self.shadow.lo)
    }

    /// The shadow as the pair `(hi, lo)`.
    #[must_use]
    pub fn shadow(self) -> (f64, f64) {
        self.as_shadow().shadow()
    }

    /// `primal − shadow`, to double precision (the estimate of the primal's error, as the Shadow lens gives it).
    #[must_use]
    pub fn signed_error(self) -> f64 {
        self.as_shadow().signed_error()
    }

    /// `R = A + M`, rounded up: the exact value lies within `R` of the shadow (between steps, after the runner's
    /// condensation, this is the certificate's radius `D` of the value).
    #[inline]
    #[must_use]
    pub fn radius(self) -> f64 {
        let r = self.linear + self.remainder;
        if r == 0.0 {
            0.0
        } else if r.is_nan() {
            f64::INFINITY
        } else {
            next_up_nonnegative(r)
        }
    }

    /// The guaranteed interval of the primal's error: `|primal − exact| ∈ [lower, upper]`, from
    /// `| |p − ṽ| − |p − exact| | ≤ |ṽ − exact| ≤ R`, with `|p − ṽ|` computed with its own rounding accounted for
    /// and both ends rounded outward. `(0, ∞)` once the bound is lost.
    #[inline]
    #[must_use]
    pub fn guaranteed_error(self) -> (f64, f64) {
        let radius = self.radius();
        let DoubleWord { hi, lo } = self.shadow.canonical();
        if !(self.primal.is_finite() && hi.is_finite() && radius.is_finite()) {
            return (0.0, f64::INFINITY);
        }
        // p − ṽ = (s + t) − lo with s + t = p − hi exactly (TwoSum); w = RN(t − lo), e = RN(s + w):
        // |e − (p − ṽ)| ≤ u(|w| + |e|) (each rounding ≤ u·|result|).
        let (s, t) = crate::lens::eft::two_diff(self.primal, hi);
        let w = t - lo;
        let e = s + w;
        if w == 0.0 && e == 0.0 && radius == 0.0 {
            // With subnormals, RN(t − lo) = 0 only if t = lo (x ⊖ y = 0 ⇔ x = y under gradual underflow: Goldberg,
            // "What every computer scientist should know about floating-point arithmetic", 1991, from memory), and
            // then e = RN(s) = s: p = ṽ, the exact value is the shadow, so the error is exactly zero.
            return (0.0, 0.0);
        }
        // Both ends from non-negative finite terms (`radius` is finite here): the branch-free steps suffice.
        let slack = next_up_nonnegative(mul_acc(U * (w.abs() + e.abs()), INFLATION, FLOOR) + radius);
        let upper = next_up_nonnegative(e.abs() + slack);
        let lower = next_down_to_nonnegative(e.abs() - slack);
        (lower, upper)
    }

    /// The entries of the list: `(id, coefficient)` for every non-empty slot — the signed coefficients `c̃_j` of the
    /// affine form over the step's inputs.
    pub fn entries(&self) -> impl Iterator<Item = (u32, f64)> + '_ {
        self.ids.iter().zip(&self.coefs).filter(|(_, &c)| c != 0.0).map(|(&i, &c)| (i, c))
    }

    /// The remainder bound `M` of the affine form.
    #[must_use]
    pub fn remainder(self) -> f64 {
        self.remainder
    }

    /// Condensation at the end of a step (docs/lenses.md, "Certified"): `M + Σ_j |c̃_j|·D_j` over the list, with
    /// `D` looked up by input id, the ball radius `R` as the second rigorous choice, rounded up; the part
    /// `Σ_j |c̃_j| D_j` alone (the backward route's rounding term needs it); and `Σ_j |c̃_j| v_j` for the runner's
    /// power iteration on `|J̃|` — one pass over the slots for the three.
    #[inline]
    pub(crate) fn condensed(&self, radii: &[f64], probe: &[f64]) -> (f64, f64, f64) {
        let (mut spread, mut weight) = (0.0, 0.0);
        for k in 0..K {
            let c = self.coefs[k].abs();
            let id = self.ids[k] as usize;
            // An empty slot contributes nothing, whatever its stale id finds (0·∞ would be NaN).
            if c != 0.0 {
                spread += c * radii.get(id).copied().unwrap_or(f64::INFINITY);
                weight += c * probe.get(id).copied().unwrap_or(1.0);
            }
        }
        let spread = lost_if_nan(up(spread, spread));
        let total = lost_if_nan(up(self.remainder + spread, self.remainder + spread));
        (total.min(self.radius()), spread, weight)
    }

    /// Makes the value an input of a step: coefficient 1 on its own `id` in `slot`, spread `A = D`, remainder 0
    /// (the ball around its shadow has radius `D`). Written in place: building the value and copying it back
    /// made every wide load wait for the narrow stores before it (store forwarding).
    /// (For runners of their own and for tests; [`crate::certificate::Certificate`] seeds every input.)
    #[inline(always)]
    pub fn seed(&mut self, id: u32, slot: usize, d: f64) {
        self.coefs = [0.0; K];
        self.coefs[slot % K] = 1.0;
        self.ids[slot % K] = id;
        self.remainder = 0.0;
        self.linear = d;
    }

    /// A lost value: the primal and shadow as computed, no bound.
    fn unbounded(primal: f64, shadow: DoubleWord) -> Self {
        Self { primal, shadow, remainder: f64::INFINITY, linear: 0.0, ids: [0; K], coefs: [0.0; K] }
    }

    /// A value with no coefficients whose exact counterpart lies within `bound` of `shadow` over the ball.
    fn without_coefficients(primal: f64, shadow: DoubleWord, bound: f64) -> Self {
        Self { primal, shadow, remainder: lost_if_nan(bound), linear: 0.0, ids: [0; K], coefs: [0.0; K] }
    }

    /// `R` before rounding up, for the formulas (each is finished by [`up`]).
    #[inline(always)]
    fn ball_radius(self) -> f64 {
        self.linear + self.remainder
    }

    /// Doubles `lo ≤ v(ξ) ≤ hi` for every ξ of the ball. A point (R = 0) keeps the shadow's own doubles, so exact
    /// values decide exactly.
    #[inline]
    fn ball(self) -> (f64, f64) {
        let DoubleWord { hi, lo } = self.shadow.canonical();
        let radius = self.ball_radius();
        if radius == 0.0 {
            return if lo > 0.0 {
                (hi, next_up(hi))
            } else if lo < 0.0 {
                (next_down(hi), hi)
            } else {
                (hi, hi)
            };
        }
        if radius.is_nan() || !hi.is_finite() {
            return (f64::NEG_INFINITY, f64::INFINITY);
        }
        // c = RN(hi + lo) is within u|c| of the shadow; R ≤ radius·(1 + u); at most three roundings before the
        // ends step outward: (1 − u)³(1 + 4u) > 1.
        let c = hi + lo;
        let r = mul_acc(radius + U * c.abs(), 1.0 + 4.0 * U, FLOOR);
        (next_down(c - r), next_up(c + r))
    }

    /// The list of `α̃·x + β̃·y`, slot by slot, and whether a slot held two different inputs (then `x`'s entry is
    /// kept and `y`'s dropped; the caller charges `|β|·A_y`). Each coefficient is `mul_acc(α̃, cx, β̃·cy)`, two
    /// roundings with a hardware FMA and three without: within `u(2 + u)(|α̃ cx| + |β̃ cy|)` of `α̃ cx + β̃ cy`
    /// either way, and at most `(1 + u)²(|α̃ cx| + |β̃ cy|)` in size.
    #[inline(always)]
    fn combine(&self, alpha: f64, y: &Self, beta: f64) -> ([u32; K], [f64; K], bool) {
        let mut ids = [0u32; K];
        let mut coefs = [0.0f64; K];
        let mut clash = false;
        for k in 0..K {
            let (cx, cy) = (self.coefs[k], y.coefs[k]);
            let same = self.ids[k] == y.ids[k];
            let (x_has, y_has) = (cx != 0.0, cy != 0.0);
            let clashes = !same & x_has & y_has;
            clash |= clashes;
            ids[k] = if !same & !x_has { y.ids[k] } else { self.ids[k] };
            let both = mul_acc(alpha, cx, beta * cy);
            coefs[k] = if clashes { alpha * cx } else { both };
        }
        if clash {
            crate::events::note_list_clash::<Self>();
        }
        (ids, coefs, clash)
    }

    /// The value `z` of an operation whose exact result is, over the ball, `z̃ + α·(x − x̃) + β·(y − ỹ)` up to
    /// `local` (the shadow's rounding `|z̃ − z(x̃, ỹ)|` plus the second-order remainder), with `α̃`, `β̃` the
    /// coefficients used and `|α − α̃| ≤ alpha_err`, `|β − β̃| ≤ beta_err`. `local_ingredients` is 0 only when
    /// `local` is exactly 0 (see [`up`]).
    ///
    /// With `x − x̃ = Σ cx_j δ_j + εx`:
    /// `z − z̃ − Σ c̃z_j δ_j = (local) + α εx + β εy + (α − α̃) Σ cx δ + (β − β̃) Σ cy δ + (rounding of c̃z) + (dropped)`,
    /// so `M_z ≤ local + (|α̃| + α_err) M_x + (|β̃| + β_err) M_y + (α_err + 3u|α̃|) A_x + (β_err + 3u|β̃|) A_y`
    /// (+ `(|β̃| + β_err) A_y` after a clash), since the two roundings of `c̃z_j` cost at most
    /// `2u(1 + u)(|α̃ cx_j| + |β̃ cy_j|)`; and `A_z ≤ (1 + u)²(|α̃| A_x + |β̃| A_y)`.
    #[allow(clippy::too_many_arguments)]
    #[inline(always)]
    fn affine(
        primal: f64,
        shadow: DoubleWord,
        x: &Self,
        (alpha, alpha_err): (f64, f64),
        y: &Self,
        (beta, beta_err): (f64, f64),
        local: f64,
        local_ingredients: f64,
    ) -> Self {
        let (ids, coefs, clash) = x.combine(alpha, y, beta);
        let (a, b) = (alpha.abs(), beta.abs());
        let spread = mul_acc(a, x.linear, b * y.linear);
        let linear = up(spread, x.linear + y.linear);
        let dropped = if clash { (b + beta_err) * y.linear } else { 0.0 };
        let total = local
            + (a + alpha_err) * x.remainder
            + (b + beta_err) * y.remainder
            + mul_acc(3.0 * U, a, alpha_err) * x.linear
            + mul_acc(3.0 * U, b, beta_err) * y.linear
            + dropped;
        let ingredients = local_ingredients + x.remainder + y.remainder + x.linear + y.linear;
        // A NaN bound (∞ − ∞, 0·∞) propagates; the readers (`radius`, `ball`, the condensation) take it as lost.
        Self { primal, shadow, remainder: up(total, ingredients), linear, ids, coefs }
    }

    /// A value with no inputs: what `from_f64` and the literals give.
    #[inline(always)]
    fn constant(primal: f64, shadow: DoubleWord, remainder: f64) -> Self {
        Self { primal, shadow, remainder, linear: 0.0, ids: [0; K], coefs: [0.0; K] }
    }

    /// The same reference with another primal (functions composed from the lens's own operations keep the primal
    /// the float program computes).
    #[inline(always)]
    fn with_primal(mut self, primal: f64) -> Self {
        self.primal = primal;
        self
    }

    /// A lens value of a constant of `std::f64::consts`, as the real number (whatever the literal mode: it stands
    /// for the exact constant inside a composed function).
    fn real_constant(c: Constant) -> Self {
        <Self as Core>::with_reference(c.f64_value(), &constant_reference(c))
    }

    /// `x·y` where only the reference matters (composition); the primal is set by the caller.
    fn times(self, y: Self) -> Self {
        <Self as Core>::mul(self, y)
    }

    /// `(eˣ, e⁻ˣ)`, for the hyperbolic functions.
    fn exponentials(self) -> (Self, Self) {
        (<Self as Core>::exp(self), <Self as Core>::exp(<Self as Core>::neg(self)))
    }

    /// The sign of the ball: `Some(true)` when every exact value is > 0, `Some(false)` when every one is < 0.
    fn sign(self) -> Option<bool> {
        let (lo, hi) = self.ball();
        if lo > 0.0 {
            Some(true)
        } else if hi < 0.0 {
            Some(false)
        } else {
            None
        }
    }

    /// A smooth function of one variable: the shadow `f(x̃)` and the derivative `f′(x̃)` at 160 bits, rounded to a
    /// double-word and a double; `|f″| ≤ κ` over the ball gives the second-order remainder `κ R²/2` (Taylor's
    /// theorem with the Lagrange remainder).
    fn smooth(self, primal: f64, f: &Smooth) -> Self {
        let x = self.shadow;
        let (lo, hi) = self.ball();
        let argument = if (f.domain)(lo, hi) { big(x) } else { None };
        let Some(argument) = argument else {
            return Self::unbounded(primal, DoubleWord::from_f64(primal));
        };
        let (value, derivative) = (f.eval)(&argument);
        let shadow = double_word(&value);
        let alpha = derivative.to_f64().value();
        let radius = self.ball_radius() * (1.0 + 4.0 * U);
        // The 160-bit argument is within 2^-160|x̃| of x̃: the curvature is taken over that too.
        let widened = radius.max(HIGH_PRECISION * x.hi.abs());
        let (lo, hi) = (lo.min(x.hi - widened), hi.max(x.hi + widened));
        let Some(curvature) = (f.curvature)(lo, hi, widened, shadow.hi.abs()) else {
            return Self::unbounded(primal, shadow);
        };
        if !(shadow.is_finite() && alpha.is_finite() && curvature.is_finite()) {
            return Self::unbounded(primal, shadow);
        }
        // |shadow − f(x̃)|: rounding to double-word (≤ u|lo| ≤ 2u²|hi|) plus the 160-bit evaluation and the
        // argument's rounding (≤ 2^-150(|f| + |f′||x̃|) with room to spare).
        let rounding =
            mul_acc(2.0 * U2, shadow.hi.abs(), HIGH_PRECISION * (shadow.hi.abs() + alpha.abs() * x.hi.abs()));
        let alpha_err = mul_acc(2.0 * U, alpha.abs(), HIGH_PRECISION * (alpha.abs() + curvature * x.hi.abs()));
        let second_order = 0.5 * curvature * radius * radius;
        let ingredients = shadow.hi.abs() + x.hi.abs() + radius;
        let none = Self::exact(0.0);
        Self::affine(primal, shadow, &self, (alpha, alpha_err), &none, (0.0, 0.0), rounding + second_order, ingredients)
    }
}

/// Everywhere, for arguments of moderate size (a sine of 10¹⁰⁰ is exact in dashu-float but slow; beyond these
/// limits the value is lost rather than waited for).
fn moderate(lo: f64, hi: f64) -> bool {
    lo > -1e6 && hi < 1e6
}

/// exp (domain: e^x overflows binary64 beyond 709.8 and underflows below −745; the value is lost there): f′ = f; |f″| = e^t ≤ e^{x̃}·e^R ≤ |f(x̃)|(1 + 2R) for R ≤ 1 (convexity: e^R ≤ 1 + (e − 1)R).
const EXP: Smooth = Smooth {
    domain: |lo, hi| lo > -708.0 && hi < 708.0,
    eval: |x| {
        let v = x.exp();
        (v.clone(), v)
    },
    curvature: |_, _, radius, value| (radius <= 1.0).then_some(value * (1.0 + 2.0 * radius) * (1.0 + 8.0 * U)),
};

/// ln: f′ = 1/x; |f″| = 1/t² ≤ 1/lo² on a ball inside (0, ∞).
const LN: Smooth = Smooth {
    domain: |lo, hi| lo > 0.0 && hi < f64::INFINITY,
    eval: |x| (x.ln(), Big::ONE / x),
    curvature: |lo, _, _, _| (lo > 0.0).then(|| (1.0 / (lo * lo)) * (1.0 + 8.0 * U)),
};

/// sin: f′ = cos; |f″| ≤ 1.
const SIN: Smooth = Smooth { domain: moderate, eval: |x| x.sin_cos(), curvature: |_, _, _, _| Some(1.0) };

/// cos: f′ = −sin; |f″| ≤ 1.
const COS: Smooth = Smooth {
    domain: moderate,
    eval: |x| {
        let (s, c) = x.sin_cos();
        (c, -s)
    },
    curvature: |_, _, _, _| Some(1.0),
};

/// tanh: f′ = 1 − tanh²; |f″| = |2 tanh·sech²| ≤ 4/(3√3) < 1.
const TANH: Smooth = Smooth {
    domain: moderate,
    eval: |x| {
        let t = x.tanh();
        let d = Big::ONE - &t * &t;
        (t, d)
    },
    curvature: |_, _, _, _| Some(1.0),
};

/// atan: f′ = 1/(1 + x²); |f″| = 2|t|/(1 + t²)² ≤ 3√3/8 < 1.
const ATAN: Smooth = Smooth {
    domain: moderate,
    eval: |x| {
        let d = Big::ONE / (Big::ONE + x * x);
        (x.atan(), d)
    },
    curvature: |_, _, _, _| Some(1.0),
};

/// asin: f′ = 1/√(1 − x²); |f″| = |t|/(1 − t²)^{3/2} ≤ m/(1 − m²)^{3/2} with m = max|t| < 1.
const ASIN: Smooth = Smooth {
    domain: |lo, hi| lo > -1.0 && hi < 1.0,
    eval: |x| (x.asin(), Big::ONE / (Big::ONE - x * x).sqrt()),
    curvature: arcsine_curvature,
};

/// acos: f′ = −1/√(1 − x²); |f″| as for asin.
const ACOS: Smooth = Smooth {
    domain: |lo, hi| lo > -1.0 && hi < 1.0,
    eval: |x| (x.acos(), -(Big::ONE / (Big::ONE - x * x).sqrt())),
    curvature: arcsine_curvature,
};

fn arcsine_curvature(lo: f64, hi: f64, _: f64, _: f64) -> Option<f64> {
    let m = lo.abs().max(hi.abs()) * (1.0 + 2.0 * U);
    // 1 − m² from below, then its 3/2 power from below ((1 − 4u) covers the roundings of fl(√g)·g).
    let gap = (1.0 - m * m) * (1.0 - 2.0 * U);
    (gap > 0.0).then(|| m / (gap * gap.sqrt() * (1.0 - 4.0 * U)) * (1.0 + 4.0 * U))
}

/// `Σ` of the rounding errors of a residual computed by the additions `terms` (each partial result rounded to
/// nearest): `u·Σ|t_i|`.
#[inline(always)]
fn residual_rounding(terms: &[f64]) -> f64 {
    terms.iter().map(|t| t.abs()).sum::<f64>() * U
}

impl<const K: usize, const W: bool> Core for CertifiedOf<K, W> {
    const WATCH: bool = W;

    #[inline(always)]
    fn primal(self) -> f64 {
        self.primal
    }

    #[inline(always)]
    fn exact(value: f64) -> Self {
        Self::constant(value, DoubleWord::from_f64(value), 0.0)
    }

    #[inline(always)]
    fn with_reference(value: f64, reference: &Reference) -> Self {
        // The shadow hi + lo is within `err` of the number as written.
        Self::constant(value, DoubleWord { hi: reference.hi, lo: reference.lo }, up(reference.err, reference.err))
    }

    #[inline(always)]
    fn range(self) -> (f64, f64) {
        self.ball()
    }

    #[inline(always)]
    fn orders(self, rhs: Self) -> Orders {
        let (a_lo, a_hi) = self.ball();
        let (b_lo, b_hi) = rhs.ball();
        Orders::of_ranges(a_lo, a_hi, b_lo, b_hi)
    }

    #[inline(always)]
    fn add(self, rhs: Self) -> Self {
        let (shadow, error) = self.shadow.add_bounded(rhs.shadow);
        Self::affine(self.primal + rhs.primal, shadow, &self, (1.0, 0.0), &rhs, (1.0, 0.0), U * error, error)
    }

    #[inline(always)]
    fn sub(self, rhs: Self) -> Self {
        let (shadow, error) = self.shadow.sub_bounded(rhs.shadow);
        Self::affine(self.primal - rhs.primal, shadow, &self, (1.0, 0.0), &rhs, (-1.0, 0.0), U * error, error)
    }

    #[inline(always)]
    fn mul(self, rhs: Self) -> Self {
        let (x, y) = (self.shadow, rhs.shadow);
        let shadow = x * y;
        // x y − x̃ỹ = ỹ(x − x̃) + x̃(y − ỹ) + (x − x̃)(y − ỹ): α = ỹ ≈ yh (error |yl|), β = x̃ ≈ xh (error |xl|),
        // second order ≤ R_x·R_y; the double-word product errs by ≤ 4u² relative (JMP 2017), 6u² allowed.
        let second_order = self.ball_radius() * rhs.ball_radius();
        let local = mul_acc(6.0 * U2, shadow.hi.abs(), second_order);
        let ingredients = x.hi.abs().min(y.hi.abs()) + self.ball_radius().min(rhs.ball_radius());
        Self::affine(
            self.primal * rhs.primal,
            shadow,
            &self,
            (y.hi, y.lo.abs()),
            &rhs,
            (x.hi, x.lo.abs()),
            local,
            ingredients,
        )
    }

    #[inline]
    #[track_caller]
    fn div(self, rhs: Self) -> Self {
        let primal = self.primal / rhs.primal;
        let (x, y) = (self.shadow, rhs.shadow);
        let shadow = x / y;
        let (rx, ry) = (self.ball_radius(), rhs.ball_radius());
        // |ỹ| − R_y from below: |ỹ| ≥ |yh|(1 − u) ≥ fl(|yh|(1 − 2u)), and fl(t − R_y)(1 − 2u) ≤ t − R_y.
        let gap = ((y.hi.abs() * (1.0 - 2.0 * U)) - ry) * (1.0 - 2.0 * U);
        // (NaN compares false: a NaN gap is a lost divisor too.)
        let positive = gap > 0.0;
        if !positive || !shadow.is_finite() {
            if ry > 0.0 {
                record::<Self>(EventKind::DivisorMayBeZero); // the divisor's ball holds zero
            }
            return Self::unbounded(primal, shadow);
        }
        // x/y − q̃ = (X1 − q̃Y1)/ỹ − (X1 − q̃Y1)Y1/(y ỹ) with q̃ = x̃/ỹ, X1 = x − x̃, Y1 = y − ỹ (exact identity):
        // α = 1/ỹ ≈ fl(1/yh) within 2.001u|α̃|; β = −q̃/ỹ ≈ −fl(zh·α̃) within 4.2u|β̃|; second order
        // ≤ (R_x + |q̃|R_y)R_y/(|ỹ|(|ỹ| − R_y)). The quotient errs by ≤ 15u² + 56u³ relative (JMP 2017), 24u² allowed.
        let alpha = 1.0 / y.hi;
        let beta = -(shadow.hi * alpha);
        let q = shadow.hi.abs() * (1.0 + 4.0 * U);
        let second_order = (mul_acc(q, ry, rx) * ry) * (alpha.abs() * (1.0 + 8.0 * U)) / gap;
        let local = mul_acc(24.0 * U2, shadow.hi.abs(), second_order);
        let ingredients = x.hi.abs() + ry;
        Self::affine(
            primal,
            shadow,
            &self,
            (alpha, 3.0 * U * alpha.abs()),
            &rhs,
            (beta, 5.0 * U * beta.abs()),
            local,
            ingredients,
        )
    }

    #[inline]
    #[track_caller]
    fn rem(self, rhs: Self) -> Self {
        let c = self.primal % rhs.primal; // exact: c = x − q·y with q = trunc(x/y)
        let q = ((self.primal - c) / rhs.primal).round();
        // Along the primal's path the quotient stays q: x − q·y; exact arithmetic must truncate x/y to q too.
        let quotient = <Self as Core>::div(self, rhs);
        let (lo, hi) = quotient.ball();
        if q.is_finite() && (lo.trunc() != q || hi.trunc() != q) {
            record::<Self>(EventKind::UndecidedComparison);
        }
        <Self as Core>::sub(self, <Self as Core>::exact(q).times(rhs)).with_primal(c)
    }

    #[inline(always)]
    fn neg(self) -> Self {
        let mut out = self;
        out.primal = -self.primal;
        out.shadow = -self.shadow;
        for c in &mut out.coefs {
            *c = -*c;
        }
        out
    }

    #[inline(always)]
    fn mul_add(self, a: Self, b: Self) -> Self {
        // The shadow computes x·a + b as a product and a sum (DoubleWord::mul_add); the primal rounds once.
        <Self as Core>::add(<Self as Core>::mul(self, a), b).with_primal(self.primal.mul_add(a.primal, b.primal))
    }

    #[inline]
    fn abs(self) -> Self {
        let primal = self.primal.abs();
        match self.sign() {
            Some(true) => self.with_primal(primal),
            Some(false) => <Self as Core>::neg(self).with_primal(primal),
            None => {
                let (lo, hi) = self.ball();
                if lo == hi {
                    // A point: |x| exactly, no decision needed.
                    let shadow = if self.shadow.hi < 0.0 { -self.shadow } else { self.shadow };
                    return Self { primal, shadow, ..self };
                }
                // | |x(ξ)| − |x̃| | ≤ |x(ξ) − x̃| ≤ R: 1-Lipschitz, no coefficients.
                let shadow = if self.shadow.hi < 0.0 { -self.shadow } else { self.shadow };
                Self::without_coefficients(primal, shadow, up(self.ball_radius(), self.ball_radius()))
            }
        }
    }

    #[track_caller]
    fn sqrt(self) -> Self {
        let primal = self.primal.sqrt();
        let x = self.shadow;
        let shadow = x.sqrt();
        let radius = self.ball_radius();
        if x.hi == 0.0 && x.lo == 0.0 && radius == 0.0 {
            return Self::constant(primal, DoubleWord::from_f64(0.0), 0.0); // √0, exactly
        }
        // The ball inside (0, ∞): x̃ − R from below.
        let low = ((x.hi * (1.0 - 2.0 * U)) - radius * (1.0 + 2.0 * U)) * (1.0 - 2.0 * U);
        let inside = low > 1e-250; // false for NaN too
        if !inside || !shadow.is_finite() || shadow.hi <= 0.0 {
            // Exact arithmetic may take the root of a negative number (or the residual below may underflow).
            return Self::unbounded(primal, shadow);
        }
        let (zh, zl) = (shadow.hi, shadow.lo);
        // Residual z̃² − x̃ = (p − xh) + e + q + f + zl² − xl with (p, e) = TwoProd(zh, zh), (q, f) = TwoProd(2zh, zl)
        // exact; p − xh is exact (Sterbenz: p is within a factor 2 of xh); the other additions round to nearest.
        let (p, e) = two_prod(zh, zh);
        let (q, f) = two_prod(2.0 * zh, zl);
        let g = zl * zl;
        let t1 = p - x.hi;
        let t2 = t1 + e;
        let t3 = t2 + q;
        let t4 = t3 - x.lo;
        let t5 = t4 + f;
        let t6 = t5 + g;
        let residual = t6.abs() + residual_rounding(&[t2, t3, t4, t5, t6, g]);
        // |z̃ − √x̃| = |z̃² − x̃|/(z̃ + √x̃) ≤ |residual|/z̃, z̃ ≥ zh(1 − u).
        let rounding = residual / (zh * (1.0 - 2.0 * U));
        // α = 1/(2√x̃) ≈ fl(0.5/zh): √x̃ is within |zl| + rounding ≤ (u + rounding/zh)·zh of zh.
        let alpha = 0.5 / zh;
        let alpha_err = alpha * (3.0 * U + 3.0 * rounding / zh);
        // |f″| = 1/(4 t^{3/2}) ≤ 1/(4 low^{3/2}): second order ≤ R²/(8 low^{3/2}).
        let low32 = low * low.sqrt() * (1.0 - 4.0 * U);
        let second_order = radius * radius / (8.0 * low32) * (1.0 + 4.0 * U);
        let ingredients = t6.abs() + t2.abs() + t3.abs() + t4.abs() + t5.abs() + g.abs() + radius;
        let none = Self::exact(0.0);
        Self::affine(primal, shadow, &self, (alpha, alpha_err), &none, (0.0, 0.0), rounding + second_order, ingredients)
    }

    #[track_caller]
    fn cbrt(self) -> Self {
        // ∛x = ±exp(ln|x|/3) for a ball of one sign; 0 stays 0.
        let primal = self.primal.cbrt();
        if self.ball() == (0.0, 0.0) {
            return Self::constant(primal, DoubleWord::from_f64(0.0), 0.0);
        }
        let third = <Self as Core>::div(Self::exact(1.0), Self::exact(3.0));
        match self.sign() {
            Some(true) => self.ln().times(third).exp().with_primal(primal),
            Some(false) => <Self as Core>::neg(<Self as Core>::neg(self).ln().times(third).exp()).with_primal(primal),
            None => Self::unbounded(primal, DoubleWord::from_f64(primal)),
        }
    }

    #[track_caller]
    fn exp(self) -> Self {
        self.smooth(self.primal.exp(), &EXP)
    }

    #[track_caller]
    fn exp2(self) -> Self {
        // 2^x = e^{x ln 2}
        self.times(Self::real_constant(Constant::LN_2)).exp().with_primal(self.primal.exp2())
    }

    #[track_caller]
    fn exp_m1(self) -> Self {
        <Self as Core>::sub(self.exp(), Self::exact(1.0)).with_primal(self.primal.exp_m1())
    }

    #[track_caller]
    fn ln(self) -> Self {
        self.smooth(self.primal.ln(), &LN)
    }

    #[track_caller]
    fn ln_1p(self) -> Self {
        <Self as Core>::add(self, Self::exact(1.0)).ln().with_primal(self.primal.ln_1p())
    }

    #[track_caller]
    fn log2(self) -> Self {
        self.ln().times(Self::real_constant(Constant::LOG2_E)).with_primal(self.primal.log2())
    }

    #[track_caller]
    fn log10(self) -> Self {
        self.ln().times(Self::real_constant(Constant::LOG10_E)).with_primal(self.primal.log10())
    }

    #[track_caller]
    fn sin(self) -> Self {
        self.smooth(self.primal.sin(), &SIN)
    }

    #[track_caller]
    fn cos(self) -> Self {
        self.smooth(self.primal.cos(), &COS)
    }

    #[track_caller]
    fn tan(self) -> Self {
        <Self as Core>::div(self.sin(), self.cos()).with_primal(self.primal.tan())
    }

    #[track_caller]
    fn asin(self) -> Self {
        self.smooth(self.primal.asin(), &ASIN)
    }

    #[track_caller]
    fn acos(self) -> Self {
        self.smooth(self.primal.acos(), &ACOS)
    }

    #[track_caller]
    fn atan(self) -> Self {
        self.smooth(self.primal.atan(), &ATAN)
    }

    #[track_caller]
    fn sinh(self) -> Self {
        let (e, f) = self.exponentials();
        <Self as Core>::sub(e, f).times(Self::exact(0.5)).with_primal(self.primal.sinh())
        // (eˣ − e⁻ˣ)/2
    }

    #[track_caller]
    fn cosh(self) -> Self {
        let (e, f) = self.exponentials();
        <Self as Core>::add(e, f).times(Self::exact(0.5)).with_primal(self.primal.cosh())
        // (eˣ + e⁻ˣ)/2
    }

    #[track_caller]
    fn tanh(self) -> Self {
        self.smooth(self.primal.tanh(), &TANH)
    }

    #[track_caller]
    fn powi(self, n: i32) -> Self {
        // Binary powering with the lens's products, as the shadow does; x⁻ⁿ = 1/xⁿ.
        let mut base = self;
        let mut result = Self::exact(1.0);
        let mut k = n.unsigned_abs();
        while k > 0 {
            if k & 1 == 1 {
                result = result.times(base);
            }
            base = base.times(base);
            k >>= 1;
        }
        let result = if n < 0 { <Self as Core>::div(Self::exact(1.0), result) } else { result };
        result.with_primal(self.primal.powi(n))
    }

    #[track_caller]
    fn powf(self, n: Self) -> Self {
        let primal = self.primal.powf(n.primal);
        let exponent = n.shadow;
        if n.ball_radius() == 0.0 && exponent.lo == 0.0 && exponent.hi.fract() == 0.0 && exponent.hi.abs() <= 1024.0 {
            return <Self as Core>::powi(self, exponent.hi as i32).with_primal(primal);
        }
        // x^y = e^{y ln x} for x > 0.
        n.times(self.ln()).exp().with_primal(primal)
    }

    #[track_caller]
    fn log(self, base: Self) -> Self {
        <Self as Core>::div(self.ln(), base.ln()).with_primal(self.primal.log(base.primal))
    }

    #[track_caller]
    fn atan2(self, other: Self) -> Self {
        // atan2(y, x) = atan(y/x) for x > 0, atan(y/x) ± π for x < 0 (the sign of y), ±π/2 − atan(x/y) for y ≠ 0.
        let primal = self.primal.atan2(other.primal);
        let pi = Self::real_constant(Constant::PI);
        let half_pi = Self::real_constant(Constant::FRAC_PI_2);
        let reference = match (other.sign(), self.sign()) {
            (Some(true), _) => <Self as Core>::div(self, other).atan(),
            (Some(false), Some(true)) => <Self as Core>::add(<Self as Core>::div(self, other).atan(), pi),
            (Some(false), Some(false)) => <Self as Core>::sub(<Self as Core>::div(self, other).atan(), pi),
            (None, Some(true)) => <Self as Core>::sub(half_pi, <Self as Core>::div(other, self).atan()),
            (None, Some(false)) => {
                <Self as Core>::sub(<Self as Core>::neg(half_pi), <Self as Core>::div(other, self).atan())
            }
            _ => Self::unbounded(primal, DoubleWord::from_f64(primal)),
        };
        reference.with_primal(primal)
    }

    #[track_caller]
    fn hypot(self, other: Self) -> Self {
        let sum = <Self as Core>::add(self.times(self), other.times(other));
        <Self as Core>::sqrt(sum).with_primal(self.primal.hypot(other.primal))
    }

    /// `max`/`min` need no decision: when the balls are ordered, the exact result is one operand for every ξ and
    /// keeps its coefficients; otherwise `|max(x, y) − max(x̃, ỹ)| ≤ max(|x − x̃|, |y − ỹ|) ≤ max(R_x, R_y)` (and
    /// likewise for `min`), a value without coefficients. The primal is `f64`'s answer, bit for bit.
    #[inline]
    #[track_caller]
    fn select(self, other: Self, choose: fn(f64, f64) -> f64) -> Self {
        let primal = choose(self.primal, other.primal);
        crate::lens::scalar::note_unseen::<Self>(self.primal.is_finite() && other.primal.is_finite());
        let is_max = choose(0.0, 1.0) == 1.0;
        let ((x_lo, x_hi), (y_lo, y_hi)) = (self.ball(), other.ball());
        let (x_wins, y_wins) = if is_max { (x_lo >= y_hi, y_lo >= x_hi) } else { (x_hi <= y_lo, y_hi <= x_lo) };
        if x_wins {
            return self.with_primal(primal);
        }
        if y_wins {
            return other.with_primal(primal);
        }
        let x_larger = matches!(self.shadow.partial_cmp(other.shadow), Some(core::cmp::Ordering::Greater));
        let shadow = if x_larger == is_max { self.shadow } else { other.shadow };
        let (rx, ry) = (self.ball_radius(), other.ball_radius());
        let bound = if rx.is_nan() || ry.is_nan() { f64::NAN } else { rx.max(ry) };
        Self::without_coefficients(primal, shadow, up(bound, bound))
    }
}

crate::lens_scalar!(Certified4Of);
crate::lens_scalar!(Certified8Of);
crate::lens_scalar!(Certified16Of);

impl<const K: usize, const W: bool> core::fmt::Display for CertifiedOf<K, W> {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let (hi, lo) = self.shadow();
        write!(f, "{} (shadow {:e} {:+e} ± {:e})", self.primal, hi, lo, self.radius())
    }
}

/// The lens's name in traces and reports, by capacity and variant.
const fn certified_name(k: usize, watched: bool) -> &'static str {
    match (k, watched) {
        (4, true) => "certified4",
        (4, false) => "certified4-unwatched",
        (16, true) => "certified16",
        (16, false) => "certified16-unwatched",
        (_, true) => "certified",
        (_, false) => "certified-unwatched",
    }
}

macro_rules! certified_lens {
    ($($k:literal)*) => {$(
        impl<const W: bool> Lens for CertifiedOf<$k, W> {
            const NAME: &'static str = certified_name($k, W);
            const GUARANTEED: bool = true;
            type Unwatched = CertifiedOf<$k, false>;
            type Watched = CertifiedOf<$k, true>;

            #[inline(always)]
            fn unwatched(self) -> CertifiedOf<$k, false> {
                let CertifiedOf { primal, shadow, remainder, linear, ids, coefs } = self;
                CertifiedOf { primal, shadow, remainder, linear, ids, coefs }
            }

            #[inline(always)]
            fn watched(self) -> CertifiedOf<$k, true> {
                let CertifiedOf { primal, shadow, remainder, linear, ids, coefs } = self;
                CertifiedOf { primal, shadow, remainder, linear, ids, coefs }
            }

            fn error_estimate(self) -> f64 {
                self.signed_error().abs()
            }

            fn error_bound(self) -> Option<f64> {
                Some(self.guaranteed_error().1)
            }

            fn reference_value(self) -> f64 {
                self.shadow.to_f64()
            }
        }
    )*};
}
certified_lens!(4 8 16);
