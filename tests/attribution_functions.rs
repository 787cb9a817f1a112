//! Attribution through an elementary function, against dashu-float at 320 bits: for `y = exp(x·c)` the error is
//! `exp′(t)·ρ_× + ρ_exp` to first order (`t = x·c`), where `ρ_×` is the product's rounding and `ρ_exp` the
//! rounding of f64's `exp` at the computed `t̃`. The product's site must carry the first term, the function's
//! site the second, and together the measured error.

use dashu_float::round::mode::HalfEven;
use dashu_float::FBig;
use twinstep::attribution::Attribution;
use twinstep::audit::{FieldSpec, Levels, Scenario};

type Big = FBig<HalfEven>;
const BITS: usize = 320;

fn big(x: f64) -> Big {
    Big::try_from(x).expect("finite").with_precision(BITS).value()
}

/// `out[i] = exp(u[i]·c)`.
#[twinstep::audit]
pub fn grow(u: &[f64], out: &mut [f64], c: f64) {
    for i in 0..u.len() {
        let t = u[i] * c; // LINE product
        out[i] = t.exp(); // LINE exponential
    }
}

struct Growth {
    x: Vec<f64>,
    c: f64,
}

#[twinstep::scenario]
impl Scenario for Growth {
    fn fields(&self) -> Vec<FieldSpec> {
        vec![FieldSpec::new("y", &[self.x.len()])]
    }

    fn initial_values(&self) -> Vec<Vec<f64>> {
        vec![self.x.clone()]
    }

    fn step<T>(&self, levels: &mut Levels<T>) {
        grow_twin::<T>(&levels.current[0], &mut levels.next[0], T::from_f64(self.c));
    }
}

fn line(marker: &str) -> u32 {
    include_str!("attribution_functions.rs").lines().position(|l| l.ends_with(marker)).expect("marker") as u32 + 1
}

#[test]
fn a_function_passes_on_its_argument_s_error_to_first_order_and_adds_its_own() {
    let growth = Growth { x: (0..16).map(|i| 0.3 + 0.04 * i as f64).collect(), c: 1.1 };
    let record = Attribution::new(&growth, 1).run().expect("the attribution runs");
    let field = &record.fields[0];
    let cell = field.worst_cell[0];
    let x = growth.x[cell];
    // The oracle at 320 bits: t̃ = fl(x·c), ρ_× = t̃ − x·c; ρ_exp = fl_exp(t̃) − exp(t̃); e = fl_exp(t̃) − exp(x·c).
    let t = x * growth.c;
    let y = t.exp();
    let rho_product = (big(t) - big(x) * big(growth.c)).to_f64().value();
    let rho_exp = (big(y) - big(t).exp()).to_f64().value();
    let error = (big(y) - (big(x) * big(growth.c)).exp()).to_f64().value();
    assert!((field.error - error).abs() <= 1e-9 * error.abs(), "{} vs {error}", field.error);
    let contribution = |marker: &str| {
        let l = record.lines.iter().find(|l| l.line == line(marker)).expect("the line");
        l.shares[0].contribution.expect("carried")
    };
    // exp′(t)·ρ_×: the derivative is exp itself; first order, so up to a relative ρ_×/t ≈ 10⁻¹⁶ term, and the
    // central difference's truncation (relative 2^-52, docs/attribution.md).
    let expected = y * rho_product;
    assert!((contribution("// LINE product") - expected).abs() <= 1e-9 * expected.abs().max(1e-30));
    // ρ_exp, the function's own rounding: to the shadow's accuracy of exp (2^-90 relative, docs/lenses.md).
    assert!((contribution("// LINE exponential") - rho_exp).abs() <= 1e-9 * y * f64::EPSILON);
    assert!(field.residual.expect("an error").abs() < 1e-6, "{:?}", field.residual);
    assert_eq!(field.exact_error, Some(0.0));
}
