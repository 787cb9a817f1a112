//! A subset of the ITF1788 conformance vectors for IEEE 1788-2015 interval arithmetic (the test suite inari runs;
//! the cases below are recalled from memory of its `libieeep1788_elem` file and marked so), through the
//! operations of our `Interval` lens, plus tightness checks whose expected enclosures are derived from exact
//! dashu-ratio arithmetic: for point operands, + − × ÷ √ must give [round-down, round-up] of the exact result
//! (IEEE 1788-2015 §10.5 asks these to be tightest in the inf–sup binary64 flavour, from memory).

use dashu_ratio::RBig;
use twinstep::events::{Collector, EventKind};
use twinstep::lens::eft::{next_down, next_up};
use twinstep::lens::{Enclosure, Interval};
use twinstep::Real;

/// A lens value for the interval `[lo, hi]`, its primal at a point inside.
fn iv(lo: f64, hi: f64) -> Interval {
    let primal = if lo.is_finite() {
        lo
    } else if hi.is_finite() {
        hi
    } else {
        0.0
    };
    Interval::new(primal, Enclosure::new(lo, hi).expect("valid interval"))
}

fn bounds(x: Interval) -> (f64, f64) {
    (x.enclosure().inf(), x.enclosure().sup())
}

#[test]
fn recalled_vectors() {
    let inf = f64::INFINITY;
    // ITF1788 libieeep1788_elem, from memory; each line: operation, operands, expected enclosure.
    assert_eq!(bounds(iv(-inf, -1.0) + iv(-1.0, 8.0)), (-inf, 7.0)); // add [-inf,-1] [-1,8] = [-inf,7]
    assert_eq!(bounds(iv(-inf, -1.0) - iv(-1.0, 8.0)), (-inf, 0.0)); // sub [-inf,-1] [-1,8] = [-inf,0]
    assert_eq!(bounds(iv(-1.0, 2.0) * iv(-3.0, 4.0)), (-6.0, 8.0)); // mul [-1,2] [-3,4] = [-6,8]
    assert_eq!(bounds(iv(1.0, 2.0) * iv(-inf, 1.0)), (-inf, 2.0)); // mul [1,2] [-inf,1] = [-inf,2]
    assert_eq!(bounds(iv(-30.0, -15.0) / iv(-5.0, -3.0)), (3.0, 10.0)); // div [-30,-15] [-5,-3] = [3,10]
    assert_eq!(bounds(iv(1.0, 2.0) / iv(0.0, 1.0)), (1.0, inf)); // div [1,2] [0,1] = [1,inf]
    assert_eq!(bounds(iv(-5.0, 25.0).sqrt()), (0.0, 5.0)); // sqrt [-5,25] = [0,5]
    assert_eq!(bounds(iv(1.0, 2.0).mul_add(iv(3.0, 4.0), iv(5.0, 6.0))), (8.0, 14.0)); // fma = [8,14]
                                                                                       // add [0x1.FFFFFFFFFFFFp0] [0x1.999999999999Ap-4] = [0x1.0CCCCCCCCCCC4p1, 0x1.0CCCCCCCCCCC5p1]
    let a = f64::from_bits(0x3FFF_FFFF_FFFF_FFF0); // 0x1.FFFFFFFFFFFFp0 (twelve F digits)
    let b = f64::from_bits(0x3FB9_9999_9999_999A); // 0x1.999999999999Ap-4, the double nearest 0.1
    let expected = (f64::from_bits(0x4000_CCCC_CCCC_CCC4), f64::from_bits(0x4000_CCCC_CCCC_CCC5));
    assert_eq!(bounds(iv(a, a) + iv(b, b)), expected);
}

#[test]
fn division_by_an_enclosure_of_zero_is_reported() {
    let events = Collector::start::<Interval>();
    let _ = iv(1.0, 2.0) / iv(-1.0, 1.0); // IEEE 1788: [1,2]/[-1,1] = [-inf,inf] (from memory)
    assert!(events.take().iter().any(|(kind, _, _)| *kind == EventKind::DivisorMayBeZero));
}

/// The tightest binary64 enclosure of an exact rational: [round-down, round-up] (derived, dashu-ratio).
fn tightest(exact: &RBig) -> (f64, f64) {
    let nearest = exact.to_f64().value();
    let as_rational = RBig::try_from(nearest).expect("finite");
    if &as_rational == exact {
        (nearest, nearest)
    } else if &as_rational > exact {
        (next_down(nearest), nearest)
    } else {
        (nearest, next_up(nearest))
    }
}

fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("finite")
}

/// Operand pairs with inexact results: decimal-looking doubles, binade edges, mixed magnitudes.
fn operand_pairs() -> Vec<(f64, f64)> {
    let edge = f64::from_bits(0x3FEF_FFFF_FFFF_FFFF); // 1 − 2^-53
    vec![
        (0.1, 0.2),
        (1.0, 3.0),
        (edge, 1e-17),
        (-7.3, 0.003),
        (1e300, 3.7e-5),
        (2.0f64.sqrt(), -1.0 / 3.0),
        (12345.678, 1e-9),
    ]
}

#[test]
fn point_operations_are_tightest() {
    for (a, b) in operand_pairs() {
        let (x, y) = (Interval::from_f64(a), Interval::from_f64(b));
        let (ea, eb) = (rational(a), rational(b));
        assert_eq!(bounds(x + y), tightest(&(&ea + &eb)), "{a} + {b}");
        assert_eq!(bounds(x - y), tightest(&(&ea - &eb)), "{a} - {b}");
        assert_eq!(bounds(x * y), tightest(&(&ea * &eb)), "{a} * {b}");
        assert_eq!(bounds(x / y), tightest(&(&ea / &eb)), "{a} / {b}");
        // Mixed operands, as kernels write them: interval ∘ f64 and f64 ∘ interval.
        assert_eq!(bounds(x + b), tightest(&(&ea + &eb)), "{a} + f64 {b}");
        assert_eq!(bounds(a * y), tightest(&(&ea * &eb)), "f64 {a} * {b}");
        assert_eq!(bounds(a / y), tightest(&(&ea / &eb)), "f64 {a} / {b}");
    }
}

#[test]
fn square_root_is_tightest() {
    for x in [0.1, 2.0, 3.0, 1e-300, 7.77e200] {
        let (lo, hi) = bounds(Interval::from_f64(x).sqrt());
        let exact = rational(x);
        // [lo, hi] is tightest iff lo² ≤ x ≤ hi² and hi is lo or the next double, with lo² < x < hi² when not exact.
        assert!(rational(lo) * rational(lo) <= exact && exact <= rational(hi) * rational(hi), "sqrt {x}");
        assert!(hi == lo || hi == next_up(lo), "sqrt {x}: [{lo:e}, {hi:e}] not tightest");
    }
}
