//! Pass: calls that must go to a twin of another name.
//!
//! Before (an annotated `impl` block): `self.flux(a, b)`, `Self::limiter(r)`
//! After:  `self.flux_twin(a, b)`, `Self::limiter_twin(r)`
//!
//! Inside an annotated module the twins keep their names (they live in the twin module), so only free functions
//! and `impl` blocks need this pass: a call from one twinned item to another goes to the twin.

use crate::context::Ctx;
use syn::visit_mut::{self, VisitMut};
use syn::{Expr, ExprMethodCall};

/// Renames calls according to [`Ctx::renames`].
pub struct CallRetargeter<'a> {
    pub ctx: &'a Ctx,
}

impl CallRetargeter<'_> {
    fn renamed(&self, ident: &syn::Ident) -> Option<syn::Ident> {
        self.ctx.renames.get(&ident.to_string()).map(|new| syn::Ident::new(new, ident.span()))
    }
}

impl VisitMut for CallRetargeter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        visit_mut::visit_expr_mut(self, expr);
        if let Expr::Call(call) = expr {
            if let Expr::Path(p) = &mut *call.func {
                let segments = &mut p.path.segments;
                let plain = segments.len() == 1 && p.qself.is_none();
                let through_self = segments.len() == 2 && segments[0].ident == "Self";
                if plain || through_self {
                    if let Some(last) = segments.last_mut() {
                        if let Some(new) = self.renamed(&last.ident) {
                            last.ident = new;
                        }
                    }
                }
            }
        }
    }

    fn visit_expr_method_call_mut(&mut self, call: &mut ExprMethodCall) {
        visit_mut::visit_expr_method_call_mut(self, call);
        let on_self = matches!(&*call.receiver, Expr::Path(p) if p.path.is_ident("self"));
        if on_self {
            if let Some(new) = self.renamed(&call.method) {
                call.method = new;
            }
        }
    }
}
