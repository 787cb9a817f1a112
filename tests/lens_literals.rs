//! Literals through the attribute, in the places a kernel writes them: a nested function, a closure, a macro
//! (`vec!`), a closure run on another thread, and the `f32` literal arm. Each twin is run with the Shadow lens in both
//! literal modes and its double-word reference compared, in exact rational arithmetic (dashu-ratio), with the
//! number the kernel computes from the decimals as written (`AsWritten`) and from the doubles the compiler made
//! (`AsCompiled`). The two differ by about 10^-17 relative, the double-word by far less, so each check tells the
//! modes apart.

use dashu_ratio::RBig;
use twinstep::lens::{with_literal_mode, LiteralMode, Reference, Shadow};
use twinstep::Real;

/// Literals in a nested function, a closure and `vec!`, next to a local the user named like the rewrite's own
/// literal-mode binding (the binding is hygienic, so neither sees the other).
#[twinstep::audit]
pub fn blend(u: &[f64], out: &mut [f64]) {
    let twinstep_literal_mode = 3usize;
    fn tenth_of(x: f64) -> f64 {
        x * 0.1
    }
    let shift = |x: f64| x + 0.2;
    let weights = vec![0.3; u.len()];
    for i in 0..u.len() {
        out[i] = shift(tenth_of(u[i])) * weights[i];
    }
    assert_eq!(twinstep_literal_mode, 3);
}

/// A literal in closures that other threads run: they see the mode of the thread that called the kernel.
#[twinstep::audit]
pub fn tenth_on_threads(u: &[f64], out: &mut [f64]) {
    std::thread::scope(|scope| {
        for (o, &x) in out.iter_mut().zip(u) {
            scope.spawn(move || *o = x * 0.7);
        }
    });
}

fn decimal(text: &str) -> RBig {
    RBig::from_str_decimal(text).expect("a decimal")
}

fn double(x: f64) -> RBig {
    RBig::try_from(x).expect("a finite double")
}

/// Whether the shadow's double-word hi + lo is within 2^-100 relative of `x`. A double-word operation is within a
/// few u² = 2^-106 relative of its exact result (Joldes, Muller & Popescu, ACM TOMS 2017, from memory), and the
/// literals' references within 2^-104, so a handful of operations stay far inside 2^-100 (common practice, no
/// source).
fn shadow_near(value: Shadow, x: &RBig) -> bool {
    let (hi, lo) = value.shadow();
    let distance = double(hi) + double(lo) - x;
    let bound = x * double(2f64.powi(-100));
    let bound = if bound < RBig::ZERO { -bound } else { bound };
    -&bound <= distance && distance <= bound
}

#[test]
fn literals_in_nested_functions_closures_and_macros_follow_the_mode() {
    let u = [Shadow::from_f64(1.0), Shadow::from_f64(3.0)];
    for mode in [LiteralMode::AsWritten, LiteralMode::AsCompiled] {
        let mut out = [Shadow::from_f64(0.0); 2];
        with_literal_mode(mode, || blend_twin(&u, &mut out));
        for (cell, factor) in [1u8, 3].into_iter().enumerate() {
            let factor = RBig::from(factor);
            // (u·0.1 + 0.2)·0.3, with the decimals as written or with their doubles.
            let written = (&factor * decimal("0.1") + decimal("0.2")) * decimal("0.3");
            let compiled = (&factor * double(0.1) + double(0.2)) * double(0.3);
            let (expected, other) = match mode {
                LiteralMode::AsWritten => (&written, &compiled),
                LiteralMode::AsCompiled => (&compiled, &written),
            };
            assert!(shadow_near(out[cell], expected), "{mode:?}, cell {cell}: {:?}", out[cell].shadow());
            assert!(!shadow_near(out[cell], other), "{mode:?}, cell {cell}: the other mode's number");
        }
    }
}

#[test]
fn closures_on_other_threads_see_the_callers_mode() {
    let u = [Shadow::from_f64(1.0), Shadow::from_f64(2.0)];
    for mode in [LiteralMode::AsWritten, LiteralMode::AsCompiled] {
        let mut out = [Shadow::from_f64(0.0); 2];
        with_literal_mode(mode, || tenth_on_threads_twin(&u, &mut out));
        for (cell, factor) in [1u8, 2].into_iter().enumerate() {
            let seven_tenths = match mode {
                LiteralMode::AsWritten => decimal("0.7"),
                LiteralMode::AsCompiled => double(0.7),
            };
            assert!(shadow_near(out[cell], &(RBig::from(factor) * seven_tenths)), "{mode:?}, cell {cell}");
        }
    }
}

#[test]
fn an_f32_literal_holds_its_decimal_or_its_binary32() {
    // The lenses take no `f32` operands, so an `f32` kernel's twin runs with `T = f32` only; its literals' arm of
    // `Real` is called here as the rewrite emits it (`lit_f32(0.1f32, REFERENCE, mode)`).
    let tenth = Reference::of_decimal("0.1").expect("a literal");
    let written = Shadow::lit_f32(0.1f32, tenth, LiteralMode::AsWritten);
    assert!(shadow_near(written, &decimal("0.1")), "{:?}", written.shadow());
    // 0.1f32 widened to f64 is exact (binary32 ⊂ binary64, IEEE 754-2019 §3.3).
    let compiled = Shadow::lit_f32(0.1f32, tenth, LiteralMode::AsCompiled);
    assert!(shadow_near(compiled, &double(f64::from(0.1f32))), "{:?}", compiled.shadow());
    assert!(!shadow_near(compiled, &decimal("0.1")));
}
