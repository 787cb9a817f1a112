//! Pass: paths through the float type, mathematical constants, and float constants of the module.
//!
//! Before: `f64::max(a, b)`, `f64::EPSILON`, `std::f64::consts::PI`, `f64::from(n)`, `DT` (a module `const`)
//! After:  `<_ as ::twinstep::Real>::max(a, b)`, `<T as ::twinstep::Real>::epsilon()`,
//!         `<T as ::twinstep::Real>::constant(::twinstep::Constant::PI)`, `::twinstep::twin::to_real::<T, _>(n)`,
//!         `<T as ::twinstep::Real>::lit(DT, ::twinstep::lens::Reference { hi: 0.01, … })`
//!
//! Constants are held by a lens as the real numbers they name; a module constant whose initializer is a literal
//! gets that literal's reference (see [`literals`](crate::literals)), any other is taken as an exact input.
//!
//! A bare constant name the item neither binds nor imports (`PI` after a file-level `use std::f64::consts::PI`,
//! which an attribute cannot see) becomes `::twinstep::twin::math_constant::<T, _>(PI, ::twinstep::Constant::PI)`:
//! π itself when the value is bit for bit `std::f64::consts::PI`, the value as an exact input otherwise. `E` is
//! left alone: as a bare name it is too often something else (a field, an energy, a compass point).
//!
//! A function of the float type (`f64::max`, `f64::sqrt`) leaves the implementing type to the arguments, `<_ as
//! Real>`: the rewrite cannot see whether `f64::max(self.dt, self.dt_min)` takes two values that became `T` or two
//! plain `f64` fields of a struct that stayed as it is, and `f64` implements `Real` too. Constants have no
//! arguments to infer from and name `T`.
//!
//! Before: `u.par_iter().cloned().reduce(|| 0.0, f64::max)`, `u.iter().map(f64::abs)` (a function passed as a value)
//! After:  `… .reduce(|| …, |a, b| <_ as ::twinstep::Real>::max(a, b))`, `… .map(|a| <_ as ::twinstep::Real>::abs(a))`
//!
//! Why a closure: a lens records an event (an undecided comparison in `max`) at the caller's location, and the
//! caller of a function passed as a value is the library that calls it (`rayon`'s or the standard library's
//! `fold`), so the event would name a line inside that library. The closure's call of `max` is spanned at the
//! user's `f64::max`, so the event names the user's line.

use crate::context::{replace_expr, BaseFloat, Ctx};
use crate::literals::value_with_reference;
use quote::quote_spanned;
use syn::spanned::Spanned;
use syn::visit_mut::{self, VisitMut};
use syn::{Expr, Path};

/// The associated constants of the float types and the [`Real`] function that gives each.
const FLOAT_CONSTS: [(&str, &str); 7] = [
    ("EPSILON", "epsilon"),
    ("MAX", "max_value"),
    ("MIN", "min_value"),
    ("MIN_POSITIVE", "min_positive"),
    ("INFINITY", "infinity"),
    ("NEG_INFINITY", "neg_infinity"),
    ("NAN", "nan"),
];

/// The associated functions of the float types that the `Real` trait provides under the same name, with the
/// number of arguments each takes (the receiver counted): a function passed as a value (`fold(x, f64::max)`)
/// becomes a closure of that many parameters.
pub const REAL_METHODS: [(&str, usize); 45] = [
    ("sqrt", 1),
    ("cbrt", 1),
    ("abs", 1),
    ("recip", 1),
    ("powi", 2),
    ("powf", 2),
    ("exp", 1),
    ("exp2", 1),
    ("exp_m1", 1),
    ("ln", 1),
    ("ln_1p", 1),
    ("log", 2),
    ("log2", 1),
    ("log10", 1),
    ("sin", 1),
    ("cos", 1),
    ("tan", 1),
    ("sin_cos", 1),
    ("asin", 1),
    ("acos", 1),
    ("atan", 1),
    ("atan2", 2),
    ("sinh", 1),
    ("cosh", 1),
    ("tanh", 1),
    ("hypot", 2),
    ("mul_add", 3),
    ("max", 2),
    ("min", 2),
    ("clamp", 3),
    ("signum", 1),
    ("copysign", 2),
    ("floor", 1),
    ("ceil", 1),
    ("round", 1),
    ("trunc", 1),
    ("fract", 1),
    ("to_degrees", 1),
    ("to_radians", 1),
    ("is_nan", 1),
    ("is_finite", 1),
    ("is_infinite", 1),
    ("is_sign_negative", 1),
    ("is_sign_positive", 1),
    ("total_cmp", 2),
];

/// The number of arguments of a `Real` function named like a float method, if it is one.
#[must_use]
pub fn real_method_arity(name: &str) -> Option<usize> {
    REAL_METHODS.iter().find(|(method, _)| *method == name).map(|(_, arity)| *arity)
}

/// The constants of `std::f64::consts`.
pub const MATH_CONSTS: [&str; 19] = [
    "PI",
    "TAU",
    "E",
    "SQRT_2",
    "LN_2",
    "LN_10",
    "LOG2_E",
    "LOG10_E",
    "LOG2_10",
    "LOG10_2",
    "FRAC_PI_2",
    "FRAC_PI_3",
    "FRAC_PI_4",
    "FRAC_PI_6",
    "FRAC_PI_8",
    "FRAC_1_PI",
    "FRAC_2_PI",
    "FRAC_2_SQRT_PI",
    "FRAC_1_SQRT_2",
];

/// Rewrites paths that go through the float type or name a float constant.
pub struct PathRewriter<'a> {
    pub ctx: &'a Ctx,
}

impl PathRewriter<'_> {
    /// The name of the `std::f64::consts` constant a path names, if it names one.
    fn math_const(&self, path: &Path) -> Option<String> {
        let names: Vec<String> = path.segments.iter().map(|s| s.ident.to_string()).collect();
        let last = names.last()?;
        if !MATH_CONSTS.contains(&last.as_str()) {
            return None;
        }
        let n = names.len();
        let through_float = n >= 3 && names[n - 2] == "consts" && self.ctx.float_names.contains(&names[n - 3]);
        let through_alias = n == 2 && self.ctx.const_modules.contains(&names[0]);
        let imported = n == 1 && path.leading_colon.is_none() && self.ctx.const_imports.contains_key(last);
        if through_float || through_alias {
            Some(last.clone())
        } else if imported {
            self.ctx.const_imports.get(last).cloned()
        } else {
            None
        }
    }
}

impl PathRewriter<'_> {
    /// A bare constant name whose origin the rewrite cannot see: not bound by the item, not a module constant.
    fn unseen_math_const(&self, path: &Path) -> Option<syn::Ident> {
        let ident = path.get_ident()?;
        let name = ident.to_string();
        let candidate = MATH_CONSTS.contains(&name.as_str()) && name != "E";
        let known = self.ctx.bound_names.contains(&name) || self.ctx.module_consts.contains_key(&name);
        (candidate && !known).then(|| ident.clone())
    }
}

impl PathRewriter<'_> {
    /// `f64::max` (a float function named through the float type), as the function's name, if `expr` is one.
    fn float_function(&self, expr: &Expr) -> Option<(syn::Ident, usize)> {
        let Expr::Path(p) = expr else { return None };
        if p.qself.is_some() || p.path.leading_colon.is_some() || p.path.segments.len() != 2 {
            return None;
        }
        let (float, name) = (&p.path.segments[0], &p.path.segments[1]);
        let plain = float.arguments.is_none() && name.arguments.is_none();
        let arity = real_method_arity(&name.ident.to_string())?;
        (plain && self.ctx.is_float_ident(&float.ident)).then(|| (name.ident.clone(), arity))
    }
}

impl VisitMut for PathRewriter<'_> {
    fn visit_expr_mut(&mut self, expr: &mut Expr) {
        if let Expr::Call(call) = expr {
            // A called float function stays a path (`f64::max(a, b)` → `<_ as Real>::max(a, b)`): only a function
            // passed as a value becomes a closure.
            if self.float_function(&call.func).is_some() {
                self.visit_expr_path_callee(&mut call.func);
                for arg in call.args.iter_mut() {
                    self.visit_expr_mut(arg);
                }
                return;
            }
        }
        if let Some((name, arity)) = self.float_function(expr) {
            let span = expr.span();
            let params: Vec<syn::Ident> =
                ["a", "b", "c"].iter().take(arity).map(|p| syn::Ident::new(p, span)).collect();
            replace_expr(expr, quote_spanned!(span=> |#(#params),*| <_ as ::twinstep::Real>::#name(#(#params),*)));
            return;
        }
        self.visit_expr_path_callee(expr);
    }
}

impl PathRewriter<'_> {
    /// Rewrites a path expression (a callee or any other path).
    fn visit_expr_path_callee(&mut self, expr: &mut Expr) {
        let Expr::Path(p) = expr else {
            visit_mut::visit_expr_mut(self, expr);
            return;
        };
        if p.qself.is_some() || p.path.segments.iter().any(|s| !s.arguments.is_none()) {
            visit_mut::visit_expr_mut(self, expr);
            return;
        }
        let span = p.path.span();
        let real = self.ctx.real(span);
        if let Some(name) = self.math_const(&p.path) {
            let name = syn::Ident::new(&name, span);
            replace_expr(expr, quote_spanned!(span=> #real::constant(::twinstep::Constant::#name)));
            return;
        }
        if let Some(name) = self.unseen_math_const(&p.path) {
            let t = self.ctx.param_at(span);
            replace_expr(
                expr,
                quote_spanned!(span=> ::twinstep::twin::math_constant::<#t, _>(#name, ::twinstep::Constant::#name)),
            );
            return;
        }
        let segments: Vec<&syn::Ident> = p.path.segments.iter().map(|s| &s.ident).collect();
        match segments.as_slice() {
            [float, name] if p.path.leading_colon.is_none() && self.ctx.is_float_ident(float) => {
                let name_str = name.to_string();
                if let Some((_, function)) = FLOAT_CONSTS.iter().find(|(c, _)| name_str == *c) {
                    let function = syn::Ident::new(function, name.span());
                    replace_expr(expr, quote_spanned!(span=> #real::#function()));
                } else if real_method_arity(&name_str).is_some() {
                    let name = (*name).clone();
                    replace_expr(expr, quote_spanned!(span=> <_ as ::twinstep::Real>::#name));
                } else if name_str == "from" {
                    let t = self.ctx.param_at(span);
                    replace_expr(expr, quote_spanned!(span=> ::twinstep::twin::to_real::<#t, _>));
                } else if name_str.starts_with(|c: char| c.is_lowercase()) {
                    // Another trait's function (`f64::partial_cmp`): the parameter's bounds provide it.
                    let t = self.ctx.param_at(span);
                    let name = (*name).clone();
                    replace_expr(expr, quote_spanned!(span=> #t::#name));
                }
            }
            [name] if p.path.leading_colon.is_none() => {
                if let Some(text) = self.ctx.module_consts.get(&name.to_string()) {
                    let name = (*name).clone();
                    let tokens = match (text, self.ctx.base) {
                        (Some(text), _) => value_with_reference(self.ctx, quote::quote!(#name), text, span),
                        (None, BaseFloat::F64) => quote_spanned!(span=> #real::from_f64(#name)),
                        (None, BaseFloat::F32) => quote_spanned!(span=> #real::from_f32(#name)),
                    };
                    replace_expr(expr, tokens);
                }
            }
            _ => {}
        }
    }
}
