//! Pass: `as` casts.
//!
//! Before: `let x = i as f64 * dx;  let j = (x / dx) as usize;`
//! After:  `let x = ::twinstep::twin::to_real::<T, _>(i) * dx;  let j = ::twinstep::twin::to_usize(x / dx);`
//!
//! The rewrite cannot see types, so every cast into the float type or an integer type goes through a helper that
//! accepts integers and twin scalars alike; integer-to-integer casts convert exactly as `as` does.

use crate::context::replace_expr;
use crate::context::Ctx;
use quote::quote_spanned;
use syn::spanned::Spanned;
use syn::visit_mut::{self, VisitMut};
use syn::{Expr, Type};

/// The integer types a cast may target, and the helper of `twinstep::twin` that converts to each.
const INTEGER_TARGETS: [(&str, &str); 12] = [
    ("usize", "to_usize"),
    ("u8", "to_u8"),
    ("u16", "to_u16"),
    ("u32", "to_u32"),
    ("u64", "to_u64"),
    ("u128", "to_u128"),
    ("isize", "to_isize"),
    ("i8", "to_i8"),
    ("i16", "to_i16"),
    ("i32", "to_i32"),
    ("i64", "to_i64"),
    ("i128", "to_i128"),
];

/// Rewrites casts into the float type and into integer types.
pub struct CastRewriter<'a> {
    pub ctx: &'a Ctx,
}

impl VisitMut for CastRewriter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        // Rewrite the operand first so nested casts come out right.
        visit_mut::visit_expr_mut(self, expr);
        let Expr::Cast(cast) = expr else { return };
        let span = cast.as_token.span();
        // `(n - 1) as f64` becomes a call, whose argument needs no parentheses (they would trip `unused_parens`).
        let operand = match &*cast.expr {
            Expr::Paren(inner) => &inner.expr,
            other => other,
        };
        if self.ctx.is_float_type(&cast.ty) {
            let t = self.ctx.param_at(span);
            let tokens = quote_spanned!(span=> ::twinstep::twin::to_real::<#t, _>(#operand));
            replace_expr(expr, tokens);
            return;
        }
        if let Type::Path(p) = &*cast.ty {
            if let Some(ident) = p.path.get_ident() {
                if let Some((_, helper)) = INTEGER_TARGETS.iter().find(|(name, _)| ident == name) {
                    let helper = syn::Ident::new(helper, cast.ty.span());
                    let tokens = quote_spanned!(span=> ::twinstep::twin::#helper(#operand));
                    replace_expr(expr, tokens);
                }
            }
        }
    }
}
