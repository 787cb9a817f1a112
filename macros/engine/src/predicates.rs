//! Questions the engine asks about the user's syntax before it rewrites anything: does this mention the float
//! type, does this method take a float, does it return its own type, is this item a test, is this the audit
//! attribute. They answer on tokens alone (the engine never sees types), and they never change anything, so the
//! rejecter ([`reject`](crate::reject)) and the item pass ([`items`](crate::items)) share them.

use crate::context::Ctx;
use proc_macro2::{TokenStream, TokenTree};
use quote::ToTokens;
use syn::{Attribute, Item};

/// Whether the tokens mention the float type or a type that became generic.
pub fn mentions_float(ctx: &Ctx, tokens: &impl ToTokens) -> bool {
    fn scan(ctx: &Ctx, stream: TokenStream) -> bool {
        stream.into_iter().any(|tree| match tree {
            TokenTree::Ident(ident) => {
                let name = ident.to_string();
                ctx.float_names.contains(&name) || ctx.generic_types.contains(&name)
            }
            TokenTree::Group(group) => scan(ctx, group.stream()),
            _ => false,
        })
    }
    scan(ctx, tokens.to_token_stream())
}

/// Whether a float literal of the kernel's type appears anywhere in the tokens (`0.5`, `1e-3`, `2.0f64`).
pub fn mentions_float_literal(ctx: &Ctx, tokens: &impl ToTokens) -> bool {
    fn scan(ctx: &Ctx, stream: TokenStream) -> bool {
        stream.into_iter().any(|tree| match tree {
            TokenTree::Literal(literal) => match syn::parse2::<syn::Lit>(literal.into_token_stream()) {
                Ok(syn::Lit::Float(float)) => float.suffix().is_empty() || float.suffix() == ctx.base.name(),
                _ => false,
            },
            TokenTree::Group(group) => scan(ctx, group.stream()),
            _ => false,
        })
    }
    scan(ctx, tokens.to_token_stream())
}

/// Whether a method's parameters mention the float type: only then can its twin's type parameter be inferred from
/// the arguments, and only then does the method compute on values the caller's lens tracks.
///
/// A method of a struct that stays as it is and whose float shows up in the return type alone (`fn
/// diffusion_number(&self) -> f64`, reading the struct's own fields) computes on plain values: it is left alone
/// and the twins call the original, whose `f64` result mixes with `T`.
pub fn inputs_mention_float(ctx: &Ctx, sig: &syn::Signature) -> bool {
    sig.inputs.iter().any(|input| mentions_float(ctx, input))
}

/// Whether a method of an `impl` block returns its own type (`fn new(dx: f64) -> Self`, `-> Result<Cable, E>`):
/// a struct that stays as it is cannot be built from `T` values, so such a method gets no twin there.
pub fn returns_self(sig: &syn::Signature, self_ty: &syn::Type) -> bool {
    let syn::ReturnType::Type(_, output) = &sig.output else { return false };
    let self_name = type_name(self_ty);
    output
        .to_token_stream()
        .into_iter()
        .any(|t| mentions_ident(&t, "Self") || self_name.as_deref().is_some_and(|name| mentions_ident(&t, name)))
}

/// The name of a type written as a path (`Solver`, `crate::model::Solver<N>`): its last segment.
pub fn type_name(ty: &syn::Type) -> Option<String> {
    match ty {
        syn::Type::Path(p) if p.qself.is_none() => p.path.segments.last().map(|s| s.ident.to_string()),
        syn::Type::Paren(p) => type_name(&p.elem),
        syn::Type::Group(g) => type_name(&g.elem),
        _ => None,
    }
}

/// Whether a token tree is, or holds at any depth, the identifier `name`.
pub fn mentions_ident(tree: &TokenTree, name: &str) -> bool {
    match tree {
        TokenTree::Ident(ident) => ident == name,
        TokenTree::Group(group) => group.stream().into_iter().any(|t| mentions_ident(&t, name)),
        _ => false,
    }
}

/// Whether an item of a module exists for the tests only (`#[cfg(test)] mod tests`, a `#[test]` function): it tests
/// the original, and a copy in the twin module would run again against the twins' types.
pub fn is_test_item(item: &Item) -> bool {
    let attrs = match item {
        Item::Mod(m) => &m.attrs,
        Item::Fn(f) => &f.attrs,
        Item::Use(u) => &u.attrs,
        Item::Impl(i) => &i.attrs,
        _ => return false,
    };
    attrs.iter().any(|attr| {
        let cfg_test = attr.path().is_ident("cfg")
            && matches!(&attr.meta, syn::Meta::List(list) if list.tokens.to_string() == "test");
        cfg_test || attr.path().is_ident("test")
    })
}

/// Whether an attribute is `#[twinstep::audit]` (or `#[audit]`, as after `use twinstep::audit`).
pub fn is_audit_attribute(attr: &Attribute) -> bool {
    let names: Vec<String> = attr.path().segments.iter().map(|s| s.ident.to_string()).collect();
    matches!(names.iter().map(String::as_str).collect::<Vec<_>>().as_slice(), ["twinstep", "audit"] | ["audit"])
}

/// Attributes of the original that the twin must not repeat: symbol names (a second item would clash), test
/// markers (the twin is not a test), and the audit attribute itself.
pub fn keep_attribute(attr: &Attribute) -> bool {
    let path = attr.path();
    let last = path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
    let unsafe_name = matches!(&attr.meta, syn::Meta::List(list) if list.path.is_ident("unsafe"));
    !(matches!(last.as_str(), "no_mangle" | "export_name" | "test" | "bench" | "audit") || unsafe_name)
}
