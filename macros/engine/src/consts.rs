//! Pass: float `const` and `static` items inside a kernel body.
//!
//! Before: `fn step(u: &mut [f64]) { const R: f64 = 0.25; … }`
//! After:  `fn step_twin<T>(u: &mut [T]) { let R: T = <T as ::twinstep::Real>::lit(0.25f64, "0.25"); … }`
//!
//! An item inside a function cannot use the function's type parameter, so a float constant becomes a `let`
//! binding, moved to the top of its block because an item is visible in the whole block. The later passes then
//! rewrite its type and initializer like any other `let`.

use crate::context::Ctx;
use syn::visit_mut::{self, VisitMut};
use syn::{Block, Item, Stmt};

/// Turns float constants of blocks into `let` bindings at the top of the block.
pub struct ConstHoister<'a> {
    pub ctx: &'a Ctx,
}

impl VisitMut for ConstHoister<'_> {
    fn visit_block_mut(&mut self, block: &mut Block) {
        visit_mut::visit_block_mut(self, block);
        let mut hoisted = Vec::new();
        let mut rest = Vec::new();
        for stmt in std::mem::take(&mut block.stmts) {
            let binding = match &stmt {
                Stmt::Item(Item::Const(c)) if self.ctx.is_float_type(&c.ty) => {
                    let (name, ty, value) = (&c.ident, &c.ty, &c.expr);
                    syn::parse2::<Stmt>(quote::quote!(#[allow(non_snake_case)] let #name: #ty = #value;)).ok()
                }
                Stmt::Item(Item::Static(s))
                    if self.ctx.is_float_type(&s.ty) && matches!(s.mutability, syn::StaticMutability::None) =>
                {
                    let (name, ty, value) = (&s.ident, &s.ty, &s.expr);
                    syn::parse2::<Stmt>(quote::quote!(#[allow(non_snake_case)] let #name: #ty = #value;)).ok()
                }
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
