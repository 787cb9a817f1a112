//! The attribute's arguments: `#[twinstep::audit]`, `#[twinstep::audit(float = f32)]`,
//! `#[twinstep::audit(alias = Real)]`, `#[twinstep::audit(calls = [flux, limiter])]`, or several, comma-separated.
//! A bare `f32` or `f64` is short for `float = …`.
//!
//! `calls` names free functions annotated on their own whose twins this item's twin must call: an attribute sees
//! only its own item, so it cannot know that `flux` has a twin `flux_twin` unless told. `structs` names, for the
//! same reason, structs and enums annotated on their own whose twins (`Grid` → `GridTwin<T>`) this item uses.
//! `methods_only` on an `impl` block keeps the struct as it is and twins only the methods that take a float.
//! `bounds` adds bounds on the twin's type parameter (`bounds = [::twinstep::num_traits::Float]`), for generic
//! code the kernel calls that asks for more than `twinstep::Real` gives.

use crate::context::BaseFloat;
use syn::parse::{Parse, ParseStream};
use syn::{Ident, Token};

mod kw {
    syn::custom_keyword!(float);
    syn::custom_keyword!(alias);
    syn::custom_keyword!(calls);
    syn::custom_keyword!(structs);
    syn::custom_keyword!(bounds);
    syn::custom_keyword!(methods_only);
    syn::custom_keyword!(f32);
    syn::custom_keyword!(f64);
}

/// What the attribute asked for.
#[derive(Clone, Debug)]
pub struct Options {
    /// The float type the kernel computes in.
    pub base: BaseFloat,
    /// Names of precision aliases (`type Real = f64;`) that mean the float type.
    pub aliases: Vec<String>,
    /// Free functions annotated on their own, whose calls in this item go to their twins (`flux` → `flux_twin`).
    pub calls: Vec<String>,
    /// Structs and enums annotated on their own, whose names in this item mean their twins (`Grid` → `GridTwin<T>`).
    pub structs: Vec<String>,
    /// Extra bounds of the twin's type parameter.
    pub bounds: Vec<syn::Path>,
    /// On an `impl` block: the struct stays as it is, and only the methods with a float parameter get twins.
    pub methods_only: bool,
}

impl Default for Options {
    fn default() -> Options {
        Options {
            base: BaseFloat::F64,
            aliases: Vec::new(),
            calls: Vec::new(),
            structs: Vec::new(),
            bounds: Vec::new(),
            methods_only: false,
        }
    }
}

/// `= [item, …]` after a list keyword (`calls`, `structs`, `bounds`).
fn parse_list<T: syn::parse::Parse>(input: ParseStream) -> syn::Result<Vec<T>> {
    input.parse::<Token![=]>()?;
    let items;
    syn::bracketed!(items in input);
    let items = syn::punctuated::Punctuated::<T, Token![,]>::parse_terminated(&items)?;
    Ok(items.into_iter().collect())
}

fn parse_float(input: ParseStream) -> syn::Result<BaseFloat> {
    let lookahead = input.lookahead1();
    if lookahead.peek(kw::f64) {
        input.parse::<kw::f64>()?;
        Ok(BaseFloat::F64)
    } else if lookahead.peek(kw::f32) {
        input.parse::<kw::f32>()?;
        Ok(BaseFloat::F32)
    } else {
        Err(with_hint(
            "unsupported float type",
            lookahead.error(),
            "name the type the kernel is written in: `#[twinstep::audit]` for `f64`, \
             `#[twinstep::audit(float = f32)]` for `f32`",
        ))
    }
}

/// The parser's own "expected …" message after what is wrong, with what to write instead on a `hint:` line.
fn with_hint(what: &str, error: syn::Error, hint: &str) -> syn::Error {
    syn::Error::new(error.span(), format!("{what}: {error}\nhint: {hint}"))
}

impl Parse for Options {
    /// Every argument is read, so that all the wrong ones are reported in one build: after an error the rest of that
    /// argument (up to the next comma) is skipped and the next one is read.
    fn parse(input: ParseStream) -> syn::Result<Options> {
        let mut options = Options::default();
        let mut errors: Option<syn::Error> = None;
        while !input.is_empty() {
            if let Err(error) = parse_argument(input, &mut options) {
                match errors.as_mut() {
                    Some(all) => all.combine(error),
                    None => errors = Some(error),
                }
                while !input.is_empty() && !input.peek(Token![,]) {
                    input.parse::<proc_macro2::TokenTree>()?;
                }
            }
            if input.is_empty() {
                break;
            }
            input.parse::<Token![,]>()?;
        }
        errors.map_or(Ok(options), Err)
    }
}

/// One argument, up to (not including) the comma after it.
fn parse_argument(input: ParseStream, options: &mut Options) -> syn::Result<()> {
    // `calls` and the other list arguments are peeked outside the lookahead so that the "expected one of …"
    // message of a wrong argument keeps listing the options most kernels need.
    if input.peek(kw::calls) {
        input.parse::<kw::calls>()?;
        options.calls.extend(parse_list::<Ident>(input)?.iter().map(Ident::to_string));
    } else if input.peek(kw::structs) {
        input.parse::<kw::structs>()?;
        options.structs.extend(parse_list::<Ident>(input)?.iter().map(Ident::to_string));
    } else if input.peek(kw::bounds) {
        input.parse::<kw::bounds>()?;
        options.bounds.extend(parse_list::<syn::Path>(input)?);
    } else if input.peek(kw::methods_only) {
        input.parse::<kw::methods_only>()?;
        options.methods_only = true;
    } else {
        let lookahead = input.lookahead1();
        if lookahead.peek(kw::float) {
            input.parse::<kw::float>()?;
            input.parse::<Token![=]>()?;
            options.base = parse_float(input)?;
        } else if lookahead.peek(kw::alias) {
            input.parse::<kw::alias>()?;
            input.parse::<Token![=]>()?;
            let name: Ident = input.parse()?;
            options.aliases.push(name.to_string());
        } else if lookahead.peek(kw::f64) || lookahead.peek(kw::f32) {
            options.base = parse_float(input)?;
        } else {
            return Err(with_hint(
                "unknown `#[twinstep::audit]` argument",
                lookahead.error(),
                "write `#[twinstep::audit]`, `#[twinstep::audit(float = f32)]` or \
                 `#[twinstep::audit(alias = Real)]`",
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse(tokens: &str) -> syn::Result<Options> {
        let stream: proc_macro2::TokenStream =
            tokens.parse().map_err(|e| syn::Error::new(proc_macro2::Span::call_site(), e))?;
        syn::parse2::<Options>(stream)
    }

    #[test]
    fn calls_lists_the_functions_whose_twins_are_called() {
        let options = parse("calls = [flux, van_leer], float = f32, calls = [minmod,]").expect("valid arguments");
        assert_eq!(options.calls, ["flux", "van_leer", "minmod"]);
        assert_eq!(options.base, BaseFloat::F32);
    }

    #[test]
    fn calls_without_brackets_is_an_error_not_a_panic() {
        assert!(parse("calls = flux").is_err());
        assert!(parse("calls [flux]").is_err());
        assert!(parse("calls = [flux] alias = Real").is_err());
        assert!(parse("calls = [1.5]").is_err());
    }

    #[test]
    fn structs_bounds_and_methods_only_are_read() {
        let options =
            parse("structs = [Grid], bounds = [::twinstep::num_traits::Float], methods_only").expect("valid arguments");
        assert_eq!(options.structs, ["Grid"]);
        assert_eq!(options.bounds.len(), 1);
        assert!(options.methods_only);
        assert!(parse("bounds = Float").is_err());
        assert!(parse("methods_only = true").is_err());
    }

    #[test]
    fn every_wrong_argument_is_reported_at_once() {
        let error = parse("tolerance = 1e-12, float = f16, calls = [flux], precision").expect_err("three wrong");
        let messages: Vec<String> = error.into_iter().map(|e| e.to_string()).collect();
        assert_eq!(messages.len(), 3, "{messages:?}");
        assert!(messages[0].starts_with("unknown `#[twinstep::audit]` argument"), "{messages:?}");
        assert!(messages[1].starts_with("unsupported float type"), "{messages:?}");
        assert!(messages[2].starts_with("unknown `#[twinstep::audit]` argument"), "{messages:?}");
    }

    #[test]
    fn a_wrong_argument_still_lists_the_common_options() {
        let message = parse("precision = f32").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(message.contains("`float`") && message.contains("`alias`"), "{message}");
    }
}
