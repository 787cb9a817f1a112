//! The emulated-format lenses on two problems with outside references, each run also with `dashu-float` at the
//! format's precision (`Context` at p bits, ties to even — the same program in that arithmetic):
//!
//! - Muller's recurrence `u_{n+1} = 111 − 1130/u_n + 3000/(u_n u_{n−1})`, `u_0 = 2`, `u_1 = −4` (Muller et al.,
//!   Handbook of Floating-Point Arithmetic, from memory), at p = 24: the first step at which the binary32 lens's
//!   relative error estimate passes 10^-6 is the step at which the 24-bit dashu run's true relative error (against
//!   the exact sequence in dashu-ratio rationals) does.
//! - The explicit heat scheme `u_i ← u_i + r (u_{i−1} − 2u_i + u_{i+1})`, zero ends, `u_i^0 = sin(π i/N)`, whose
//!   exact discrete solution is `λⁿ sin(π i/N)`, `λ = 1 − 4r sin²(π/(2N))` (von Neumann analysis of the explicit
//!   scheme; e.g. Strikwerda, from memory), in binary32 and bfloat16: the lens's primal is the dashu p-bit run's,
//!   bit for bit, and the error it reports is that run's distance from the closed form (evaluated at 256 bits).
//!
//! Both checks run with the double-double reference (`Binary32`, `Bfloat16`, `Binary16`, `Bits`) and with the
//! binary64 reference the sweep gives formats of at most 24 bits (`Binary32B64`, `Bfloat16B64`, `Binary16B64`,
//! `BitsB64`), whose estimate may be off by binary64's own error: on these runs that stays inside the same
//! allowances (the heat check's 10^-15 beside errors of 10^-7 and more; the Muller crossing at the same step). The
//! heat check also runs the lenses with a binary32 reference (`Bfloat16B32`, `Binary16B32`): there a 24-bit
//! dashu run is the reference, bit for bit, and the reported error is the distance between the two dashu runs.

use dashu_float::round::mode::HalfEven;
use dashu_float::{Context, FBig};
use dashu_ratio::RBig;
use twinstep::lens::format::{EmulatedBfloat16, EmulatedBinary32, PrimalFormat};
use twinstep::lens::{
    bits_format_scope, Bfloat16, Bfloat16B32, Bfloat16B64, Binary16, Binary16B32, Binary16B64, Binary32, Binary32B64,
    Bits, BitsB64, Format, Lens, Shadowed,
};
use twinstep::Real;

type Big = FBig<HalfEven>;

fn big(x: f64) -> Big {
    Big::try_from(x).expect("finite")
}

/// A dashu value at `p` bits as a double (exact: p ≤ 53 and inside the double range).
fn double(x: &Big) -> f64 {
    x.to_f64().value()
}

/// dashu arithmetic at `p` bits, to nearest with ties to even: each operation at 240 bits (exact for + − × of these
/// operands), then rounded to p bits — a quotient of p-bit numbers is never within 2^-240 of a p-bit midpoint
/// unless it is one, so that is the correctly rounded quotient too. (`Context::new(p)` alone returned some
/// sums with more than p bits in dashu-float 0.6.2 — e.g. 3·2^-11 − 2^-8 at p = 2 came back as −5·2^-11.)
struct Arithmetic {
    p: usize,
    wide: Context<HalfEven>,
}

impl Arithmetic {
    fn new(p: usize) -> Arithmetic {
        Arithmetic { p, wide: Context::new(240) }
    }
    fn round(&self, x: dashu_float::FpResult<Big>) -> Big {
        x.expect("finite").value().with_precision(self.p).value()
    }
    fn add(&self, a: &Big, b: &Big) -> Big {
        self.round(self.wide.add(a.repr(), b.repr()))
    }
    fn sub(&self, a: &Big, b: &Big) -> Big {
        self.round(self.wide.sub(a.repr(), b.repr()))
    }
    fn mul(&self, a: &Big, b: &Big) -> Big {
        self.round(self.wide.mul(a.repr(), b.repr()))
    }
    fn div(&self, a: &Big, b: &Big) -> Big {
        self.round(self.wide.div(a.repr(), b.repr()))
    }
}

const MULLER_STEPS: usize = 30;

/// The recurrence as a kernel writes it, in any scalar.
fn muller<T: Real>() -> Vec<T> {
    let mut u = vec![T::from_f64(2.0), -T::from_f64(4.0)];
    for n in 1..MULLER_STEPS {
        let next = T::from_f64(111.0) - T::from_f64(1130.0) / u[n] + T::from_f64(3000.0) / (u[n] * u[n - 1]);
        u.push(next);
    }
    u
}

/// The same recurrence, the same operations in the same order, in dashu at `p` bits.
fn muller_dashu(p: usize) -> Vec<f64> {
    let f = Arithmetic::new(p);
    let [c111, c1130, c3000] = [111.0, 1130.0, 3000.0].map(big);
    let mut u = vec![big(2.0), big(-4.0)];
    for n in 1..MULLER_STEPS {
        let quotient = f.div(&c1130, &u[n]);
        let second = f.div(&c3000, &f.mul(&u[n], &u[n - 1]));
        u.push(f.add(&f.sub(&c111, &quotient), &second));
    }
    u.iter().map(double).collect()
}

/// The exact sequence in rationals.
fn muller_exact() -> Vec<RBig> {
    let mut u = vec![RBig::from(2), RBig::from(-4)];
    for n in 1..MULLER_STEPS {
        let next = RBig::from(111) - RBig::from(1130) / &u[n] + RBig::from(3000) / (&u[n] * &u[n - 1]);
        u.push(next);
    }
    u
}

fn first_past(errors: impl Iterator<Item = f64>, level: f64) -> Option<usize> {
    errors.enumerate().find(|(_, e)| *e > level).map(|(n, _)| n)
}

/// The Muller check for a lens whose primal computes at 24 bits.
fn muller_at_24_bits<L: Real + Lens>() {
    let lens = muller::<L>();
    let reference = muller_dashu(24);
    // The lens's primal is the 24-bit program's, step for step.
    for (n, (l, d)) in lens.iter().zip(&reference).enumerate() {
        assert_eq!(l.primal().to_bits(), d.to_bits(), "step {n}");
    }
    let exact = muller_exact();
    let truth =
        reference.iter().zip(&exact).map(|(&d, x)| ((RBig::try_from(d).unwrap() - x) / x).to_f64().value().abs());
    let true_step = first_past(truth, 1e-6).expect("24 bits leave the exact sequence");
    let estimates = lens.iter().map(|l| l.error_estimate() / l.reference_value().abs());
    assert_eq!(first_past(estimates, 1e-6), Some(true_step));
    assert!(true_step > 2, "the crossing is not at the start: {true_step}");
}

#[test]
fn muller_binary32_crosses_where_a_24_bit_dashu_run_does() {
    muller_at_24_bits::<Shadowed<EmulatedBinary32, true>>();
    muller_at_24_bits::<Binary32B64>();
}

#[test]
fn muller_p24_crosses_where_a_24_bit_dashu_run_does() {
    let _scope = bits_format_scope(Format::bits(24).expect("24 bits"));
    muller_at_24_bits::<Shadowed<twinstep::lens::format::EmulatedBits, true>>();
    let _ = Bits::from_f64(0.0); // the p-bit lens is the type the sweep runs
    muller_at_24_bits::<BitsB64>();
}

const CELLS: usize = 16;
const HEAT_STEPS: usize = 300;
const R: f64 = 0.25;

/// `sin(π i/N)` as f64 inputs (the lens and the dashu run start from the same doubles), with the ends exactly 0
/// as in the closed form (the double `sin(π)` is 1.2·10^-16, which binary16 cannot hold and a dashu run of
/// unbounded exponents can).
fn initial() -> Vec<f64> {
    (0..=CELLS)
        .map(|i| if i % CELLS == 0 { 0.0 } else { (std::f64::consts::PI * i as f64 / CELLS as f64).sin() })
        .collect()
}

/// The heat scheme in any scalar, zero ends held.
fn heat<T: Real>(u: &[T]) -> Vec<T> {
    let r = T::from_f64(R);
    let mut out = u.to_vec();
    for i in 1..CELLS {
        out[i] = u[i] + r * (u[i - 1] - T::from_f64(2.0) * u[i] + u[i + 1]);
    }
    out
}

/// λⁿ sin(π i/N) at 256 bits.
fn closed_form(n: usize) -> Vec<Big> {
    let ctx = Context::<HalfEven>::new(256);
    let pi = Big::from(1).with_precision(256).value().atan() * Big::from(4); // π = 4 atan 1
    let half_angle = (&pi / Big::from(2 * CELLS)).sin();
    let lambda = Big::from(1) - Big::from(4) * big(R) * &half_angle * &half_angle;
    let power = (0..n).fold(Big::from(1).with_precision(256).value(), |acc, _| {
        ctx.mul(acc.repr(), lambda.repr()).expect("finite").value()
    });
    (0..=CELLS).map(|i| &power * (&pi * Big::from(i) / Big::from(CELLS)).sin()).collect()
}

/// The heat check in a format of `p` bits with its lens `L`, whose reference is exact enough for the 10^-15
/// allowance (a double-double or binary64).
fn heat_in_format<L: Real + Lens>(p: usize) {
    heat_with_reference::<L>(p, None);
}

/// The heat check with `L`'s reference run beside the lens: `None` for a double-double or binary64 reference
/// (checked against the closed form within 10^-15), `Some(q)` for a `q`-bit reference (binary32: q = 24), which is
/// then a q-bit dashu run of the same scheme along the same path, bit for bit, and the error the lens reports is
/// the distance between the two runs, exactly; it is off the true error by the q-bit run's own error, which must
/// stay below 2^-10 of the format's (the sweep's margin, `twinstep::sweep::REFERENCE_MARGIN`).
fn heat_with_reference<L: Real + Lens>(p: usize, reference_bits: Option<usize>) {
    let f = Arithmetic::new(p);
    let g = Arithmetic::new(reference_bits.unwrap_or(p));
    let mut lens: Vec<L> = initial().into_iter().map(L::from_f64).collect();
    let mut run: Vec<Big> = initial().into_iter().map(|x| big(x).with_precision(p).value()).collect();
    let mut reference: Vec<Big> = initial().into_iter().map(|x| big(x).with_precision(g.p).value()).collect();
    let (r, two) = (big(R), big(2.0));
    let step = |f: &Arithmetic, run: &[Big]| {
        let mut next = run.to_vec();
        for i in 1..CELLS {
            let second_difference = f.add(&f.sub(&run[i - 1], &f.mul(&two, &run[i])), &run[i + 1]);
            next[i] = f.add(&run[i], &f.mul(&r, &second_difference));
        }
        next
    };
    for _ in 0..HEAT_STEPS {
        lens = heat(&lens);
        run = step(&f, &run);
        if reference_bits.is_some() {
            reference = step(&g, &reference);
        }
        for (i, (l, d)) in lens.iter().zip(&run).enumerate() {
            assert_eq!(l.primal().to_bits(), double(d).to_bits(), "cell {i}");
        }
        if reference_bits.is_some() {
            for (i, (l, d)) in lens.iter().zip(&reference).enumerate() {
                assert_eq!(l.reference_value().to_bits(), double(d).to_bits(), "reference, cell {i}");
            }
        }
    }
    // The error the lens reports against the dashu run's distance from the exact solution. The lens's reference
    // starts from the doubles sin(π i/N), within 2^-53 relative of the closed form's values, so the two may differ
    // by about 10^-16 beside errors of 10^-7 (binary32) and 10^-2 (bfloat16).
    let exact = closed_form(HEAT_STEPS);
    let mut largest = 0.0f64;
    for (i, (l, x)) in lens.iter().zip(&exact).enumerate().skip(1).take(CELLS - 1) {
        let true_error = double(&(big(l.primal()) - x).with_precision(60).value()).abs();
        largest = largest.max(true_error);
        let allowance = match reference_bits {
            None => 1e-15,
            Some(_) => {
                let own = double(&(reference[i].clone() - x).with_precision(60).value()).abs();
                let distance = double(&(big(l.primal()) - reference[i].clone()).with_precision(60).value()).abs();
                assert_eq!(l.error_estimate(), distance, "cell {i}: the estimate is the distance of the two runs");
                assert!(own <= twinstep::sweep::REFERENCE_MARGIN * true_error, "cell {i}: reference error {own:e}");
                own * (1.0 + 1e-12) + 1e-15
            }
        };
        assert!(
            (l.error_estimate() - true_error).abs() <= allowance,
            "cell {i}: lens {}, dashu {true_error}",
            l.error_estimate()
        );
    }
    assert!(largest > 2f64.powi(-(p as i32) - 4), "the format's rounding shows: {largest:e}");
}

#[test]
fn heat_binary32_errors_match_a_24_bit_dashu_run() {
    heat_in_format::<Binary32>(24);
    heat_in_format::<Binary32B64>(24);
    assert_eq!(EmulatedBinary32::format(), Format::BINARY32);
}

#[test]
fn heat_bfloat16_errors_match_an_8_bit_dashu_run() {
    heat_in_format::<Bfloat16>(8);
    heat_in_format::<Bfloat16B64>(8);
    heat_with_reference::<Bfloat16B32>(8, Some(24));
    assert_eq!(EmulatedBfloat16::format(), Format::BFLOAT16);
}

#[test]
fn heat_binary16_errors_match_an_11_bit_dashu_run() {
    // binary16's exponent range holds this problem's values (in [0, 1], the ends 0, and the smallest interior
    // one, sin(π/N)·λⁿ, above 10^-2 over these steps, far from the subnormals below 2^-14), so an
    // unbounded-exponent dashu run at 11 bits is the binary16 program.
    heat_in_format::<Binary16>(11);
    heat_in_format::<Binary16B64>(11);
    heat_with_reference::<Binary16B32>(11, Some(24));
}
