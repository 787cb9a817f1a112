//! Pass: calls that must go to a twin of another name.
//!
//! Before (an annotated `impl` block): `self.flux(a, b)`, `Self::limiter(r)`, `ratios.map(Self::limiter)`
//! After:  `self.flux_twin(a, b)`, `Self::limiter_twin(r)`, `ratios.map(Self::limiter_twin)`
//!
//! Before (an annotated free function `fn relax(…)` calling itself, or told `calls = [van_leer]`):
//!         `relax(u, depth - 1)`, `thetas.map(van_leer)`
//! After:  `relax_twin(u, depth - 1)`, `thetas.map(van_leer_twin)`
//!
//! A name the item binds itself (`let van_leer = …`, a closure parameter) is left alone: it shadows the function.
//!
//! Inside an annotated module the twins keep their names (they live in the twin module), so only free functions
//! and `impl` blocks need this pass: a call from one twinned item to another goes to the twin. Method renames
//! apply to calls through `self` and `Self` only, function renames to plain calls only: in an `impl` block a plain
//! call `flux(a, b)` names a free function, not the method of that name.

use crate::context::Ctx;
use syn::visit_mut::{self, VisitMut};
use syn::{Expr, ExprMethodCall};

/// Renames calls according to [`Ctx::renames`] and [`Ctx::method_renames`].
pub struct CallRetargeter<'a> {
    pub ctx: &'a Ctx,
}

/// The new name of `ident` in `renames`, spanned at the call.
fn renamed(renames: &std::collections::BTreeMap<String, String>, ident: &syn::Ident) -> Option<syn::Ident> {
    renames.get(&ident.to_string()).map(|new| syn::Ident::new(new, ident.span()))
}

impl VisitMut for CallRetargeter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        visit_mut::visit_expr_mut(self, expr);
        // Any path expression: the callee of a call, and a function passed as a value (`.map(van_leer)`).
        let Expr::Path(p) = expr else { return };
        if p.qself.is_some() {
            return;
        }
        let segments = &mut p.path.segments;
        let plain = segments.len() == 1 && p.path.leading_colon.is_none();
        let through_self = segments.len() == 2 && segments[0].ident == "Self";
        let Some(last) = segments.last_mut() else { return };
        // A local binding (`let flux = …`, a closure parameter) shadows a function of the same name.
        let shadowed = plain && self.ctx.bound_names.contains(&last.ident.to_string());
        let renames = if plain { &self.ctx.renames } else { &self.ctx.method_renames };
        if (plain && !shadowed) || through_self {
            if let Some(new) = renamed(renames, &last.ident) {
                last.ident = new;
            }
        }
    }

    fn visit_expr_method_call_mut(&mut self, call: &mut ExprMethodCall) {
        visit_mut::visit_expr_method_call_mut(self, call);
        let on_self = matches!(&*call.receiver, Expr::Path(p) if p.path.is_ident("self"));
        if on_self {
            if let Some(new) = renamed(&self.ctx.method_renames, &call.method) {
                call.method = new;
            }
        }
    }
}
