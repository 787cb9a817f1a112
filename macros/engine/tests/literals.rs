//! The literal pass's output, read back from `twinstep expand`'s source and checked against outside oracles:
//! dashu-ratio's decimal parser for the number as written, Rust's `str::parse` for the doubles (correctly rounded,
//! IEEE 754-2019 §5.12.2), and exact rational arithmetic for the bounds.
//!
//! Checked for each literal: the exact conversion (`from_f64`/`from_f32`) is emitted exactly when the decimal is
//! the primal's own number; otherwise `lit` carries a reference whose printed doubles satisfy
//! `|x − (hi + lo)| ≤ err` and `down ≤ x ≤ up`, with `hi` the double nearest `x`; the primal literal is the number
//! the compiler would have made of the original.

use dashu_ratio::RBig;
use proptest::prelude::*;
use syn::visit::Visit;
use syn::{Expr, ExprCall, ExprStruct, Lit};

/// The float type of the kernel a literal is put in.
#[derive(Clone, Copy, Debug)]
enum Base {
    F64,
    F32,
}

/// What the engine made of one literal.
#[derive(Debug)]
struct Emitted {
    /// `lit`, `lit_f32`, `from_f64` or `from_f32`.
    function: String,
    /// The primal literal's value, widened to f64.
    primal: f64,
    /// `[hi, lo, err, down, up]` of the printed reference, for `lit`.
    reference: Option<[f64; 5]>,
}

/// Finds the one `<T as ::twinstep::Real>::…(…)` call of a twin and reads its arguments back.
#[derive(Default)]
struct Finder {
    found: Vec<Emitted>,
}

/// A printed double: a float literal, its negation, or `::core::f64::INFINITY` (and its negation).
fn double(expr: &Expr) -> f64 {
    match expr {
        Expr::Lit(lit) => match &lit.lit {
            Lit::Float(f) => f.base10_parse::<f64>().expect("a double"),
            other => panic!("not a float literal: {other:?}"),
        },
        Expr::Unary(unary) if matches!(unary.op, syn::UnOp::Neg(_)) => -double(&unary.expr),
        Expr::Path(path) if path.path.segments.last().is_some_and(|s| s.ident == "INFINITY") => f64::INFINITY,
        other => panic!("not a printed double: {}", quote::quote!(#other)),
    }
}

fn reference_fields(reference: &ExprStruct) -> [f64; 5] {
    let field = |name: &str| {
        let field = reference.fields.iter().find(|f| quote::quote!(#f).to_string().starts_with(name));
        double(&field.unwrap_or_else(|| panic!("field {name}")).expr)
    };
    ["hi", "lo", "err", "down", "up"].map(field)
}

impl<'ast> Visit<'ast> for Finder {
    fn visit_expr_call(&mut self, call: &'ast ExprCall) {
        if let Expr::Path(path) = &*call.func {
            let function = path.path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
            if ["lit", "lit_f32", "from_f64", "from_f32"].contains(&function.as_str()) {
                let args: Vec<&Expr> = call.args.iter().collect();
                let primal = match args[0] {
                    Expr::Lit(syn::ExprLit { lit: Lit::Float(f), .. }) if f.suffix() == "f32" => {
                        f64::from(f.base10_parse::<f32>().expect("an f32"))
                    }
                    other => double(other),
                };
                let reference = match args.get(1) {
                    Some(Expr::Struct(reference)) => Some(reference_fields(reference)),
                    _ => None,
                };
                self.found.push(Emitted { function, primal, reference });
                return;
            }
        }
        syn::visit::visit_expr_call(self, call);
    }
}

/// The engine's twin of `x * TEXT` in a kernel of the given base type, read back.
fn emitted(text: &str, base: Base) -> Emitted {
    let ty = match base {
        Base::F64 => "f64",
        Base::F32 => "f32",
    };
    let source = format!("#[twinstep::audit({ty})]\npub fn scale(x: {ty}) -> {ty} {{ x * {text} }}\n");
    let twin = twinstep_engine::expand_source(&source, None).expect("the kernel is accepted");
    let file = syn::parse_file(&twin).unwrap_or_else(|e| panic!("{text}: the twin is no Rust source ({e}):\n{twin}"));
    let mut finder = Finder::default();
    finder.visit_file(&file);
    assert_eq!(finder.found.len(), 1, "{text}: one literal call in\n{twin}");
    finder.found.remove(0)
}

/// The exact rational of a finite double (dashu-ratio's lossless conversion).
fn rational(x: f64) -> RBig {
    RBig::try_from(x).expect("a finite double")
}

/// Checks the engine's output for the literal `text` (as it stands in the source) whose number is `decimal` in
/// dashu-ratio's syntax.
fn check(text: &str, decimal: &str, base: Base) {
    let x = RBig::from_str_decimal(decimal).expect("dashu-ratio reads the decimal");
    // What the compiler makes of the literal: the nearest value of the kernel's type (std's parser rounds
    // correctly, as rustc's literal conversion does).
    let compiled = match base {
        Base::F64 => decimal.parse::<f64>().expect("a decimal"),
        Base::F32 => f64::from(decimal.parse::<f32>().expect("a decimal")),
    };
    let emitted = emitted(text, base);
    assert_eq!(emitted.primal.to_bits(), compiled.to_bits(), "{text}: primal {}", emitted.primal);
    let exact = compiled.is_finite() && rational(compiled) == x;
    let (exact_fn, lit_fn) = match base {
        Base::F64 => ("from_f64", "lit"),
        Base::F32 => ("from_f32", "lit_f32"),
    };
    if exact {
        assert_eq!(emitted.function, exact_fn, "{text} is exactly {compiled:e}");
        return;
    }
    assert_eq!(emitted.function, lit_fn, "{text} is not exactly {compiled:e}");
    let [hi, lo, err, down, up] = emitted.reference.expect("a reference");
    let nearest: f64 = decimal.parse().expect("a decimal");
    assert_eq!(hi.to_bits(), nearest.to_bits(), "{text}: hi {hi:e}");
    if hi.is_infinite() {
        // An overflowed literal: the bounds still hold x.
        assert!(down == f64::NEG_INFINITY || rational(down) <= x, "{text}: down {down:e}");
        assert!(up == f64::INFINITY || x <= rational(up), "{text}: up {up:e}");
        return;
    }
    let remainder = &x - rational(hi) - rational(lo);
    let bound = rational(err);
    assert!(-&bound <= remainder && remainder <= bound, "{text}: |x − (hi + lo)| > err");
    assert!(rational(down) <= x && x <= rational(up), "{text}: x outside [{down:e}, {up:e}]");
}

#[test]
fn tricky_literals_in_f64_kernels() {
    let cases = [
        ("0.1", "0.1"),
        ("4503599627370496.5", "4503599627370496.5"), // 2^52 + 1/2, a tie: rounds to even (IEEE 754-2019 §4.3.1)
        ("1e-400", "1e-400"),                         // underflows to 0: Rust accepts it
        ("2.", "2"),
        ("1_000.5", "1000.5"),
        ("0.1_f64", "0.1"),
        ("0.1f64", "0.1"),
        ("1e3", "1e3"),
        ("1E5", "1e5"),
        ("2.5e-1", "2.5e-1"),
        ("1e22", "1e22"), // 10^22 = 2^22·5^22 with 5^22 < 2^53: a double (from memory, checked by dashu here)
        ("1e23", "1e23"), // 5^23 > 2^53: not a double
        ("0.5", "0.5"),
        ("333.75", "333.75"),
        ("0.50000000000000001", "0.50000000000000001"),
        ("1.7976931348623157e308", "1.7976931348623157e308"),
        ("5e-324", "5e-324"),
        ("0.0", "0"),
    ];
    for (text, decimal) in cases {
        check(text, decimal, Base::F64);
    }
}

#[test]
fn tricky_literals_in_f32_kernels() {
    let cases = [
        ("0.1", "0.1"),
        ("0.1f32", "0.1"),
        ("16777217.0", "16777217"), // 2^24 + 1: a double, not a binary32 (24-bit significand, IEEE 754-2019 §3.6)
        ("16777216.0", "16777216"),
        ("1e-45", "1e-45"),
        ("0.5", "0.5"),
        ("1e10", "1e10"), // 10^10 = 2^10·5^10 with 5^10 < 2^24: a binary32
        ("1e11", "1e11"), // 5^11 > 2^24: not a binary32
    ];
    for (text, decimal) in cases {
        check(text, decimal, Base::F32);
    }
}

#[test]
fn literals_of_the_other_float_stay_as_they_are() {
    // `0.1f32` in an f64 kernel is an f32 value: no call at all.
    let source = "#[twinstep::audit]\npub fn scale(x: f64, y: f32) -> (f64, f32) { (x, y * 0.1f32) }\n";
    let twin = twinstep_engine::expand_source(source, None).expect("the kernel is accepted");
    assert!(twin.contains("y * 0.1f32") && !twin.contains("Reference"), "{twin}");
}

/// A literal text as Rust writes it and the same number in dashu-ratio's decimal syntax.
fn literal_texts() -> impl Strategy<Value = (String, String)> {
    let fraction = prop_oneof![Just(None), "[0-9]{1,20}".prop_map(Some)];
    let exponent = prop_oneof![Just(None), (-60i32..60).prop_map(Some)];
    ("[1-9][0-9]{0,19}", fraction, exponent).prop_map(|(whole, fraction, exponent)| {
        let mut text = whole;
        // A point or an exponent makes the digits a float literal (`2.` is one, `2` an integer).
        if fraction.is_some() || exponent.is_none() {
            text.push('.');
            text.push_str(&fraction.unwrap_or_default());
        }
        let decimal = text.trim_end_matches('.').to_string();
        if let Some(e) = exponent {
            text.push_str(&format!("e{e}"));
        }
        let decimal = decimal + &exponent.map(|e| format!("e{e}")).unwrap_or_default();
        (text, decimal)
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    #[test]
    fn random_literals((text, decimal) in literal_texts(), f32_kernel in any::<bool>()) {
        check(&text, &decimal, if f32_kernel { Base::F32 } else { Base::F64 });
    }
}
