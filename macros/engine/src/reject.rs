//! Finds the constructs a twin cannot reproduce soundly, on the user's own tokens, all of them in one walk.
//!
//! Each rejection is a spanned error with a hint of what to do instead. The caller emits the original item
//! unchanged beside the errors, so that one rejected construct does not cascade into errors elsewhere.

use crate::context::Ctx;
use syn::visit::{self, Visit};
use syn::{ExprCast, ExprMethodCall, Macro, Pat, Path, Type};

/// Methods that read or write a float's storage.
const BIT_METHODS: [&str; 8] =
    ["to_bits", "from_bits", "to_le_bytes", "to_be_bytes", "to_ne_bytes", "from_le_bytes", "from_be_bytes", "from_ne_bytes"];

/// Macros that emit machine code.
const ASM_MACROS: [&str; 3] = ["asm", "global_asm", "naked_asm"];

/// Collects every rejected construct of an item.
pub struct Rejecter<'a> {
    pub ctx: &'a Ctx,
    pub errors: Vec<syn::Error>,
}

impl<'a> Rejecter<'a> {
    /// A rejecter with no errors yet.
    pub fn new(ctx: &'a Ctx) -> Rejecter<'a> {
        Rejecter { ctx, errors: Vec::new() }
    }

    fn reject(&mut self, tokens: impl quote::ToTokens, message: &str) {
        self.errors.push(syn::Error::new_spanned(tokens, message));
    }

    /// All errors as one, or `None` when nothing was rejected.
    pub fn into_error(self) -> Option<syn::Error> {
        self.errors.into_iter().reduce(|mut all, e| {
            all.combine(e);
            all
        })
    }

    /// Whether the path goes through SIMD intrinsics or the portable SIMD module.
    fn is_simd_path(path: &Path) -> bool {
        let names: Vec<String> = path.segments.iter().map(|s| s.ident.to_string()).collect();
        let arch = names.windows(2).any(|w| (w[0] == "std" || w[0] == "core") && (w[1] == "arch" || w[1] == "simd"));
        let intrinsic = names.iter().any(|n| n.starts_with("_mm") || n.starts_with("__m") || n.starts_with("float64x") || n.starts_with("float32x"));
        arch || intrinsic
    }
}

impl<'ast> Visit<'ast> for Rejecter<'_> {
    fn visit_expr_cast(&mut self, cast: &'ast ExprCast) {
        if matches!(&*cast.ty, Type::Ptr(_)) {
            self.reject(
                cast,
                "twinstep cannot twin a pointer cast: it reinterprets memory, and a twin's values are lenses, not floats\n\
                 hint: keep pointer code outside the annotated kernel, or index the slice instead",
            );
        } else if self.ctx.is_other_float_type(&cast.ty) {
            self.reject(
                cast,
                "twinstep cannot twin a cast to the other float type: the twin would drop the lens here\n\
                 hint: annotate the kernel for the precision it computes in (`#[twinstep::audit(float = f32)]`), \
                 or move the conversion outside the kernel",
            );
        }
        visit::visit_expr_cast(self, cast);
    }

    fn visit_expr_method_call(&mut self, call: &'ast ExprMethodCall) {
        let name = call.method.to_string();
        if BIT_METHODS.contains(&name.as_str()) {
            self.reject(
                &call.method,
                &format!(
                    "twinstep cannot twin `{name}`: it reads the float's storage, which a lens does not have\n\
                     hint: move the bit manipulation out of the annotated kernel, or compare values with `==` / `<`"
                ),
            );
        }
        visit::visit_expr_method_call(self, call);
    }

    fn visit_path(&mut self, path: &'ast Path) {
        let last = path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
        if last == "transmute" || last == "transmute_copy" {
            self.reject(
                path,
                "twinstep cannot twin `transmute`: it reinterprets a float's bits, which a lens does not have\n\
                 hint: move the reinterpretation out of the annotated kernel",
            );
        } else if BIT_METHODS.contains(&last.as_str()) && path.segments.len() == 2 && self.ctx.is_float_ident(&path.segments[0].ident) {
            self.reject(
                path,
                &format!(
                    "twinstep cannot twin `{last}`: it reads the float's storage, which a lens does not have\n\
                     hint: move the bit manipulation out of the annotated kernel"
                ),
            );
        } else if Self::is_simd_path(path) {
            self.reject(
                path,
                "twinstep cannot twin SIMD intrinsics: they compute on hardware lanes of raw floats\n\
                 hint: annotate the scalar version of the kernel (the compiler vectorizes the twin with `T = f64`)",
            );
        }
        visit::visit_path(self, path);
    }

    fn visit_macro(&mut self, mac: &'ast Macro) {
        let last = mac.path.segments.last().map(|s| s.ident.to_string()).unwrap_or_default();
        if ASM_MACROS.contains(&last.as_str()) {
            self.reject(
                mac,
                "twinstep cannot twin inline assembly: it computes on raw machine registers\n\
                 hint: annotate a scalar Rust version of the kernel",
            );
        }
        visit::visit_macro(self, mac);
    }

    fn visit_pat(&mut self, pat: &'ast Pat) {
        if let Pat::Lit(lit) = pat {
            if matches!(lit.lit, syn::Lit::Float(_)) {
                self.reject(
                    pat,
                    "twinstep cannot twin a float literal pattern: a lens value is not a constant to match on\n\
                     hint: compare with `==` in a guard or an `if` instead",
                );
            }
        }
        visit::visit_pat(self, pat);
    }

    fn visit_item_impl(&mut self, item: &'ast syn::ItemImpl) {
        if let Some((_, trait_path, _)) = &item.trait_ {
            if self.ctx.is_float_type(&item.self_ty) {
                self.reject(
                    &item.self_ty,
                    &format!(
                        "twinstep cannot twin `impl {} for {}`: generically this would be an impl of a foreign trait \
                         for the type parameter, which the orphan rules forbid\n\
                         hint: write the operation with the float on the right (`v * s` instead of `s * v`), \
                         or as a method or function",
                        quote::ToTokens::to_token_stream(trait_path),
                        quote::ToTokens::to_token_stream(&item.self_ty)
                    ),
                );
            }
        }
        visit::visit_item_impl(self, item);
    }

}
