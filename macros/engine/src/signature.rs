//! The signature of an annotated kernel, as `twinstep init` needs it to write an audit harness: where the kernel
//! and its twin live, and what each parameter is to a time loop — a field it reads, a field it writes, a float
//! parameter, an integer.
//!
//! It reads the same syntax and the same float names (the attribute's `float` and `alias` options, a module's
//! `type Real = f64;`) as the rewrite, so the harness calls the twin the attribute emits.
//!
//! | `--kernel` | the kernel | its twin |
//! |---|---|---|
//! | `step` | `fn step(…)` under `#[twinstep::audit]` | `step_twin` |
//! | `Cable::step` | a method of `#[twinstep::audit] impl Cable` | `Cable::step_twin` |
//! | `string::leapfrog` | `fn leapfrog` in `#[twinstep::audit] mod string` | `string_twin::leapfrog` |

use crate::context::{BaseFloat, Ctx};
use crate::items::{collect_module_facts, TWIN_SUFFIX};
use crate::options::Options;
use crate::predicates::is_audit_attribute;
use crate::SourceError;
use quote::ToTokens;
use syn::{FnArg, ImplItem, Item, Pat, ReturnType, Signature, Type};

/// What one parameter of the kernel is to the time loop.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum ParamKind {
    /// `&[f64]` (or `&Vec<f64>`): a field the step reads.
    Reads,
    /// `&mut [f64]` (or `&mut Vec<f64>`): a field the step writes.
    Writes,
    /// `f64`: a parameter of the run.
    Float,
    /// An integer (`usize`, `i32`, …), with its type: a parameter that stays as it is.
    Integer(String),
}

/// One parameter.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Param {
    pub name: String,
    pub kind: ParamKind,
}

/// The `self` of a method kernel.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Receiver {
    /// The type the `impl` block is for.
    pub self_type: String,
    /// `&mut self` rather than `&self`.
    pub mutable: bool,
}

/// An annotated kernel's signature and names.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Kernel {
    /// The path as asked for (`string::leapfrog`).
    pub path: String,
    /// The path of the original from the file's module (`string::leapfrog`, `Cable::step`).
    pub original: String,
    /// The path of the twin from the file's module (`string_twin::leapfrog`, `Cable::step_twin`).
    pub twin: String,
    /// The function's own name.
    pub name: String,
    pub receiver: Option<Receiver>,
    pub params: Vec<Param>,
    /// The kernel returns a value of the float type (a one-cell recurrence such as `u_{n+1} = f(u_n)`).
    pub returns_float: bool,
    /// The float type the kernel is written in.
    pub base: BaseFloat,
}

/// Finds the annotated kernel at `path` (`step`, `Type::method`, `module::function`) in a source file and reads its
/// signature. Every failure is a message for the user naming what is missing or what the harness cannot take.
pub fn find_kernel(source: &str, path: &str) -> Result<Kernel, SourceError> {
    let file = syn::parse_file(source).map_err(|e| {
        let start = e.span().start();
        SourceError { line: start.line, column: start.column + 1, message: e.to_string() }
    })?;
    let segments: Vec<&str> = path.split("::").collect();
    let not_found = |message: String| SourceError { line: 1, column: 1, message };
    let (head, rest) = segments.split_first().ok_or_else(|| not_found("an empty kernel path".into()))?;
    for item in &file.items {
        let Some(options) = audit_options(item)? else {
            continue;
        };
        let mut ctx = Ctx::new(options.base, options.aliases.iter().cloned());
        match (item, rest) {
            (Item::Fn(f), []) if f.sig.ident == head => {
                return kernel(&ctx, path, f.sig.ident.to_string(), twin(&f.sig.ident.to_string()), &f.sig);
            }
            (Item::Impl(block), [method]) if self_type(block).as_deref() == Some(*head) => {
                if !options.methods_only {
                    // The block is twinned with its struct: the twin method lives on `HeadTwin<T>`, which a harness
                    // would have to build for every lens from the user's own constructor — not something a
                    // signature tells.
                    let start = block.impl_token.span.start();
                    return Err(SourceError {
                        line: start.line,
                        column: start.column + 1,
                        message: format!(
                            "`impl {head}` is twinned with its struct (the twin is `{head}Twin<T>`), and a harness for \
                             it must build `{head}Twin::<T>` for every lens, which only you know how to do: write \
                             `#[twinstep::audit(methods_only)]` on the block if `{head}` keeps its `f64` fields as \
                             they are (the twin is then `{head}::{}`), or write the harness by hand (docs/audit.md)",
                            twin(method)
                        ),
                    });
                }
                let found = block.items.iter().find_map(|i| match i {
                    ImplItem::Fn(f) if f.sig.ident == method => Some(f),
                    _ => None,
                });
                let f = found.ok_or_else(|| not_found(format!("`impl {head}` has no method `{method}`")))?;
                return kernel(&ctx, path, format!("{head}::{method}"), format!("{head}::{}", twin(method)), &f.sig);
            }
            (Item::Mod(m), [function]) if m.ident == head => {
                collect_module_facts(&mut ctx, m);
                let items = m.content.as_ref().map(|(_, items)| items.as_slice()).unwrap_or_default();
                let found = items.iter().find_map(|i| match i {
                    Item::Fn(f) if f.sig.ident == function => Some(f),
                    _ => None,
                });
                let f = found.ok_or_else(|| not_found(format!("module `{head}` has no function `{function}`")))?;
                return kernel(
                    &ctx,
                    path,
                    format!("{head}::{function}"),
                    format!("{}::{function}", twin(head)),
                    &f.sig,
                );
            }
            _ => {}
        }
    }
    Err(not_found(format!(
        "no kernel `{path}` under #[twinstep::audit] in this file: name a function (`step`), a method of an annotated \
         impl block (`Solver::step`) or a function of an annotated module (`solver::step`), and put the attribute on \
         it first"
    )))
}

fn twin(name: &str) -> String {
    format!("{name}_{TWIN_SUFFIX}")
}

/// The options of an annotated item's `#[twinstep::audit]`; `None` for other items.
fn audit_options(item: &Item) -> Result<Option<Options>, SourceError> {
    let attrs = match item {
        Item::Fn(f) => &f.attrs,
        Item::Impl(i) => &i.attrs,
        Item::Mod(m) => &m.attrs,
        _ => return Ok(None),
    };
    let Some(attr) = attrs.iter().find(|a| is_audit_attribute(a)) else { return Ok(None) };
    let args = match &attr.meta {
        syn::Meta::List(list) => list.tokens.clone(),
        _ => proc_macro2::TokenStream::new(),
    };
    let options = syn::parse2::<Options>(args).map_err(|e| {
        let start = e.span().start();
        SourceError { line: start.line, column: start.column + 1, message: e.to_string() }
    })?;
    Ok(Some(options))
}

fn self_type(block: &syn::ItemImpl) -> Option<String> {
    match &*block.self_ty {
        Type::Path(p) if block.trait_.is_none() => p.path.segments.last().map(|s| s.ident.to_string()),
        _ => None,
    }
}

/// The kernel's parameters, classified; a parameter the harness cannot give is an error naming it.
fn kernel(ctx: &Ctx, path: &str, original: String, twin: String, sig: &Signature) -> Result<Kernel, SourceError> {
    let at = |tokens: &dyn ToTokens, message: String| {
        let start = syn::spanned::Spanned::span(&tokens.to_token_stream()).start();
        SourceError { line: start.line, column: start.column + 1, message }
    };
    let mut receiver = None;
    let mut params = Vec::new();
    for input in &sig.inputs {
        match input {
            FnArg::Receiver(r) => {
                let self_type = original.split("::").next().unwrap_or_default().to_string();
                receiver = Some(Receiver { self_type, mutable: r.mutability.is_some() });
            }
            FnArg::Typed(typed) => {
                let name = match &*typed.pat {
                    Pat::Ident(ident) => ident.ident.to_string(),
                    other => return Err(at(other, "twinstep init needs parameters with plain names".into())),
                };
                let kind = classify(ctx, &typed.ty).ok_or_else(|| {
                    at(
                        &typed.ty,
                        format!(
                            "parameter `{name}: {}` is not a field slice (`&[{f}]`, `&mut [{f}]`), a `{f}` or an \
                             integer: twinstep init writes harnesses for kernels that take their fields as slices; \
                             write this one by hand (docs/audit.md)",
                            type_text(&typed.ty),
                            f = ctx.base.name()
                        ),
                    )
                })?;
                params.push(Param { name, kind });
            }
        }
    }
    let returns_float = match &sig.output {
        ReturnType::Default => false,
        ReturnType::Type(_, ty) if ctx.is_float_type(ty) => true,
        ReturnType::Type(_, ty) => {
            return Err(at(ty, "a kernel returns nothing or one float: twinstep init cannot place this result".into()))
        }
    };
    Ok(Kernel {
        path: path.to_string(),
        original,
        twin,
        name: sig.ident.to_string(),
        receiver,
        params,
        returns_float,
        base: ctx.base,
    })
}

/// A type as a user writes it: `&mut Grid`, `Vec<f64>`.
fn type_text(ty: &Type) -> String {
    ty.to_token_stream().to_string().replace(' ', "").replace("&mut", "&mut ").replace("dyn", "dyn ")
}

/// What a parameter type is to the loop, `None` when it is none of the kinds a harness can give.
fn classify(ctx: &Ctx, ty: &Type) -> Option<ParamKind> {
    const INTEGERS: [&str; 12] =
        ["usize", "isize", "u8", "u16", "u32", "u64", "u128", "i8", "i16", "i32", "i64", "i128"];
    match ty {
        Type::Reference(r) => {
            let element = match &*r.elem {
                Type::Slice(s) => &*s.elem,
                Type::Path(p) => match p.path.segments.last() {
                    Some(last) if last.ident == "Vec" => match &last.arguments {
                        syn::PathArguments::AngleBracketed(args) => match args.args.first() {
                            Some(syn::GenericArgument::Type(t)) if args.args.len() == 1 => t,
                            _ => return None,
                        },
                        _ => return None,
                    },
                    _ => return None,
                },
                _ => return None,
            };
            ctx.is_float_type(element).then_some(if r.mutability.is_some() {
                ParamKind::Writes
            } else {
                ParamKind::Reads
            })
        }
        _ if ctx.is_float_type(ty) => Some(ParamKind::Float),
        Type::Path(p) if p.qself.is_none() && INTEGERS.iter().any(|i| p.path.is_ident(i)) => {
            Some(ParamKind::Integer(p.path.to_token_stream().to_string()))
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const SOURCE: &str = r#"
        #[twinstep::audit]
        pub fn heat(u: &[f64], out: &mut [f64], r: f64, n: usize) {}

        pub fn plain(u: &[f64]) {}

        #[twinstep::audit(alias = Real)]
        pub fn aliased(u: &Vec<Real>, out: &mut Vec<Real>) -> Real { 0.0 }

        pub struct Cable;
        #[twinstep::audit(methods_only)]
        impl Cable {
            pub fn step(&mut self, v: &[f64], out: &mut [f64]) {}
        }

        #[twinstep::audit]
        pub struct Rod { pub r: f64 }
        #[twinstep::audit]
        impl Rod {
            pub fn step(&mut self, v: &[f64], out: &mut [f64]) {}
        }

        #[twinstep::audit]
        mod string {
            type Real = f64;
            pub fn leapfrog(before: &[Real], now: &[Real], after: &mut [Real], c2: Real) {}
            pub fn grid(g: &mut Grid) {}
        }
    "#;

    fn kinds(kernel: &Kernel) -> Vec<(&str, ParamKind)> {
        kernel.params.iter().map(|p| (p.name.as_str(), p.kind.clone())).collect()
    }

    #[test]
    fn free_function_method_and_module_kernels_are_found_with_their_twins() {
        let heat = find_kernel(SOURCE, "heat").unwrap();
        assert_eq!((heat.original.as_str(), heat.twin.as_str(), heat.receiver.clone()), ("heat", "heat_twin", None));
        let integer = ParamKind::Integer("usize".into());
        assert_eq!(
            kinds(&heat),
            [("u", ParamKind::Reads), ("out", ParamKind::Writes), ("r", ParamKind::Float), ("n", integer)]
        );
        let cable = find_kernel(SOURCE, "Cable::step").unwrap();
        assert_eq!(cable.twin, "Cable::step_twin");
        assert_eq!(cable.receiver, Some(Receiver { self_type: "Cable".into(), mutable: true }));
        let leapfrog = find_kernel(SOURCE, "string::leapfrog").unwrap();
        assert_eq!(leapfrog.twin, "string_twin::leapfrog");
        assert_eq!(leapfrog.params.iter().filter(|p| p.kind == ParamKind::Reads).count(), 2);
        assert_eq!(leapfrog.params[3].kind, ParamKind::Float, "the module's alias names the float");
        let aliased = find_kernel(SOURCE, "aliased").unwrap();
        assert!(aliased.returns_float);
        assert_eq!(kinds(&aliased), [("u", ParamKind::Reads), ("out", ParamKind::Writes)]);
    }

    #[test]
    fn what_a_harness_cannot_take_is_a_clear_error() {
        let cases = [
            ("plain", "no kernel `plain` under #[twinstep::audit]"),
            ("missing", "no kernel `missing`"),
            ("Cable::run", "`impl Cable` has no method `run`"),
            ("Rod::step", "`impl Rod` is twinned with its struct (the twin is `RodTwin<T>`)"),
            ("string::wave", "module `string` has no function `wave`"),
            ("string::grid", "parameter `g: &mut Grid` is not a field slice"),
        ];
        for (path, message) in cases {
            let error = find_kernel(SOURCE, path).unwrap_err();
            assert!(error.message.contains(message), "{path}: {}", error.message);
        }
        let grid = find_kernel(SOURCE, "string::grid").unwrap_err();
        assert_eq!(grid.line, 27, "the error points at the parameter's type (line 27 of SOURCE)");
        assert!(find_kernel("fn (", "x").is_err());
    }
}
