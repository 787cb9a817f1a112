//! Pass: float literals.
//!
//! Before: `u[i] + 0.1 * lap`
//! After:  `u[i] + <T as ::twinstep::Real>::lit(0.1f64, "0.1") * lap`
//!
//! The primal gets exactly the value the compiler gives the literal; the text lets a lens's reference hold the
//! decimal number as written (one tenth, not the nearest double). A literal with the other float's suffix
//! (`0.5f32` in an `f64` kernel) is a value of that other type and stays as it is.

use crate::context::{replace_expr, BaseFloat, Ctx};
use proc_macro2::Span;
use quote::quote_spanned;
use syn::visit_mut::{self, VisitMut};
use syn::{Expr, Lit, LitFloat};

/// Rewrites float literals into lens values that remember their text.
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

/// `<T as ::twinstep::Real>::lit(VALUE, "TEXT")` for a literal, spanned at it.
pub fn literal_tokens(ctx: &Ctx, text: &str, span: Span) -> proc_macro2::TokenStream {
    let real = ctx.real(span);
    let (ctor, suffix) = match ctx.base {
        BaseFloat::F64 => ("lit", "f64"),
        BaseFloat::F32 => ("lit_f32", "f32"),
    };
    let ctor = syn::Ident::new(ctor, span);
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
    let value = LitFloat::new(&format!("{text}{point}{suffix}"), span);
    let text = syn::LitStr::new(text, span);
    quote_spanned!(span=> #real::#ctor(#value, #text))
}

impl VisitMut for LiteralRewriter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        if let Expr::Lit(lit) = expr {
            if let Lit::Float(float) = &lit.lit {
                if let Some(text) = literal_text(self.ctx, float) {
                    let tokens = literal_tokens(self.ctx, &text, float.span());
                    replace_expr(expr, tokens);
                }
            }
            return;
        }
        visit_mut::visit_expr_mut(self, expr);
    }
}
