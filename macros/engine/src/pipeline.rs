//! The passes in the order they must run, applied to any piece of syntax.
//!
//! Order matters: float constants become `let`s before anything else; macro inputs are rewritten (by this same
//! pipeline, recursively) while the surrounding code is still original; casts are rewritten before the type pass
//! would turn `as f64` into `as T`; paths and literals before types; calls, then the method disambiguation of
//! `bounds` (after the calls pass, which renames `self.` method calls by their names).

use crate::calls::CallRetargeter;
use crate::casts::CastRewriter;
use crate::consts::ConstHoister;
use crate::context::Ctx;
use crate::literals::LiteralRewriter;
use crate::methods::MethodDisambiguator;
use crate::paths::PathRewriter;
use crate::tokens::MacroRewriter;
use crate::types::TypeRewriter;
use syn::visit_mut::VisitMut;

/// Syntax the pipeline can walk.
pub trait Walk {
    /// Lets the visitor walk this node.
    fn walk(&mut self, visitor: &mut dyn VisitMut);
}

macro_rules! walk {
    ($($node:ty => $method:ident),* $(,)?) => {$(
        impl Walk for $node {
            fn walk(&mut self, visitor: &mut dyn VisitMut) {
                visitor.$method(self);
            }
        }
    )*};
}
walk! {
    syn::Expr => visit_expr_mut,
    syn::Block => visit_block_mut,
    syn::Signature => visit_signature_mut,
    syn::Type => visit_type_mut,
    syn::Item => visit_item_mut,
    syn::ImplItem => visit_impl_item_mut,
    syn::TraitItem => visit_trait_item_mut,
    syn::Field => visit_field_mut,
    syn::Variant => visit_variant_mut,
}

/// Runs every pass over `node`.
pub fn rewrite(ctx: &Ctx, node: &mut dyn Walk) {
    node.walk(&mut ConstHoister { ctx });
    node.walk(&mut MacroRewriter { ctx });
    node.walk(&mut CastRewriter { ctx });
    node.walk(&mut PathRewriter { ctx });
    node.walk(&mut LiteralRewriter { ctx });
    node.walk(&mut TypeRewriter { ctx });
    node.walk(&mut CallRetargeter { ctx });
    node.walk(&mut MethodDisambiguator { ctx });
}
