//! The rewrite engine behind `#[twinstep::audit]` and `twinstep expand`.
//!
//! It turns an annotated kernel — a function, a struct and its `impl` blocks, an inline module, a whole file —
//! into its *twin*: the same code, generic over `T: twinstep::Real` in place of the float type. The proc-macro
//! crate feeds it the compiler's tokens; the CLI feeds it a source file; the build helper (`twinstep-build`)
//! feeds it a whole kernel file. All of them get the same twins.
//!
//! Phases: [`options`] parses the attribute; [`predicates`] answer questions about the user's tokens;
//! [`reject`] finds what cannot be twinned (all of it, spanned); [`items`] builds the twins of whole items,
//! running the [`pipeline`] of single-purpose passes over each body ([`consts`], [`tokens`], [`casts`],
//! [`paths`], [`literals`], [`types`], [`calls`], [`methods`]); [`layout`] prints a whole-file twin on its original lines.
//! Nothing here panics on bad input: every failure is a `syn::Error` on the user's tokens, and a rejected item
//! still gets twins, with stub bodies, so the user sees the real errors only.

pub mod calls;
pub mod casts;
pub mod consts;
pub mod context;
pub mod items;
pub mod layout;
pub mod literals;
pub mod methods;
pub mod options;
pub mod paths;
pub mod pipeline;
pub mod predicates;
pub mod reject;
pub mod scenario;
pub mod signature;
pub mod tokens;
pub mod types;

use context::Ctx;
use proc_macro2::TokenStream;
use quote::ToTokens;
use std::fmt;

pub use context::BaseFloat;
pub use options::Options;

/// The context of the rewrite an attribute's options ask for.
fn context(options: &Options) -> Ctx {
    let mut ctx = Ctx::new(options.base, options.aliases.iter().cloned());
    for name in &options.calls {
        ctx.renames.insert(name.clone(), format!("{name}_{}", items::TWIN_SUFFIX));
    }
    for name in &options.structs {
        let twin = items::struct_twin_name(&syn::Ident::new(name, proc_macro2::Span::call_site()));
        ctx.rename_type(name, &twin.to_string());
    }
    ctx.extra_bounds.clone_from(&options.bounds);
    ctx
}

fn impl_mode(options: &Options) -> items::ImplMode {
    if options.methods_only {
        items::ImplMode::MethodsOnly
    } else {
        items::ImplMode::TwinStruct
    }
}

/// Binds each twin function's literal mode (see [`literals`]).
fn bind_literal_modes(twins: &mut [syn::Item]) {
    for twin in twins {
        syn::visit_mut::VisitMut::visit_item_mut(&mut literals::LiteralModeBinder, twin);
    }
}

/// The twins of one annotated item, built with the attribute's options; every rejection as one error.
pub fn twins_of(options: &Options, item: &syn::Item) -> syn::Result<Vec<syn::Item>> {
    let mut ctx = context(options);
    let twinned = items::twin_item(&mut ctx, item, impl_mode(options));
    if let Some(error) = twinned.error {
        return Err(error);
    }
    let mut twins = twinned.twins;
    bind_literal_modes(&mut twins);
    Ok(twins)
}

/// The twins of a whole kernel file, as the items of its twin module (what `twinstep-build` writes): the file is
/// twinned as an annotated inline module would be, and `options` are the attribute's arguments.
pub fn twins_of_file(options: &Options, file: &syn::File) -> syn::Result<Vec<syn::Item>> {
    let mut ctx = context(options);
    let item = syn::Item::Mod(syn::ItemMod {
        attrs: Vec::new(),
        vis: syn::Visibility::Inherited,
        unsafety: None,
        mod_token: Default::default(),
        ident: syn::Ident::new("file", proc_macro2::Span::call_site()),
        content: Some((Default::default(), file.items.clone())),
        semi: None,
    });
    let twinned = items::twin_item(&mut ctx, &item, impl_mode(options));
    if let Some(error) = twinned.error {
        return Err(error);
    }
    let mut twins = twinned.twins;
    bind_literal_modes(&mut twins);
    Ok(match twins.pop() {
        Some(syn::Item::Mod(syn::ItemMod { content: Some((_, items)), .. })) => items,
        _ => Vec::new(),
    })
}

/// What the attribute emits: the original item untouched, then its twins, then the errors if something was
/// rejected (the twins then have stub bodies).
///
/// The original is always emitted, so that a rejected construct does not cascade into unresolved names at every
/// call site of the kernel; the stub twins do the same for the call sites of the twins.
pub fn expand_attribute(attr: TokenStream, item: TokenStream) -> TokenStream {
    let options = match syn::parse2::<Options>(attr) {
        Ok(options) => options,
        Err(error) => return with_error(item, error),
    };
    // If the item does not parse, re-emit it as it is: the compiler then reports the real syntax error.
    let Ok(parsed) = syn::parse2::<syn::Item>(item.clone()) else { return item };
    let mut ctx = context(&options);
    let twinned = items::twin_item(&mut ctx, &parsed, impl_mode(&options));
    let mut twins = twinned.twins;
    bind_literal_modes(&mut twins);
    let mut out = item;
    for twin in twins {
        twin.to_tokens(&mut out);
    }
    match twinned.error {
        Some(error) => with_error(out, error),
        None => out,
    }
}

fn with_error(mut item: TokenStream, error: syn::Error) -> TokenStream {
    item.extend(error.to_compile_error());
    item
}

/// A problem found while expanding a source file, with its position (1-based line, 1-based column).
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SourceError {
    pub line: usize,
    pub column: usize,
    pub message: String,
}

impl fmt::Display for SourceError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}: {}", self.line, self.column, self.message)
    }
}

/// Every error of `error`, with its position.
pub fn source_errors(error: syn::Error) -> Vec<SourceError> {
    error
        .into_iter()
        .map(|e| {
            let start = e.span().start();
            SourceError { line: start.line, column: start.column + 1, message: e.to_string() }
        })
        .collect()
}

fn item_attrs_mut(item: &mut syn::Item) -> Option<&mut Vec<syn::Attribute>> {
    match item {
        syn::Item::Fn(f) => Some(&mut f.attrs),
        syn::Item::Impl(i) => Some(&mut i.attrs),
        syn::Item::Mod(m) => Some(&mut m.attrs),
        syn::Item::Struct(s) => Some(&mut s.attrs),
        syn::Item::Enum(e) => Some(&mut e.attrs),
        _ => None,
    }
}

fn item_name(item: &syn::Item) -> Option<String> {
    match item {
        syn::Item::Fn(f) => Some(f.sig.ident.to_string()),
        syn::Item::Mod(m) => Some(m.ident.to_string()),
        syn::Item::Impl(i) => Some(i.self_ty.to_token_stream().to_string().replace(' ', "")),
        syn::Item::Struct(s) => Some(s.ident.to_string()),
        syn::Item::Enum(e) => Some(e.ident.to_string()),
        _ => None,
    }
}

/// Finds the annotated items of a file, in source order, with their options; descends into inline modules.
fn annotated_items(items: &[syn::Item], found: &mut Vec<(Options, syn::Item)>, errors: &mut Vec<SourceError>) {
    for item in items {
        let mut stripped = item.clone();
        let Some(attrs) = item_attrs_mut(&mut stripped) else { continue };
        let position = attrs.iter().position(predicates::is_audit_attribute);
        match position {
            Some(index) => {
                let attr = attrs.remove(index);
                let args = match &attr.meta {
                    syn::Meta::List(list) => list.tokens.clone(),
                    _ => TokenStream::new(),
                };
                match syn::parse2::<Options>(args) {
                    Ok(options) => found.push((options, stripped)),
                    Err(error) => errors.extend(source_errors(error)),
                }
            }
            None => {
                if let syn::Item::Mod(syn::ItemMod { content: Some((_, inner)), .. }) = item {
                    annotated_items(inner, found, errors);
                }
            }
        }
    }
}

/// The twins of the annotated items of a Rust source file, formatted; `only` keeps the items of that name (a
/// function, a module, a struct or enum, or an `impl` block's type).
pub fn expand_source(source: &str, only: Option<&str>) -> Result<String, Vec<SourceError>> {
    let file = syn::parse_file(source).map_err(source_errors)?;
    let mut found = Vec::new();
    let mut errors = Vec::new();
    annotated_items(&file.items, &mut found, &mut errors);
    if let Some(name) = only {
        found.retain(|(_, item)| item_name(item).as_deref() == Some(name));
        if found.is_empty() && errors.is_empty() {
            errors.push(SourceError {
                line: 1,
                column: 1,
                message: format!("no annotated item named `{name}` in this file"),
            });
        }
    } else if found.is_empty() && errors.is_empty() {
        errors.push(SourceError {
            line: 1,
            column: 1,
            message: "no item in this file carries `#[twinstep::audit]`".into(),
        });
    }
    let mut twins = Vec::new();
    for (options, item) in &found {
        match twins_of(options, item) {
            Ok(items) => twins.extend(items),
            Err(error) => errors.extend(source_errors(error)),
        }
    }
    if !errors.is_empty() {
        return Err(errors);
    }
    Ok(format_items(twins))
}

/// Formats items as a source file. The pretty-printer is a guard against nothing the engine produces, but it is
/// another crate's code: if it ever panicked, the tokens are printed unformatted instead.
pub fn format_items(items: Vec<syn::Item>) -> String {
    let file = syn::File { shebang: None, attrs: Vec::new(), items };
    let tokens = file.to_token_stream().to_string();
    std::panic::catch_unwind(move || prettyplease::unparse(&file)).unwrap_or(tokens)
}
