//! The `#[twinstep::audit]` attribute. All the work is in `twinstep-engine`, which the CLI shares; this crate is
//! the glue between the compiler's token streams and the engine.

use proc_macro::TokenStream;

/// Emits a generic twin of the annotated function, `impl` block or inline module beside the untouched original.
///
/// See the `twinstep` crate's documentation and `docs/rewrite.md` for the rules and the names of the twins.
#[proc_macro_attribute]
pub fn audit(attr: TokenStream, item: TokenStream) -> TokenStream {
    twinstep_engine::expand_attribute(attr.into(), item.into()).into()
}

/// Adds to the lens-generic methods (`init`, `step`) of an `impl Scenario for …` block the bounds every twin carries,
/// so the harness writes none. See `docs/audit.md`.
#[proc_macro_attribute]
pub fn scenario(attr: TokenStream, item: TokenStream) -> TokenStream {
    twinstep_engine::scenario::expand_scenario(attr.into(), item.into()).into()
}
