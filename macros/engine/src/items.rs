//! Twins of whole items: a free function, an `impl` block, an inline module.
//!
//! Before / After, with the names the twins get:
//!
//! | annotated item | twin |
//! |---|---|
//! | `fn heat(u: &[f64], out: &mut [f64], r: f64)` | `fn heat_twin<T>(u: &[T], out: &mut [T], r: T)` |
//! | `impl Rod { fn step(&mut self, u: &mut [f64]) }` | `impl Rod { fn step_twin<T>(&mut self, u: &mut [T]) }` |
//! | `impl Rod { fn r(&self) -> f64 }` (no float parameter) | none: the twins call `self.r()`, a plain `f64` |
//! | `impl Rod { fn new(dx: f64) -> Self }` (returns its own type) | none: a twin could not build a `Rod` from `T` |
//! | `mod solver { struct Grid { u: Vec<f64> } fn step(g: &mut Grid) }` | `mod solver_twin { struct Grid<T> { u: Vec<T> } fn step<T>(g: &mut Grid<T>) }` |
//! | `mod fv { trait Flux { fn f(&self, u: f64) -> f64; } impl Flux for Burgers { … } }` | `mod fv_twin { trait Flux<T> { fn f(&self, u: T) -> T; } impl<T> Flux<T> for Burgers { … } }` |
//!
//! Test-only items of a module (`#[cfg(test)]`, `#[test]`) are left out of its twin.
//!
//! Every twin carries `T: Real + BaseOps<f64>, f64: MixedOps<T> + MixedOps<f64>, for<'twin> &'twin T: RefOps<T>`
//! (see [`Ctx::where_predicates`] for the trivial-looking `f64: MixedOps<f64>`). Items whose signature does not
//! mention the float type are copied unchanged: they have nothing to twin, and a type parameter they do not use
//! could not be inferred at their call sites. For the same reason a method of a struct that stays as it is gets a
//! twin only when a parameter mentions the float, and not when it returns the struct itself. Twins are never
//! `const fn`: the operators of `T` are trait methods.

use crate::context::Ctx;
use crate::pipeline;
use crate::reject::Rejecter;
use proc_macro2::{Span, TokenStream, TokenTree};
use quote::{format_ident, ToTokens};
use std::collections::{BTreeSet, VecDeque};
use syn::visit::Visit;
use syn::visit_mut::VisitMut;
use syn::{Attribute, Generics, ImplItem, Item, ItemFn, ItemImpl, ItemMod, Stmt};

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
/// the struct stays as it is, so a twin could not build one from `T` values; such a method gets no twin.
fn returns_self(sig: &syn::Signature, self_ty: &syn::Type) -> bool {
    let syn::ReturnType::Type(_, output) = &sig.output else { return false };
    let self_name = match self_ty {
        syn::Type::Path(p) => p.path.segments.last().map(|s| s.ident.to_string()),
        _ => None,
    };
    output
        .to_token_stream()
        .into_iter()
        .any(|t| mentions_ident(&t, "Self") || self_name.as_deref().is_some_and(|name| mentions_ident(&t, name)))
}

fn mentions_ident(tree: &TokenTree, name: &str) -> bool {
    match tree {
        TokenTree::Ident(ident) => ident == name,
        TokenTree::Group(group) => group.stream().into_iter().any(|t| mentions_ident(&t, name)),
        _ => false,
    }
}

/// Picks a name for the type parameter that no generic parameter of the item already uses.
pub fn choose_param(ctx: &mut Ctx, item: &impl ToTokens) {
    struct Params(BTreeSet<String>);
    impl<'ast> Visit<'ast> for Params {
        fn visit_type_param(&mut self, param: &'ast syn::TypeParam) {
            self.0.insert(param.ident.to_string());
        }
    }
    let mut params = Params(BTreeSet::new());
    if let Ok(file) = syn::parse2::<syn::File>(item.to_token_stream()) {
        params.visit_file(&file);
    }
    let mut name = "T".to_string();
    let mut n = 0;
    while params.0.contains(&name) || ctx.float_names.contains(&name) || ctx.generic_types.contains(&name) {
        n += 1;
        name = format!("TwinReal{n}");
    }
    ctx.param = syn::Ident::new(&name, Span::call_site());
}

/// Adds the twin's type parameter (after the lifetimes) and the `where` predicates to a generics list.
fn add_generics(ctx: &Ctx, generics: &mut Generics) {
    let param = &ctx.param;
    let lifetimes = generics.params.iter().take_while(|p| matches!(p, syn::GenericParam::Lifetime(_))).count();
    if let Ok(new) = syn::parse2::<syn::GenericParam>(quote::quote!(#param)) {
        generics.params.insert(lifetimes, new);
    }
    let predicates = ctx.where_predicates();
    if let Ok(clause) = syn::parse2::<syn::WhereClause>(quote::quote!(where #predicates)) {
        generics.make_where_clause().predicates.extend(clause.predicates);
    }
}

/// Attributes of the original that the twin must not repeat: symbol names (a second item would clash), test
/// markers (the twin is not a test), and the audit attribute itself.
fn keep_attribute(attr: &Attribute) -> bool {
    let path = attr.path();
    let last = path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
    let unsafe_name = matches!(&attr.meta, syn::Meta::List(list) if list.path.is_ident("unsafe"));
    !(matches!(last.as_str(), "no_mangle" | "export_name" | "test" | "bench" | "audit") || unsafe_name)
}

/// The attributes every generated item gets: the original's, and lints the rewrite itself can trigger.
fn twin_attributes(original: &[Attribute]) -> Vec<Attribute> {
    let mut attrs: Vec<Attribute> = original.iter().filter(|a| keep_attribute(a)).cloned().collect();
    // Hoisted constants keep their upper-case names as `let` bindings.
    attrs.push(syn::parse_quote!(#[allow(non_snake_case)]));
    attrs
}

/// The items nested in an original body that the twin keeps as written, in the order a walk meets them: every
/// item except functions with a float in their signature (which get their own type parameter) and the constants
/// the hoister turns into `let`s.
///
/// An item cannot use the function's type parameter. A nested function without a float in its signature would
/// leave that parameter uninferable at its call sites, so a float literal in its body (`(n as f64 * 1.5) as usize`)
/// must stay a plain `f64`; a nested struct, enum, `impl` or `use` stays as written for the same reason.
struct KeptNestedItems<'a> {
    ctx: &'a Ctx,
    found: VecDeque<Item>,
}

impl<'ast> Visit<'ast> for KeptNestedItems<'_> {
    fn visit_stmt(&mut self, stmt: &'ast Stmt) {
        if let Stmt::Item(item) = stmt {
            let twinned_fn = matches!(item, Item::Fn(f) if mentions_float(self.ctx, &f.sig));
            if !twinned_fn {
                if !crate::consts::hoists(self.ctx, item) {
                    self.found.push_back(item.clone());
                }
                return;
            }
        }
        syn::visit::visit_stmt(self, stmt);
    }
}

/// Gives nested function items of a rewritten body their own type parameter (an item cannot use the outer one),
/// and puts back the original of every other nested item ([`KeptNestedItems`]).
struct NestedFns<'a> {
    ctx: &'a Ctx,
    kept: VecDeque<Item>,
}

impl NestedFns<'_> {
    /// Fixes the nested items of `block`, the rewritten form of `original`.
    fn fix(ctx: &Ctx, original: &syn::Block, block: &mut syn::Block) {
        let mut kept = KeptNestedItems { ctx, found: VecDeque::new() };
        kept.visit_block(original);
        NestedFns { ctx, kept: kept.found }.visit_block_mut(block);
    }
}

impl VisitMut for NestedFns<'_> {
    fn visit_stmt_mut(&mut self, stmt: &mut Stmt) {
        if let Stmt::Item(item) = stmt {
            let param = self.ctx.param.to_string();
            match item {
                Item::Fn(f) if f.sig.to_token_stream().into_iter().any(|t| mentions_ident(&t, &param)) => {
                    add_generics(self.ctx, &mut f.sig.generics);
                }
                _ => {
                    // Both walks meet the kept items in the same order, and neither descends into them.
                    if let Some(original) = self.kept.pop_front() {
                        *item = original;
                    }
                    return;
                }
            }
        }
        syn::visit_mut::visit_stmt_mut(self, stmt);
    }
}

/// The twin of a function, with its own type parameter, under `name`.
pub fn twin_fn(ctx: &Ctx, f: &ItemFn, name: syn::Ident) -> ItemFn {
    let mut twin = f.clone();
    twin.attrs = twin_attributes(&f.attrs);
    twin.sig.ident = name;
    // Trait methods cannot run in constant evaluation, so a `const fn` twin would not compile.
    twin.sig.constness = None;
    // The predicates name the base float, so they go in after the rewrite, which would turn it into `T`.
    pipeline::rewrite(ctx, &mut twin.sig);
    pipeline::rewrite(ctx, &mut *twin.block);
    add_generics(ctx, &mut twin.sig.generics);
    NestedFns::fix(ctx, &f.block, &mut twin.block);
    twin
}

/// The twin of a method inside an `impl` block whose self type stays as it is.
fn twin_method(ctx: &Ctx, f: &syn::ImplItemFn, name: syn::Ident) -> syn::ImplItemFn {
    let mut twin = f.clone();
    twin.attrs = twin_attributes(&f.attrs);
    twin.sig.ident = name;
    twin.sig.constness = None;
    pipeline::rewrite(ctx, &mut twin.sig);
    pipeline::rewrite(ctx, &mut twin.block);
    add_generics(ctx, &mut twin.sig.generics);
    NestedFns::fix(ctx, &f.block, &mut twin.block);
    twin
}

/// The suffix that names the twin of a free function, a method and a module.
pub const TWIN_SUFFIX: &str = "twin";

/// The twin name of an item.
pub fn twin_name(ident: &syn::Ident) -> syn::Ident {
    format_ident!("{}_{}", ident, TWIN_SUFFIX, span = ident.span())
}

/// Records every name the item binds, for [`Ctx::bound_names`].
fn collect_bound_names(ctx: &mut Ctx, item: &Item) {
    struct Bindings<'a>(&'a mut BTreeSet<String>);
    impl<'ast> Visit<'ast> for Bindings<'_> {
        fn visit_pat_ident(&mut self, pat: &'ast syn::PatIdent) {
            self.0.insert(pat.ident.to_string());
            syn::visit::visit_pat_ident(self, pat);
        }
        fn visit_item_const(&mut self, item: &'ast syn::ItemConst) {
            self.0.insert(item.ident.to_string());
            syn::visit::visit_item_const(self, item);
        }
        fn visit_item_static(&mut self, item: &'ast syn::ItemStatic) {
            self.0.insert(item.ident.to_string());
            syn::visit::visit_item_static(self, item);
        }
    }
    Bindings(&mut ctx.bound_names).visit_item(item);
}

/// Rejects what cannot be twinned, then builds the twins of one annotated item.
pub fn twin_item(ctx: &mut Ctx, item: &Item) -> syn::Result<Vec<Item>> {
    choose_param(ctx, item);
    collect_bound_names(ctx, item);
    if let Item::Mod(m) = item {
        collect_module_facts(ctx, m);
    }
    let mut rejecter = Rejecter::new(ctx);
    rejecter.visit_item(item);
    if let Item::Impl(imp) = item {
        if let Some((_, path, _)) = &imp.trait_ {
            rejecter.errors.push(syn::Error::new_spanned(
                path,
                "twinstep cannot twin a trait impl on its own: the trait fixes the method signatures\n\
                 hint: annotate the inline module that holds the type and the impl, so the type becomes generic too",
            ));
        }
    }
    if let Some(error) = rejecter.into_error() {
        return Err(error);
    }
    match item {
        Item::Fn(f) => {
            if !mentions_float(ctx, &f.sig) {
                return Err(syn::Error::new_spanned(
                    &f.sig,
                    format!(
                        "twinstep found no `{}` in this signature, so the twin would have nothing to take or return\n\
                         hint: annotate the function that takes the fields, or name a precision alias with \
                         `#[twinstep::audit(alias = Name)]`",
                        ctx.base.name()
                    ),
                ));
            }
            ctx.renames.insert(f.sig.ident.to_string(), twin_name(&f.sig.ident).to_string());
            Ok(vec![Item::Fn(twin_fn(ctx, f, twin_name(&f.sig.ident)))])
        }
        Item::Impl(imp) => Ok(vec![Item::Impl(twin_impl_block(ctx, imp)?)]),
        Item::Mod(m) => Ok(vec![Item::Mod(twin_module(ctx, m, twin_name(&m.ident))?)]),
        other => Err(syn::Error::new_spanned(
            other,
            "`#[twinstep::audit]` goes on a function, an `impl` block or an inline module (`mod name { … }`)",
        )),
    }
}

/// The twins of the methods of an `impl` block, as a second `impl` block of the same type.
fn twin_impl_block(ctx: &mut Ctx, imp: &ItemImpl) -> syn::Result<ItemImpl> {
    let methods: Vec<&syn::ImplItemFn> = imp
        .items
        .iter()
        .filter_map(|i| match i {
            ImplItem::Fn(f) if inputs_mention_float(ctx, &f.sig) && !returns_self(&f.sig, &imp.self_ty) => Some(f),
            _ => None,
        })
        .collect();
    if methods.is_empty() {
        return Err(syn::Error::new_spanned(
            &imp.self_ty,
            format!(
                "twinstep found no method of this `impl` block with `{}` in its parameters\n\
                 hint: annotate the block whose methods take the fields",
                ctx.base.name()
            ),
        ));
    }
    for f in &methods {
        ctx.method_renames.insert(f.sig.ident.to_string(), twin_name(&f.sig.ident).to_string());
    }
    let mut twin = imp.clone();
    twin.attrs = imp.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
    twin.items = methods.iter().map(|f| ImplItem::Fn(twin_method(ctx, f, twin_name(&f.sig.ident)))).collect();
    Ok(twin)
}

/// Reads what the module declares that changes how its items are twinned: precision aliases, imported
/// constants, float constants, and which structs and enums become generic.
pub(crate) fn collect_module_facts(ctx: &mut Ctx, m: &ItemMod) {
    let Some((_, items)) = &m.content else { return };
    for item in items {
        match item {
            Item::Type(alias) if ctx.is_float_type(&alias.ty) && alias.generics.params.is_empty() => {
                ctx.float_names.insert(alias.ident.to_string());
            }
            Item::Use(u) => collect_const_imports(ctx, &u.tree, &mut Vec::new()),
            _ => {}
        }
    }
    for item in items {
        let (ident, ty, expr) = match item {
            Item::Const(c) => (&c.ident, &c.ty, &c.expr),
            Item::Static(s) if matches!(s.mutability, syn::StaticMutability::None) => (&s.ident, &s.ty, &s.expr),
            _ => continue,
        };
        if ctx.is_float_type(ty) {
            ctx.module_consts.insert(ident.to_string(), literal_initializer(ctx, expr));
        }
    }
    // A type is generic when it holds the float type or another generic type; repeat until nothing changes.
    loop {
        let before = ctx.generic_types.len();
        for item in items {
            let (ident, fields) = match item {
                Item::Struct(s) => (&s.ident, s.fields.to_token_stream()),
                Item::Enum(e) => (&e.ident, e.variants.to_token_stream()),
                // A trait whose methods take or return the float type: `trait Flux { fn flux(&self, u: f64) -> f64; }`.
                Item::Trait(t) => (&t.ident, t.items.iter().map(ToTokens::to_token_stream).collect::<TokenStream>()),
                _ => continue,
            };
            if mentions_float(ctx, &fields) {
                ctx.generic_types.insert(ident.to_string());
            }
        }
        if ctx.generic_types.len() == before {
            break;
        }
    }
}

/// The text of a constant's initializer when it is a float literal of the kernel's type (possibly negated).
fn literal_initializer(ctx: &Ctx, expr: &syn::Expr) -> Option<String> {
    match expr {
        syn::Expr::Lit(syn::ExprLit { lit: syn::Lit::Float(f), .. }) => crate::literals::literal_text(ctx, f),
        syn::Expr::Unary(syn::ExprUnary { op: syn::UnOp::Neg(_), expr, .. }) => {
            literal_initializer(ctx, expr).map(|t| format!("-{t}"))
        }
        syn::Expr::Paren(p) => literal_initializer(ctx, &p.expr),
        _ => None,
    }
}

/// Records `use std::f64::consts::{PI, E as EULER}` and `use std::f64::consts as c`.
fn collect_const_imports(ctx: &mut Ctx, tree: &syn::UseTree, prefix: &mut Vec<String>) {
    let under_consts = prefix.len() >= 2
        && prefix[prefix.len() - 1] == "consts"
        && ctx.float_names.contains(&prefix[prefix.len() - 2]);
    match tree {
        syn::UseTree::Path(p) => {
            prefix.push(p.ident.to_string());
            collect_const_imports(ctx, &p.tree, prefix);
            prefix.pop();
        }
        syn::UseTree::Group(g) => {
            for t in &g.items {
                collect_const_imports(ctx, t, prefix);
            }
        }
        syn::UseTree::Name(n) if under_consts => {
            ctx.const_imports.insert(n.ident.to_string(), n.ident.to_string());
        }
        syn::UseTree::Rename(r) if under_consts => {
            ctx.const_imports.insert(r.rename.to_string(), r.ident.to_string());
        }
        syn::UseTree::Name(n) if n.ident == "consts" && prefix.last().is_some_and(|l| ctx.float_names.contains(l)) => {
            ctx.const_modules.insert("consts".to_string());
        }
        syn::UseTree::Rename(r)
            if r.ident == "consts" && prefix.last().is_some_and(|l| ctx.float_names.contains(l)) =>
        {
            ctx.const_modules.insert(r.rename.to_string());
        }
        _ => {}
    }
}

/// The twin of an inline module: a sibling module whose structs are generic and whose functions are twins.
fn twin_module(ctx: &Ctx, m: &ItemMod, name: syn::Ident) -> syn::Result<ItemMod> {
    let Some((brace, items)) = &m.content else {
        return Err(syn::Error::new_spanned(
            m,
            "twinstep can only twin an inline module (`mod name { … }`): the attribute cannot see a module's file\n\
             hint: put the kernel in an inline module, or annotate the functions in the file",
        ));
    };
    let mut twins = Vec::with_capacity(items.len());
    for item in items.iter().filter(|item| !is_test_item(item)) {
        twins.push(twin_module_item(ctx, item)?);
    }
    let mut twin = m.clone();
    twin.attrs = m.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
    twin.ident = name;
    twin.content = Some((*brace, twins));
    Ok(twin)
}

/// Whether an item of a module exists for the tests only (`#[cfg(test)] mod tests`, a `#[test]` function): it tests
/// the original, and a copy in the twin module would run again against the twins' types.
fn is_test_item(item: &Item) -> bool {
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

/// One item of an annotated module, twinned if it has anything to twin, else as it is.
fn twin_module_item(ctx: &Ctx, item: &Item) -> syn::Result<Item> {
    Ok(match item {
        Item::Struct(s) if ctx.generic_types.contains(&s.ident.to_string()) => {
            let mut twin = s.clone();
            add_type_param(ctx, &mut twin.generics);
            for field in twin.fields.iter_mut() {
                pipeline::rewrite(ctx, field);
            }
            Item::Struct(twin)
        }
        Item::Enum(e) if ctx.generic_types.contains(&e.ident.to_string()) => {
            let mut twin = e.clone();
            add_type_param(ctx, &mut twin.generics);
            for variant in twin.variants.iter_mut() {
                pipeline::rewrite(ctx, variant);
            }
            Item::Enum(twin)
        }
        Item::Trait(t) if ctx.generic_types.contains(&t.ident.to_string()) => {
            // `trait Flux<T>`: its methods' signatures and default bodies are rewritten like an impl's, and the
            // trait carries the twin's `where` clause so that default bodies may compute with `T`.
            let mut twin = t.clone();
            for inner in twin.items.iter_mut() {
                pipeline::rewrite(ctx, inner);
            }
            add_generics(ctx, &mut twin.generics);
            Item::Trait(twin)
        }
        Item::Fn(f) if mentions_float(ctx, &f.sig) => Item::Fn(twin_fn(ctx, f, f.sig.ident.clone())),
        Item::Impl(imp)
            if mentions_float(ctx, &imp.self_ty)
                || imp.trait_.as_ref().is_some_and(|(_, path, _)| mentions_float(ctx, path)) =>
        {
            let mut twin = imp.clone();
            pipeline::rewrite(ctx, &mut *twin.self_ty);
            if let Some((_, path, _)) = &mut twin.trait_ {
                let mut ty: syn::Type = syn::Type::Path(syn::TypePath { qself: None, path: path.clone() });
                pipeline::rewrite(ctx, &mut ty);
                if let syn::Type::Path(p) = ty {
                    *path = p.path;
                }
            }
            for (inner, original) in twin.items.iter_mut().zip(&imp.items) {
                if let ImplItem::Fn(f) = inner {
                    f.attrs.push(syn::parse_quote!(#[allow(non_snake_case)]));
                }
                pipeline::rewrite(ctx, inner);
                if let (ImplItem::Fn(f), ImplItem::Fn(original)) = (inner, original) {
                    NestedFns::fix(ctx, &original.block, &mut f.block);
                }
            }
            add_generics(ctx, &mut twin.generics);
            Item::Impl(twin)
        }
        Item::Impl(imp) if imp.trait_.is_none() => {
            // A type without floats whose methods take some: each such method gets its own parameter.
            let mut twin = imp.clone();
            for inner in twin.items.iter_mut() {
                if let ImplItem::Fn(f) = inner {
                    if inputs_mention_float(ctx, &f.sig) {
                        *f = twin_method(ctx, f, f.sig.ident.clone());
                    }
                }
            }
            Item::Impl(twin)
        }
        Item::Mod(inner) if inner.content.is_some() => {
            let mut child = ctx.clone();
            collect_module_facts(&mut child, inner);
            Item::Mod(twin_module(&child, inner, inner.ident.clone())?)
        }
        other => other.clone(),
    })
}

/// Adds the bare type parameter (no bounds) to a struct's or enum's generics, after its lifetimes.
fn add_type_param(ctx: &Ctx, generics: &mut Generics) {
    let param = &ctx.param;
    let lifetimes = generics.params.iter().take_while(|p| matches!(p, syn::GenericParam::Lifetime(_))).count();
    if let Ok(new) = syn::parse2::<syn::GenericParam>(quote::quote!(#param)) {
        generics.params.insert(lifetimes, new);
    }
}
