//! Twins of whole items: a free function, a struct or enum, an `impl` block, an inline module (or a whole file,
//! for the build helper).
//!
//! Before / After, with the names the twins get:
//!
//! | annotated item | twin |
//! |---|---|
//! | `fn heat(u: &[f64], out: &mut [f64], r: f64)` | `fn heat_twin<T>(u: &[T], out: &mut [T], r: T)` |
//! | `fn main()` (no float in the signature, floats in the body) | `fn main_twin<T>()`, called as `main_twin::<Bound>()` |
//! | `struct Rod { u: Vec<f64>, n: usize }` | `struct RodTwin<T> { u: Vec<T>, n: usize }` |
//! | `impl Rod { fn new(…) -> Self; fn step(&mut self) }` (struct annotated too) | `impl<T> RodTwin<T> { fn new(…) -> Self; fn step(&mut self) }` |
//! | `#[twinstep::audit(methods_only)] impl Rod { fn step(&mut self, u: &mut [f64]) }` | `impl Rod { fn step_twin<T>(&mut self, u: &mut [T]) }` |
//! | the same, `fn r(&self) -> f64` (no float parameter) | none: the twins call `self.r()`, a plain `f64` |
//! | the same, `fn new(dx: f64) -> Self` (returns its own type) | none: a twin could not build a `Rod` from `T` |
//! | `mod solver { struct Grid { u: Vec<f64> } fn step(g: &mut Grid) }` | `mod solver_twin { struct Grid<T> { u: Vec<T> } fn step<T>(g: &mut Grid<T>) }` |
//! | `mod fv { trait Flux { fn f(&self, u: f64) -> f64; } impl Flux for Burgers { … } }` | `mod fv_twin { trait Flux<T> { fn f(&self, u: T) -> T; } impl<T> Flux<T> for Burgers { … } }` |
//!
//! A struct and its `impl` blocks are annotated separately (in one file or several) and meet by name: the
//! struct's attribute emits `RodTwin<T>` and a marker impl `::twinstep::twin::TwinStruct for Rod`; an `impl`
//! block's attribute emits `impl<T> RodTwin<T>` and a check that `Rod` has the marker, whose message says to
//! annotate the struct (or to write `methods_only`) when it has not.
//!
//! Test-only items of a module (`#[cfg(test)]`, `#[test]`) are left out of its twin.
//!
//! Every twin carries `T: Real + BaseOps<f64>, f64: MixedOps<T> + MixedOps<f64>, for<'twin> &'twin T: RefOps<T>`
//! (see [`Ctx::where_predicates`] for the trivial-looking `f64: MixedOps<f64>`). Inside a module, items whose
//! signature does not mention the float type are copied unchanged: they have nothing to twin, and a type parameter
//! they do not use could not be inferred at their call sites. For the same reason a method of a struct that stays
//! as it is gets a twin only when a parameter mentions the float, and not when it returns the struct itself. An
//! annotated free function is different: it was annotated to be twinned, so its twin is generic even without a
//! float in its signature, and its callers name the parameter. Twins are never `const fn`: the operators of `T`
//! are trait methods.
//!
//! When the item has a rejected construct ([`reject`]), the twins are still built, with bodies that cannot run
//! ([`stub_bodies`]): the build fails on the rejection, and the code that calls the twin still resolves.

use crate::context::Ctx;
use crate::pipeline;
use crate::predicates::{inputs_mention_float, keep_attribute, mentions_float, mentions_ident, returns_self};
use crate::predicates::{is_test_item, type_name};
use crate::reject;
use proc_macro2::{Span, TokenStream};
use quote::{format_ident, quote_spanned, ToTokens};
use std::collections::{BTreeSet, VecDeque};
use syn::spanned::Spanned;
use syn::visit::Visit;
use syn::visit_mut::VisitMut;
use syn::{Attribute, Generics, ImplItem, Item, ItemFn, ItemImpl, ItemMod, Stmt};

/// What the item pass makes of one annotated item: its twins, and the errors of everything that cannot be
/// twinned. With errors, the twins are stubs (see [`stub_bodies`]).
pub struct Twinned {
    pub twins: Vec<Item>,
    pub error: Option<syn::Error>,
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

/// The attributes every generated item gets: the original's, and lints the rewrite itself can trigger.
fn twin_attributes(original: &[Attribute], span: Span) -> Vec<Attribute> {
    let mut attrs: Vec<Attribute> = original.iter().filter(|a| keep_attribute(a)).cloned().collect();
    // Hoisted constants keep their upper-case names as `let` bindings.
    attrs.push(allow(span, quote::quote!(non_snake_case)));
    attrs
}

/// `#[allow(lints)]`, spanned at the item it goes on (its `fn` or `use` keyword): a whole-file twin prints each
/// token on its span's line, and an attribute must stand right above its item there.
fn allow(span: Span, lints: TokenStream) -> Attribute {
    syn::parse_quote_spanned!(span=> #[allow(#lints)])
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
    twin.attrs = twin_attributes(&f.attrs, f.sig.fn_token.span);
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
    twin.attrs = twin_attributes(&f.attrs, f.sig.fn_token.span);
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

/// Which way an annotated `impl` block is twinned.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ImplMode {
    /// The struct has a twin of its own (`#[twinstep::audit]` on the struct too): the block becomes an `impl` of
    /// `NameTwin<T>` with every item, under the same names.
    TwinStruct,
    /// The struct stays as it is (`methods_only`): each method with a float parameter gets a twin `name_twin`.
    MethodsOnly,
}

/// The name of a struct's or enum's twin: `Solver` → `SolverTwin` (a type name stays in upper camel case).
pub fn struct_twin_name(ident: &syn::Ident) -> syn::Ident {
    format_ident!("{}Twin", ident, span = ident.span())
}

/// Rejects what cannot be twinned, then builds the twins of one annotated item. Nothing is left out on an
/// error: the twins are still built, with stub bodies, so that the code calling them resolves and the user sees
/// the real errors only.
pub fn twin_item(ctx: &mut Ctx, item: &Item, mode: ImplMode) -> Twinned {
    choose_param(ctx, item);
    collect_bound_names(ctx, item);
    match item {
        Item::Mod(m) => collect_module_facts(ctx, m),
        Item::Impl(imp) if mode == ImplMode::TwinStruct => {
            if let Some(name) = type_name(&imp.self_ty) {
                let twin = struct_twin_name(&syn::Ident::new(&name, Span::call_site()));
                ctx.rename_type(&name, &twin.to_string());
            }
        }
        Item::Struct(_) | Item::Enum(_) => {
            // The struct's own name inside its fields (`next: Option<Box<Node>>`) means its twin.
            if let Some(ident) = struct_ident(item) {
                ctx.rename_type(&ident.to_string(), &struct_twin_name(ident).to_string());
            }
        }
        _ => {}
    }
    let errors = reject::rejections(ctx, item, mode);
    let mut twins = build_twins(ctx, item, mode, !errors.is_empty());
    let error = errors.into_iter().reduce(|mut all, e| {
        all.combine(e);
        all
    });
    if error.is_some() {
        for twin in &mut twins {
            stub_bodies(twin, &ctx.param.to_string());
        }
    }
    Twinned { twins, error }
}

fn struct_ident(item: &Item) -> Option<&syn::Ident> {
    match item {
        Item::Struct(s) => Some(&s.ident),
        Item::Enum(e) => Some(&e.ident),
        _ => None,
    }
}

/// The twins of an item, built whether or not it was rejected (`rejected`: only the parts that can be built
/// without cascading errors are).
fn build_twins(ctx: &mut Ctx, item: &Item, mode: ImplMode, rejected: bool) -> Vec<Item> {
    match item {
        Item::Fn(f) => {
            ctx.renames.insert(f.sig.ident.to_string(), twin_name(&f.sig.ident).to_string());
            vec![Item::Fn(twin_fn(ctx, f, twin_name(&f.sig.ident)))]
        }
        Item::Impl(imp) if imp.trait_.is_some() && rejected => Vec::new(),
        Item::Impl(imp) => match mode {
            ImplMode::TwinStruct => twin_impl_of_twin_struct(ctx, imp),
            ImplMode::MethodsOnly => vec![Item::Impl(twin_impl_block(ctx, imp))],
        },
        Item::Mod(m) if m.content.is_some() => vec![Item::Mod(twin_module(ctx, m, twin_name(&m.ident)))],
        Item::Struct(_) | Item::Enum(_) if !rejected || mentions_float(ctx, &fields_of(item)) => twin_struct(ctx, item),
        _ => Vec::new(),
    }
}

/// The fields of a struct or the variants of an enum, as tokens.
pub fn fields_of(item: &Item) -> proc_macro2::TokenStream {
    match item {
        Item::Struct(s) => s.fields.to_token_stream(),
        Item::Enum(e) => e.variants.to_token_stream(),
        _ => proc_macro2::TokenStream::new(),
    }
}

/// Replaces every function body of a twin by one that cannot run, for an item that was rejected: the compile
/// fails on the rejection anyway, and the twin's signature still lets the code that calls it resolve. An impl of a
/// trait for the bare parameter `param` (the twin of a rejected `impl Mul<Vec2> for f64`) is left out: the
/// rejection has said why it cannot be, and the compiler would say it again.
pub fn stub_bodies(item: &mut Item, param: &str) {
    struct Stubs<'a>(&'a str);
    impl VisitMut for Stubs<'_> {
        fn visit_item_mod_mut(&mut self, module: &mut ItemMod) {
            if let Some((_, items)) = &mut module.content {
                items.retain(|item| {
                    !matches!(item, Item::Impl(imp) if matches!(&*imp.self_ty, syn::Type::Path(p) if p.path.is_ident(self.0)))
                });
            }
            syn::visit_mut::visit_item_mod_mut(self, module);
        }
        fn visit_block_mut(&mut self, block: &mut syn::Block) {
            *block = syn::parse_quote!({
                ::core::unreachable!("twinstep rejected this kernel at compile time; see the errors beside it")
            });
        }
        fn visit_attributes_mut(&mut self, attrs: &mut Vec<Attribute>) {
            attrs.push(syn::parse_quote!(#[allow(unused_variables, unreachable_code, unused_mut)]));
        }
        fn visit_item_fn_mut(&mut self, f: &mut ItemFn) {
            self.visit_attributes_mut(&mut f.attrs);
            self.visit_block_mut(&mut f.block);
        }
        fn visit_impl_item_fn_mut(&mut self, f: &mut syn::ImplItemFn) {
            self.visit_attributes_mut(&mut f.attrs);
            self.visit_block_mut(&mut f.block);
        }
        fn visit_trait_item_fn_mut(&mut self, f: &mut syn::TraitItemFn) {
            if let Some(block) = &mut f.default {
                self.visit_attributes_mut(&mut f.attrs);
                self.visit_block_mut(block);
            }
        }
    }
    Stubs(param).visit_item_mut(item);
}

/// The twin of a struct or enum annotated on its own: `NameTwin<T>` with the float type replaced in its fields,
/// and the marker impl `::twinstep::twin::TwinStruct for Name` that an annotated `impl` block of it checks.
fn twin_struct(ctx: &Ctx, item: &Item) -> Vec<Item> {
    let (ident, generics) = match item {
        Item::Struct(s) => (&s.ident, &s.generics),
        Item::Enum(e) => (&e.ident, &e.generics),
        _ => return Vec::new(),
    };
    let mut twin = item.clone();
    match &mut twin {
        Item::Struct(s) => {
            s.attrs = s.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
            s.ident = struct_twin_name(ident);
            add_type_param(ctx, &mut s.generics);
            for field in s.fields.iter_mut() {
                pipeline::rewrite(ctx, field);
            }
        }
        Item::Enum(e) => {
            e.attrs = e.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
            e.ident = struct_twin_name(ident);
            add_type_param(ctx, &mut e.generics);
            for variant in e.variants.iter_mut() {
                pipeline::rewrite(ctx, variant);
            }
        }
        _ => {}
    }
    let (impl_generics, type_generics, where_clause) = generics.split_for_impl();
    let span = ident.span();
    let marker: Option<Item> = syn::parse2(quote_spanned! {span=>
        #[automatically_derived]
        impl #impl_generics ::twinstep::twin::TwinStruct for #ident #type_generics #where_clause {}
    })
    .ok();
    [Some(twin), marker].into_iter().flatten().collect()
}

/// The twin of an `impl` block of a struct that has a twin of its own: the same items, as an `impl` of
/// `NameTwin<T>`, and a check that the struct really is annotated, which fails with a message saying so.
fn twin_impl_of_twin_struct(ctx: &Ctx, imp: &ItemImpl) -> Vec<Item> {
    let mut twin = imp.clone();
    twin.attrs = imp.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
    pipeline::rewrite(ctx, &mut *twin.self_ty);
    for (inner, original) in twin.items.iter_mut().zip(&imp.items) {
        match inner {
            // An associated constant stays a plain value (`Self::G` mixes with `T` like a module constant):
            // the operators of `T` cannot run in constant evaluation.
            ImplItem::Const(_) => continue,
            ImplItem::Fn(f) => {
                f.attrs.retain(keep_attribute);
                f.attrs.push(allow(f.sig.fn_token.span, quote::quote!(non_snake_case)));
                f.sig.constness = None;
            }
            _ => {}
        }
        pipeline::rewrite(ctx, inner);
        if let (ImplItem::Fn(f), ImplItem::Fn(original)) = (inner, original) {
            NestedFns::fix(ctx, &original.block, &mut f.block);
        }
    }
    add_generics(ctx, &mut twin.generics);
    let self_ty = &imp.self_ty;
    let span = self_ty.span();
    let (impl_generics, _, where_clause) = imp.generics.split_for_impl();
    let check: Option<Item> = syn::parse2(quote_spanned! {span=>
        const _: () = {
            #[allow(dead_code)]
            fn twinstep_struct_has_a_twin #impl_generics () #where_clause {
                ::twinstep::twin::needs_twin_struct::<#self_ty>();
            }
        };
    })
    .ok();
    [Some(Item::Impl(twin)), check].into_iter().flatten().collect()
}

/// The twins of the methods of an `impl` block whose struct stays as it is, as a second `impl` block of the same
/// type: the methods with a float parameter that do not return the struct itself.
fn twin_impl_block(ctx: &mut Ctx, imp: &ItemImpl) -> ItemImpl {
    let methods = twinned_methods(ctx, imp);
    for f in &methods {
        ctx.method_renames.insert(f.sig.ident.to_string(), twin_name(&f.sig.ident).to_string());
    }
    let mut twin = imp.clone();
    twin.attrs = imp.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
    twin.items = methods.iter().map(|f| ImplItem::Fn(twin_method(ctx, f, twin_name(&f.sig.ident)))).collect();
    twin
}

/// The methods of an `impl` block that get a twin when the struct stays as it is.
pub fn twinned_methods<'a>(ctx: &Ctx, imp: &'a ItemImpl) -> Vec<&'a syn::ImplItemFn> {
    imp.items
        .iter()
        .filter_map(|i| match i {
            ImplItem::Fn(f) if inputs_mention_float(ctx, &f.sig) && !returns_self(&f.sig, &imp.self_ty) => Some(f),
            _ => None,
        })
        .collect()
}

/// Reads what the module declares that changes how its items are twinned: precision aliases, imported
/// constants, float constants, and which structs and enums become generic.
pub(crate) fn collect_module_facts(ctx: &mut Ctx, m: &ItemMod) {
    let Some((_, items)) = &m.content else { return };
    collect_items_facts(ctx, items);
}

/// `collect_module_facts` for the items of a module, inline or a whole file.
pub fn collect_items_facts(ctx: &mut Ctx, items: &[Item]) {
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
pub fn twin_module(ctx: &Ctx, m: &ItemMod, name: syn::Ident) -> ItemMod {
    let mut twin = m.clone();
    twin.attrs = m.attrs.iter().filter(|a| keep_attribute(a)).cloned().collect();
    twin.ident = name;
    if let Some((brace, items)) = &m.content {
        twin.content = Some((*brace, twin_module_items(ctx, items)));
    }
    twin
}

/// The twins of the items of a module (inline, or a whole file given to the build helper), test items left out.
pub fn twin_module_items(ctx: &Ctx, items: &[Item]) -> Vec<Item> {
    items.iter().filter(|item| !is_test_item(item)).map(|item| twin_module_item(ctx, item)).collect()
}

/// One item of an annotated module, twinned if it has anything to twin, else as it is.
fn twin_module_item(ctx: &Ctx, item: &Item) -> Item {
    match item {
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
                    f.attrs.push(allow(f.sig.fn_token.span, quote::quote!(non_snake_case)));
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
            Item::Mod(twin_module(&child, inner, inner.ident.clone()))
        }
        Item::Use(u) => {
            // A `use` of a float constant (`use std::f64::consts::PI;`) is unused in the twin, whose `PI` became
            // the lens's constant.
            let mut kept = u.clone();
            kept.attrs.push(allow(u.use_token.span, quote::quote!(unused_imports)));
            Item::Use(kept)
        }
        other => other.clone(),
    }
}

/// Adds the bare type parameter (no bounds) to a struct's or enum's generics, after its lifetimes.
fn add_type_param(ctx: &Ctx, generics: &mut Generics) {
    let param = &ctx.param;
    let lifetimes = generics.params.iter().take_while(|p| matches!(p, syn::GenericParam::Lifetime(_))).count();
    if let Ok(new) = syn::parse2::<syn::GenericParam>(quote::quote!(#param)) {
        generics.params.insert(lifetimes, new);
    }
}
