//! Literals through the attribute, in the places a kernel writes them: a nested function, a closure, macros
//! (`vec!`, one read token by token), a closure run on another thread, and the `f32` literal arm. Each twin is
//! run with the Shadow lens in both literal modes and its double-word reference compared, in exact rational
//! arithmetic (dashu-ratio), with the number the kernel computes from the decimals as written (`AsWritten`) and
//! from the doubles the compiler made (`AsCompiled`). The two differ by about 10^-17 relative, the double-word
//! by far less, so each check tells the modes apart.

use dashu_ratio::RBig;
use twinstep::lens::{with_literal_mode, LiteralMode, Reference, Shadow};
use twinstep::Real;

/// `scaled!(x => k)` is `x * k`; its input does not parse as expressions, so the rewrite takes its tokens one by one.
macro_rules! scaled {
    ($x:expr => $k:expr) => {
        $x * $k
    };
}

/// Literals in a nested function, a closure, `vec!` and a macro read token by token, next to a local the user named like the rewrite's own
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
        out[i] = scaled!(shift(tenth_of(u[i])) * weights[i] => 0.9);
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

/// A literal's number in a mode: the decimal as written, or the double the compiler made of it.
fn literal_in(mode: LiteralMode, text: &str) -> RBig {
    match mode {
        LiteralMode::AsWritten => decimal(text),
        LiteralMode::AsCompiled => double(text.parse().expect("a decimal")),
    }
}

/// Runs `kernel` on the cells `inputs` in both literal modes and checks each output against `exact(u, literal)`:
/// the kernel's number for the input `u` with its literals' numbers in that mode — and not in the other mode.
fn check_both_modes(
    kernel: fn(&[Shadow], &mut [Shadow]),
    inputs: [u8; 2],
    exact: impl Fn(&RBig, &dyn Fn(&str) -> RBig) -> RBig,
) {
    let u = inputs.map(|x| Shadow::from_f64(f64::from(x)));
    for (mode, other) in
        [(LiteralMode::AsWritten, LiteralMode::AsCompiled), (LiteralMode::AsCompiled, LiteralMode::AsWritten)]
    {
        let mut out = [Shadow::from_f64(0.0); 2];
        with_literal_mode(mode, || kernel(&u, &mut out));
        for (cell, &input) in inputs.iter().enumerate() {
            let input = RBig::from(input);
            let expected = exact(&input, &|text| literal_in(mode, text));
            let unexpected = exact(&input, &|text| literal_in(other, text));
            assert!(shadow_near(out[cell], &expected), "{mode:?}, cell {cell}: {:?}", out[cell].shadow());
            assert!(!shadow_near(out[cell], &unexpected), "{mode:?}, cell {cell}: the other mode's number");
        }
    }
}

#[test]
fn literals_in_nested_functions_closures_and_macros_follow_the_mode() {
    // (u·0.1 + 0.2)·0.3·0.9
    check_both_modes(blend_twin, [1, 3], |u, literal| {
        (u * literal("0.1") + literal("0.2")) * literal("0.3") * literal("0.9")
    });
}

#[test]
fn closures_on_other_threads_see_the_callers_mode() {
    check_both_modes(tenth_on_threads_twin, [1, 2], |u, literal| u * literal("0.7"));
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
