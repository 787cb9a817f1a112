//! What every rewrite pass needs to know about the item being twinned: which names mean the float type, the
//! name of the type parameter that replaces it, which structs became generic, which constants and functions of
//! the enclosing module the twin must treat specially.

use proc_macro2::{Span, TokenStream};
use quote::quote_spanned;
use std::collections::{BTreeMap, BTreeSet};
use syn::{Ident, Path, Type};

/// The float type of the original kernel.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum BaseFloat {
    F64,
    F32,
}

impl BaseFloat {
    /// The primitive's name.
    pub fn name(self) -> &'static str {
        match self {
            BaseFloat::F64 => "f64",
            BaseFloat::F32 => "f32",
        }
    }

    /// The other primitive float, which a kernel of this base type keeps as it is.
    pub fn other(self) -> BaseFloat {
        match self {
            BaseFloat::F64 => BaseFloat::F32,
            BaseFloat::F32 => BaseFloat::F64,
        }
    }
}

/// The facts the passes share.
#[derive(Clone, Debug)]
pub struct Ctx {
    /// The float type the kernel is written in.
    pub base: BaseFloat,
    /// Names that mean the float type: the primitive itself and precision aliases (`type Real = f64`).
    pub float_names: BTreeSet<String>,
    /// The type parameter that replaces the float type.
    pub param: Ident,
    /// Structs and enums of an annotated module that became generic over the parameter.
    pub generic_types: BTreeSet<String>,
    /// Float constants of an annotated module, with the literal text of their initializer when it is a literal.
    pub module_consts: BTreeMap<String, Option<String>>,
    /// Names brought in by `use std::f64::consts::{PI, ...}`, mapped to the constant they name.
    pub const_imports: BTreeMap<String, String>,
    /// Names of modules that stand for `std::f64::consts` (`use std::f64::consts;` or `use ... as c;`).
    pub const_modules: BTreeSet<String>,
    /// Every name the item binds (`let` and closure patterns, parameters, `const` and `static` items): a bare
    /// constant name such as `PI` that the item binds itself is the item's own value, not a math constant.
    pub bound_names: BTreeSet<String>,
    /// Free functions whose plain calls (`heat(u)`) go to a twin of another name.
    pub renames: BTreeMap<String, String>,
    /// Methods whose calls through `self.` or `Self::` go to a twin of another name.
    pub method_renames: BTreeMap<String, String>,
    /// Structs and enums annotated on their own, by the name of their twin (`Solver` → `SolverTwin`): the name
    /// is replaced wherever it appears, and gets the parameter in type positions.
    pub type_renames: BTreeMap<String, String>,
    /// Bounds of the parameter beyond the ones every twin carries (the attribute's `bounds`).
    pub extra_bounds: Vec<Path>,
}

impl Ctx {
    /// A context for the given base float and extra alias names.
    pub fn new(base: BaseFloat, aliases: impl IntoIterator<Item = String>) -> Ctx {
        let mut float_names: BTreeSet<String> = aliases.into_iter().collect();
        float_names.insert(base.name().to_string());
        Ctx {
            base,
            float_names,
            param: Ident::new("T", Span::call_site()),
            generic_types: BTreeSet::new(),
            module_consts: BTreeMap::new(),
            const_imports: BTreeMap::new(),
            const_modules: BTreeSet::new(),
            bound_names: BTreeSet::new(),
            renames: BTreeMap::new(),
            method_renames: BTreeMap::new(),
            type_renames: BTreeMap::new(),
            extra_bounds: Vec::new(),
        }
    }

    /// Makes `name` (a struct or enum annotated on its own) mean its twin `twin` in every rewritten item.
    pub fn rename_type(&mut self, name: &str, twin: &str) {
        self.type_renames.insert(name.to_string(), twin.to_string());
        // Both names count as "mentions the float" (a signature taking a `Solver` takes a twin), and the twin's
        // name gets the parameter where it is a type.
        self.generic_types.insert(name.to_string());
        self.generic_types.insert(twin.to_string());
    }

    /// Whether the identifier names the float type.
    pub fn is_float_ident(&self, ident: &Ident) -> bool {
        self.float_names.contains(&ident.to_string())
    }

    /// Whether a path names the float type: `f64`, an alias, or `std::primitive::f64`.
    pub fn is_float_path(&self, path: &Path) -> bool {
        let segments: Vec<_> = path.segments.iter().collect();
        if segments.iter().any(|s| !s.arguments.is_none()) {
            return false;
        }
        match segments.as_slice() {
            [only] if path.leading_colon.is_none() => self.is_float_ident(&only.ident),
            [.., prim, last] => prim.ident == "primitive" && last.ident == self.base.name(),
            _ => false,
        }
    }

    /// Whether the type is the float type itself.
    pub fn is_float_type(&self, ty: &Type) -> bool {
        match ty {
            Type::Path(p) if p.qself.is_none() => self.is_float_path(&p.path),
            Type::Paren(p) => self.is_float_type(&p.elem),
            Type::Group(g) => self.is_float_type(&g.elem),
            _ => false,
        }
    }

    /// Whether the type is the other primitive float (`f32` in an `f64` kernel).
    pub fn is_other_float_type(&self, ty: &Type) -> bool {
        match ty {
            Type::Path(p) if p.qself.is_none() => p.path.is_ident(self.base.other().name()),
            Type::Paren(p) => self.is_other_float_type(&p.elem),
            _ => false,
        }
    }

    /// `<T as ::twinstep::Real>`, spanned at the user's token so diagnostics and `#[track_caller]` point there.
    pub fn real(&self, span: Span) -> TokenStream {
        let param = Ident::new(&self.param.to_string(), span);
        quote_spanned!(span=> <#param as ::twinstep::Real>)
    }

    /// The parameter as an identifier carrying the given span.
    pub fn param_at(&self, span: Span) -> Ident {
        Ident::new(&self.param.to_string(), span)
    }

    /// The `where` predicates every twin carries.
    ///
    /// `f64: MixedOps<f64>` holds trivially, and is there for type inference: with `f64: MixedOps<T>` alone in
    /// the `where` clause, rustc picks that bound for every `f64 * ?` it meets (a `where` clause beats an impl when
    /// the right operand's type is not known yet), so `self.dx * self.dx` of two plain values would be required
    /// to be `f64 * T`. With both bounds in scope the choice is ambiguous until the right operand is checked, as
    /// it is for `T * ?` (`T: Mul<T>` and `T: Mul<f64>`).
    pub fn where_predicates(&self) -> TokenStream {
        let t = &self.param;
        let base = Ident::new(self.base.name(), Span::call_site());
        let extra = self.extra_bounds.iter().map(|bound| quote::quote!(+ #bound));
        quote::quote! {
            #t: ::twinstep::Real + ::twinstep::BaseOps<#base> #(#extra)*,
            #base: ::twinstep::MixedOps<#t> + ::twinstep::MixedOps<#base>,
            for<'twin> &'twin #t: ::twinstep::RefOps<#t>
        }
    }
}

/// Replaces `expr` by the expression `tokens` spell, leaving it as it was if they do not parse.
///
/// The passes build their replacements from parsed user syntax, so the tokens always parse; going through
/// `syn::parse2` instead of `parse_quote!` keeps the engine free of panics even so, and keeps the new node a real
/// syntax tree that later passes can walk.
pub fn replace_expr(expr: &mut syn::Expr, tokens: TokenStream) {
    if let Ok(new) = syn::parse2::<syn::Expr>(tokens) {
        *expr = new;
    }
}
