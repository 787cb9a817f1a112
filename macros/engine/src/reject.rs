//! Finds the constructs a twin cannot reproduce soundly, on the user's own tokens, all of them in one walk.
//!
//! A twin replaces the float type by a type parameter whose values may be lenses (a primal paired with a
//! reference). Anything that treats a float as bits or memory (pointer casts, `transmute`, `to_bits`), computes
//! outside Rust's arithmetic (inline assembly, SIMD intrinsics), matches a float against a constant, or would need
//! an impl the orphan rules forbid once the float is generic, has no sound twin. Each such construct becomes one
//! spanned error, `twinstep cannot twin <construct>: <why>` with a `hint:` line saying what to do instead, and
//! the walk goes on, so the user sees every problem of the item in one build. The caller emits the original item
//! unchanged beside the errors, so that a rejected construct does not cascade into errors elsewhere.
//!
//! | rejected construct | example | compile-fail case |
//! |---|---|---|
//! | pointer cast | `&x as *const u64` | `pointer_cast_of_float` |
//! | reinterpretation | `transmute::<f64, u64>(x)`, `bytemuck::cast(x)` | `transmute_of_float` |
//! | a union holding the float | `union Packed { value: f64, bits: u64 }` | `union_with_float` |
//! | storage access | `x.to_bits()` | `to_bits_method` |
//! | storage access, path forms | `f64::from_bits(b)`, `<f64>::from_bits(b)`, `f64::to_le_bytes(x)` | `bits_path_forms` |
//! | inline assembly | `asm!(…)` | `inline_asm` |
//! | SIMD | `_mm256_add_pd`, `__m256d`, `std::simd::f64x4` | `simd_intrinsics` |
//! | float patterns | `0.0 =>`, `0.5..=1.0 =>`, `f64::INFINITY =>` | `float_literal_pattern` |
//! | float on the left of an operator impl | `impl Mul<Vec2> for f64` | `operator_impl_with_float_on_left` |
//! | cast to the other float | `x as f32` in an `f64` kernel | `cast_to_other_float` |
//! | the attribute on another item | `#[twinstep::audit] const DT: f64 = 0.1;` | `attribute_on_constant` |
//! | a trait impl whose trait names the float | `impl AddAssign<f64> for Field` | `trait_impl_alone` |
//! | a function without any float | `fn count(n: usize) -> usize { n + 1 }` | `function_without_float` |
//! | a struct without float fields | `#[twinstep::audit] struct Grid { n: usize }` | `struct_without_float` |
//! | `methods_only` with no method taking a float | `#[twinstep::audit(methods_only)] impl Rod { fn step(&mut self) }` | `methods_only_without_float_parameter` |
//! | a module in its own file | `#[twinstep::audit] mod solver;` | `file_module` |
//!
//! The item-level checks (the last five and the attribute on another item) are [`rejections`]'s; `options`
//! rejects malformed attribute arguments. The cases live in the root crate's `tests/compile_fail/`. An `impl`
//! block whose struct carries no attribute is not rejected here, since the attribute cannot see the struct: its
//! twin checks at compile time that the struct has a twin, and that check's message says what to do
//! (`impl_without_twin_struct`).
//!
//! The walk also looks into macro invocations whose input parses as expressions (`println!("{}", x.to_bits())`),
//! because the token pass rewrites those too and a rejected construct there would otherwise surface as a
//! confusing type error in the twin.

use crate::context::Ctx;
use crate::items::{fields_of, twinned_methods, ImplMode};
use crate::predicates::{mentions_float, mentions_float_literal, type_name};
use proc_macro2::{TokenStream, TokenTree};
use quote::ToTokens;
use syn::visit::{self, Visit};
use syn::{Expr, ExprCast, ExprMethodCall, ExprPath, Item, Macro, Pat, Path, Type};

/// Methods that read a float's storage. Only floats have `to_bits`, so any receiver is rejected; the byte
/// conversions also exist on integers, so their method form is rejected only on a visibly float receiver.
const BITS_METHODS: [&str; 2] = ["to_bits", "from_bits"];

/// The byte conversions of the primitive floats (and integers).
const BYTES_METHODS: [&str; 6] =
    ["to_le_bytes", "to_be_bytes", "to_ne_bytes", "from_le_bytes", "from_be_bytes", "from_ne_bytes"];

/// Functions that reinterpret memory as another type.
const TRANSMUTES: [&str; 2] = ["transmute", "transmute_copy"];

/// Crates whose whole purpose is reinterpreting plain data as bytes or other types.
const REINTERPRETING_CRATES: [&str; 2] = ["bytemuck", "zerocopy"];

/// Macros that emit machine code.
const ASM_MACROS: [&str; 3] = ["asm", "global_asm", "naked_asm"];

/// Collects every rejected construct of an item.
pub struct Rejecter<'a> {
    pub ctx: &'a Ctx,
    pub errors: Vec<syn::Error>,
    /// How many items deep the walk is: 0 before the annotated item itself is entered.
    item_depth: usize,
}

impl<'a> Rejecter<'a> {
    /// A rejecter with no errors yet.
    pub fn new(ctx: &'a Ctx) -> Rejecter<'a> {
        Rejecter { ctx, errors: Vec::new(), item_depth: 0 }
    }

    /// Records one rejection, spanned on the user's tokens, in the one shape every message has.
    pub fn reject(&mut self, tokens: impl ToTokens, construct: &str, why: &str, hint: &str) {
        let message = format!("twinstep cannot twin {construct}: {why}\nhint: {hint}");
        self.errors.push(syn::Error::new_spanned(tokens, message));
    }

    /// All errors as one, or `None` when nothing was rejected.
    pub fn into_error(self) -> Option<syn::Error> {
        self.errors.into_iter().reduce(|mut all, e| {
            all.combine(e);
            all
        })
    }

    /// Whether the path goes through the SIMD modules of the standard library or names a SIMD intrinsic or
    /// vector type.
    fn is_simd_path(path: &Path) -> bool {
        let names: Vec<String> = path.segments.iter().map(|s| s.ident.to_string()).collect();
        let std_module =
            names.windows(2).any(|w| matches!((w[0].as_str(), w[1].as_str()), ("std" | "core", "arch" | "simd")));
        std_module || names.iter().any(|name| is_simd_name(name))
    }

    /// Whether an expression is visibly of the float type without knowing types: a float literal of the kernel's
    /// type or a cast into it.
    fn is_visibly_float(&self, expr: &Expr) -> bool {
        match expr {
            Expr::Lit(lit) => has_float_literal(self.ctx, lit.to_token_stream()),
            Expr::Cast(cast) => self.ctx.is_float_type(&cast.ty),
            Expr::Paren(paren) => self.is_visibly_float(&paren.expr),
            _ => false,
        }
    }

    /// Rejects `f64::to_bits`, `f64::from_bits` and the byte conversions named through the float type.
    fn check_float_storage_path(&mut self, tokens: impl ToTokens, float_named: bool, function: &str) {
        if float_named && (BITS_METHODS.contains(&function) || BYTES_METHODS.contains(&function)) {
            self.reject_storage_access(tokens, function);
        }
    }

    fn reject_storage_access(&mut self, tokens: impl ToTokens, function: &str) {
        self.reject(
            tokens,
            &format!("`{function}`"),
            "it works on the float's bits, and a twin's value may be a lens, which has no such bits",
            "move the bit manipulation out of the annotated kernel, or compare values with `==` / `<`",
        );
    }

    /// Walks the input of a macro invocation when it is a list of expressions separated by `,` or `;`.
    ///
    /// Why chunks and not one parse: `vec![x; n]`, `assert!(a < b, "…")` and `println!("{}", x)` all split into
    /// plain expressions at their top-level separators. Chunks that are not expressions (`azip!` bindings, a
    /// turbofish cut at its comma) are skipped: a rejected construct there still fails to compile in the twin, only
    /// with the compiler's less helpful message instead of ours.
    fn visit_macro_input(&mut self, tokens: &TokenStream) {
        let mut chunk = TokenStream::new();
        let trees: Vec<TokenTree> = tokens.clone().into_iter().collect();
        for (index, tree) in trees.iter().enumerate() {
            let separator = matches!(tree, TokenTree::Punct(p) if p.as_char() == ',' || p.as_char() == ';');
            if !separator {
                chunk.extend([tree.clone()]);
            }
            if separator || index + 1 == trees.len() {
                if let Ok(expr) = syn::parse2::<Expr>(std::mem::take(&mut chunk)) {
                    self.visit_expr(&expr);
                }
            }
        }
    }

    /// The annotated item itself must be something the engine twins.
    fn check_annotated_item(&mut self, item: &Item) {
        let what = match item {
            Item::Fn(_) | Item::Impl(_) | Item::Mod(_) | Item::Struct(_) | Item::Enum(_) => return,
            Item::Union(_) => "a union",
            Item::Trait(_) => "a trait",
            Item::Const(_) => "a constant",
            Item::Static(_) => "a static",
            Item::Type(_) => "a type alias",
            Item::Use(_) => "a `use` declaration",
            Item::Macro(_) => "a macro invocation or definition",
            _ => "this item",
        };
        self.reject(
            item,
            &format!("{what} on its own"),
            "`#[twinstep::audit]` goes on a function, a struct or enum, an `impl` block or an inline module",
            "annotate the kernel function, or an inline module that holds this item together with the functions \
             that use it",
        );
    }
}

/// Every reason the annotated item cannot be twinned: the constructs in it ([`Rejecter`]) and the item-level
/// checks, all of them, each spanned on the user's tokens.
pub fn rejections(ctx: &Ctx, item: &Item, mode: ImplMode) -> Vec<syn::Error> {
    let mut rejecter = Rejecter::new(ctx);
    rejecter.visit_item(item);
    let base = ctx.base.name();
    match item {
        Item::Fn(f) if !mentions_float(ctx, f) && !mentions_float_literal(ctx, &f.block) => rejecter.reject(
            &f.sig,
            "a function without any float",
            &format!("neither its signature nor its body mentions `{base}` or holds a float literal"),
            "annotate the function that computes in floats, or name a precision alias with \
             `#[twinstep::audit(alias = Name)]`",
        ),
        Item::Struct(_) | Item::Enum(_) if !mentions_float(ctx, &fields_of(item)) => rejecter.reject(
            item_ident(item),
            "a struct without float fields",
            &format!("no field mentions `{base}`, so its twin would be the struct itself"),
            "leave the struct as it is and write `#[twinstep::audit(methods_only)]` on its `impl` blocks",
        ),
        Item::Mod(m) if m.content.is_none() => rejecter.reject(
            m,
            "a module in its own file here",
            "an attribute sees only the `mod name;` line, not the file",
            "twin the file from a build script with the `twinstep-build` crate \
             (`twinstep_build::twin_file(\"src/name.rs\")`, then `include!` the twins; see docs/rewrite.md), or \
             annotate the functions in the file",
        ),
        Item::Impl(imp) => check_impl(&mut rejecter, imp, mode),
        _ => {}
    }
    rejecter.errors
}

fn item_ident(item: &Item) -> TokenStream {
    match item {
        Item::Struct(s) => s.ident.to_token_stream(),
        Item::Enum(e) => e.ident.to_token_stream(),
        other => other.to_token_stream(),
    }
}

/// What an annotated `impl` block must satisfy in each mode.
fn check_impl(rejecter: &mut Rejecter, imp: &syn::ItemImpl, mode: ImplMode) {
    let ctx = rejecter.ctx;
    let base = ctx.base.name();
    if let Some((_, path, _)) = &imp.trait_ {
        // The trait fixes the method signatures: a twin may implement it for the twin struct only when no
        // signature changes (`impl Default for Rod`, `impl Display for Rod`).
        let signatures_float =
            imp.items.iter().any(|i| matches!(i, syn::ImplItem::Fn(f) if mentions_float(ctx, &f.sig)));
        let trait_float = path.segments.iter().any(|s| mentions_float(ctx, &s.arguments));
        if mode == ImplMode::MethodsOnly || signatures_float || trait_float {
            rejecter.reject(
                path,
                "a trait impl on its own",
                "the trait fixes the method signatures, and the twin's would take the type parameter instead",
                "annotate the inline module that holds the trait, the type and the impl, so the trait becomes \
                 generic too",
            );
            return;
        }
    }
    match mode {
        ImplMode::TwinStruct if type_name(&imp.self_ty).is_none() => rejecter.reject(
            &imp.self_ty,
            "an `impl` block of this type",
            "its twin is an `impl` of the struct's twin, found by the struct's name, and this type has none",
            "annotate the struct and write its `impl` block for the struct by name (`impl Rod { … }`)",
        ),
        ImplMode::MethodsOnly if imp.trait_.is_none() && twinned_methods(ctx, imp).is_empty() => rejecter.reject(
            &imp.self_ty,
            "this `impl` block with `methods_only`",
            &format!(
                "no method takes `{base}`, and with the struct kept as it is only those get a twin \
                 (`step(&mut self)` reads and writes the struct's own `{base}` fields)"
            ),
            "drop `methods_only` and put `#[twinstep::audit]` on the struct too, so its fields become the type \
             parameter and every method gets a twin",
        ),
        _ => {}
    }
}

/// Whether a name is a SIMD intrinsic or vector type: `_mm_add_pd`, `_mm256_add_pd`, `__m256d`, `float64x2_t`
/// (Arm NEON), `f64x4` (portable SIMD and SIMD crates).
///
/// The prefixes are those of Intel's intrinsics guide and Arm's NEON reference (common practice, no source);
/// requiring digits after `__m` and `f64x` keeps ordinary names such as `__max` or `f64xs` out.
fn is_simd_name(name: &str) -> bool {
    let digits_after =
        |prefix: &str| name.strip_prefix(prefix).is_some_and(|rest| rest.starts_with(|c: char| c.is_ascii_digit()));
    let only_digits_after = |prefix: &str| {
        name.strip_prefix(prefix).is_some_and(|rest| !rest.is_empty() && rest.chars().all(|c| c.is_ascii_digit()))
    };
    let intel_intrinsic = name.starts_with("_mm_") || digits_after("_mm");
    let intel_vector = digits_after("__m");
    let neon_vector = name.starts_with("float64x") || name.starts_with("float32x");
    let portable_vector = only_digits_after("f64x") || only_digits_after("f32x");
    intel_intrinsic || intel_vector || neon_vector || portable_vector
}

/// Whether a pattern's own tokens hold a float literal of the kernel's type (`0.5`, `-1.0`, `0.0..=1.0`); a literal
/// of the other float type (`0.5f32` in an `f64` kernel) matches a value the twin keeps as it is.
fn has_float_literal(ctx: &Ctx, tokens: TokenStream) -> bool {
    mentions_float_literal(ctx, &tokens)
}

/// `&f64`, `&mut f64` and `(f64)` are the float type for the orphan rules too.
fn strip_references(ty: &Type) -> &Type {
    match ty {
        Type::Reference(reference) => strip_references(&reference.elem),
        Type::Paren(paren) => strip_references(&paren.elem),
        other => other,
    }
}

impl<'ast> Visit<'ast> for Rejecter<'_> {
    fn visit_item(&mut self, item: &'ast Item) {
        if self.item_depth == 0 {
            self.check_annotated_item(item);
        }
        self.item_depth += 1;
        visit::visit_item(self, item);
        self.item_depth -= 1;
    }

    fn visit_expr_cast(&mut self, cast: &'ast ExprCast) {
        if matches!(strip_references(&cast.ty), Type::Ptr(_)) {
            self.reject(
                cast,
                "a pointer cast",
                "it reinterprets memory, and a twin's values are lenses, not floats in memory",
                "keep pointer code outside the annotated kernel, or index the slice instead",
            );
            // `&x as *const f64 as *const u64` is one construct: report the chain once, walk what it casts.
            let mut operand = &*cast.expr;
            while let Expr::Cast(inner) = operand {
                if !matches!(strip_references(&inner.ty), Type::Ptr(_)) {
                    break;
                }
                operand = &inner.expr;
            }
            self.visit_expr(operand);
            return;
        } else if self.ctx.is_other_float_type(&cast.ty) {
            let other = self.ctx.base.other().name();
            self.reject(
                cast,
                &format!("a cast to `{other}`"),
                &format!("the kernel computes in `{}`, and the twin would drop the lens here", self.ctx.base.name()),
                &format!(
                    "annotate the kernel for the precision it computes in (`#[twinstep::audit(float = {other})]`), \
                     or move the conversion outside the kernel"
                ),
            );
        }
        visit::visit_expr_cast(self, cast);
    }

    fn visit_expr_method_call(&mut self, call: &'ast ExprMethodCall) {
        let name = call.method.to_string();
        let bytes_of_float = BYTES_METHODS.contains(&name.as_str()) && self.is_visibly_float(&call.receiver);
        if BITS_METHODS.contains(&name.as_str()) || bytes_of_float {
            self.reject_storage_access(&call.method, &name);
        }
        visit::visit_expr_method_call(self, call);
    }

    fn visit_expr_path(&mut self, expr: &'ast ExprPath) {
        // `<f64>::from_bits(b)`: the float type sits in the qualified-self position, the function is the path.
        if let (Some(qself), Some(last)) = (&expr.qself, expr.path.segments.last()) {
            if expr.path.segments.len() == 1 && self.ctx.is_float_type(&qself.ty) {
                self.check_float_storage_path(expr, true, &last.ident.to_string());
            }
        }
        visit::visit_expr_path(self, expr);
    }

    fn visit_path(&mut self, path: &'ast Path) {
        let names: Vec<String> = path.segments.iter().map(|s| s.ident.to_string()).collect();
        let last = names.last().map(String::as_str).unwrap_or_default();
        let float_named = names.len() == 2 && path.segments.first().is_some_and(|s| self.ctx.is_float_ident(&s.ident));
        if TRANSMUTES.contains(&last) || names.iter().any(|n| REINTERPRETING_CRATES.contains(&n.as_str())) {
            self.reject(
                path,
                &format!("`{last}`"),
                "it reinterprets a float's bits, and a twin's value may be a lens, which has no such bits",
                "move the reinterpretation out of the annotated kernel",
            );
        } else if Self::is_simd_path(path) {
            self.reject(
                path,
                &format!("the SIMD intrinsic or vector type `{last}`"),
                "it computes on hardware lanes of raw floats, which a lens cannot enter",
                "annotate the scalar version of the kernel (the compiler vectorizes the twin with `T = f64`)",
            );
        } else {
            self.check_float_storage_path(path, float_named, last);
        }
        visit::visit_path(self, path);
    }

    fn visit_macro(&mut self, mac: &'ast Macro) {
        let last = mac.path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
        if ASM_MACROS.contains(&last.as_str()) {
            // Not walked further: `core::arch::asm!` would also count as a SIMD path, one construct twice.
            self.reject(
                mac,
                &format!("inline assembly (`{last}!`)"),
                "it computes on raw machine registers, which a lens cannot enter",
                "annotate a scalar Rust version of the kernel",
            );
            return;
        }
        visit::visit_macro(self, mac);
        self.visit_macro_input(&mac.tokens);
    }

    fn visit_pat(&mut self, pat: &'ast Pat) {
        let literal_like = matches!(pat, Pat::Lit(_) | Pat::Range(_) | Pat::Verbatim(_));
        if literal_like && has_float_literal(self.ctx, pat.to_token_stream()) {
            self.reject(
                pat,
                "a float literal pattern",
                "a lens value is not a constant to match on",
                "compare with `==` or `<` in a guard or an `if` instead",
            );
            return;
        }
        if let Pat::Path(path) = pat {
            let float_named = path.path.segments.len() == 2
                && path.path.segments.first().is_some_and(|s| self.ctx.is_float_ident(&s.ident));
            if float_named {
                self.reject(
                    pat,
                    "a float constant pattern",
                    "a lens value is not a constant to match on",
                    "compare with `==` in a guard or an `if` instead (`x if x == f64::INFINITY`)",
                );
                return;
            }
        }
        visit::visit_pat(self, pat);
    }

    fn visit_item_mod(&mut self, module: &'ast syn::ItemMod) {
        // A module's own `const` and `static` items are copied into the twin module unchanged and read there as
        // exact inputs, so how they are computed (`f64::from_bits(0x3FB9_9999_9999_999A)`) needs no twin. Constants
        // inside function bodies are different: they become `let`s of the twin's type, and are walked.
        let Some((_, items)) = &module.content else { return visit::visit_item_mod(self, module) };
        for item in items.iter().filter(|item| !matches!(item, Item::Const(_) | Item::Static(_))) {
            self.visit_item(item);
        }
    }

    fn visit_item_union(&mut self, union: &'ast syn::ItemUnion) {
        if mentions_float(self.ctx, &union.fields) {
            self.reject(
                &union.ident,
                &format!("the union `{}`", union.ident),
                "a union of a float and other fields reads the float's bits as another type",
                "keep the union outside the annotated module, or store the float and the other value separately",
            );
        }
        visit::visit_item_union(self, union);
    }

    fn visit_item_impl(&mut self, item: &'ast syn::ItemImpl) {
        if let Some((_, trait_path, _)) = &item.trait_ {
            if self.ctx.is_float_type(strip_references(&item.self_ty)) {
                let header = format!("impl {} for {}", trait_path.to_token_stream(), item.self_ty.to_token_stream());
                self.reject(
                    &item.self_ty,
                    &format!("`{}`", header.replace(" < ", "<").replace(" >", ">")),
                    "its twin would implement a foreign trait for the type parameter, which the orphan rules forbid",
                    "write the operation with the float on the right (`v * s` instead of `s * v`), or as a method \
                     or function",
                );
            }
        }
        visit::visit_item_impl(self, item);
    }
}

#[cfg(test)]
mod tests {
    //! What the rejecter must leave alone: names and calls that only look like rejected constructs. A false
    //! rejection would be a compile error on valid code, so each of these kernels must expand.

    fn expands(kernel: &str) -> Result<String, String> {
        crate::expand_source(kernel, None).map_err(|errors| format!("{errors:?}"))
    }

    #[test]
    fn ordinary_names_that_share_a_prefix_with_simd_names_are_accepted() {
        let kernel = "#[twinstep::audit]\nfn f(u: &mut [f64], __max: usize, f64xs: usize, _mmx: usize) { \
                      u[__max + f64xs + _mmx] *= 2.0; }";
        assert!(expands(kernel).is_ok(), "{:?}", expands(kernel));
    }

    #[test]
    fn byte_conversions_of_integers_are_accepted() {
        let kernel = "#[twinstep::audit]\nfn f(u: &mut [f64], seed: u64) { \
                      let b = seed.to_le_bytes(); let s = u64::from_le_bytes(b); u[0] *= s as f64; }";
        assert!(expands(kernel).is_ok(), "{:?}", expands(kernel));
    }

    #[test]
    fn byte_conversions_of_visible_floats_are_rejected() {
        let kernel = "#[twinstep::audit]\nfn f(u: &mut [f64]) { let b = (u[0] as f64).to_le_bytes(); \
                      let c = f64::to_be_bytes(u[1]); u[0] = b[0] as f64 + c[0] as f64; }";
        let errors = expands(kernel).expect_err("both conversions are rejected");
        assert_eq!(errors.matches("to_le_bytes").count() + errors.matches("to_be_bytes").count(), 2, "{errors}");
    }

    #[test]
    fn patterns_on_the_other_float_type_are_accepted() {
        // The `f32` scrutinee stays `f32` in the twin of an `f64` kernel, so its literal pattern still matches.
        let kernel = "#[twinstep::audit]\nfn f(u: &mut [f64], s: f32) { match s { 0.5f32 => u[0] = 1.0, _ => {} } }";
        assert!(expands(kernel).is_ok(), "{:?}", expands(kernel));
    }

    #[test]
    fn module_constants_defined_by_their_bits_are_accepted() {
        let kernel = "#[twinstep::audit]\nmod m { const TENTH: f64 = f64::from_bits(0x3FB9_9999_9999_999A); \
                      pub fn f(u: &mut [f64]) { u[0] *= TENTH; } }";
        assert!(expands(kernel).is_ok(), "{:?}", expands(kernel));
    }

    #[test]
    fn body_constants_defined_by_their_bits_are_rejected() {
        // A body constant becomes a `let` of the twin's type, whose `from_bits` a lens does not have.
        let kernel =
            "#[twinstep::audit]\nfn f(u: &mut [f64]) { const TENTH: f64 = f64::from_bits(0x3FB9_9999_9999_999A); \
                      u[0] *= TENTH; }";
        let errors = expands(kernel).expect_err("the body constant's `from_bits` is rejected");
        assert!(errors.contains("from_bits"), "{errors}");
    }

    #[test]
    fn pointers_from_slices_without_casts_are_accepted() {
        // `as_ptr` keeps the element type, so the twin's pointer is a pointer to the twin's values.
        let kernel = "#[twinstep::audit]\nfn f(u: &mut [f64]) { let p = u.as_ptr(); u[1] = unsafe { *p.add(0) }; }";
        assert!(expands(kernel).is_ok(), "{:?}", expands(kernel));
    }
}
