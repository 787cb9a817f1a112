//! Pass: method calls on the twin's scalar, when the attribute's `bounds` add a trait that shares `Real`'s
//! method names (`bounds = [::twinstep::num_traits::Float]`).
//!
//! Before: `let r = d.sqrt(); let m = r.max(eps); let k = (i + 1).min(n - 1);`
//! After:  `let r = ::twinstep::twin::ByReal(d).sqrt(); let m = ::twinstep::twin::ByReal(r).max(eps);
//!          let k = ::twinstep::twin::ByReal(i + 1).min(n - 1);`
//!
//! Why: with `T: Real + Float`, `d.sqrt()` on a `T` is ambiguous (E0034: both traits have `sqrt`). `ByReal` has
//! inherent methods of every `Real` method name for any `R: Real`, which win over trait methods, and call
//! `Real`'s (`#[track_caller]`, so a lens still records the user's line). For the integer types it has `max`,
//! `min`, `clamp`, `abs` and `signum`, the names integers share; for any other receiver (a vector type's own
//! `floor()`) it dereferences to the receiver, whose own method is found as before. A receiver that is a
//! reference to the twin's scalar (`|x: &T| x.abs()`) is not covered: write `(*x).abs()`.
//!
//! Without `bounds` the pass does nothing: `Real` alone is unambiguous.

use crate::context::Ctx;
use crate::paths::real_method_arity;
use quote::quote_spanned;
use syn::spanned::Spanned;
use syn::visit_mut::{self, VisitMut};
use syn::Expr;

/// Wraps the receivers of `Real`-named method calls in `::twinstep::twin::ByReal`.
pub struct MethodDisambiguator<'a> {
    pub ctx: &'a Ctx,
}

impl VisitMut for MethodDisambiguator<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        visit_mut::visit_expr_mut(self, expr);
        if self.ctx.extra_bounds.is_empty() {
            return;
        }
        let Expr::MethodCall(call) = expr else { return };
        let name = call.method.to_string();
        // `total_cmp` takes references, which `ByReal` does not wrap.
        if call.turbofish.is_some() || name == "total_cmp" || real_method_arity(&name).is_none() {
            return;
        }
        // `(a - b).max(c)` becomes a call, whose argument needs no parentheses (they would trip `unused_parens`).
        let receiver = match &*call.receiver {
            Expr::Paren(inner) => &*inner.expr,
            other => other,
        };
        let span = receiver.span();
        let wrapped = quote_spanned!(span=> ::twinstep::twin::ByReal(#receiver));
        if let Ok(new) = syn::parse2::<Expr>(wrapped) {
            *call.receiver = new;
        }
    }
}
