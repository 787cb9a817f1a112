//! Properties of the lenses against arbitrary-precision oracles (dashu), for random operands:
//! - the exact result of + − × ÷ √ and fma (dashu-ratio exact rationals) lies inside the `Bound` ball and the
//!   `Interval` enclosure, for exact operands and for operands that already carry a radius;
//! - exp, ln, sin, cos, tanh evaluated by dashu-float at 256 bits (its error, below 2^-240 relative, is far
//!   below any radius, which is at least u·|value|) lie inside both enclosures;
//! - the `Shadow` agrees with the exact result of + − × ÷ to 100 bits (Joldes, Muller, Popescu 2017 prove
//!   ≤ 15u² ≈ 2^-102 relative for these operations, from memory).

use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use dashu_ratio::RBig;
use proptest::prelude::*;
use twinstep::lens::{Bound, Enclosure, Interval, Lens, Shadow};
use twinstep::Real;

type Big = FBig<HalfEven>;

fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite operand")
}

/// A double, exactly, with room for exact sums of doubles (2100 bits span the whole double range).
fn big(x: f64) -> Big {
    Big::try_from(x).expect("finite").with_precision(2200).value()
}

/// Random doubles with random magnitudes between 2^-40 and 2^40, either sign.
fn operand() -> impl Strategy<Value = f64> {
    (-1.0f64..1.0, -40i32..40).prop_map(|(m, e)| m * 2f64.powi(e)).prop_filter("non-zero", |x| *x != 0.0)
}

/// A position inside an enclosure, as a fraction t ∈ [0, 1] in quarters (exact in binary).
fn position() -> impl Strategy<Value = u8> {
    0u8..=4
}

/// A lens value with a radius of 2^-k relative, and the exact value it stands for: lo + t·(hi − lo).
struct Uncertain {
    bound: Bound,
    interval: Interval,
    exact: RBig,
}

fn uncertain(p: f64, k: i32, t: u8) -> Uncertain {
    let r = p.abs() * 2f64.powi(-k);
    let enclosure = Enclosure::new(p - r, p + r).expect("ordered");
    let (lo, hi) = (rational(enclosure.inf()), rational(enclosure.sup()));
    let exact = &lo + (&hi - &lo) * RBig::from(t) / RBig::from(4);
    // The ball must hold the whole enclosure: its radius is the larger distance from p, rounded up.
    let radius = f64::max(p - enclosure.inf(), enclosure.sup() - p) * (1.0 + f64::EPSILON);
    Uncertain { bound: Bound::new(p, radius), interval: Interval::new(p, enclosure), exact }
}

fn assert_bound_holds(out: Bound, exact: &RBig, what: &str) -> Result<(), TestCaseError> {
    let distance = (rational(out.primal()) - exact).to_f64().value().abs();
    // `to_f64` rounds the distance to nearest; compare with a margin of one relative ulp in the distance's favour.
    prop_assert!(distance * (1.0 - f64::EPSILON) <= out.radius(), "{what}: {out} misses {}", exact.to_f64().value());
    Ok(())
}

fn assert_interval_holds(out: Interval, exact: &RBig, what: &str) -> Result<(), TestCaseError> {
    let e = out.enclosure();
    let above_inf = e.inf() == f64::NEG_INFINITY || rational(e.inf()) <= *exact;
    let below_sup = e.sup() == f64::INFINITY || *exact <= rational(e.sup());
    prop_assert!(above_inf && below_sup, "{what}: {out} misses {}", exact.to_f64().value());
    // The lens's promise to the audit (`Lens::error_bound`): |primal − exact| ≤ bound, checked in exact rationals.
    let bound = out.error_bound().expect("the interval lens has a bound");
    if bound.is_finite() && out.primal().is_finite() {
        let distance = rational(out.primal()) - exact;
        let distance = if distance < RBig::ZERO { -distance } else { distance };
        prop_assert!(distance <= rational(bound), "{what}: {out} bound {bound:e} below the distance");
    }
    Ok(())
}

/// Runs one binary operation on both guaranteed lenses and checks the exact result.
macro_rules! check_binary {
    ($x:expr, $y:expr, $op:tt, $name:expr) => {{
        let (x, y) = (&$x, &$y);
        let exact = &x.exact $op &y.exact;
        assert_bound_holds(x.bound $op y.bound, &exact, $name)?;
        assert_interval_holds(x.interval $op y.interval, &exact, $name)?;
    }};
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(512))]

    #[test]
    fn arithmetic_encloses_the_exact_result(a in operand(), b in operand(), ka in 0i32..60, kb in 0i32..60,
                                            ta in position(), tb in position(), exact_inputs in any::<bool>()) {
        let (ka, kb) = if exact_inputs { (2000, 2000) } else { (ka, kb) }; // 2^-2000 underflows: radius 0
        let (x, y) = (uncertain(a, ka, ta), uncertain(b, kb, tb));
        check_binary!(x, y, +, "add");
        check_binary!(x, y, -, "sub");
        check_binary!(x, y, *, "mul");
        if kb >= 2 {
            // The divisor's enclosure excludes zero (radius ≤ |b|/4).
            check_binary!(x, y, /, "div");
        }
        // Mixed with a plain f64 on either side, as kernels write `dx * u[i]`.
        let exact = &x.exact * rational(b);
        assert_bound_holds(x.bound * b, &exact, "bound * f64")?;
        // The exact left operand (radius 0) takes the lens's shortcut for a coefficient times data.
        assert_bound_holds(b * x.bound, &exact, "f64 * bound")?;
        assert_bound_holds(Bound::from_f64(b) * x.bound + x.bound, &(&exact + &x.exact), "exact * bound + bound")?;
        assert_interval_holds(b * x.interval, &exact, "f64 * interval")?;
    }

    #[test]
    fn fma_encloses_the_exact_result(a in operand(), b in operand(), c in operand(), k in 0i32..60, t in position()) {
        let (x, y, z) = (uncertain(a, k, t), uncertain(b, k + 3, 4 - t), uncertain(c, k + 7, t));
        let exact = &x.exact * &y.exact + &z.exact;
        assert_bound_holds(x.bound.mul_add(y.bound, z.bound), &exact, "fma")?;
        assert_interval_holds(x.interval.mul_add(y.interval, z.interval), &exact, "fma")?;
    }

    #[test]
    fn sqrt_encloses_the_exact_root(a in operand(), k in 1i32..60, t in position()) {
        let x = uncertain(a.abs(), k, t);
        // √X ∈ [lo, hi] with lo ≥ 0  ⟺  lo² ≤ X ≤ hi² (exact rational squares).
        let ball = x.bound.sqrt();
        let (lo, hi) = (ball.primal() - ball.radius(), ball.primal() + ball.radius());
        let (lo, hi) = (rational(lo.max(0.0)), rational(hi));
        prop_assert!(&lo * &lo <= x.exact && x.exact <= &hi * &hi, "bound sqrt {ball}");
        let e = x.interval.sqrt().enclosure();
        let (lo, hi) = (rational(e.inf()), rational(e.sup()));
        prop_assert!(&lo * &lo <= x.exact && x.exact <= &hi * &hi, "interval sqrt {e:?}");
    }

    #[test]
    fn shadow_agrees_to_100_bits(a in operand(), b in operand(), la in -1.0f64..1.0, lb in -1.0f64..1.0) {
        // Double-word operands hi + lo with |lo| ≤ ulp(hi)/2.
        let (xl, yl) = (la * a.abs() * f64::EPSILON / 2.0, lb * b.abs() * f64::EPSILON / 2.0);
        let x = Shadow::new(a, a, xl);
        let y = Shadow::new(b, b, yl);
        let (xe, ye) = (rational(a) + rational(xl), rational(b) + rational(yl));
        let tolerance = RBig::from(1) / RBig::from(dashu_int::UBig::ONE << 100); // 2^-100
        // × and ÷ within 2^-100 of the exact result, relative to it (JMP 2017's bounds 4u² and 15u² + 56u³, from
        // memory); + and − within 2^-100 relative to the operands |x| + |y| (the bound (3 + 2u)u²(|xh| + |yh|)
        // derived beside `eft::dw_sum`; tests/lens_shadow_sum.rs checks it under cancellation).
        let operands = (rational(a.abs()) + rational(b.abs())) * &tolerance;
        let cases = [(x + y, &xe + &ye, "add", false), (x - y, &xe - &ye, "sub", false),
                     (x * y, &xe * &ye, "mul", true), (x / y, &xe / &ye, "div", true)];
        for (out, exact, what, relative_to_result) in cases {
            let (hi, lo) = out.shadow();
            let shadow = rational(hi) + rational(lo);
            let error = shadow - &exact;
            let error = if error < RBig::ZERO { -error } else { error };
            let allowed = if relative_to_result {
                if exact < RBig::ZERO { -&exact * &tolerance } else { &exact * &tolerance }
            } else {
                operands.clone()
            };
            prop_assert!(error <= allowed, "{what}: error {:e}", error.to_f64().value());
        }
    }
}

/// The dashu-float value of X = lo + t(hi − lo) (as in [`uncertain`]) for the elementary-function checks.
fn big_exact(p: f64, k: i32, t: u8) -> Big {
    let r = p.abs() * 2f64.powi(-k);
    let e = Enclosure::new(p - r, p + r).expect("ordered");
    let (lo, hi) = (big(e.inf()), big(e.sup()));
    &lo + (&hi - &lo) * Big::from(t) / Big::from(4u8)
}

fn assert_encloses(bound: Bound, interval: Interval, value: &Big, what: &str) -> Result<(), TestCaseError> {
    let (c, r) = (big(bound.primal()), big(bound.radius()));
    prop_assert!(&c - &r <= *value && *value <= &c + &r, "{what}: bound {bound} misses {}", value.to_f64().value());
    let e = interval.enclosure();
    prop_assert!(
        big(e.inf()) <= *value && *value <= big(e.sup()),
        "{what}: interval {interval} misses {}",
        value.to_f64().value()
    );
    Ok(())
}

/// The 256-bit dashu-float value of a function at X.
fn oracle(x: &Big, f: fn(&Big) -> Big) -> Big {
    f(&x.clone().with_precision(256).value())
}

macro_rules! check_function {
    ($p:expr, $k:expr, $t:expr, $name:ident) => {{
        let x = uncertain($p, $k, $t);
        let value = oracle(&big_exact($p, $k, $t), Big::$name);
        assert_encloses(x.bound.$name(), x.interval.$name(), &value, stringify!($name))?;
        let point = oracle(&big($p), Big::$name);
        assert_encloses(Bound::from_f64($p).$name(), Interval::from_f64($p).$name(), &point, stringify!($name))?;
    }};
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(128))]

    #[test]
    fn exp_encloses(p in -50.0f64..50.0, k in 10i32..60, t in position()) {
        check_function!(p, k, t, exp);
    }

    #[test]
    fn ln_encloses(m in 0.5f64..1.0, e in -30i32..30, k in 10i32..60, t in position()) {
        check_function!(m * 2f64.powi(e), k, t, ln);
    }

    #[test]
    fn sin_cos_enclose(p in -100.0f64..100.0, k in 10i32..60, t in position()) {
        check_function!(p, k, t, sin);
        check_function!(p, k, t, cos);
    }

    #[test]
    fn tanh_encloses(p in -20.0f64..20.0, k in 10i32..60, t in position()) {
        check_function!(p, k, t, tanh);
    }
}

/// The shadow of a function at a double x against the 256-bit dashu-float value (the oracle): relative agreement
/// to 2^-90 (double-word evaluation, about 100 bits, the accuracy `src/lens/dwmath.rs` documents for its own
/// algorithms; common practice, no source for the margin of 10 bits).
fn assert_shadow_accurate(out: Shadow, value: &Big, what: &str) -> Result<(), TestCaseError> {
    let (hi, lo) = out.shadow();
    let shadow = big(hi) + big(lo);
    let difference = (&shadow - value).to_f64().value().abs();
    let magnitude = value.to_f64().value().abs();
    prop_assert!(difference <= magnitude * 2f64.powi(-90), "{what}: shadow {out} vs {:e}", value.to_f64().value());
    Ok(())
}

macro_rules! check_shadow {
    ($x:expr, $name:ident) => {{
        let value = oracle(&big($x), Big::$name);
        assert_shadow_accurate(Shadow::from_f64($x).$name(), &value, stringify!($name))?;
    }};
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(128))]

    #[test]
    fn shadow_functions_agree_to_90_bits(p in -30.0f64..30.0, m in 0.5f64..1.0, e in -30i32..30, q in -0.99f64..0.99) {
        check_shadow!(p, exp);
        check_shadow!(p, sin);
        check_shadow!(p, cos);
        check_shadow!(p, tanh);
        check_shadow!(p, atan);
        check_shadow!(p, sinh);
        check_shadow!(m * 2f64.powi(e), ln);
        check_shadow!(q, asin);
        check_shadow!(q, acos);
        check_shadow!(q * 1e-3, exp_m1);
        check_shadow!(q * 1e-3, ln_1p);
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(96))]

    #[test]
    fn more_functions_enclose(p in -3.0f64..3.0, q in -0.95f64..0.95, k in 10i32..60, t in position()) {
        check_function!(p, k, t, atan);
        check_function!(p, k, t, sinh);
        check_function!(p, k, t, cosh);
        check_function!(p * 0.5, k, t, tan);
        check_function!(q, k, t, asin);
        check_function!(q, k, t, acos);
        check_function!(q * 1e-3, k, t, exp_m1);
        check_function!(q * 1e-3, k, t, ln_1p);
    }

    #[test]
    fn binary_functions_enclose(a in 0.1f64..10.0, b in -3.0f64..3.0, k in 10i32..60, t in position()) {
        let (x, y) = (uncertain(a, k, t), uncertain(b, k + 5, 4 - t));
        let (xb, yb) = (big_exact(a, k, t), big_exact(b, k + 5, 4 - t));
        let at = |v: &Big| v.clone().with_precision(256).value();
        assert_encloses(x.bound.powf(y.bound), x.interval.powf(y.interval), &at(&xb).powf(&at(&yb)), "powf")?;
        assert_encloses(x.bound.hypot(y.bound), x.interval.hypot(y.interval), &at(&xb).hypot(&at(&yb)), "hypot")?;
        assert_encloses(y.bound.atan2(x.bound), y.interval.atan2(x.interval), &at(&yb).atan2(&at(&xb)), "atan2")?;
        let n = (b * 3.0) as i32;
        assert_encloses(x.bound.powi(n), x.interval.powi(n), &at(&xb).powi(n.into()), "powi")?;
    }

    #[test]
    fn integers_convert_exactly(v in any::<i64>(), w in any::<u64>()) {
        // `n as f64` rounds; the reference holds the integer itself (dashu-ratio exact comparison).
        let b = Bound::from_i128(i128::from(v) << 40);
        assert_bound_holds(b, &(RBig::from(v) * RBig::from(1u64 << 40)), "from_i128")?;
        let i = Interval::from_u128(u128::from(w));
        assert_interval_holds(i, &RBig::from(w), "from_u128")?;
    }
}

#[test]
fn constants_are_enclosed_tightly() {
    use dashu_float::round::mode::{Down, Up};
    use twinstep::Constant;
    // Each constant's enclosure must be the two adjacent doubles around the real number: its value at 256 bits
    // by dashu-float (π and e by its own routines, the rest from ln 2, ln 10 and √2 as in `std::f64::consts`'
    // definitions), rounded to 53 bits down and up by dashu-float's directed rounding — an independent
    // computation from the one the lens's constant table makes (which rounds to nearest and compares). A 300-bit
    // value could round across a double only if the constant lay within 2^-299 (relative) of one.
    let at = |bits: usize, c: Constant| -> Big {
        let n = |k: u32| Big::from(k).with_precision(bits).value();
        let (pi, ln2, ln10, sqrt2) = (Big::pi(bits), n(2).ln(), n(10).ln(), n(2).sqrt());
        match c {
            Constant::PI => pi,
            Constant::TAU => pi * n(2),
            Constant::E => Big::e(bits),
            Constant::SQRT_2 => sqrt2,
            Constant::LN_2 => ln2,
            Constant::LN_10 => ln10,
            Constant::LOG2_E => n(1) / ln2,
            Constant::LOG10_E => n(1) / ln10,
            Constant::LOG2_10 => ln10 / ln2,
            Constant::LOG10_2 => ln2 / ln10,
            Constant::FRAC_PI_2 => pi / n(2),
            Constant::FRAC_PI_3 => pi / n(3),
            Constant::FRAC_PI_4 => pi / n(4),
            Constant::FRAC_PI_6 => pi / n(6),
            Constant::FRAC_PI_8 => pi / n(8),
            Constant::FRAC_1_PI => n(1) / pi,
            Constant::FRAC_2_PI => n(2) / pi,
            Constant::FRAC_2_SQRT_PI => n(2) / pi.sqrt(),
            Constant::FRAC_1_SQRT_2 => n(1) / sqrt2,
        }
    };
    for c in Constant::ALL {
        let value = at(300, c);
        let down = value.clone().with_rounding::<Down>().with_precision(53).value().to_f64().value();
        let up = value.with_rounding::<Up>().with_precision(53).value().to_f64().value();
        let ours = Interval::constant(c).enclosure();
        assert_eq!((ours.inf(), ours.sup()), (down, up), "{}", c.name());
        assert!(down < up, "{}: an irrational constant is no double", c.name());
        let ball = Bound::constant(c);
        // A constant held to the nearest double is off by at most half an ulp, u·|x| with u = 2^-53 (IEEE
        // 754-2019 §4.3.1, round to nearest): a radius below 2u·|x| = ε·|x| is the tightest a ball can honestly be.
        assert!(ball.radius() < ball.primal().abs() * f64::EPSILON, "{}: {ball}", c.name());
    }
}
