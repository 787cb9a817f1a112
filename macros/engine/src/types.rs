//! Pass: the float type in every type position.
//!
//! Before: `fn step(u: &[f64], out: &mut Vec<f64>, f: &dyn Fn(f64) -> f64) { let s: f64 = u.iter().sum::<f64>(); }`
//! After:  `fn step(u: &[T], out: &mut Vec<T>, f: &dyn Fn(T) -> T) { let s: T = u.iter().sum::<T>(); }`
//!
//! Structs, enums and traits of an annotated module that became generic get the parameter put first among their
//! arguments where they are named as types or bounds (`Grid` becomes `Grid<T>`, `F: Flux` becomes `F: Flux<T>`,
//! `&dyn Flux` becomes `&dyn Flux<T>`).
//!
//! A struct or enum annotated on its own is named by its twin everywhere (`Solver` becomes `SolverTwin<T>` as a
//! type, `SolverTwin` in `SolverTwin { u, dx }` and `SolverTwin::new(…)`), whatever path leads to it.

use crate::context::Ctx;
use syn::visit_mut::{self, VisitMut};
use syn::{GenericArgument, PathArguments, Type};

/// Replaces the float type by the twin's type parameter.
pub struct TypeRewriter<'a> {
    pub ctx: &'a Ctx,
}

impl VisitMut for TypeRewriter<'_> {
    fn visit_type_mut(&mut self, ty: &mut Type) {
        if let Type::Path(p) = ty {
            if p.qself.is_none() && self.ctx.is_float_path(&p.path) {
                let span = p.path.segments.last().map(|s| s.ident.span()).unwrap_or_else(proc_macro2::Span::call_site);
                let param = self.ctx.param_at(span);
                *ty = Type::Path(syn::TypePath { qself: None, path: param.into() });
                return;
            }
        }
        visit_mut::visit_type_mut(self, ty);
        if let Type::Path(p) = ty {
            if p.qself.is_none() {
                self.add_param_if_generic(&mut p.path);
            }
        }
    }

    fn visit_trait_bound_mut(&mut self, bound: &mut syn::TraitBound) {
        visit_mut::visit_trait_bound_mut(self, bound);
        self.add_param_if_generic(&mut bound.path);
    }

    fn visit_path_mut(&mut self, path: &mut syn::Path) {
        visit_mut::visit_path_mut(self, path);
        for segment in path.segments.iter_mut() {
            if let Some(twin) = self.ctx.type_renames.get(&segment.ident.to_string()) {
                segment.ident = syn::Ident::new(twin, segment.ident.span());
            }
        }
    }
}

impl TypeRewriter<'_> {
    /// Adds the parameter to a path that names a type or trait of the module which became generic.
    fn add_param_if_generic(&self, path: &mut syn::Path) {
        let single = path.leading_colon.is_none() && (path.segments.len() == 1 || is_self_path(path));
        if let Some(last) = path.segments.last_mut() {
            let name = last.ident.to_string();
            // The twin of a struct annotated on its own is found through any path (`crate::model::SolverTwin`).
            let renamed = self.ctx.type_renames.values().any(|twin| *twin == name);
            if (single || renamed) && self.ctx.generic_types.contains(&name) {
                add_param(&mut last.arguments, self.ctx);
            }
        }
    }
}

/// `self::Name` or `Self`-free single segment paths name items of the module being twinned.
fn is_self_path(path: &syn::Path) -> bool {
    path.segments.len() == 2 && path.segments[0].ident == "self"
}

/// Puts the twin's parameter first among a path segment's type arguments.
pub fn add_param(arguments: &mut PathArguments, ctx: &Ctx) {
    let param: Type = Type::Path(syn::TypePath { qself: None, path: ctx.param.clone().into() });
    match arguments {
        PathArguments::None => {
            let mut args = syn::punctuated::Punctuated::new();
            args.push(GenericArgument::Type(param));
            *arguments = PathArguments::AngleBracketed(syn::AngleBracketedGenericArguments {
                colon2_token: None,
                lt_token: Default::default(),
                args,
                gt_token: Default::default(),
            });
        }
        PathArguments::AngleBracketed(angle) => {
            let already = angle
                .args
                .iter()
                .any(|a| matches!(a, GenericArgument::Type(Type::Path(p)) if p.path.is_ident(&ctx.param)));
            if !already {
                let lifetimes = angle.args.iter().take_while(|a| matches!(a, GenericArgument::Lifetime(_))).count();
                angle.args.insert(lifetimes, GenericArgument::Type(param));
            }
        }
        PathArguments::Parenthesized(_) => {}
    }
}
