//! The rewrite engine behind `#[twinstep::audit]` and `twinstep expand`.
//!
//! It turns an annotated kernel — a function, an `impl` block or an inline module — into its *twin*: the same
//! code, generic over `T: twinstep::Real` in place of the float type. The proc-macro crate feeds it the
//! compiler's tokens; the CLI feeds it a source file. Both get the same twins.
//!
//! Phases: [`options`] parses the attribute; [`reject`] finds what cannot be twinned (all of it, spanned);
//! [`items`] builds the twins of whole items, running the [`pipeline`] of single-purpose passes over each body
//! ([`consts`], [`tokens`], [`casts`], [`paths`], [`literals`], [`types`], [`calls`]). Nothing here panics on
//! bad input: every failure is a `syn::Error` on the user's tokens.

pub mod calls;
pub mod casts;
pub mod consts;
pub mod context;
pub mod items;
pub mod literals;
pub mod options;
pub mod paths;
pub mod pipeline;
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

/// The twins of one annotated item, built with the attribute's options.
pub fn twins_of(options: &Options, item: &syn::Item) -> syn::Result<Vec<syn::Item>> {
    let mut ctx = Ctx::new(options.base, options.aliases.iter().cloned());
    for name in &options.calls {
        ctx.renames.insert(name.clone(), format!("{name}_{}", items::TWIN_SUFFIX));
    }
    let mut twins = items::twin_item(&mut ctx, item)?;
    for twin in &mut twins {
        syn::visit_mut::VisitMut::visit_item_mut(&mut literals::LiteralModeBinder, twin);
    }
    Ok(twins)
}

/// What the attribute emits: the original item untouched, then its twins, or the original and the errors.
///
/// The original is always emitted, so that a rejected construct does not cascade into unresolved names at every
/// call site of the kernel.
pub fn expand_attribute(attr: TokenStream, item: TokenStream) -> TokenStream {
    let options = match syn::parse2::<Options>(attr) {
        Ok(options) => options,
        Err(error) => return with_error(item, error),
    };
    // If the item does not parse, re-emit it as it is: the compiler then reports the real syntax error.
    let Ok(parsed) = syn::parse2::<syn::Item>(item.clone()) else { return item };
    match twins_of(&options, &parsed) {
        Ok(twins) => {
            let mut out = item;
            for twin in twins {
                twin.to_tokens(&mut out);
            }
            out
        }
        Err(error) => with_error(item, error),
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

fn source_errors(error: syn::Error) -> Vec<SourceError> {
    error
        .into_iter()
        .map(|e| {
            let start = e.span().start();
            SourceError { line: start.line, column: start.column + 1, message: e.to_string() }
        })
        .collect()
}

/// Whether an attribute is `#[twinstep::audit]` (or `#[audit]`, as after `use twinstep::audit`).
pub(crate) fn is_audit_attribute(attr: &syn::Attribute) -> bool {
    let names: Vec<String> = attr.path().segments.iter().map(|s| s.ident.to_string()).collect();
    matches!(names.iter().map(String::as_str).collect::<Vec<_>>().as_slice(), ["twinstep", "audit"] | ["audit"])
}

fn item_attrs_mut(item: &mut syn::Item) -> Option<&mut Vec<syn::Attribute>> {
    match item {
        syn::Item::Fn(f) => Some(&mut f.attrs),
        syn::Item::Impl(i) => Some(&mut i.attrs),
        syn::Item::Mod(m) => Some(&mut m.attrs),
        _ => None,
    }
}

fn item_name(item: &syn::Item) -> Option<String> {
    match item {
        syn::Item::Fn(f) => Some(f.sig.ident.to_string()),
        syn::Item::Mod(m) => Some(m.ident.to_string()),
        syn::Item::Impl(i) => Some(i.self_ty.to_token_stream().to_string().replace(' ', "")),
        _ => None,
    }
}

/// Finds the annotated items of a file, in source order, with their options; descends into inline modules.
fn annotated_items(items: &[syn::Item], found: &mut Vec<(Options, syn::Item)>, errors: &mut Vec<SourceError>) {
    for item in items {
        let mut stripped = item.clone();
        let Some(attrs) = item_attrs_mut(&mut stripped) else { continue };
        let position = attrs.iter().position(is_audit_attribute);
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
/// function, a module, or an `impl` block's type).
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
