//! `#[twinstep::scenario]`: the bounds of an audit scenario's generic methods, written once by the attribute
//! instead of by the user in every method.
//!
//! A scenario's `init` and `step` call twins, so they are generic over the lens `T` and need the bounds every twin
//! carries ([`Ctx::where_predicates`]). Rust implies only a trait's `Self: …` supertraits, never bounds on other
//! types (`f64: MixedOps<T>`, `&T: RefOps<T>`), so no redesign of the traits can spare an impl method its `where`
//! clause; the attribute writes it. The predicates include `f64: MixedOps<f64>`, so that plain `f64` arithmetic
//! in the body (`self.c * self.c`, `0.5 * self.r`) is not taken for the mixed `f64 * T` operator.
//!
//! Before / After:
//!
//! ```text
//! #[twinstep::scenario]                          impl Scenario for Rod {
//! impl Scenario for Rod {                            fn step<T>(&self, l: &mut Levels<T>)
//!     fn step<T>(&self, l: &mut Levels<T>) {         where T: Real + BaseOps<f64>, f64: MixedOps<T> + MixedOps<f64>,
//!         heat_twin(…);                                    for<'twin> &'twin T: RefOps<T>
//!     }                                              { heat_twin(…); }
//! }                                              }
//! ```
//!
//! For `impl Scenario<f32> for …` (an `f32` program) the predicates are over `f32` (`T: BaseOps<f32>`,
//! `f32: MixedOps<T>`), the bounds of an `f32` kernel's twin.
//!
//! Every method of the block with one type parameter gets the predicates for it; the others (`fields`,
//! `step_original`, …) are left as they are. Misuse is a compile error on the user's tokens, and the item is
//! emitted unchanged beside it so that nothing cascades.

use crate::context::{BaseFloat, Ctx};
use proc_macro2::TokenStream;
use quote::ToTokens;
use syn::spanned::Spanned;
use syn::{GenericParam, ImplItem, Item, WherePredicate};

/// The methods of `Scenario` that are generic over the lens, and must be written so.
const GENERIC_METHODS: [&str; 2] = ["init", "step"];

/// What the attribute emits: the impl block with the bounds added, or the block unchanged and the errors.
pub fn expand_scenario(attr: TokenStream, item: TokenStream) -> TokenStream {
    let mut errors = Vec::new();
    if !attr.is_empty() {
        errors.push(syn::Error::new_spanned(&attr, "#[twinstep::scenario] takes no arguments"));
    }
    // If the item does not parse, re-emit it as it is: the compiler then reports the real syntax error.
    let Ok(parsed) = syn::parse2::<Item>(item.clone()) else { return item };
    let mut block = match parsed {
        Item::Impl(block) if block.trait_.is_some() => block,
        other => {
            errors.push(syn::Error::new(
                item_span(&other),
                "#[twinstep::scenario] goes on the scenario's trait impl: `impl Scenario for MyLoop { … }`",
            ));
            return with_errors(item, errors);
        }
    };
    let base = match program_float(&block) {
        Ok(base) => base,
        Err(error) => return with_errors(item, [errors, vec![error]].concat()),
    };
    for member in &mut block.items {
        let ImplItem::Fn(method) = member else { continue };
        if let Err(error) = add_bounds(method, base) {
            errors.push(error);
        }
    }
    if errors.is_empty() {
        block.into_token_stream()
    } else {
        with_errors(item, errors)
    }
}

/// The program's float, from the trait's generic argument: `Scenario` and `Scenario<f64>` are `f64`,
/// `Scenario<f32>` is `f32` (the twin bounds are then over `f32`).
fn program_float(block: &syn::ItemImpl) -> syn::Result<BaseFloat> {
    let Some((_, path, _)) = &block.trait_ else { return Ok(BaseFloat::F64) };
    let Some(last) = path.segments.last() else { return Ok(BaseFloat::F64) };
    let syn::PathArguments::AngleBracketed(args) = &last.arguments else { return Ok(BaseFloat::F64) };
    match args.args.iter().collect::<Vec<_>>().as_slice() {
        [syn::GenericArgument::Type(syn::Type::Path(t))] if t.path.is_ident("f64") => Ok(BaseFloat::F64),
        [syn::GenericArgument::Type(syn::Type::Path(t))] if t.path.is_ident("f32") => Ok(BaseFloat::F32),
        _ => Err(syn::Error::new_spanned(
            &last.arguments,
            "a scenario's program float is `f64` (the default: `impl Scenario for …`) or `f32` (`impl Scenario<f32> \
             for …`)",
        )),
    }
}

/// Adds the twin predicates for the method's type parameter over the program's float, if it has one.
fn add_bounds(method: &mut syn::ImplItemFn, base: BaseFloat) -> syn::Result<()> {
    let params: Vec<_> = method
        .sig
        .generics
        .params
        .iter()
        .filter_map(|p| match p {
            GenericParam::Type(t) => Some(t.ident.clone()),
            _ => None,
        })
        .collect();
    let name = method.sig.ident.to_string();
    match params.as_slice() {
        [] if GENERIC_METHODS.contains(&name.as_str()) => Err(syn::Error::new_spanned(
            &method.sig.ident,
            format!(
                "`{name}` runs with every lens, so it is generic over the lens type: write `fn {name}<T>(&self, \
                 levels: &mut Levels<T>)`; #[twinstep::scenario] adds the bounds"
            ),
        )),
        [] => Ok(()),
        [param] => {
            let mut ctx = Ctx::new(base, []);
            ctx.param = param.clone();
            let predicates = ctx.where_predicates();
            let parsed = syn::parse::Parser::parse2(
                syn::punctuated::Punctuated::<WherePredicate, syn::Token![,]>::parse_terminated,
                predicates,
            )?;
            method.sig.generics.make_where_clause().predicates.extend(parsed);
            Ok(())
        }
        [_, extra, ..] => Err(syn::Error::new_spanned(
            extra,
            format!("`{name}` has one type parameter, the lens; #[twinstep::scenario] cannot bound a second one"),
        )),
    }
}

fn item_span(item: &Item) -> proc_macro2::Span {
    match item {
        Item::Impl(block) => block.impl_token.span(),
        Item::Fn(f) => f.sig.ident.span(),
        Item::Struct(s) => s.ident.span(),
        Item::Enum(e) => e.ident.span(),
        Item::Mod(m) => m.ident.span(),
        Item::Trait(t) => t.ident.span(),
        other => other.span(),
    }
}

fn with_errors(mut item: TokenStream, errors: Vec<syn::Error>) -> TokenStream {
    for error in errors {
        item.extend(error.to_compile_error());
    }
    item
}

#[cfg(test)]
mod tests {
    use super::*;
    use quote::quote;

    fn expand(attr: TokenStream, item: TokenStream) -> String {
        expand_scenario(attr, item).to_string()
    }

    #[test]
    fn generic_methods_get_the_twin_bounds_and_the_others_stay() {
        let out = expand(
            TokenStream::new(),
            quote! {
                impl Scenario for Rod {
                    fn fields(&self) -> Vec<FieldSpec> { vec![] }
                    fn step<L>(&self, levels: &mut Levels<L>) { heat_twin(&levels.current[0]) }
                    fn step_original(&self, levels: &mut Levels<f64>) {}
                }
            },
        );
        let step = out.split("fn step <").nth(1).expect("step is kept");
        let step = step.split("fn step_original").next().unwrap_or_default();
        assert!(step.contains("L : :: twinstep :: Real + :: twinstep :: BaseOps < f64 >"), "{out}");
        assert!(step.contains("f64 : :: twinstep :: MixedOps < L > + :: twinstep :: MixedOps < f64 >"), "{out}");
        assert!(step.contains("for < 'twin > & 'twin L : :: twinstep :: RefOps < L >"), "{out}");
        let rest = out.split("fn step_original").nth(1).unwrap_or_default();
        assert!(!rest.contains("where") && !out.split("fn step <").next().unwrap_or_default().contains("where"));
        assert!(!out.contains("compile_error"), "{out}");
    }

    #[test]
    fn an_f32_scenario_gets_the_f32_bounds() {
        let out = expand(
            TokenStream::new(),
            quote! { impl Scenario<f32> for Rod { fn step<T>(&self, l: &mut Levels<T>) {} } },
        );
        assert!(out.contains("T : :: twinstep :: Real + :: twinstep :: BaseOps < f32 >"), "{out}");
        assert!(out.contains("f32 : :: twinstep :: MixedOps < T > + :: twinstep :: MixedOps < f32 >"), "{out}");
        let other = expand(TokenStream::new(), quote! { impl Scenario<f16> for Rod {} });
        assert!(other.contains("compile_error") && other.contains("`f64`") && other.contains("`f32`"), "{other}");
    }

    #[test]
    fn a_where_clause_of_the_user_is_kept_and_extended() {
        let out = expand(
            TokenStream::new(),
            quote! { impl Scenario for Rod { fn init<T>(&self, l: &mut Levels<T>) -> Result<(), Error> where T: Copy { Ok(()) } } },
        );
        assert!(out.contains("where T : Copy , T : :: twinstep :: Real"), "{out}");
    }

    #[test]
    fn misuse_is_an_error_on_the_users_tokens_with_the_item_kept() {
        let cases = [
            (quote!(), quote! { impl Rod { fn step<T>(&self) {} } }, "goes on the scenario's trait impl"),
            (quote!(), quote! { fn step() {} }, "goes on the scenario's trait impl"),
            (quote!(lenses), quote! { impl Scenario for Rod {} }, "takes no arguments"),
            (quote!(), quote! { impl Scenario for Rod { fn step(&self, l: &mut Levels<T>) {} } }, "write `fn step<T>"),
            (quote!(), quote! { impl Scenario for Rod { fn step<T, U>(&self) {} } }, "cannot bound a second one"),
        ];
        for (attr, item, message) in cases {
            let out = expand(attr, item.clone());
            assert!(out.contains("compile_error"), "{out}");
            assert!(out.contains(message), "{message}: {out}");
            // The item is emitted as it was, so the error does not cascade into missing impls.
            assert!(out.starts_with(&item.to_string()), "{out}");
        }
    }

    #[test]
    fn an_item_that_does_not_parse_is_returned_for_rustc_to_report() {
        let item = quote! { impl Scenario for { } };
        assert_eq!(expand(TokenStream::new(), item.clone()), item.to_string());
    }
}
