//! Pass: the tokens inside macro invocations of a kernel body.
//!
//! Before: `vec![0.0; n]`, `assert!(r <= 0.5)`, `azip!((a in &mut u, &b in &v) *a = b * 0.1)`
//! After:  `vec![<T as ::twinstep::Real>::from_f64(0.0f64); n]`, `assert!(r <= <T as …>::from_f64(0.5f64))`,
//!         `azip!((a in &mut u, &b in &v) *a = b * (<T as …>::lit(0.1f64, ::twinstep::lens::Reference { … })))`
//!
//! A macro's input is only tokens. When they parse as a list of expressions (`vec!`, `assert!`, `println!`, …)
//! or as `expr; expr`, the whole pipeline rewrites them as expressions; otherwise (`azip!`, `s![..]`) float
//! literals and the float type are rewritten token by token.

use crate::context::Ctx;
use crate::literals::{literal_text, literal_tokens};
use crate::paths::PathRewriter;
use crate::pipeline;
use proc_macro2::{Delimiter, Group, TokenStream, TokenTree};
use quote::{quote, ToTokens};
use syn::parse::Parser;
use syn::punctuated::Punctuated;
use syn::visit_mut::VisitMut;
use syn::{Expr, LitFloat, Macro, Token};

/// Rewrites the tokens of every macro invocation it visits.
pub struct MacroRewriter<'a> {
    pub ctx: &'a Ctx,
}

impl VisitMut for MacroRewriter<'_> {
    fn visit_macro_mut(&mut self, mac: &mut Macro) {
        mac.tokens = rewrite_macro_tokens(self.ctx, std::mem::take(&mut mac.tokens));
    }
}

/// The rewritten input of one macro invocation.
pub fn rewrite_macro_tokens(ctx: &Ctx, tokens: TokenStream) -> TokenStream {
    if let Ok(mut exprs) = Punctuated::<Expr, Token![,]>::parse_terminated.parse2(tokens.clone()) {
        for expr in exprs.iter_mut() {
            pipeline::rewrite(ctx, expr);
        }
        return exprs.into_token_stream();
    }
    let repeat = |input: syn::parse::ParseStream| -> syn::Result<(Expr, Token![;], Expr)> {
        Ok((input.parse()?, input.parse()?, input.parse()?))
    };
    if let Ok((mut value, semi, mut count)) = repeat.parse2(tokens.clone()) {
        pipeline::rewrite(ctx, &mut value);
        pipeline::rewrite(ctx, &mut count);
        return quote!(#value #semi #count);
    }
    rewrite_token_level(ctx, tokens)
}

/// Rewrites float literals and the float type token by token, descending into groups.
fn rewrite_token_level(ctx: &Ctx, tokens: TokenStream) -> TokenStream {
    let trees: Vec<TokenTree> = tokens.into_iter().collect();
    let mut out = TokenStream::new();
    let mut i = 0;
    while i < trees.len() {
        match &trees[i] {
            TokenTree::Group(group) => {
                let mut new = Group::new(group.delimiter(), rewrite_token_level(ctx, group.stream()));
                new.set_span(group.span());
                out.extend([TokenTree::Group(new)]);
            }
            TokenTree::Literal(literal) => {
                let float = syn::parse2::<LitFloat>(literal.to_token_stream()).ok();
                match float.as_ref().and_then(|f| literal_text(ctx, f)) {
                    Some(text) => {
                        let value = literal_tokens(ctx, &text, literal.span());
                        out.extend([TokenTree::Group(Group::new(Delimiter::Parenthesis, value))]);
                    }
                    None => out.extend([trees[i].clone()]),
                }
            }
            TokenTree::Ident(ident) if ctx.is_float_ident(ident) => {
                if let Some((path_expr, used)) = float_path_at(&trees[i..]) {
                    let mut expr = path_expr;
                    PathRewriter { ctx }.visit_expr_mut(&mut expr);
                    out.extend([TokenTree::Group(Group::new(Delimiter::Parenthesis, expr.into_token_stream()))]);
                    i += used;
                    continue;
                }
                out.extend([TokenTree::Ident(ctx.param_at(ident.span()))]);
            }
            other => out.extend([other.clone()]),
        }
        i += 1;
    }
    out
}

/// `f64 :: NAME` at the start of `trees`, as a path expression, and how many tokens it spans.
fn float_path_at(trees: &[TokenTree]) -> Option<(Expr, usize)> {
    let [first, TokenTree::Punct(c1), TokenTree::Punct(c2), TokenTree::Ident(_), ..] = trees else {
        return None;
    };
    if c1.as_char() != ':' || c2.as_char() != ':' {
        return None;
    }
    let tokens: TokenStream = trees[..4].iter().cloned().collect();
    let _ = first;
    syn::parse2::<Expr>(tokens).ok().map(|e| (e, 4))
}
