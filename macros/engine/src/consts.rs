//! Pass: float `const` and `static` items inside a kernel body.
//!
//! Before: `fn step(u: &mut [f64]) { const R: f64 = 0.25; const W: [f64; 3] = [0.25, 0.5, 0.25]; … }`
//! After:  `fn step_twin<T>(u: &mut [T]) { let R: T = <T as ::twinstep::Real>::from_f64(0.25f64);
//!          let W: [T; 3] = [<T as …>::from_f64(0.25f64), …]; … }`
//!
//! An item inside a function cannot use the function's type parameter, so a constant whose type mentions the float
//! type becomes a `let`
//! binding, moved to the top of its block because an item is visible in the whole block. The later passes then
//! rewrite its type and initializer like any other `let`.

use crate::context::Ctx;
use crate::predicates::mentions_float;
use syn::visit_mut::{self, VisitMut};
use syn::{Block, Item, Stmt};

/// Turns float constants of blocks into `let` bindings at the top of the block.
pub struct ConstHoister<'a> {
    pub ctx: &'a Ctx,
}

/// The name, type and value of a statement item the hoister turns into a `let`: a `const`, or a `static` that is
/// not `mut`, whose type mentions the float type (`f64`, `[f64; 3]`, `(f64, f64)`).
fn hoisted_parts<'a>(ctx: &Ctx, item: &'a Item) -> Option<(&'a syn::Ident, &'a syn::Type, &'a syn::Expr)> {
    match item {
        Item::Const(c) if mentions_float(ctx, &c.ty) => Some((&c.ident, &c.ty, &c.expr)),
        Item::Static(s) if mentions_float(ctx, &s.ty) && matches!(s.mutability, syn::StaticMutability::None) => {
            Some((&s.ident, &s.ty, &s.expr))
        }
        _ => None,
    }
}

/// Whether the hoister turns this statement item into a `let`.
pub fn hoists(ctx: &Ctx, item: &Item) -> bool {
    hoisted_parts(ctx, item).is_some()
}

impl VisitMut for ConstHoister<'_> {
    fn visit_block_mut(&mut self, block: &mut Block) {
        visit_mut::visit_block_mut(self, block);
        let mut hoisted = Vec::new();
        let mut rest = Vec::new();
        for stmt in std::mem::take(&mut block.stmts) {
            let binding = match &stmt {
                Stmt::Item(item) => hoisted_parts(self.ctx, item).and_then(|(name, ty, value)| {
                    syn::parse2::<Stmt>(quote::quote!(#[allow(non_snake_case)] let #name: #ty = #value;)).ok()
                }),
                _ => None,
            };
            match binding {
                Some(binding) => hoisted.push(binding),
                None => rest.push(stmt),
            }
        }
        hoisted.extend(rest);
        block.stmts = hoisted;
    }
}
