//! Pass: float literals.
//!
//! Before: `u[i] + 0.1 * lap`, `2.0 * u[i]`
//! After:  `u[i] + <T as ::twinstep::Real>::lit(0.1f64, ::twinstep::lens::Reference { hi: 0.1,
//!         lo: -5.551115123125783e-18, err: 1.232595164407831e-33, down: 0.09999999999999999, up: 0.1 },
//!         twinstep_literal_mode) * lap`,
//!         `<T as ::twinstep::Real>::from_f64(2.0f64) * u[i]`
//!
//! The primal gets exactly the value the compiler gives the literal. The reference of the decimal number as
//! written (one tenth, not the nearest double) is computed here, at expansion time, by `twinstep-exact`, and
//! printed as a constant — the doubles in Rust's shortest round-trip form, so the twin holds them bit for bit and
//! a reader of `twinstep expand` sees what the reference is. At run time a literal is then straight-line code
//! the optimizer folds into the loop: computing the reference at run time (a per-thread cache of parsed
//! literals) made the Bound lens 17× and the Shadow lens 55× slower than f64 on a 1-D heat loop with
//! `r = 0.1`, against 6.9× and 20.9× with `r` a variable (`benches/lenses.rs`), because the cache's miss path
//! kept the loop from vectorizing.
//!
//! The literal mode (`LiteralMode::AsCompiled` replaces each reference by the compiled double, for the split of
//! representation error) is read once per call of a twin function, into a local that every `lit` takes (see
//! [`literal_mode_ident`]).
//!
//! A literal whose decimal is exactly its double (`2.0`, `0.5`, `1e3`; decided with exact rationals) has
//! nothing to split off and becomes the exact conversion `from_f64` (`from_f32` in an `f32` kernel). A literal
//! with the other float's suffix (`0.5f32` in an `f64` kernel) is a value of that other type and stays as it is.

use crate::context::{replace_expr, BaseFloat, Ctx};
use proc_macro2::{Span, TokenStream};
use quote::{quote, quote_spanned};
use syn::visit::{self as visit_ref, Visit};
use syn::visit_mut::{self, VisitMut};
use syn::{Block, Expr, Ident, Lit, LitFloat};
use twinstep_exact::Reference;

/// Rewrites float literals into lens values with their exact reference.
pub struct LiteralRewriter<'a> {
    pub ctx: &'a Ctx,
}

/// The literal's digits without suffix and underscores, when it is a literal of the kernel's float type.
pub fn literal_text(ctx: &Ctx, lit: &LitFloat) -> Option<String> {
    let suffix = lit.suffix();
    if !(suffix.is_empty() || suffix == ctx.base.name()) {
        return None;
    }
    let digits = lit.base10_digits();
    Some(digits.replace('_', ""))
}

/// A float literal of the kernel, spanned at it: `<T as ::twinstep::Real>::lit(VALUE, REFERENCE)`, or
/// `from_f64(VALUE)` when the decimal is exactly its double.
pub fn literal_tokens(ctx: &Ctx, text: &str, span: Span) -> TokenStream {
    // Printing the digits with the base suffix gives the compiler the literal it would have parsed itself.
    // `2f64` has no point or exponent; `2.0f64` is the same number and unambiguously a float literal. `1.` is a
    // literal only without a suffix: `1.f64` would lex as a field access, `1.0f64` is the same number.
    let point = if text.ends_with('.') {
        "0"
    } else if text.contains(['.', 'e', 'E']) {
        ""
    } else {
        ".0"
    };
    let value = LitFloat::new(&format!("{text}{point}{}", ctx.base.name()), span);
    value_with_reference(ctx, quote!(#value), text, span)
}

/// The twin value of `primal` (a literal, or a module constant initialised with one) whose decimal text is
/// `text`: the exact conversion when the decimal is the primal's own number, else `lit` with the reference.
pub fn value_with_reference(ctx: &Ctx, primal: TokenStream, text: &str, span: Span) -> TokenStream {
    let real = ctx.real(span);
    let (lit, exact) = match ctx.base {
        BaseFloat::F64 => (quote_spanned!(span=> lit), quote_spanned!(span=> from_f64)),
        BaseFloat::F32 => (quote_spanned!(span=> lit_f32), quote_spanned!(span=> from_f32)),
    };
    match Reference::of_decimal(text) {
        Ok(reference) if !is_exact_in(ctx.base, &reference) => {
            let reference = reference_tokens(&reference, span);
            let mode = literal_mode_ident();
            quote_spanned!(span=> #real::#lit(#primal, #reference, #mode))
        }
        // Exact, or a text that is no decimal (it cannot come from a parsed float literal): the compiled value is
        // taken as exact, as for an input.
        _ => quote_spanned!(span=> #real::#exact(#primal)),
    }
}

/// Whether the real number of `reference` is exactly a value of the base float: a double with nothing left
/// over, and for `f32` one that binary32 holds too (converting to `f32` and back gives it again).
pub fn is_exact_in(base: BaseFloat, reference: &Reference) -> bool {
    reference.is_exact() && (base == BaseFloat::F64 || f64::from(reference.hi as f32) == reference.hi)
}

/// `::twinstep::lens::Reference { hi: …, lo: …, err: …, down: …, up: … }`: a constant expression the compiler
/// evaluates, each double printed so that it reads back bit for bit.
pub fn reference_tokens(reference: &Reference, span: Span) -> TokenStream {
    let Reference { hi, lo, err, down, up } = *reference;
    let [hi, lo, err, down, up] = [hi, lo, err, down, up].map(|x| double_tokens(x, span));
    quote_spanned!(span=> ::twinstep::lens::Reference { hi: #hi, lo: #lo, err: #err, down: #down, up: #up })
}

/// A double as Rust source: the shortest decimal that reads back as it (Rust's `{:?}` of `f64`), its sign as a
/// negation, `::core::f64::INFINITY` for an overflowed literal.
fn double_tokens(x: f64, span: Span) -> TokenStream {
    let magnitude = if x.is_infinite() {
        quote_spanned!(span=> ::core::f64::INFINITY)
    } else {
        let literal = LitFloat::new(&format!("{:?}", x.abs()), span);
        quote!(#literal)
    };
    if x.is_sign_negative() {
        quote_spanned!(span=> -#magnitude)
    } else {
        magnitude
    }
}

/// Whether `expr` is a reference constant the rewrite printed itself (its doubles are no user literals).
fn is_printed_reference(expr: &syn::ExprStruct) -> bool {
    let segments: Vec<String> = expr.path.segments.iter().map(|s| s.ident.to_string()).collect();
    expr.path.leading_colon.is_some() && segments == ["twinstep", "lens", "Reference"]
}

impl VisitMut for LiteralRewriter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        match expr {
            Expr::Lit(lit) => {
                if let Lit::Float(float) = &lit.lit {
                    if let Some(text) = literal_text(self.ctx, float) {
                        let tokens = literal_tokens(self.ctx, &text, float.span());
                        replace_expr(expr, tokens);
                    }
                }
            }
            Expr::Struct(reference) if is_printed_reference(reference) => {}
            _ => visit_mut::visit_expr_mut(self, expr),
        }
    }
}

/// The local a twin function reads its literal mode into, once, at its entry: `lit` takes it as an argument.
///
/// Reading the per-thread mode inside `lit` instead put a thread-local load in every iteration of a kernel's
/// loop, which the optimizer could not prove unaffected by the loop's stores, so it could neither hoist it nor
/// vectorize the loop (`benches/lenses.rs`, 1-D heat with a literal: Bound 14.5× and Shadow 52.5× plain `f64`
/// with the load, 7.1× and 17.4× without). Read at the entry, the mode is one value for the whole call,
/// closures included — also those a parallel iterator runs on other threads, whose own thread-local mode would
/// not be the caller's. The name is hygienic (mixed-site): user code can neither see nor shadow it.
pub fn literal_mode_ident() -> Ident {
    Ident::new("twinstep_literal_mode", Span::mixed_site())
}

/// Gives every twin function whose body has a literal with a reference the binding of
/// [`literal_mode_ident`] as its first statement:
/// `let twinstep_literal_mode = ::twinstep::lens::literal_mode();`.
pub struct LiteralModeBinder;

impl LiteralModeBinder {
    fn bind(block: &mut Block) {
        let mut finder = ModeUse { found: false };
        finder.visit_block(block);
        if finder.found {
            let mode = literal_mode_ident();
            block.stmts.insert(0, syn::parse_quote!(let #mode = ::twinstep::lens::literal_mode();));
        }
    }
}

impl VisitMut for LiteralModeBinder {
    fn visit_item_fn_mut(&mut self, f: &mut syn::ItemFn) {
        // Nested functions first: they bind their own.
        visit_mut::visit_item_fn_mut(self, f);
        LiteralModeBinder::bind(&mut f.block);
    }
    fn visit_impl_item_fn_mut(&mut self, f: &mut syn::ImplItemFn) {
        visit_mut::visit_impl_item_fn_mut(self, f);
        LiteralModeBinder::bind(&mut f.block);
    }
    fn visit_trait_item_fn_mut(&mut self, f: &mut syn::TraitItemFn) {
        visit_mut::visit_trait_item_fn_mut(self, f);
        if let Some(block) = &mut f.default {
            LiteralModeBinder::bind(block);
        }
    }
}

/// Whether a body uses the literal-mode local, outside nested items (which have their own) and inside macro
/// invocations (whose tokens the literal pass rewrote).
struct ModeUse {
    found: bool,
}

impl ModeUse {
    fn scan(&mut self, tokens: proc_macro2::TokenStream) {
        for tree in tokens {
            match tree {
                proc_macro2::TokenTree::Ident(ident) if ident == "twinstep_literal_mode" => self.found = true,
                proc_macro2::TokenTree::Group(group) => self.scan(group.stream()),
                _ => {}
            }
        }
    }
}

impl<'ast> Visit<'ast> for ModeUse {
    fn visit_item(&mut self, _: &'ast syn::Item) {}
    fn visit_ident(&mut self, ident: &'ast Ident) {
        self.found |= ident == "twinstep_literal_mode";
    }
    fn visit_macro(&mut self, mac: &'ast syn::Macro) {
        self.scan(mac.tokens.clone());
        visit_ref::visit_macro(self, mac);
    }
}
