//! What every lens promises besides its reference: the primal is the float program's value bit for bit,
//! comparisons and integer conversions follow it and report undecided comparisons and indices, non-finite results are events, and
//! the literal modes switch what a literal's reference holds.

use twinstep::events::{Collector, EventKind};
use twinstep::lens::{
    literal_mode, with_literal_mode, Bound, BoundUnwatched, Interval, Lens, LiteralMode, Reference, Shadow,
    ShadowUnwatched,
};
use twinstep::{BaseOps, Constant, MixedOps, Real, RefOps};

/// A kernel-like mix of everything the rewrite emits; its f64 instance is the reference for the primals.
#[allow(clippy::op_ref)] // `&x * &y` is what iterator chains in kernels produce: the borrowed operators are tested
fn mix<T>(x: T, y: T) -> Vec<T>
where
    T: Real + BaseOps<f64>,
    f64: MixedOps<T>,
    for<'a> &'a T: RefOps<T>,
{
    let mut acc = x;
    acc += y * 0.5;
    acc -= &y;
    acc *= T::lit(1.1, Reference::of_decimal("1.1").unwrap(), literal_mode());
    acc /= 3.0;
    let values = vec![x, y, acc];
    vec![
        x + y,
        x - y * T::constant(Constant::PI),
        2.0 * x / y,
        &x * &y,
        x % y,
        x.mul_add(y, acc),
        x.abs().sqrt(),
        x.exp(),
        y.abs().ln(),
        x.sin(),
        x.cos(),
        x.tanh(),
        x.atan2(y),
        x.hypot(y),
        x.powi(5),
        x.abs().powf(y),
        x.max(y),
        x.min(y),
        x.clamp(y, acc.max(y)),
        x.floor(),
        x.fract(),
        x.to_degrees(),
        x.recip(),
        values.iter().sum(),
        values.into_iter().product(),
        T::from_i128(1 << 60),
    ]
}

fn primals_of<T>(x: f64, y: f64) -> Vec<u64>
where
    T: Real + BaseOps<f64>,
    f64: MixedOps<T>,
    for<'a> &'a T: RefOps<T>,
{
    mix(T::from_f64(x), T::from_f64(y)).into_iter().map(|v| v.primal().to_bits()).collect()
}

#[test]
fn primals_are_bit_identical_to_f64() {
    // The f64 instance of the same generic code is the float program (Real for f64 forwards to the inherent
    // methods, src/real.rs).
    for (x, y) in [(0.7, -1.3), (1e-5, 3.25), (-42.0, 0.125), (3.0e10, -7.5e-3)] {
        let expected = primals_of::<f64>(x, y);
        assert_eq!(primals_of::<Bound>(x, y), expected, "Bound at {x}, {y}");
        assert_eq!(primals_of::<Interval>(x, y), expected, "Interval at {x}, {y}");
        assert_eq!(primals_of::<Shadow>(x, y), expected, "Shadow at {x}, {y}");
    }
}

#[test]
fn index_conversion_reports_an_integer_the_reference_allows() {
    let collector = Collector::start::<Bound>();
    // 3 − 1e-12 truncates to 2, 3 + 1e-12 to 3: a radius of 1e-9 around 3 allows both.
    let near_three = Bound::new(3.0, 1e-9);
    assert_eq!(near_three.to_i128(), 3);
    let events = collector.take();
    assert!(events.iter().any(|(k, _, _)| *k == EventKind::UndecidedIndex), "{events:?}");
    // 3.5 ± 1e-9 lies inside (3, 4): every value truncates to 3 (truncation toward zero, Rust Reference "Numeric
    // cast", from memory), so the conversion is decided.
    assert_eq!(Bound::new(3.5, 1e-9).to_i128(), 3);
    assert!(collector.take().is_empty());
}

#[test]
fn non_finite_results_from_finite_operands_are_events() {
    // IEEE 754-2019 §7: overflow gives +∞, 0/0 is invalid and gives NaN.
    let shadow = Collector::start::<Shadow>();
    let huge = Shadow::from_f64(f64::MAX) * 2.0;
    assert!(huge.primal().is_infinite());
    let kinds: Vec<EventKind> = shadow.take().into_iter().map(|(k, _, _)| k).collect();
    assert_eq!(kinds, vec![EventKind::Infinity]);
    drop(shadow);
    let bound = Collector::start::<Bound>();
    let nan = Bound::from_f64(0.0) / Bound::from_f64(0.0);
    assert!(nan.primal().is_nan());
    let kinds: Vec<EventKind> = bound.take().into_iter().map(|(k, _, _)| k).collect();
    assert_eq!(kinds, vec![EventKind::Nan]);
    // Propagating an existing NaN is not a new event.
    let _ = nan + 1.0;
    assert!(bound.take().is_empty());
}

#[test]
fn literal_modes_switch_the_reference() {
    // 0.1 is not a double (IEEE 754 binary64 has no finite binary expansion of 1/10): as written it carries a
    // representation error, as compiled none.
    let written = Bound::lit(0.1, Reference::of_decimal("0.1").unwrap(), literal_mode());
    let compiled = with_literal_mode(LiteralMode::AsCompiled, || {
        Bound::lit(0.1, Reference::of_decimal("0.1").unwrap(), literal_mode())
    });
    // As compiled, the literal *is* the double, so no representation error remains (a radius of exactly 0); as
    // written it is 1/10, which no double equals (1/10 has no finite binary expansion: 10 = 2·5).
    assert!(written.radius() > 0.0);
    assert_eq!(compiled.radius(), 0.0);
    let shadow_compiled = with_literal_mode(LiteralMode::AsCompiled, || Shadow::constant(Constant::PI));
    // The same for π as compiled: the shadow holds fl(π) itself and estimates no error.
    assert_eq!(shadow_compiled.error_estimate(), 0.0);
}

#[test]
fn pi_as_written_is_pi() {
    // π = 3.14159265358979323846264338327950288… (from memory). fl(π) = 3.141592653589793115997963… lies below
    // π by 1.2246467991473532e-16 (from memory; also sin(fl(π)) in binary64, a standard identity).
    let pi = Interval::constant(Constant::PI).enclosure();
    assert!(pi.inf() == std::f64::consts::PI && pi.sup() > std::f64::consts::PI);
    let shadow = Shadow::constant(Constant::PI);
    let gap = shadow.shadow().1;
    // The recalled gap, to 1e-31 (about 2^-103, the shadow's ~106 bits of π less a margin; common practice).
    assert!((gap - 1.224_646_799_147_353_2e-16).abs() < 1e-31, "{gap:e}");
    assert!((gap - std::f64::consts::PI.sin()).abs() < 1e-31);
}

#[test]
fn unwatched_lenses_skip_only_the_non_finite_events() {
    let shadow = Collector::start::<ShadowUnwatched>();
    let _ = ShadowUnwatched::from_f64(f64::MAX) * 2.0;
    assert!(shadow.take().is_empty());
    drop(shadow);
    let bound = Collector::start::<BoundUnwatched>();
    let nan = BoundUnwatched::from_f64(0.0) / BoundUnwatched::from_f64(0.0);
    assert!(nan.primal().is_nan());
    assert!(bound.take().is_empty());
    // Undecided comparisons are still recorded.
    let _ = BoundUnwatched::new(1.0, 1e-9) < BoundUnwatched::from_f64(1.0);
    let kinds: Vec<EventKind> = bound.take().into_iter().map(|(k, _, _)| k).collect();
    assert_eq!(kinds, vec![EventKind::UndecidedComparison]);
    assert_eq!(<BoundUnwatched as Lens>::NAME, "bound-unwatched");
}
